// The experiment being edited: where it comes from (a share link in the
// address, the one kept from the last visit, a preset, or a built-in
// fallback), its validation by the core after every edit (state.check, with
// the offending control marked), and keeping it in the browser shortly after
// each edit. The sheet itself is form.js; share links are share.js.

import { messageOf } from './wasm.js';
import { findControls, controlForPath } from './controls.js';
import { pathOfMessage, DEFAULT_GRID_TASK } from './configedit.js';
import { bindForm } from './form.js';
import { fetchPresetIndex, fetchPresetText } from './platform.js';
import { decodeFragment } from './share.js';
import { getKept, putKept } from './store.js';
import { KEPT } from './protocol.js';

/** Used only when presets/index.json cannot be read, so the page still works. */
const FALLBACK_CONFIG = {
  schema: 1,
  title: 'Rover to dock (built-in fallback)',
  task: DEFAULT_GRID_TASK,
  base: { family: 'a2c', discount: 0.99, actor_step: 0.1, critic_step: 0.2, features: { kind: 'tabular' } },
  variants: [{ label: 'A2C' }, { label: 'QAC', learner: { family: 'qac', actor_step: 0.01 } }],
  seeds: 5,
  steps: 10000,
  master_seed: 1,
  curve_points: 40,
  final_fraction: 0.1,
};

/** Format version of the kept experiment. */
const KEPT_VERSION = 1;
/** The key older pages kept the experiment under, in local storage. */
const LEGACY_KEY = 'critbox:experiment';
/** Delay between the last edit and keeping the experiment (ms). */
const KEEP_DELAY_MS = 300;

/**
 * @param {object} app {state, showError, showNote, isBusy(), checked()}: checked() is
 *   called after every validation (the run bar and the chart follow it).
 * @returns {{els, form, apply(config), choosePreset(file), openFromAddress(), restoreKept(),
 *   applyDefault(), loadPresets()}}
 */
