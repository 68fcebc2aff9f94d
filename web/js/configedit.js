// Edits of the experiment config, with no drawing: config paths
// ('variants[1].learner.actor_step'), reading what is typed into a control
// (numbers, map rows, constants) and writing it at the control's path
// (applyInput), and the structural edits the sheet offers (reward modes,
// variant overrides, task switches, new and copied variants). The config
// object is the one source of truth; controls.js draws the sheet from it.

import { STARTER_FORMULA, STARTER_TABLE } from './starters.js';
import { LEARNER_FIELDS, taskFacts } from './settings.js';

/** A small rover map of our own, used when a config gives none. */
export const DEFAULT_GRID_TASK = {
  kind: 'grid',
  map: ['#########', '#S..#...#', '#.#.~.#.#', '#...#..D#', '#########'],
  slip: 0.0,
  step_reward: -1,
  hazard_reward: -10,
  goal_reward: 0,
  max_steps: 200,
};

// ---------------------------------------------------------------- paths

/** 'variants[1].learner.actor_step' → ['variants', 1, 'learner', 'actor_step']. */
export function parsePath(path) {
  const out = [];
  for (const part of String(path).split('.')) {
    const m = /^([^[\]]*)((?:\[\d+\])*)$/.exec(part);
    if (!m) throw new Error(`bad config path ${path}`);
    if (m[1]) out.push(m[1]);
    for (const i of m[2].matchAll(/\[(\d+)\]/g)) out.push(Number(i[1]));
  }
  return out;
}

export function getAt(obj, path) {
  let o = obj;
  for (const k of parsePath(path)) {
    if (o === null || typeof o !== 'object') return undefined;
    o = o[k];
  }
  return o;
}

export function setAt(obj, path, value) {
  const segs = parsePath(path);
  let o = obj;
  for (let i = 0; i < segs.length - 1; i++) {
    const k = segs[i];
    if (o[k] === null || typeof o[k] !== 'object') o[k] = typeof segs[i + 1] === 'number' ? [] : {};
    o = o[k];
  }
  o[segs[segs.length - 1]] = value;
}

/** Delete the key at path; then drop objects left empty on the way (never the root's own keys). */
export function deleteAt(obj, path) {
  const segs = parsePath(path);
  const chain = [obj];
  let o = obj;
  for (let i = 0; i < segs.length - 1; i++) {
    o = o?.[segs[i]];
    if (o === null || typeof o !== 'object') return;
    chain.push(o);
  }
  delete o[segs[segs.length - 1]];
  for (let i = segs.length - 2; i >= 1; i--) {
    const parent = chain[i];
    const key = segs[i];
    const child = parent[key];
    if (child && typeof child === 'object' && !Array.isArray(child) && Object.keys(child).length === 0 && PRUNABLE.has(key)) {
      delete parent[key];
    } else break;
  }
}
const PRUNABLE = new Set(['optimizer', 'policy', 'behaviour', 'replay', 'constants', 'learner']);

/** An id for the control of a config path. */
export function idOf(path) {
  return `f-${String(path).replace(/[[\].]+/g, '-').replace(/-+$/, '')}`;
}

/** A deep copy of plain JSON data. */
export function copy(x) {
  return x === undefined ? undefined : JSON.parse(JSON.stringify(x));
}

/** Deep merge as the core does it: objects key by key, anything else replaces. */
export function merge(base, over) {
  if (base && over && typeof base === 'object' && typeof over === 'object' && !Array.isArray(base) && !Array.isArray(over)) {
    const out = { ...base };
    for (const [k, v] of Object.entries(over)) out[k] = k in out ? merge(out[k], v) : v;
    return out;
  }
  return over === undefined ? base : over;
}

// ---------------------------------------------------------------- reading input

const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/** Text → number, or an error message. */
export function readNumber(text, { integer = false } = {}) {
  const t = String(text).trim().replace(/\u2212/g, '-');
  if (!NUMBER.test(t)) return { error: `not a number, got ${JSON.stringify(String(text).slice(0, 40))}` };
  const v = Number(t);
  if (!Number.isFinite(v)) return { error: `not a finite number, got ${t}` };
  if (integer && !Number.isInteger(v)) return { error: `must be a whole number, got ${t}` };
  return { value: v };
}

