// The experiment sheet's behaviour: every edit goes into the config at the
// control's path (configedit.applyInput), structural edits redraw the sheet
// (controls.renderSheet), formulas are checked live by the core as they are
// typed, and the preset list starts an experiment in one click. The
// experiment module (experiment.js) owns the config and is told through
// hooks.onEdit() after every change to it.

import { addSweep, applySweepEdit, dropSweep, sweepable } from './studyedit.js';
import { renderSheet, showFormulaCheck, envFor } from './controls.js';
import {
  applyInput, setRewardMode, addOverride, dropOverride, switchTask, newVariant, duplicateVariant, getAt, idOf, merge,
} from './configedit.js';
import { messageOf } from './wasm.js';
import { applyTaskInput, addTaskItem, removeTaskItem, setActionKind, showTaskCheck } from './taskedit.js';

/**
 * Wire the sheet.
 * @param {object} state  app state (config, wasm, presets, presetFile, formErrors)
 * @param {object} els    findControls(document)
 * @param {object} hooks  {onEdit(), onPreset(file), isBusy()}
 * @returns {{redraw(focusId?), renderPresets(), checkFormulas()}}
 */
export function bindForm(state, els, hooks) {
  const doc = els.doc;

  function redraw(focusId) {
    const active = focusId || (doc.activeElement && els.form.contains(doc.activeElement) ? doc.activeElement.id : '');
    const was = doc.getElementById(active);
    const caret = was && typeof was.selectionStart === 'number' ? [was.selectionStart, was.selectionEnd] : null;
    const scroll = els.form.scrollTop;
    renderSheet(els, state.config);
    state.formErrors.clear();
    els.form.scrollTop = scroll;
    if (active) {
      const again = doc.getElementById(active);
      if (again) {
        again.focus({ preventScroll: !focusId });
        if (caret && typeof again.setSelectionRange === 'function' && again.value !== undefined) {
          try { again.setSelectionRange(caret[0], caret[1]); } catch { /* not a text control */ }
        }
      }
    }
    checkFormulas();
  }

  /** Check every formula on the sheet with the core (checkFormula, checkTask). */
  function checkFormulas() {
    for (const ta of els.form.querySelectorAll('textarea[data-formula]')) checkFormula(ta);
    checkTask();
  }

  /** Check the own-task editor's definition with the core (checkTask). */
  function checkTask() {
    const wasm = state.wasm;
    const task = state.config && state.config.task;
    if (!wasm || typeof wasm.checkTask !== 'function' || !task || (task.kind !== 'formula' && task.kind !== 'table')) return;
    let report;
    try {
      report = JSON.parse(wasm.checkTask(JSON.stringify(task)));
    } catch (err) {
      report = { ok: false, problems: [{ path: '', message: messageOf(err) }], fields: [] };
    }
    showTaskCheck(doc, report, (ta, r) => showFormulaCheck(doc, ta, r));
  }

  function checkFormula(ta) {
    const wasm = state.wasm;
    if (!wasm || typeof wasm.checkFormula !== 'function' || !state.config) return;
    const rewardPath = ta.dataset.formula;
    const reward = getAt(state.config, rewardPath) || {};
    let report;
    try {
      report = JSON.parse(wasm.checkFormula(ta.value, JSON.stringify({
        task: state.config.task,
        reward: { mode: reward.mode || 'base', ...(reward.constants ? { constants: reward.constants } : {}) },
      })));
    } catch (err) {
      report = { ok: false, errors: [{ start: 0, end: 0, column: 1, message: messageOf(err), hint: '' }] };
    }
    showFormulaCheck(doc, ta, report);
  }

  function afterEdit(el, structural) {
    if (structural) redraw(el && el.id);
    else if (el && el.closest('.own-task')) {
      checkTask();
      // The reward formulas read the task's names.
      for (const ta of els.form.querySelectorAll('textarea[data-formula]')) checkFormula(ta);
    } else if (el && el.closest('.reward')) {
      const ta = el.closest('.reward').querySelector('textarea[data-formula]');
      if (ta) checkFormula(ta);
    }
    hooks.onEdit();
  }

  function onValue(e) {
    const el = e.target;
    if (!state.config || !(el instanceof HTMLElement)) return;
    if (el.dataset.type === 'task-kind') {
      if (e.type !== 'change') return;
      switchTask(state.config, el.value);
      afterEdit(el, true);
      return;
    }
    if (el.dataset.taskActionKind) {
      if (e.type !== 'change' || !el.checked) return;
      setActionKind(state.config.task, el.dataset.taskActionKind);
      afterEdit(el, true);
      return;
    }
    if (el.dataset.taskCsvFile) {
      if (e.type !== 'change' || !el.files || !el.files[0]) return;
      const area = doc.getElementById(idOf('task.rows'));
      el.files[0].text().then((text) => {
        if (!area) return;
        area.value = text;
        area.dispatchEvent(new Event('input', { bubbles: true }));
      }, (err) => state.formErrors.set('task.rows', { path: 'task.rows', message: `task.rows: the file could not be read (${messageOf(err)})` }));
      el.value = '';
      return;
    }
    if (el.dataset.rewardMode) {
      if (e.type !== 'change' || !el.checked) return;
      setRewardMode(state.config, el.dataset.rewardMode, el.value);
      afterEdit(el, true);
      return;
    }
    if (el.dataset.sweepAdd !== undefined) {
      if (e.type !== 'change' || !el.value) return;
      const i = Number(el.dataset.sweepAdd);
      const v = state.config.variants[i];
      const setup = merge(state.config.base || {}, (v && v.learner) || {});
      const reward = v && v.reward !== undefined ? v.reward : state.config.reward;
      const choice = sweepable(envFor(state.config, setup), setup, reward).find((c) => c.key === el.value);
      addSweep(state.config, i, el.value, choice ? choice.value : undefined);
      redraw();
      focusPath(`variants[${i}].sweep.${el.value}`);
      hooks.onEdit();
      return;
    }
    if (el.dataset.sweep !== undefined) {
      const texty = el.tagName === 'INPUT' && el.type === 'text';
      if (texty !== (e.type === 'input')) return;
      const path = `variants[${el.dataset.sweep}].sweep.${el.dataset.sweepKey}`;
      const r = applySweepEdit(state.config, el);
      if (r.error) state.formErrors.set(path, { path, message: `${path}: ${r.error}` }); else state.formErrors.delete(path);
      afterEdit(el, r.structural);
      return;
    }
    if (el.dataset.addOverride !== undefined) {
      if (e.type !== 'change' || !el.value) return;
      const i = Number(el.dataset.addOverride);
      const path = addOverride(state.config, i, el.value);
      redraw();
      focusPath(path);
      hooks.onEdit();
      return;
    }
    if (!el.dataset.path) return;
    // Text fields act on every keystroke, choices when they change.
    const texty = el.tagName === 'TEXTAREA' || (el.tagName === 'INPUT' && el.type === 'text');
    if (texty !== (e.type === 'input')) return;
    const own = el.closest('.own-task') ? applyTaskInput(state.config, el, state.wasm) : { handled: false };
    const r = own.handled ? own : applyInput(state.config, el);
    if (r.error) state.formErrors.set(el.dataset.path, r.error); else state.formErrors.delete(el.dataset.path);
    if (el.dataset.path === 'task.layout') fitLayoutMap(el.value);
    afterEdit(el, r.structural && (!texty || own.handled));
    if (r.structural && texty && el.dataset.type === 'constants') {
      const ta = el.closest('.reward')?.querySelector('textarea[data-formula]');
      if (ta) checkFormula(ta);
    }
  }

  /**
   * A built-in floor and a map do not mix (the core refuses a config with
   * both): choosing a floor drops the map; choosing your own map starts
   * from the floor that was shown.
   */
  function fitLayoutMap(layout) {
    const task = state.config.task;
    if (layout) {
      delete task.map;
      return;
    }
    if (Array.isArray(task.map) && task.map.length) return;
    const shown = state.check.ok && Array.isArray(state.check.info.grid_map) ? state.check.info.grid_map : null;
    let rows = shown;
    if (!rows && state.wasm && typeof state.wasm.gridLayouts === 'function') {
      try { rows = JSON.parse(state.wasm.gridLayouts()).find((l) => l.name === 'rover')?.map; } catch { rows = null; }
    }
    if (rows) task.map = rows.slice();
  }

  function focusPath(path) {
    const target = doc.getElementById(idOf(path)) || doc.getElementById(idOf(`${path}.kind`))
      || doc.querySelector(`[data-path^="${CSS.escape(path)}"]`)
      || doc.querySelector(`[data-reward-path="${CSS.escape(path)}"] input`);
    if (target) target.focus();
  }

  function onClick(e) {
    const b = e.target.closest('button');
    if (!b || !state.config || !els.form.contains(b)) return;
    if (b.dataset.sweepDrop !== undefined) {
      const i = Number(b.dataset.sweepDrop);
      dropSweep(state.config, i, b.dataset.sweepKey);
      state.formErrors.delete(`variants[${i}].sweep.${b.dataset.sweepKey}`);
      redraw();
      hooks.onEdit();
      return;
    }
    if (b.dataset.taskOpenCsv) {
      doc.getElementById('task-rows-file')?.click();
      return;
    }
    if (b.dataset.taskAdd) {
      addTaskItem(state.config.task, b.dataset.taskAdd);
      redraw();
      hooks.onEdit();
      return;
    }
    if (b.dataset.taskRemove) {
      removeTaskItem(state.config.task, b.dataset.taskRemove);
      redraw();
      hooks.onEdit();
      return;
    }
    if (b.dataset.insert) {
      const ta = doc.getElementById(b.dataset.into);
      if (!ta) return;
      const at = ta.selectionStart ?? ta.value.length;
      const end = ta.selectionEnd ?? at;
      ta.setRangeText(b.dataset.insert, at, end, 'end');
      ta.focus();
      ta.dispatchEvent(new Event('input', { bubbles: true }));
      return;
    }
    const variants = state.config.variants || [];
    if (b.dataset.drop) {
      dropOverride(state.config, b.dataset.drop);
      const m = /^variants\[(\d+)\]/.exec(b.dataset.drop);
      redraw();
      if (m) doc.getElementById(`${idOf(`variants[${m[1]}]`)}-add`)?.focus();
      hooks.onEdit();
    } else if (b.dataset.remove !== undefined) {
      const i = Number(b.dataset.remove);
      state.config.variants = variants.filter((_, k) => k !== i);
      redraw();
      const next = Math.min(i, state.config.variants.length - 1);
      doc.getElementById(idOf(`variants[${next}].label`))?.focus();
      hooks.onEdit();
    } else if (b.dataset.duplicate !== undefined) {
      const i = Number(b.dataset.duplicate);
      state.config.variants = [...variants.slice(0, i + 1), duplicateVariant(state.config, i), ...variants.slice(i + 1)];
      redraw();
      doc.getElementById(idOf(`variants[${i + 1}].label`))?.focus();
      hooks.onEdit();
    } else if (b === els.addVariant) {
      state.config.variants = [...variants, newVariant(state.config)];
      redraw();
      doc.getElementById(idOf(`variants[${state.config.variants.length - 1}].label`))?.focus();
      hooks.onEdit();
    }
  }

  function renderPresets() {
    const list = els.presets;
    if (!state.presets.length) {
      const li = doc.createElement('li');
      li.className = 'help';
      li.textContent = 'No presets found.';
      list.replaceChildren(li);
      return;
    }
    list.replaceChildren(...state.presets.map((p) => {
      const li = doc.createElement('li');
      const b = doc.createElement('button');
      b.type = 'button';
      b.className = 'preset';
      b.dataset.preset = p.file;
      b.setAttribute('aria-pressed', String(p.file === state.presetFile));
      const title = doc.createElement('span');
      title.className = 'preset-title';
      title.textContent = typeof p.title === 'string' && p.title ? p.title : p.file;
      b.append(title);
      if (typeof p.question === 'string' && p.question) {
        const q = doc.createElement('span');
        q.className = 'preset-question';
        q.textContent = p.question;
        b.append(q);
      }
      b.disabled = hooks.isBusy();
      li.append(b);
      return li;
    }));
  }

  els.form.addEventListener('input', onValue);
  els.form.addEventListener('change', onValue);
  els.form.addEventListener('click', onClick);
  els.form.addEventListener('submit', (e) => e.preventDefault());
  els.presets.addEventListener('click', (e) => {
    const b = e.target.closest('button[data-preset]');
    if (b && !b.disabled) hooks.onPreset(b.dataset.preset);
  });
  els.showHelp.addEventListener('change', () => els.form.classList.toggle('no-help', !els.showHelp.checked));

  return { redraw, renderPresets, checkFormulas };
}
