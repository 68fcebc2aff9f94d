// The editor of the user's own tasks: a formula task (state variables,
// actions or controls, let values, update formulas, terminal condition,
// reward) and a table task (states, actions, transitions as CSV, start,
// terminal states, observations). Drawn from the config's task object like
// the rest of the sheet: every control carries the config path it writes
// (configedit.applyInput, or the task-specific types read here); formulas are
// checked live by the core (checkTask) and shown with the reward editor's
// display. An empty editor starts from the tasks of starters.js.

import { idOf, constantsText, readNumber } from './configedit.js';
import { el } from './dom.js';


const num = (v) => (typeof v === 'number' && Number.isFinite(v) ? String(v) : '');
const list = (v) => (Array.isArray(v) ? v : []);

/**
 * A text input writing `path` (type as configedit understands it). In a
 * row of a list its label is for screen readers only: the list's header
 * row names the columns.
 */
function input(doc, path, value, label, type = 'text', { row = false } = {}) {
  const id = idOf(path);
  return el(doc, 'div', { className: row ? 'cell' : 'field' },
    el(doc, 'label', { for: id, text: label, className: row ? 'visually-hidden' : undefined }),
    el(doc, 'input', { id, type: 'text', autocomplete: 'off', spellcheck: false, value, dataset: { path, type } }));
}

/** The header row of a list: one name per column (and an empty one for ×). */
function header(doc, names) {
  return el(doc, 'div', { className: 'task-row head', 'aria-hidden': 'true' }, ...names.map((n) => el(doc, 'span', { text: n })), el(doc, 'span'));
}

/** A formula textarea at `path`, checked as the task's field `field` (checkTask's path). */
function formulaBox(doc, path, field, value, label, help) {
  const id = idOf(path);
  const ta = el(doc, 'textarea', {
    id, className: 'formula', rows: Math.min(6, Math.max(1, Math.ceil(String(value || '').length / 34))), spellcheck: false, autocomplete: 'off', value: value || '',
    dataset: { path, type: 'text', taskFormula: field }, 'aria-describedby': `${id}-status`,
  });
  const names = el(doc, 'details', { className: 'names' });
  names.append(el(doc, 'summary', { text: 'Names you can use' }), el(doc, 'ul', { className: 'name-list', dataset: { namesFor: field } }));
  return el(doc, 'div', { className: 'field wide task-formula' },
    el(doc, 'label', { for: id, text: label }), ta,
    el(doc, 'div', { className: 'formula-status', id: `${id}-status`, 'aria-live': 'polite' }),
    help ? el(doc, 'p', { className: 'help', text: help }) : null, names);
}

function removeButton(doc, path, what) {
  return el(doc, 'button', { type: 'button', className: 'quiet small drop', text: '×', dataset: { taskRemove: path }, 'aria-label': `Remove ${what}` });
}

function addButton(doc, what, text) {
  return el(doc, 'button', { type: 'button', className: 'quiet small', text, dataset: { taskAdd: what } });
}

/** `start` as text: `0` or `14, 20`. */
export function startText(s) {
  return Array.isArray(s) ? s.join(', ') : num(s);
}

/** Reads a start: one number, or `low, high`. */
export function readStart(text) {
  const parts = text.split(/[,;\s]+/).filter(Boolean);
  if (parts.length < 1 || parts.length > 2) return { error: 'write one number, or low, high for a uniform start' };
  const values = [];
  for (const p of parts) {
    const r = readNumber(p);
    if (r.error) return r;
    values.push(r.value);
  }
  return { value: values.length === 1 ? values[0] : values };
}

/** An action's numbers as text: `power = 1, flow = 0`. */
export function setText(set) {
  return set && typeof set === 'object' ? Object.entries(set).map(([k, v]) => `${k} = ${v}`).join(', ') : '';
}

/** Reads `name = value, name = value` into an object. */
export function readSet(text) {
  const out = {};
  for (const part of text.split(/[,;\n]/).map((s) => s.trim()).filter(Boolean)) {
    const m = /^([^=]+)=(.*)$/.exec(part);
    if (!m) return { error: `"${part}": write name = value` };
    const v = readNumber(m[2]);
    if (v.error) return { error: `${m[1].trim()}: ${v.error}` };
    out[m[1].trim()] = v.value;
  }
  return { value: out };
}

/** Observation vectors as text: one `state = 1, 0` per line. */
export function observeText(o) {
  return o && typeof o === 'object' ? Object.entries(o).map(([k, v]) => `${k} = ${list(v).join(', ')}`).join('\n') : '';
}