/** The map textarea as rows: line ends normalised, blank lines at the ends dropped. */
export function mapRows(text) {
  const rows = text.replace(/\r\n?/g, '\n').split('\n').map((r) => r.replace(/\s+$/, ''));
  while (rows.length && rows[rows.length - 1] === '') rows.pop();
  while (rows.length && rows[0] === '') rows.shift();
  return rows;
}

/** "name = value" lines → {constants} or {error}. */
export function readConstants(text) {
  const out = {};
  const lines = text.replace(/\r\n?/g, '\n').split('\n');
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i].trim();
    if (!line || line.startsWith('#')) continue;
    const m = /^([^=]+)=(.*)$/.exec(line);
    if (!m) return { error: `line ${i + 1}: write name = value` };
    const name = m[1].trim();
    const v = readNumber(m[2]);
    if (v.error) return { error: `line ${i + 1} (${name}): ${v.error}` };
    out[name] = v.value;
  }
  return { constants: out };
}

export function constantsText(c) {
  return c && typeof c === 'object' ? Object.entries(c).map(([k, v]) => `${k} = ${v}`).join('\n') : '';
}

/**
 * Write a control's value into the config.
 * @returns {{structural: boolean, error: null | {path, message}}}
 *   structural: the form must be redrawn (a choice changed what is shown).
 */
export function applyInput(config, el) {
  const path = el.dataset.path;
  const type = el.dataset.type;
  if (!path || !type) return { structural: false, error: null };
  const optional = el.dataset.optional === 'true';
  const fail = (message) => ({ structural: false, error: { path, message: `${path}: ${message}` } });
  switch (type) {
    case 'number':
    case 'int': {
      if (el.value.trim() === '') {
        if (!optional) return fail('enter a number');
        deleteAt(config, path);
        return { structural: false, error: null };
      }
      const r = readNumber(el.value, { integer: type === 'int' });
      if (r.error) return fail(r.error);
      setAt(config, path, r.value);
      return { structural: false, error: null };
    }
    case 'numbers': {
      const parts = el.value.split(/[,;\s]+/).filter(Boolean);
      if (!parts.length) {
        if (optional) { deleteAt(config, path); return { structural: false, error: null }; }
        return fail('enter one or more numbers, separated by commas');
      }
      const values = [];
      for (const p of parts) {
        const r = readNumber(p);
        if (r.error) return fail(r.error);
        values.push(r.value);
      }
      setAt(config, path, values);
      return { structural: false, error: null };
    }
    case 'text':
      if (optional && el.value === '') deleteAt(config, path); else setAt(config, path, el.value);
      return { structural: false, error: null };
    case 'lines':
      setAt(config, path, mapRows(el.value));
      return { structural: false, error: null };
    case 'constants': {
      const r = readConstants(el.value);
      if (r.error) return fail(r.error);
      if (Object.keys(r.constants).length) setAt(config, path, r.constants); else deleteAt(config, path);
      return { structural: true, error: null };
    }
    case 'bool':
      setAt(config, path, el.checked);
      return { structural: true, error: null };
    case 'choice':
      if (el.value === '' && optional) deleteAt(config, path); else setAt(config, path, el.value);
      return { structural: true, error: null };
    case 'tag': {
      // A tagged object's kind: keep the object only if the kind is the same.
      const objPath = path.slice(0, path.lastIndexOf('.'));
      const tagKey = path.slice(path.lastIndexOf('.') + 1);
      const old = getAt(config, objPath);
      if (el.value === '') deleteAt(config, objPath);
      else if (!old || old[tagKey] !== el.value) setAt(config, objPath, { [tagKey]: el.value });
      return { structural: true, error: null };
    }
    case 'task-kind':
      return { structural: true, error: null }; // handled by switchTask
    default:
      return { structural: false, error: null };
  }
}

