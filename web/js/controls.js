// Drawing the experiment sheet. The config object is the one source of
// truth: the sheet is drawn from it (renderSheet) using the setting tables
// of settings.js, each control carrying the config path it writes to
// (configedit.js applies the edits). Also the formula check's display and
// finding the control of a path named in a message. Text from configs is
// only ever set as .value or .textContent.

import { studySection } from './studyedit.js';
import { TASKS, LEARNER_FIELDS, REWARD_MODES, explain, overridable, taskFacts } from './settings.js';
import { idOf, merge, constantsText, fieldByKey } from './configedit.js';
import { taskEditor } from './taskedit.js';
import { el } from './dom.js';

/** The form's fixed elements. */
export function findControls(doc) {
  const $ = (id) => doc.getElementById(id);
  return {
    doc,
    form: $('experiment'),
    presets: $('presets'),
    title: $('title'),
    showHelp: $('show-help'),
    taskKind: $('task-kind'),
    taskBlurb: $('task-blurb'),
    taskFields: $('task-fields'),
    reward: $('reward-editor'),
    baseFields: $('base-fields'),
    variants: $('variants'),
    addVariant: $('add-variant'),
    seeds: $('seeds'),
    steps: $('steps'),
    masterSeed: $('master-seed'),
  };
}

// ---------------------------------------------------------------- drawing fields

function fmtValue(v) {
  return typeof v === 'number' && Number.isFinite(v) ? String(v) : '';
}

/**
 * The control(s) of one field at `path` (its full config path), showing
 * `value` (undefined: not set). Returns a .field element.
 */
function fieldControl(doc, f, path, value, env, opts = {}) {
  const id = idOf(path);
  const helpId = `${id}-help`;
  const wrap = el(doc, 'div', { className: `field${f.wide || f.type === 'lines' || f.type === 'object' || f.type === 'tagged' ? ' wide' : ''}` });
  const help = el(doc, 'p', { className: 'help', id: helpId, text: explain(f) });
  const label = (text = f.label) => el(doc, 'label', { for: id, text: opts.labelPrefix ? `${opts.labelPrefix}${text}` : text });
  const common = { id, dataset: { path, type: f.type === 'tagged' ? 'tag' : f.type, optional: String(!!f.optional) }, 'aria-describedby': helpId };
  switch (f.type) {
    case 'number':
    case 'int': {
      const input = el(doc, 'input', { ...common, type: 'text', inputMode: 'decimal', autocomplete: 'off', spellcheck: false, value: fmtValue(value), placeholder: f.optional || value === undefined ? f.def : '' });
      wrap.append(label(), input, help);
      break;
    }
    case 'numbers': {
      const input = el(doc, 'input', { ...common, type: 'text', autocomplete: 'off', spellcheck: false, value: Array.isArray(value) ? value.join(', ') : '', placeholder: f.def });
      wrap.append(label(), input, help);
      break;
    }
    case 'lines': {
      const rows = Array.isArray(value) ? value : [];
      const ta = el(doc, 'textarea', { ...common, rows: Math.min(12, Math.max(3, rows.length)), cols: 20, spellcheck: false, autocomplete: 'off', value: rows.join('\n') });
      wrap.append(label(), ta, help);
      break;
    }
    case 'bool': {
      const input = el(doc, 'input', { ...common, type: 'checkbox', checked: value === undefined ? !!f.value : !!value });
      const lab = el(doc, 'label', { for: id, className: 'check' });
      lab.append(input, doc.createTextNode(` ${opts.labelPrefix || ''}${f.label}`));
      wrap.classList.add('bool');
      wrap.append(lab, help);
      break;
    }
    case 'choice': {
      const s = el(doc, 'select', common);
      if (f.optional) s.append(el(doc, 'option', { value: '', text: `${f.def} (default)` }));
      for (const [v, text] of f.choices) s.append(el(doc, 'option', { value: v, text }));
      const cur = value === undefined ? (f.optional ? '' : f.value) : value;
      s.value = [...s.options].some((o) => o.value === cur) ? cur : (f.optional ? '' : f.choices[0][0]);
      const chosen = f.choices.find(([v]) => v === s.value);
      if (chosen && chosen[2]) help.textContent = `${explain(f)} ${chosen[2]}`;
      wrap.append(label(), s, help);
      break;
    }
    case 'tagged': {
      const tag = f.tag || 'kind';
      const obj = value && typeof value === 'object' ? value : null;
      const tagPath = `${path}.${tag}`;
      const s = el(doc, 'select', { ...common, id: idOf(tagPath), dataset: { path: tagPath, type: 'tag', optional: String(!!f.optional) } });
      if (f.optional) s.append(el(doc, 'option', { value: '', text: `${f.def} (default)` }));
      for (const [v, text] of f.choices) s.append(el(doc, 'option', { value: v, text }));
      s.value = obj && [...s.options].some((o) => o.value === obj[tag]) ? obj[tag] : (f.optional ? '' : f.choices[0][0]);
      const lab = el(doc, 'label', { for: idOf(tagPath), text: `${opts.labelPrefix || ''}${f.label}` });
      const box = el(doc, 'div', { className: 'sub' });
      box.append(lab, s, help);
      const sub = obj ? f.fields[obj[tag]] || [] : [];
      if (sub.length) {
        const grid = el(doc, 'div', { className: 'grid-fields' });
        for (const g of sub) {
          if (g.when && !g.when(env)) continue;
          grid.append(fieldControl(doc, g, `${path}.${g.key}`, obj[g.key], env, { labelPrefix: '' }));
        }
        box.append(grid);
      }
      wrap.append(box);
      break;
    }
    case 'object': {
      const obj = value && typeof value === 'object' ? value : {};
      const fs = el(doc, 'fieldset', { className: 'subgroup' });
      fs.append(el(doc, 'legend', { text: `${opts.labelPrefix || ''}${f.label}` }));
      const grid = el(doc, 'div', { className: 'grid-fields' });
      for (const g of f.fields) {
        if (g.when && !g.when(env)) continue;
        grid.append(fieldControl(doc, g, `${path}.${g.key}`, obj[g.key], env));
      }
      fs.append(grid);
      wrap.append(fs);
      break;
    }
    default:
      throw new Error(`settings: unknown field type ${f.type}`);
  }
  return wrap;
}

