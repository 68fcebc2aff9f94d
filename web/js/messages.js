// The message area: errors that stay until dismissed (state.messages, one
// entry each, with a Dismiss button) and short confirmations that go away by
// themselves. Text is always set with textContent.

import { addMessage, dismissMessage } from './state.js';

/**
 * @param {object} state  the app state (its `messages` list)
 * @param {{messages: HTMLElement, notes: HTMLElement}} ui
 * @returns {{showError(text), showNote(text, ms)}}
 */
export function createMessages(state, ui) {
  let noteTimer = 0;

  function render() {
    ui.messages.replaceChildren(...state.messages.map((m) => {
      const div = document.createElement('div');
      div.className = 'msg';
      const p = document.createElement('p');
      p.textContent = m.text;
      const b = document.createElement('button');
      b.type = 'button';
      b.textContent = 'Dismiss';
      b.setAttribute('aria-label', `Dismiss: ${m.text.slice(0, 80)}`);
      b.addEventListener('click', () => { dismissMessage(state, m.id); render(); });
      div.append(p, b);
      return div;
    }));
  }

  function showError(text) {
    addMessage(state, text);
    render();
  }

  /** A short confirmation ("Link copied") that goes away by itself. */
  function showNote(text, ms = 6000) {
    ui.notes.textContent = text;
    clearTimeout(noteTimer);
    noteTimer = setTimeout(() => { ui.notes.textContent = ''; }, ms);
  }

  return { showError, showNote };
}