// ---------------------------------------------------------------- structural edits

/** Formula and constants kept while a reward is switched to the task's own. */
const rewardStash = new Map();

/** Switch a reward's mode (from a radio button). Returns nothing; the caller redraws. */
export function setRewardMode(config, path, mode) {
  const cur = getAt(config, path);
  const isVariant = path !== 'reward';
  if (mode === 'base') {
    if (cur && (cur.formula || cur.constants)) rewardStash.set(path, { formula: cur.formula, constants: cur.constants });
    if (isVariant) setAt(config, path, { mode: 'base' }); else deleteAt(config, path);
    return;
  }
  const kept = rewardStash.get(path) || {};
  const next = { mode, formula: cur?.formula ?? kept.formula ?? '', ...(cur?.constants || kept.constants ? { constants: cur?.constants ?? kept.constants } : {}) };
  setAt(config, path, next);
}

/** The learner setting called `key`, or undefined. */
export function fieldByKey(key) {
  return LEARNER_FIELDS.find((f) => f.key === key);
}

/** Start overriding `key` in variant i: the shared value (or the default) first. */
export function addOverride(config, i, key) {
  const v = config.variants[i];
  if (key === '#reward') {
    v.reward = copy(config.reward) || { mode: 'base' };
    return `variants[${i}].reward`;
  }
  const f = fieldByKey(key);
  if (!f) return '';
  const shared = config.base ? config.base[key] : undefined;
  let start = copy(shared);
  if (start === undefined) {
    if (f.type === 'object') start = {};
    else if (f.type === 'tagged') start = { [f.tag || 'kind']: f.choices[0][0] };
    else start = f.value;
  }
  v.learner = { ...(v.learner && typeof v.learner === 'object' ? v.learner : {}), [key]: start ?? null };
  if (v.learner[key] === null) delete v.learner[key];
  return `variants[${i}].learner.${key}`;
}

/** Stop overriding (path 'variants[i].learner.key' or 'variants[i].reward'). */
export function dropOverride(config, path) {
  deleteAt(config, path);
  const m = /^variants\[(\d+)\]/.exec(path);
  if (m) {
    const v = config.variants[Number(m[1])];
    if (v && v.learner && Object.keys(v.learner).length === 0) delete v.learner;
  }
}

/** Switch the task kind, keeping each kind's last settings for a switch back. */
const taskMemo = new Map();
export function switchTask(config, kind) {
  const old = config.task;
  if (old && old.kind) taskMemo.set(old.kind, copy(old));
  const starter = { grid: { kind: 'grid', layout: 'rover' }, formula: STARTER_FORMULA, table: STARTER_TABLE }[kind];
  config.task = taskMemo.get(kind) || copy(starter || { kind });
  // Tabular features need a finite task: fall back to the default features.
  if (!taskFacts(config.task).finite && config.base && config.base.features && config.base.features.kind === 'tabular') {
    delete config.base.features;
  }
}

/** A new variant for the list: a label not yet used, every learner field shared. */
export function newVariant(config) {
  const used = new Set((config.variants || []).map((v) => v.label));
  let n = (config.variants || []).length + 1;
  while (used.has(`Variant ${n}`)) n++;
  return { label: `Variant ${n}` };
}

/** A copy of variant i with a label not yet used. */
export function duplicateVariant(config, i) {
  const v = copy(config.variants[i]);
  const used = new Set((config.variants || []).map((x) => x.label));
  let label = `${v.label} (copy)`;
  for (let n = 2; used.has(label); n++) label = `${v.label} (copy ${n})`;
  v.label = label.slice(0, 60);
  return v;
}

/**
 * The config path at the start of a validation message ("variants[1].learner.actor_step: must be ..."),
 * or ''.
 */
export function pathOfMessage(message) {
  const m = /^\s*([A-Za-z_]\w*(?:\[\d+\])*(?:\.[A-Za-z_]\w*(?:\[\d+\])*)*)\s*:/.exec(message || '');
  return m ? m[1] : '';
}
