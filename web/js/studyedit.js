// The study editor in a variant card: sweep one or two of the variant's
// numeric settings (a list of values, or n values spaced evenly in log2 from
// 2^from to 2^to), which makes the experiment a study (tuning seeds choose
// each variant's point, fresh seeds report it; see the core's
// experiment/study.rs). studySection draws it from the config;
// applySweepEdit writes an edit of one of its controls back into
// config.variants[i].sweep. The core judges every value: its messages name
// `variants[i].sweep.PATH`, which the controls carry as their data-path.

import { LEARNER_FIELDS } from './settings.js';

/** Most settings one variant may sweep (the core's MAX_AXES). */
export const MAX_SWEPT = 2;

function el(doc, tag, props = {}, ...children) {
  const e = doc.createElement(tag);
  for (const [k, v] of Object.entries(props)) {
    if (k === 'text') e.textContent = v;
    else if (k === 'className') e.className = v;
    else if (k === 'dataset') Object.assign(e.dataset, v);
    else if (v === true) e.setAttribute(k, '');
    else if (v !== false && v !== undefined && v !== null) e.setAttribute(k, String(v));
  }
  e.append(...children);
  return e;
}

/**
 * The settings a variant may sweep for its setup `env`: every number or
 * whole-number learner setting shown for it (nested ones dotted, e.g.
 * `optimizer.beta1`) and every constant of its reward
 * (`reward.constants.NAME`). [{key, label, value}] with the current value.
 */
export function sweepable(env, setup, reward) {
  const out = [];
  const visit = (fields, prefix, obj, labelPrefix) => {
    for (const f of fields) {
      if (f.when && !f.when(env)) continue;
      const key = prefix ? `${prefix}.${f.key}` : f.key;
      const here = obj && typeof obj === 'object' ? obj[f.key] : undefined;
      if (f.type === 'number' || f.type === 'int') {
        out.push({ key, label: labelPrefix ? `${labelPrefix}: ${f.label}` : f.label, value: typeof here === 'number' ? here : f.value });
      } else if (f.type === 'object' && Array.isArray(f.fields)) {
        visit(f.fields, key, here, f.label);
      }
    }
  };
  visit(LEARNER_FIELDS, '', setup, '');
  const constants = reward && reward.constants && typeof reward.constants === 'object' ? reward.constants : {};
  for (const [name, value] of Object.entries(constants)) {
    out.push({ key: `reward.constants.${name}`, label: `Reward constant ${name}`, value });
  }
  return out;
}

/** A first grid for a setting now at `value`: a log2 range of 5 values around it, or a few values near 0. */
export function startingSweep(value) {
  if (typeof value === 'number' && value > 0 && Number.isFinite(value)) {
    const e = Math.round(Math.log2(value));
    return { log2: [e - 2, e + 2], count: 5 };
  }
  return [0, 0.01, 0.1];
}

/** "0.01, 0.03, 0.1" → numbers, or null when some entry is not a number. */
export function parseValues(text) {
  const parts = String(text).split(/[\s,;]+/).filter(Boolean);
  const nums = parts.map(Number);
  return parts.length && nums.every(Number.isFinite) ? nums : null;
}

/**
 * The study section of variant `i`'s card.
 * @param {Document} doc
 * @param {object} variant config.variants[i]
 * @param {number} i
 * @param {object} env envFor(config, setup)
 * @param {object} setup the variant's merged learner setup
 * @param {object} reward the reward the variant trains on
 */