/** Reads observation lines; empty text means no `observe`. */
export function readObserve(text) {
  const out = {};
  const lines = text.replace(/\r\n?/g, '\n').split('\n');
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i].trim();
    if (!line) continue;
    const m = /^([^=]+)=(.*)$/.exec(line);
    if (!m) return { error: `line ${i + 1}: write state = number, number, …` };
    const values = [];
    for (const p of m[2].split(/[,;\s]+/).filter(Boolean)) {
      const r = readNumber(p);
      if (r.error) return { error: `line ${i + 1}: ${r.error}` };
      values.push(r.value);
    }
    out[m[1].trim()] = values;
  }
  return { value: Object.keys(out).length ? out : undefined };
}

/** Rows as CSV text with the header the core reads. */
export function rowsCsv(rows) {
  const q = (s) => (/[",\n]/.test(String(s)) ? `"${String(s).replace(/"/g, '""')}"` : String(s));
  return ['from,action,to,probability,reward', ...list(rows).map((r) => [r.from, r.action, r.to, r.probability, r.reward].map(q).join(','))].join('\n');
}

// ---------------------------------------------------------------- formula task

function formulaEditor(doc, task) {
  const box = el(doc, 'div', { className: 'own-task' });
  const state = list(task.state);
  const vars = el(doc, 'fieldset', { className: 'subgroup' }, el(doc, 'legend', { text: 'State variables' }));
  vars.append(el(doc, 'p', { className: 'help', text: 'Each variable: its start (a number, or low, high for a uniform draw), its typical range (used to scale features, and the clip bounds when clipped).' }));
  const grid = el(doc, 'div', { className: 'task-rows vars' }, header(doc, ['Name', 'Start', 'Low', 'High', 'Clip']));
  state.forEach((v, i) => {
    const p = `task.state[${i}]`;
    const clipId = idOf(`${p}.clip`);
    const which = `of state variable ${i + 1}`;
    grid.append(el(doc, 'div', { className: 'task-row' },
      input(doc, `${p}.name`, v.name || '', `Name ${which}`, 'text', { row: true }),
      input(doc, `${p}.start`, startText(v.start), `Start ${which}`, 'start', { row: true }),
      input(doc, `${p}.low`, num(v.low), `Low ${which}`, 'number', { row: true }),
      input(doc, `${p}.high`, num(v.high), `High ${which}`, 'number', { row: true }),
      el(doc, 'div', { className: 'cell' },
        el(doc, 'label', { for: clipId, className: 'visually-hidden', text: `Clip ${which} into low, high` }),
        el(doc, 'input', { id: clipId, type: 'checkbox', checked: !!v.clip, dataset: { path: `${p}.clip`, type: 'bool' } })),
      removeButton(doc, p, `state variable ${v.name || i + 1}`)));
  });
  vars.append(grid, addButton(doc, 'state', 'Add a state variable'));
  box.append(vars);

  const continuous = Array.isArray(task.controls);
  const acts = el(doc, 'fieldset', { className: 'subgroup' }, el(doc, 'legend', { text: 'Actions' }));
  const seg = el(doc, 'div', { className: 'segmented', role: 'radiogroup', 'aria-label': 'Kind of action' });
  for (const [value, text] of [['actions', 'Discrete actions'], ['controls', 'Continuous controls']]) {
    const id = `task-action-kind-${value}`;
    seg.append(el(doc, 'input', { type: 'radio', name: 'task-action-kind', id, value, checked: (value === 'controls') === continuous, dataset: { taskActionKind: value } }),
      el(doc, 'label', { for: id, text }));
  }
  acts.append(seg);
  const rows = el(doc, 'div', { className: `task-rows ${continuous ? 'controls' : 'actions'}` });
  if (continuous) {
    acts.append(el(doc, 'p', { className: 'help', text: 'Each component is clipped into [low, high] before the formulas see it.' }));
    rows.append(header(doc, ['Name', 'Low', 'High']));
    list(task.controls).forEach((c, i) => {
      const p = `task.controls[${i}]`;
      const which = `of control ${i + 1}`;
      rows.append(el(doc, 'div', { className: 'task-row' },
        input(doc, `${p}.name`, c.name || '', `Name ${which}`, 'text', { row: true }),
        input(doc, `${p}.low`, num(c.low), `Low ${which}`, 'number', { row: true }),
        input(doc, `${p}.high`, num(c.high), `High ${which}`, 'number', { row: true }),
        removeButton(doc, p, `control ${c.name || i + 1}`)));
    });
    acts.append(rows, addButton(doc, 'controls', 'Add a control'));
  } else {
    acts.append(el(doc, 'p', { className: 'help', text: 'Each action sets named numbers the formulas see (a number an action does not set is 0).' }));
    rows.append(header(doc, ['Name', 'Sets (name = value, …)']));
    list(task.actions).forEach((a, i) => {
      const p = `task.actions[${i}]`;
      const which = `of action ${i + 1}`;
      rows.append(el(doc, 'div', { className: 'task-row' },
        input(doc, `${p}.name`, a.name || '', `Name ${which}`, 'text', { row: true }),
        input(doc, `${p}.set`, setText(a.set), `Numbers action ${i + 1} sets (name = value, …)`, 'set', { row: true }),
        removeButton(doc, p, `action ${a.name || i + 1}`)));
    });
    acts.append(rows, addButton(doc, 'actions', 'Add an action'));
  }
  box.append(acts);

  const dyn = el(doc, 'fieldset', { className: 'subgroup' }, el(doc, 'legend', { text: 'Dynamics' }));
  dyn.append(el(doc, 'p', { className: 'help', text: 'Let values are computed in order, each seeing the state, the action, dt, the constants and the let values above it. Then every update runs over the values before the step (all at once: an update never sees another\'s new value; compute a new value once in a let to use it twice). noise() and uniform() draw standard normal and uniform numbers.' }));
  list(task.let).forEach((l, i) => {
    const p = `task.let[${i}]`;
    const name = input(doc, `${p}.name`, l.name || '', `Name of let value ${i + 1}`, 'text', { row: true });
    dyn.append(el(doc, 'div', { className: 'let' },
      el(doc, 'div', { className: 'let-name' }, el(doc, 'span', { text: 'let', className: 'kw' }), name, removeButton(doc, p, `let value ${l.name || i + 1}`)),
      formulaBox(doc, `${p}.formula`, `let[${i}].formula`, l.formula, `${l.name || 'value'} =`)));
  });
  dyn.append(addButton(doc, 'let', 'Add a let value'));
  const update = task.update && typeof task.update === 'object' ? task.update : {};
  for (const v of state) {
    if (typeof v.name !== 'string' || !v.name) continue;
    dyn.append(formulaBox(doc, `task.update.${v.name}`, `update.${v.name}`, update[v.name], `next ${v.name} =`));
  }
  box.append(dyn);

  const ends = el(doc, 'fieldset', { className: 'subgroup' }, el(doc, 'legend', { text: 'Ending and reward' }));
  ends.append(
    formulaBox(doc, 'task.terminal', 'terminal', task.terminal, 'Terminal when',
      'Checked on the state the step arrives in (the names mean the new values there). Ends the episode with no bootstrap; empty: only the step limit ends it.'),
    formulaBox(doc, 'task.reward', 'reward', task.reward, 'Task reward',
      'The task\'s own reward: plain names are the state before the step, primed names (level\') after it; also the action, the let values and terminal.'),
  );
  const cid = idOf('task.constants');
  ends.append(el(doc, 'div', { className: 'field wide' },
    el(doc, 'label', { for: cid, text: 'Constants' }),
    el(doc, 'textarea', { id: cid, rows: Math.min(8, Math.max(2, Object.keys(task.constants || {}).length + 1)), spellcheck: false, autocomplete: 'off', value: constantsText(task.constants), placeholder: 'target = 0.5', dataset: { path: 'task.constants', type: 'constants' } }),
    el(doc, 'p', { className: 'help', text: 'One per line: name = value. Every task formula may use them.' })));
  box.append(ends);
  return box;
}

// ---------------------------------------------------------------- table task

function linesBox(doc, path, values, label, help, rows = 3) {
  const id = idOf(path);
  return el(doc, 'div', { className: 'field' },
    el(doc, 'label', { for: id, text: label }),
    el(doc, 'textarea', { id, rows, spellcheck: false, autocomplete: 'off', value: list(values).join('\n'), dataset: { path, type: 'lines' } }),
    el(doc, 'p', { className: 'help', text: help }));
}

function tableEditor(doc, task) {
  const box = el(doc, 'div', { className: 'own-task' });
  const names = el(doc, 'div', { className: 'grid-fields' });
  names.append(
    linesBox(doc, 'task.states', task.states, 'States', 'One name per line (letters, digits, _).', Math.min(8, Math.max(3, list(task.states).length))),
    linesBox(doc, 'task.actions', task.actions, 'Actions', 'One name per line.', Math.min(8, Math.max(3, list(task.actions).length))),
    linesBox(doc, 'task.terminal_states', task.terminal_states, 'Terminal states', 'The episode ends there; no row leaves them. Default none.'),
  );
  const sid = idOf('task.start');
  names.append(el(doc, 'div', { className: 'field' },
    el(doc, 'label', { for: sid, text: 'Start' }),
    el(doc, 'textarea', { id: sid, rows: 3, spellcheck: false, autocomplete: 'off', value: constantsText(task.start), placeholder: 'empty = 1', dataset: { path: 'task.start', type: 'constants' } }),
    el(doc, 'p', { className: 'help', text: 'One per line: state = probability; they sum to 1.' })));
  box.append(names);
  const rid = idOf('task.rows');
  const csv = el(doc, 'textarea', {
    id: rid, className: 'csv', rows: Math.min(16, Math.max(4, list(task.rows).length + 2)), spellcheck: false, autocomplete: 'off', value: rowsCsv(task.rows),
    dataset: { path: 'task.rows', type: 'csv-rows' }, 'aria-describedby': `${rid}-status`,
  });
  const file = el(doc, 'input', { type: 'file', id: 'task-rows-file', accept: '.csv,text/csv,text/plain', className: 'visually-hidden', dataset: { taskCsvFile: '1' } });
  box.append(el(doc, 'div', { className: 'field wide' },
    el(doc, 'label', { for: rid, text: 'Transitions (CSV: from, action, to, probability, reward)' }),
    csv,
    el(doc, 'div', { className: 'formula-status', id: `${rid}-status`, 'aria-live': 'polite' }),
    el(doc, 'p', { className: 'help', text: 'One row per outcome; the probabilities of each state and action sum to 1. Paste rows from a spreadsheet or open a CSV file; other columns are ignored.' }),
    el(doc, 'div', { className: 'tools' }, file, el(doc, 'button', { type: 'button', className: 'quiet small', text: 'Open a CSV file…', dataset: { taskOpenCsv: '1' } }))));
  const oid = idOf('task.observe');
  box.append(el(doc, 'div', { className: 'field wide' },
    el(doc, 'label', { for: oid, text: 'What the learner sees (optional)' }),
    el(doc, 'textarea', { id: oid, rows: 3, spellcheck: false, autocomplete: 'off', value: observeText(task.observe), placeholder: 'empty = 1, 0', dataset: { path: 'task.observe', type: 'observe' } }),
    el(doc, 'p', { className: 'help', text: 'One per line: state = numbers. States with equal numbers look alike to the learner (no tabular features then). Empty: the learner tells every state apart.' })));
  return box;
}

/** The own-task editor for a task object, or null for a built-in kind. */
export function taskEditor(doc, task) {
  const problems = el(doc, 'ul', { className: 'task-problems', id: 'task-problems', 'aria-live': 'polite' });
  const caution = el(doc, 'p', { className: 'help caution', text: 'A model written here is a sketch of your system, not a validated model of it: what critbox shows is how rewards and learners behave on the sketch.' });
  if (task.kind === 'formula') return el(doc, 'div', {}, caution, problems, formulaEditor(doc, task));
  if (task.kind === 'table') return el(doc, 'div', {}, caution, problems, tableEditor(doc, task));
  return null;
}

// ---------------------------------------------------------------- edits

/**
 * Reads a control of the own-task editor into the config (the types the
 * generic applyInput does not know). Returns {handled, structural, error}.
 */
export function applyTaskInput(config, el, wasm) {
  const type = el.dataset.type;
  const path = el.dataset.path;
  const task = config.task;
  const at = (p) => {
    const m = /^task\.(\w+)\[(\d+)\]\.(\w+)$/.exec(p);
    return m ? { list: m[1], i: Number(m[2]), key: m[3] } : null;
  };
  const fail = (message) => ({ handled: true, structural: false, error: { path, message: `${path}: ${message}` } });
  const setItem = (value) => {
    const a = at(path);
    if (!a || !Array.isArray(task[a.list]) || !task[a.list][a.i]) return false;
    if (value === undefined) delete task[a.list][a.i][a.key]; else task[a.list][a.i][a.key] = value;
    return true;
  };
  switch (type) {
    case 'start': {
      const r = readStart(el.value);
      if (r.error) return fail(r.error);
      setItem(r.value);
      return { handled: true, structural: false, error: null };
    }
    case 'set': {
      const r = readSet(el.value);
      if (r.error) return fail(r.error);
      setItem(r.value);
      return { handled: true, structural: false, error: null };
    }
    case 'observe': {
      const r = readObserve(el.value);
      if (r.error) return fail(r.error);
      if (r.value) task.observe = r.value; else delete task.observe;
      return { handled: true, structural: false, error: null };
    }
    case 'csv-rows': {
      const status = el.ownerDocument.getElementById(`${el.id}-status`);
      try {
        task.rows = JSON.parse(wasm.tableRowsFromCsv(el.value));
        if (status) { status.className = 'formula-status ok'; status.textContent = `${task.rows.length} rows read.`; }
        return { handled: true, structural: false, error: null };
      } catch (err) {
        const message = err && err.message ? err.message : String(err);
        if (status) { status.className = 'formula-status bad'; status.textContent = message; }
        return fail(message);
      }
    }
    default:
      break;
  }
  // Renaming a state variable carries its update formula to the new name.
  const m = /^task\.state\[(\d+)\]\.name$/.exec(path || '');
  if (m && task.kind === 'formula') {
    const v = list(task.state)[Number(m[1])];
    const old = v && v.name;
    if (v) v.name = el.value;
    if (task.update && typeof task.update === 'object' && old !== undefined && old !== el.value) {
      const others = list(task.state).some((w, k) => k !== Number(m[1]) && w.name === old);
      if (old in task.update && !others) {
        const f = task.update[old];
        delete task.update[old];
        if (!(el.value in task.update)) task.update[el.value] = f;
      }
    }
    return { handled: true, structural: true, error: null };
  }
  return { handled: false };
}

/** Adds a row to the editor's list `what` ('state', 'actions', 'controls', 'let'). */
export function addTaskItem(task, what) {
  const items = list(task[what]);
  const fresh = (base) => {
    const used = new Set([...list(task.state), ...list(task.actions), ...list(task.controls), ...list(task.let)].map((x) => x.name));
    let n = items.length + 1;
    while (used.has(`${base}${n}`)) n++;
    return `${base}${n}`;
  };
  if (what === 'state') {
    const name = fresh('x');
    task.state = [...items, { name, start: 0, low: -1, high: 1 }];
    task.update = { ...(task.update || {}), [name]: name };
  } else if (what === 'actions') task.actions = [...items, { name: fresh('action'), set: {} }];
  else if (what === 'controls') task.controls = [...items, { name: fresh('u'), low: -1, high: 1 }];
  else if (what === 'let') task.let = [...items, { name: fresh('v'), formula: '0' }];
}

/** Removes the item at `path` ('task.state[2]'). */
export function removeTaskItem(task, path) {
  const m = /^task\.(\w+)\[(\d+)\]$/.exec(path);
  if (!m || !Array.isArray(task[m[1]])) return;
  const [gone] = task[m[1]].splice(Number(m[2]), 1);
  if (m[1] === 'state' && gone && task.update) delete task.update[gone.name];
  if (m[1] === 'let' && !task.let.length) delete task.let;
}

/** The other kind's list, kept while a formula task's actions are switched. */
const actionStash = { actions: null, controls: null };

/** Switches a formula task between discrete actions and continuous controls. */
export function setActionKind(task, kind) {
  if (kind === 'controls' && !Array.isArray(task.controls)) {
    actionStash.actions = task.actions;
    delete task.actions;
    task.controls = actionStash.controls || [{ name: 'u', low: -1, high: 1 }];
  } else if (kind === 'actions' && !Array.isArray(task.actions)) {
    actionStash.controls = task.controls;
    delete task.controls;
    task.actions = actionStash.actions || [{ name: 'down', set: { u: -1 } }, { name: 'up', set: { u: 1 } }];
  }
}

/**
 * Shows checkTask's report: each formula's errors under its box (with the
 * reward editor's display `show(textarea, report)`) and the other problems
 * in the editor's problem list.
 */
export function showTaskCheck(doc, report, show) {
  const fields = new Map((report.fields || []).map((f) => [f.path, f]));
  for (const ta of doc.querySelectorAll('textarea[data-task-formula]')) {
    const f = fields.get(ta.dataset.taskFormula);
    show(ta, f ? { ok: !f.errors.length, errors: f.errors, names: f.names, pretty: null } : null);
  }
  const box = doc.getElementById('task-problems');
  if (!box) return;
  const other = (report.problems || []).filter((p) => !fields.has(p.path) || !(fields.get(p.path).errors || []).length);
  box.replaceChildren(...other.slice(0, 12).map((p) => el(doc, 'li', { text: p.path ? `task.${p.path}: ${p.message}` : p.message })));
  if (other.length > 12) box.append(el(doc, 'li', { text: `… and ${other.length - 12} more` }));
}