/** Draw fields into a container: their values from `obj`, paths under `prefix`. */
function drawFields(doc, container, fields, obj, prefix, env) {
  const grid = el(doc, 'div', { className: 'grid-fields' });
  for (const f of fields) {
    if (f.when && !f.when(env)) continue;
    grid.append(fieldControl(doc, f, prefix ? `${prefix}.${f.key}` : f.key, obj ? obj[f.key] : undefined, env));
  }
  container.replaceChildren(grid);
}

// ---------------------------------------------------------------- reward editor

/**
 * A reward editor for the reward object at `path` ('reward' or
 * 'variants[i].reward'). `reward` may be undefined (the task's own).
 */
function rewardEditor(doc, path, reward, { caption = 'Reward the learners train on' } = {}) {
  const r = reward && typeof reward === 'object' ? reward : { mode: 'base' };
  const mode = REWARD_MODES.some(([m]) => m === r.mode) ? r.mode : 'base';
  const box = el(doc, 'div', { className: 'reward', dataset: { rewardPath: path } });
  const group = el(doc, 'div', { className: 'segmented wrap', role: 'radiogroup', 'aria-label': caption });
  for (const [m, text, help] of REWARD_MODES) {
    const id = `${idOf(path)}-mode-${m}`;
    const input = el(doc, 'input', { type: 'radio', name: `${idOf(path)}-mode`, id, value: m, checked: m === mode, dataset: { rewardMode: path } });
    group.append(input, el(doc, 'label', { for: id, text, title: help }));
  }
  const modeHelp = el(doc, 'p', { className: 'help', text: (REWARD_MODES.find(([m]) => m === mode) || [])[2] || '' });
  box.append(group, modeHelp);
  if (mode !== 'base') {
    const fid = idOf(`${path}.formula`);
    const ta = el(doc, 'textarea', {
      id: fid, className: 'formula', rows: 3, spellcheck: false, autocomplete: 'off', value: typeof r.formula === 'string' ? r.formula : '',
      dataset: { path: `${path}.formula`, type: 'text', formula: path }, 'aria-describedby': `${fid}-status ${fid}-help`,
    });
    const status = el(doc, 'div', { className: 'formula-status', id: `${fid}-status`, 'aria-live': 'polite' });
    const help = el(doc, 'p', { className: 'help', id: `${fid}-help`, text: mode === 'potential'
      ? 'Φ(s) of the current state only (no primes, no action). Operators + − * / ^, comparisons, and, or, not, if … then … else, functions such as abs, min, max, exp, sqrt. Default: none; at most 4096 characters.'
      : 'Use state variables (row, row′ written row\' for the next state), action, base, terminal, t, gamma and your constants; operators + − * / ^, comparisons, and, or, not, if … then … else, functions such as abs, min, max. At most 4096 characters.' });
    const names = el(doc, 'details', { className: 'names' });
    names.append(el(doc, 'summary', { text: 'Names you can use' }), el(doc, 'ul', { className: 'name-list', dataset: { namesFor: path } }));
    const cid = idOf(`${path}.constants`);
    const consts = el(doc, 'textarea', {
      id: cid, rows: Math.min(6, Math.max(2, Object.keys(r.constants || {}).length + 1)), spellcheck: false, autocomplete: 'off', value: constantsText(r.constants), placeholder: 'dock_row = 5',
      dataset: { path: `${path}.constants`, type: 'constants' }, 'aria-describedby': `${cid}-help`,
    });
    box.append(
      el(doc, 'label', { for: fid, text: mode === 'potential' ? 'Potential Φ(s)' : mode === 'bonus' ? 'Bonus formula' : 'Reward formula' }),
      ta, status, help, names,
      el(doc, 'label', { for: cid, text: 'Constants' }), consts,
      el(doc, 'p', { className: 'help', id: `${cid}-help`, text: 'One per line: name = value. Default none; at most 32, finite values.' }),
    );
  }
  return box;
}