export function studySection(doc, variant, i, env, setup, reward) {
  const sweep = variant.sweep && typeof variant.sweep === 'object' && !Array.isArray(variant.sweep) ? variant.sweep : {};
  const box = el(doc, 'div', { className: 'study', 'aria-label': `Study of variant ${i + 1}` });
  const choices = sweepable(env, setup, reward);
  const labelOf = (key) => (choices.find((c) => c.key === key) || { label: key }).label;
  for (const [key, spec] of Object.entries(sweep)) {
    const path = `variants[${i}].sweep.${key}`;
    const row = el(doc, 'div', { className: 'sweep-row', dataset: { sweepRow: key } });
    const log = spec && typeof spec === 'object' && !Array.isArray(spec);
    const base = { sweep: String(i), sweepKey: key };
    const id = (part) => `v${i}-sweep-${key.replace(/[^a-z0-9_]/gi, '-')}-${part}`;
    const mode = el(doc, 'select', { id: id('mode'), dataset: { ...base, sweepPart: 'mode' }, 'aria-label': `How ${labelOf(key)} is swept` },
      el(doc, 'option', { value: 'list', text: 'these values' }),
      el(doc, 'option', { value: 'log2', text: 'a log2 range' }));
    mode.value = log ? 'log2' : 'list';
    row.append(el(doc, 'span', { className: 'sweep-name', text: `Sweep ${labelOf(key)} over` }), mode);
    if (log) {
      const [from, to] = Array.isArray(spec.log2) ? spec.log2 : ['', ''];
      const num = (part, value, label) => el(doc, 'input', {
        id: id(part), type: 'text', inputmode: 'decimal', value: String(value ?? ''), className: 'short',
        dataset: { ...base, sweepPart: part, path }, 'aria-label': label,
      });
      row.append(
        el(doc, 'span', { text: '2^' }), num('from', from, `${labelOf(key)}: lowest exponent`),
        el(doc, 'span', { text: 'to 2^' }), num('to', to, `${labelOf(key)}: highest exponent`),
        el(doc, 'span', { text: 'in' }), num('count', spec.count, `${labelOf(key)}: number of values`),
        el(doc, 'span', { text: 'values' }));
    } else {
      const values = Array.isArray(spec) ? spec.join(', ') : '';
      row.append(el(doc, 'input', {
        id: id('values'), type: 'text', value: values, dataset: { ...base, sweepPart: 'values', path },
        'aria-label': `Values of ${labelOf(key)}, separated by commas`,
      }));
    }
    row.append(el(doc, 'button', {
      type: 'button', className: 'quiet small drop', text: '×', dataset: { sweepDrop: String(i), sweepKey: key },
      'aria-label': `Stop sweeping ${labelOf(key)} in variant ${i + 1}`,
    }));
    // Every control gets a label element (read by screen readers, not shown).
    for (const c of row.querySelectorAll('select[aria-label], input[aria-label]')) {
      c.before(el(doc, 'label', { for: c.id, className: 'visually-hidden', text: c.getAttribute('aria-label') }));
      c.removeAttribute('aria-label');
    }
    box.append(row);
  }
  const count = Object.keys(sweep).length;
  if (count < MAX_SWEPT) {
    const add = el(doc, 'select', { id: `v${i}-sweep-add`, dataset: { sweepAdd: String(i) } });
    add.append(el(doc, 'option', { value: '', text: count ? 'Sweep a second setting…' : 'Sweep a setting (a study)…' }));
    for (const c of choices) if (!(c.key in sweep)) add.append(el(doc, 'option', { value: c.key, text: c.label }));
    box.append(el(doc, 'label', { for: `v${i}-sweep-add`, className: 'visually-hidden', text: `Sweep a setting of variant ${i + 1}` }), add);
  }
  if (count) {
    box.append(el(doc, 'p', {
      className: 'help',
      text: 'Every point of the grid runs on the tuning seeds; the best (by the Scoring criterion) is then run on fresh seeds, and only those runs are scored and compared.',
    }));
  }
  return box;
}

/** Add a swept setting `key` to variant `i` with a first grid around its current value. */
export function addSweep(config, i, key, currentValue) {
  const v = config.variants[i];
  if (!v.sweep || typeof v.sweep !== 'object' || Array.isArray(v.sweep)) v.sweep = {};
  v.sweep[key] = startingSweep(currentValue);
}

/** Stop sweeping `key` in variant `i` (the sweep goes when it is empty). */
export function dropSweep(config, i, key) {
  const v = config.variants[i];
  if (!v || !v.sweep) return;
  delete v.sweep[key];
  if (!Object.keys(v.sweep).length) delete v.sweep;
}

/**
 * Apply an edit of a study control. Returns {structural, error}: structural
 * when the form must be redrawn (the mode changed), error text when the
 * control's text cannot be read (the config keeps the text as typed so the
 * core names the problem too).
 */
export function applySweepEdit(config, target) {
  const i = Number(target.dataset.sweep);
  const key = target.dataset.sweepKey;
  const v = config.variants[i];
  if (!v || !v.sweep || !(key in v.sweep)) return { structural: true };
  const part = target.dataset.sweepPart;
  const spec = v.sweep[key];
  if (part === 'mode') {
    const list = Array.isArray(spec) ? spec : null;
    if (target.value === 'log2' && list) {
      const pos = list.filter((x) => typeof x === 'number' && x > 0);
      const e = pos.length ? pos.map(Math.log2) : [-4, 0];
      v.sweep[key] = { log2: [Math.floor(Math.min(...e)), Math.ceil(Math.max(...e))], count: Math.max(2, list.length) };
    } else if (target.value === 'list' && !list) {
      const [from, to] = Array.isArray(spec.log2) ? spec.log2 : [-4, 0];
      const n = Number.isInteger(spec.count) ? spec.count : 5;
      v.sweep[key] = Array.from({ length: n }, (_, k) => 2 ** (from + (n > 1 ? ((to - from) * k) / (n - 1) : 0)));
    }
    return { structural: true };
  }
  if (part === 'values') {
    const nums = parseValues(target.value);
    v.sweep[key] = nums || target.value;
    return { structural: false, error: nums ? null : 'give numbers separated by commas' };
  }
  const text = target.value.trim();
  const x = Number(text);
  const ok = text !== '' && Number.isFinite(x) && (part !== 'count' || Number.isInteger(x));
  const range = spec && typeof spec === 'object' && !Array.isArray(spec) ? spec : { log2: [0, 0], count: 2 };
  if (!Array.isArray(range.log2)) range.log2 = [0, 0];
  if (part === 'count') range.count = ok ? x : text;
  else range.log2[part === 'from' ? 0 : 1] = ok ? x : text;
  v.sweep[key] = range;
  return { structural: false, error: ok ? null : part === 'count' ? 'a whole number' : 'a number' };
}