export function createExperiment(app) {
  const { state } = app;
  const els = findControls(document);
  const form = bindForm(state, els, { onEdit, onPreset: choosePreset, isBusy: () => app.isBusy() });
  let keepTimer = 0;
  let keepWarned = false;

  function onEdit() {
    if (state.config) check();
  }

  function check() {
    const config = state.config;
    scheduleKeep();
    const first = state.formErrors.entries().next().value;
    if (first) {
      state.check = { ok: false, message: first[1].message, path: first[0] };
    } else if (!state.wasm) {
      state.check = { ok: false, message: 'The WebAssembly module is not loaded, so nothing can be checked or trained.', path: '' };
    } else {
      try {
        state.check = { ok: true, info: JSON.parse(state.wasm.validateConfig(JSON.stringify(config))) };
      } catch (err) {
        const message = messageOf(err);
        state.check = { ok: false, message, path: pathOfMessage(message) };
      }
    }
    for (const el of els.form.querySelectorAll('[aria-invalid]')) el.removeAttribute('aria-invalid');
    if (!state.check.ok && state.check.path) controlForPath(els, state.check.path)?.setAttribute('aria-invalid', 'true');
    app.checked();
  }

  /** Keep the experiment in the browser shortly after the last edit. */
  function scheduleKeep() {
    clearTimeout(keepTimer);
    keepTimer = setTimeout(async () => {
      if (!state.config) return;
      try {
        await putKept(KEPT.experiment, { v: KEPT_VERSION, config: state.config, presetFile: state.presetFile || '', savedAt: Date.now() });
        try { window.localStorage.removeItem(LEGACY_KEY); } catch { /* nothing older to forget */ }
      } catch (err) {
        if (!keepWarned) { keepWarned = true; app.showError(`edits are not kept across reloads: ${messageOf(err)}`); }
      }
    }, KEEP_DELAY_MS);
  }

  function apply(config) {
    state.config = config && typeof config === 'object' ? config : {};
    state.formErrors.clear();
    form.redraw();
    check();
  }

  async function loadPreset(file) {
    const text = await fetchPresetText(file);
    try {
      return JSON.parse(text);
    } catch (err) {
      throw new Error(`presets/${file}: not valid JSON (${messageOf(err)})`);
    }
  }

  async function loadPresets() {
    try {
      const list = await fetchPresetIndex();
      if (!Array.isArray(list)) throw new Error('presets/index.json: expected a list of {file, title}');
      state.presets = list.filter((p) => p && typeof p.file === 'string' && /^[\w.-]+\.json$/.test(p.file));
    } catch (err) {
      app.showError(`Presets could not be read (${messageOf(err)}); starting from a built-in example.`);
    }
    form.renderPresets();
  }

  async function choosePreset(file) {
    if (app.isBusy()) return;
    try {
      const config = await loadPreset(file);
      state.presetFile = file;
      apply(config);
      form.renderPresets();
      app.showNote(`Loaded the preset "${state.presets.find((p) => p.file === file)?.title || file}". Press Train to run it.`);
    } catch (err) {
      app.showError(messageOf(err));
    }
  }

  /** The first preset (the rover's when there is one), or the built-in fallback. */
  async function applyDefault() {
    let first = null;
    const pick = state.presets.find((p) => /rover/i.test(p.file)) || state.presets[0];
    if (pick) {
      try {
        first = await loadPreset(pick.file);
        state.presetFile = pick.file;
      } catch (err) {
        app.showError(`The preset ${pick.file} could not be read (${messageOf(err)}); starting from a built-in example.`);
      }
    }
    if (!first) state.presetFile = '';
    form.renderPresets();
    apply(first || structuredClone(FALLBACK_CONFIG));
  }

  /**
   * Open the experiment in the address's fragment, if any. Returns 'none' (no
   * link), 'opened', or 'refused' (a message says why). The fragment is removed
   * from the address either way, so a reload shows the kept experiment (with
   * any edits) instead of the link again.
   */
  async function openFromAddress() {
    const hash = location.hash;
    if (!hash || hash === '#') return 'none';
    const got = await decodeFragment(hash);
    history.replaceState(null, '', location.href.replace(/#.*$/s, ''));
    if (!got) return 'none';
    let problem = got.ok ? '' : got.message;
    if (!problem && state.wasm) {
      try {
        state.wasm.validateConfig(got.text);
      } catch (err) {
        problem = `its experiment does not pass the checks: ${messageOf(err)}`;
      }
    } else if (!problem) {
      problem = 'the WebAssembly module is not loaded, so the experiment cannot be checked';
    }
    if (problem) {
      app.showError(`This link could not be opened: ${problem}. The page shows a default experiment instead.`);
      return 'refused';
    }
    state.presetFile = '';
    form.renderPresets();
    apply(got.config);
    app.showNote('Opened the experiment from the link. Press Train to reproduce its numbers.', 10000);
    return 'opened';
  }

  /** The experiment kept from the last visit (or from an older page's local storage); true when there was one. */
  async function restoreKept() {
    let kept = null;
    try {
      kept = await getKept(KEPT.experiment);
      if (!kept) kept = legacyExperiment();
      if (kept && (kept.v !== KEPT_VERSION || !kept.config || typeof kept.config !== 'object')) {
        throw new Error('it is in a format this page does not read');
      }
    } catch (err) {
      app.showError(`The experiment kept from the last visit could not be read (${messageOf(err)}); starting from a preset.`);
      return false;
    }
    if (!kept) return false;
    state.presetFile = state.presets.some((p) => p.file === kept.presetFile) ? kept.presetFile : '';
    form.renderPresets();
    apply(kept.config);
    return true;
  }

  /** What older pages kept in local storage (moved to IndexedDB when next kept), or null. */
  function legacyExperiment() {
    let text = null;
    try { text = window.localStorage.getItem(LEGACY_KEY); } catch { return null; }
    return text ? JSON.parse(text) : null;
  }

  window.addEventListener('hashchange', async () => {
    if (!location.hash || location.hash === '#') return;
    if (app.isBusy()) {
      app.showError('A link was opened while a run is in progress; cancel the run, then open the link again.');
      return;
    }
    if (await openFromAddress() === 'refused') await applyDefault();
  });

  return { els, form, apply, check, choosePreset, openFromAddress, restoreKept, applyDefault, loadPresets };
}