/**
 * Show a formula check (checkFormula's JSON) under its textarea: the error
 * with its place marked, or the formula as the core reads it.
 */
export function showFormulaCheck(doc, textarea, report) {
  const status = doc.getElementById(`${textarea.id}-status`);
  if (!status) return;
  const text = textarea.value;
  status.replaceChildren();
  status.classList.remove('bad', 'ok');
  if (!report) return;
  if (report.ok) {
    status.classList.add('ok');
    status.append(el(doc, 'span', { text: 'Reads as ' }), el(doc, 'code', { text: report.pretty || text }));
    textarea.removeAttribute('aria-invalid');
  } else {
    status.classList.add('bad');
    textarea.setAttribute('aria-invalid', 'true');
    const e = (report.errors || [])[0] || {};
    const start = Math.max(0, Math.min(text.length, e.start ?? 0));
    const end = Math.max(start, Math.min(text.length, e.end ?? start));
    const mirror = el(doc, 'div', { className: 'formula-mirror', 'aria-hidden': 'true' });
    mirror.append(doc.createTextNode(text.slice(0, start)), el(doc, 'mark', { text: text.slice(start, end) || ' ' }), doc.createTextNode(text.slice(end)));
    const msg = `column ${e.column ?? start + 1}: ${e.message || 'not a valid formula'}${e.hint ? ` (${e.hint})` : ''}`;
    status.append(mirror, el(doc, 'p', { className: 'formula-error', text: msg }));
  }
  const list = doc.querySelector(`[data-names-for="${CSS.escape(textarea.dataset.formula || textarea.dataset.taskFormula || '')}"]`);
  if (list && Array.isArray(report.names)) {
    list.replaceChildren(...report.names.map((n) => {
      const b = el(doc, 'button', { type: 'button', className: 'name', text: n.name, title: n.doc, dataset: { insert: n.name, into: textarea.id } });
      return el(doc, 'li', {}, b, el(doc, 'span', { className: 'help', text: ` ${n.doc}` }));
    }));
  }
}

// ---------------------------------------------------------------- the sheet

/** The environment `when` conditions see for a learner setup. */
export function envFor(config, setup) {
  const task = (config && config.task) || {};
  return { setup: setup || {}, task, ...taskFacts(task) };
}

/** Fill the task kind list once. */
function ensureTaskKinds(els) {
  if (els.taskKind.options.length) return;
  for (const [kind, t] of Object.entries(TASKS)) {
    els.taskKind.append(el(els.doc, 'option', { value: kind, text: t.label }));
  }
}

/** Draw the whole form from a config. */
export function renderSheet(els, config) {
  const doc = els.doc;
  ensureTaskKinds(els);
  els.title.value = typeof config.title === 'string' ? config.title : '';
  const task = config.task && typeof config.task === 'object' ? config.task : {};
  const kind = TASKS[task.kind] ? task.kind : '';
  if (!kind) {
    if (!els.taskKind.querySelector('option[value=""]')) els.taskKind.prepend(el(doc, 'option', { value: '', text: '(unknown task)' }));
  } else {
    els.taskKind.querySelector('option[value=""]')?.remove();
  }
  els.taskKind.value = kind;
  els.taskBlurb.textContent = kind ? TASKS[kind].blurb : `This page does not know the task kind ${JSON.stringify(task.kind)}.`;
  const baseEnv = envFor(config, config.base);
  drawFields(doc, els.taskFields, kind ? TASKS[kind].fields : [], task, 'task', baseEnv);
  const own = kind && TASKS[kind].editor ? taskEditor(doc, task) : null;
  if (own) els.taskFields.prepend(own);
  els.reward.replaceChildren(rewardEditor(doc, 'reward', config.reward));
  drawFields(doc, els.baseFields, LEARNER_FIELDS, config.base || {}, 'base', baseEnv);
  renderVariants(els, config);
  for (const input of els.form.querySelectorAll('[data-static]')) {
    input.value = fmtValue(config[input.dataset.path]);
  }
}

/** Rebuild the variant cards from config.variants. */
export function renderVariants(els, config) {
  const doc = els.doc;
  const variants = Array.isArray(config.variants) ? config.variants : [];
  els.variants.replaceChildren(...variants.map((v, i) => variantCard(doc, config, v, i, variants.length)));
}

function variantCard(doc, config, variant, i, count) {
  const v = variant && typeof variant === 'object' ? variant : {};
  const learner = v.learner && typeof v.learner === 'object' ? v.learner : {};
  const setup = merge(config.base || {}, learner);
  const env = envFor(config, setup);
  const li = el(doc, 'li', { className: 'variant', dataset: { index: String(i) } });
  const labelPath = `variants[${i}].label`;
  const labelId = idOf(labelPath);
  const head = el(doc, 'div', { className: 'head' });
  const labelBox = el(doc, 'div', { className: 'field' },
    el(doc, 'label', { for: labelId, text: `Variant ${i + 1} label` }),
    el(doc, 'input', { id: labelId, type: 'text', autocomplete: 'off', spellcheck: false, value: String(v.label ?? ''), dataset: { path: labelPath, type: 'text' }, 'aria-describedby': `${labelId}-help` }));
  const tools = el(doc, 'div', { className: 'tools' },
    el(doc, 'button', { type: 'button', className: 'quiet small', text: 'Duplicate', dataset: { duplicate: String(i) }, 'aria-label': `Duplicate variant ${i + 1}`, disabled: count >= 8 }),
    el(doc, 'button', { type: 'button', className: 'quiet small remove', text: 'Remove', dataset: { remove: String(i) }, 'aria-label': `Remove variant ${i + 1}`, disabled: count <= 1 }));
  head.append(labelBox, tools);
  li.append(head, el(doc, 'p', { className: 'help', id: `${labelId}-help`, text: 'Shown in the plots and tables; 1 to 60 characters, unique.' }));

  const list = el(doc, 'ul', { className: 'overrides', 'aria-label': `Settings variant ${i + 1} changes` });
  const known = LEARNER_FIELDS.map((f) => f.key);
  const keys = [...known.filter((k) => k in learner), ...Object.keys(learner).filter((k) => !known.includes(k))];
  for (const key of keys) {
    const f = fieldByKey(key);
    const row = el(doc, 'li', { className: 'override' });
    const path = `variants[${i}].learner.${key}`;
    if (f) {
      row.append(fieldControl(doc, f, path, learner[key], env));
    } else {
      row.append(el(doc, 'p', { className: 'help', text: `${key} = ${JSON.stringify(learner[key])} (not a setting this page knows; kept as it is)` }));
    }
    row.append(el(doc, 'button', { type: 'button', className: 'quiet small drop', text: '×', dataset: { drop: path }, 'aria-label': `Use the shared ${f ? f.label : key} in variant ${i + 1}` }));
    list.append(row);
  }
  if (v.reward !== undefined) {
    const row = el(doc, 'li', { className: 'override' });
    const fs = el(doc, 'fieldset', { className: 'subgroup' });
    fs.append(el(doc, 'legend', { text: 'Own reward' }), rewardEditor(doc, `variants[${i}].reward`, v.reward, { caption: `Reward of variant ${i + 1}` }));
    row.append(fs, el(doc, 'button', { type: 'button', className: 'quiet small drop', text: '×', dataset: { drop: `variants[${i}].reward` }, 'aria-label': `Use the shared reward in variant ${i + 1}` }));
    list.append(row);
  }
  if (!keys.length && v.reward === undefined) {
    list.append(el(doc, 'li', { className: 'same help', text: 'Same as the shared learner and reward.' }));
  }
  li.append(list);

  const addId = `${idOf(`variants[${i}]`)}-add`;
  const add = el(doc, 'select', { id: addId, dataset: { addOverride: String(i) } });
  add.append(el(doc, 'option', { value: '', text: 'Change a setting for this variant…' }));
  for (const f of overridable(env)) {
    if (!(f.key in learner)) add.append(el(doc, 'option', { value: f.key, text: f.label }));
  }
  if (v.reward === undefined) add.append(el(doc, 'option', { value: '#reward', text: 'Its own reward' }));
  li.append(el(doc, 'div', { className: 'field add' }, el(doc, 'label', { for: addId, className: 'visually-hidden', text: `Change a setting for variant ${i + 1}` }), add));
  li.append(studySection(doc, v, i, env, setup, v.reward !== undefined ? v.reward : config.reward));
  return li;
}

/** The control showing `path` (or its nearest parent path), or null. */
export function controlForPath(els, path) {
  let p = path;
  while (p) {
    const hits = [...els.form.querySelectorAll('[data-path]')].filter((e) => e.dataset.path === p && !e.closest('[hidden]'));
    if (hits.length) return hits[0];
    const cut = Math.max(p.lastIndexOf('.'), p.lastIndexOf('['));
    p = cut > 0 ? p.slice(0, cut) : '';
  }
  return null;
}
