// The experiment form ↔ config object. writeForm fills the form from a config;
// readForm builds a config from the form, starting from the previous config so
// settings the form does not show (curve_points, final_fraction, keys a preset
// adds) are kept. Field names in messages are config paths, as in the wasm
// validator's messages. Text from configs is only ever set as .value or
// .textContent.

const ALGOS = [['a2c', 'A2C'], ['qac', 'QAC']];
const FEATURES = [['tabular', 'Tabular'], ['tiles', 'Tiles']];
const DEFAULT_TILES = { kind: 'tiles', tilings: 8, intervals: 8, hash: 4096 };

/** A small rover map of our own, used when the form switches to the grid
 * task from a config that has none. */
export const DEFAULT_GRID_TASK = {
  kind: 'grid',
  map: ['#########', '#S..#...#', '#.#.~.#.#', '#...#..D#', '#########'],
  slip: 0.0,
  step_reward: -1,
  hazard_reward: -10,
  goal_reward: 0,
  max_steps: 200,
};
export const DEFAULT_CARTPOLE_TASK = { kind: 'cartpole', max_steps: 500 };

/** The form's elements by role. */
export function findControls(doc) {
  const $ = (id) => doc.getElementById(id);
  return {
    form: $('experiment'),
    preset: $('preset'),
    title: $('title'),
    kindGrid: $('task-grid'),
    kindCartpole: $('task-cartpole'),
    gridFields: $('grid-fields'),
    cartpoleFields: $('cartpole-fields'),
    map: $('map'),
    slip: $('slip'),
    stepReward: $('step-reward'),
    hazardReward: $('hazard-reward'),
    goalReward: $('goal-reward'),
    maxSteps: $('max-steps'),
    poleMaxSteps: $('pole-max-steps'),
    algo: $('algo'),
    discount: $('discount'),
    actorStep: $('actor-step'),
    criticStep: $('critic-step'),
    features: $('features'),
    tileFields: $('tile-fields'),
    tilings: $('tilings'),
    intervals: $('intervals'),
    hash: $('hash'),
    variants: $('variants'),
    addVariant: $('add-variant'),
    seeds: $('seeds'),
    steps: $('steps'),
    masterSeed: $('master-seed'),
    finalFraction: $('final-fraction'),
    curvePoints: $('curve-points'),
    threshold: $('threshold'),
    detectDifference: $('detect-difference'),
  };
}

function setNum(input, v) {
  input.value = typeof v === 'number' && Number.isFinite(v) ? String(v) : '';
}

/** Fill the whole form from a config object. */
export function writeForm(els, config) {
  els.title.value = typeof config.title === 'string' ? config.title : '';
  const task = config.task || {};
  const isPole = task.kind === 'cartpole';
  els.kindGrid.checked = !isPole;
  els.kindCartpole.checked = isPole;
  const grid = isPole ? DEFAULT_GRID_TASK : { ...DEFAULT_GRID_TASK, ...task };
  els.map.value = Array.isArray(grid.map) ? grid.map.join('\n') : String(grid.map ?? '');
  const rows = els.map.value.split('\n').length;
  els.map.rows = Math.min(12, Math.max(3, rows));
  setNum(els.slip, grid.slip);
  setNum(els.stepReward, grid.step_reward);
  setNum(els.hazardReward, grid.hazard_reward);
  setNum(els.goalReward, grid.goal_reward);
  setNum(els.maxSteps, grid.max_steps);
  setNum(els.poleMaxSteps, (isPole ? { ...DEFAULT_CARTPOLE_TASK, ...task } : DEFAULT_CARTPOLE_TASK).max_steps);

  const base = config.base || {};
  els.algo.value = base.algo === 'qac' ? 'qac' : 'a2c';
  setNum(els.discount, base.discount);
  setNum(els.actorStep, base.actor_step);
  setNum(els.criticStep, base.critic_step);
  const feat = base.features || { kind: 'tabular' };
  els.features.value = feat.kind === 'tiles' ? 'tiles' : 'tabular';
  const tiles = feat.kind === 'tiles' ? { ...DEFAULT_TILES, ...feat } : DEFAULT_TILES;
  setNum(els.tilings, tiles.tilings);
  setNum(els.intervals, tiles.intervals);
  setNum(els.hash, tiles.hash);

  setNum(els.seeds, config.seeds);
  setNum(els.steps, config.steps);
  setNum(els.masterSeed, config.master_seed);
  setNum(els.finalFraction, config.final_fraction ?? 0.1);
  setNum(els.curvePoints, config.curve_points ?? 40);
  setNum(els.threshold, config.threshold);
  setNum(els.detectDifference, config.detect_difference);

  renderVariants(els, config);
  refreshForm(els);
}

/** Show the fields that apply (grid vs cart-pole, tile settings) and put the
 * shared values into the variant placeholders. Call after every edit. */
export function refreshForm(els) {
  const isPole = els.kindCartpole.checked;
  els.gridFields.hidden = isPole;
  els.cartpoleFields.hidden = !isPole;
  els.tileFields.hidden = els.features.value !== 'tiles';
  const shared = {
    algo: els.algo.selectedOptions[0]?.textContent || '',
    features: (FEATURES.find(([v]) => v === els.features.value) || ['', ''])[1],
    actor: els.actorStep.value,
    critic: els.criticStep.value,
    discount: els.discount.value,
  };
  for (const card of els.variants.children) {
    const q = (k) => card.querySelector(`[data-key="${k}"]`);
    q('algo').options[0].textContent = `shared (${shared.algo})`;
    q('features').options[0].textContent = `shared (${shared.features})`;
    q('actor_step').placeholder = shared.actor;
    q('critic_step').placeholder = shared.critic;
    q('discount').placeholder = shared.discount;
  }
  const removes = els.variants.querySelectorAll('button.remove');
  for (const b of removes) b.disabled = removes.length <= 1;
}

/** Rebuild the variant cards from config.variants. */
export function renderVariants(els, config) {
  const list = els.variants;
  list.replaceChildren();
  const variants = Array.isArray(config.variants) ? config.variants : [];
  variants.forEach((v, i) => list.append(variantCard(v, i)));
}

function variantCard(variant, i) {
  const learner = (variant && typeof variant.learner === 'object' && variant.learner) || {};
  const li = document.createElement('li');
  li.className = 'variant';
  li.dataset.index = String(i);

  const head = document.createElement('div');
  head.className = 'head';
  const label = field(`v${i}-label`, `Variant ${i + 1} label`, textInput(variant?.label ?? ''), `variants[${i}].label`, 'label');
  head.append(label);
  const remove = document.createElement('button');
  remove.type = 'button';
  remove.className = 'remove quiet';
  remove.textContent = 'Remove';
  remove.dataset.remove = String(i);
  remove.setAttribute('aria-label', `Remove variant ${i + 1}`);
  head.append(remove);
  li.append(head);

  const featKind = learner.features && typeof learner.features === 'object' ? learner.features.kind ?? '' : '';
  const row1 = document.createElement('div');
  row1.className = 'row';
  row1.append(
    field(`v${i}-algo`, 'Algorithm', select([['', 'shared'], ...ALGOS], learner.algo ?? ''), `variants[${i}].learner.algo`, 'algo'),
    field(`v${i}-features`, 'Features', select([['', 'shared'], ...FEATURES], featKind), `variants[${i}].learner.features`, 'features'),
  );
  const row2 = document.createElement('div');
  row2.className = 'row three';
  row2.append(
    field(`v${i}-actor`, 'Actor step', numInput(learner.actor_step), `variants[${i}].learner.actor_step`, 'actor_step'),
    field(`v${i}-critic`, 'Critic step', numInput(learner.critic_step), `variants[${i}].learner.critic_step`, 'critic_step'),
    field(`v${i}-discount`, 'Discount', numInput(learner.discount), `variants[${i}].learner.discount`, 'discount'),
  );
  li.append(row1, row2);
  return li;
}

function field(id, labelText, control, path, key) {
  const div = document.createElement('div');
  div.className = 'field';
  const label = document.createElement('label');
  label.htmlFor = id;
  label.textContent = labelText;
  control.id = id;
  control.dataset.path = path;
  control.dataset.key = key;
  div.append(label, control);
  return div;
}

function textInput(value) {
  const input = document.createElement('input');
  input.type = 'text';
  input.autocomplete = 'off';
  input.spellcheck = false;
  input.value = String(value);
  return input;
}

function numInput(value) {
  const input = document.createElement('input');
  input.type = 'number';
  input.step = 'any';
  setNum(input, value);
  return input;
}

function select(options, value) {
  const s = document.createElement('select');
  for (const [v, text] of options) {
    const o = document.createElement('option');
    o.value = v;
    o.textContent = text;
    s.append(o);
  }
  s.value = options.some(([v]) => v === value) ? value : '';
  return s;
}

/**
 * Read a number field. Returns {value} (value undefined when blank and
 * optional) or {error: {path, message}}.
 */
function readNum(input, path, { optional = false, integer = false } = {}) {
  if (input.validity && input.validity.badInput) {
    return { error: { path, message: `${path}: not a number` } };
  }
  const text = input.value.trim();
  if (text === '') {
    return optional ? { value: undefined } : { error: { path, message: `${path}: enter a number` } };
  }
  const value = Number(text);
  if (!Number.isFinite(value)) return { error: { path, message: `${path}: not a number, got ${text}` } };
  if (integer && !Number.isInteger(value)) {
    return { error: { path, message: `${path}: must be a whole number, got ${text}` } };
  }
  return { value };
}

/** The map textarea as rows: line ends normalised, blank lines at the ends dropped. */
export function mapRows(text) {
  const rows = text.replace(/\r\n?/g, '\n').split('\n').map((r) => r.replace(/\s+$/, ''));
  while (rows.length && rows[rows.length - 1] === '') rows.pop();
  while (rows.length && rows[0] === '') rows.shift();
  return rows;
}

/** A deep copy of plain JSON data. */
function copy(x) {
  return x === undefined ? undefined : JSON.parse(JSON.stringify(x));
}

/**
 * Build a config from the form over `prev`.
 * @returns {{config: object, error: null | {path: string, message: string}}}
 *   error is the first problem the form itself can see (a blank or non-number
 *   field); range checks are left to validateConfig.
 */
export function readForm(els, prev) {
  const cfg = copy(prev) || {};
  let error = null;
  const num = (input, path, opts) => {
    const r = readNum(input, path, opts);
    if (r.error) { error = error || r.error; return undefined; }
    return r.value;
  };

  cfg.schema = cfg.schema ?? 1;
  cfg.title = els.title.value;

  const prevTask = (prev && prev.task) || {};
  if (els.kindCartpole.checked) {
    cfg.task = {
      ...(prevTask.kind === 'cartpole' ? prevTask : DEFAULT_CARTPOLE_TASK),
      kind: 'cartpole',
      max_steps: num(els.poleMaxSteps, 'task.max_steps', { integer: true }),
    };
  } else {
    cfg.task = {
      ...(prevTask.kind === 'grid' ? prevTask : DEFAULT_GRID_TASK),
      kind: 'grid',
      map: mapRows(els.map.value),
      slip: num(els.slip, 'task.slip'),
      step_reward: num(els.stepReward, 'task.step_reward'),
      hazard_reward: num(els.hazardReward, 'task.hazard_reward'),
      goal_reward: num(els.goalReward, 'task.goal_reward'),
      max_steps: num(els.maxSteps, 'task.max_steps', { integer: true }),
    };
  }

  const prevBase = (prev && prev.base) || {};
  const featKind = els.features.value;
  let features;
  if (featKind === 'tiles') {
    features = {
      ...(prevBase.features && prevBase.features.kind === 'tiles' ? prevBase.features : {}),
      kind: 'tiles',
      tilings: num(els.tilings, 'base.features.tilings', { integer: true }),
      intervals: num(els.intervals, 'base.features.intervals', { integer: true }),
      hash: num(els.hash, 'base.features.hash', { integer: true }),
    };
  } else {
    features = { ...(prevBase.features && prevBase.features.kind === 'tabular' ? prevBase.features : {}), kind: 'tabular' };
  }
  cfg.base = {
    ...prevBase,
    algo: els.algo.value,
    discount: num(els.discount, 'base.discount'),
    actor_step: num(els.actorStep, 'base.actor_step'),
    critic_step: num(els.criticStep, 'base.critic_step'),
    features,
  };

  const prevVariants = (prev && Array.isArray(prev.variants)) ? prev.variants : [];
  cfg.variants = [...els.variants.children].map((card, i) => {
    const q = (k) => card.querySelector(`[data-key="${k}"]`);
    const old = prevVariants[i] || {};
    const v = { ...copy(old), label: q('label').value };
    const learner = copy(old.learner) || {};
    const setOrDrop = (key, value) => { if (value === undefined || value === '') delete learner[key]; else learner[key] = value; };
    setOrDrop('algo', q('algo').value);
    for (const key of ['actor_step', 'critic_step', 'discount']) {
      setOrDrop(key, num(q(key), `variants[${i}].learner.${key}`, { optional: true }));
    }
    const fk = q('features').value;
    if (fk === '') delete learner.features;
    else if (old.learner && old.learner.features && old.learner.features.kind === fk) learner.features = copy(old.learner.features);
    else if (fk === 'tiles') learner.features = features.kind === 'tiles' ? { ...features } : { ...DEFAULT_TILES };
    else learner.features = { kind: fk };
    if (Object.keys(learner).length) v.learner = learner; else delete v.learner;
    return v;
  });

  cfg.seeds = num(els.seeds, 'seeds', { integer: true });
  cfg.steps = num(els.steps, 'steps', { integer: true });
  cfg.master_seed = num(els.masterSeed, 'master_seed', { integer: true });
  const optional = (key, input, opts) => {
    const v = num(input, key, { optional: true, ...opts });
    if (v === undefined) delete cfg[key]; else cfg[key] = v;
  };
  optional('final_fraction', els.finalFraction);
  optional('curve_points', els.curvePoints, { integer: true });
  optional('threshold', els.threshold);
  optional('detect_difference', els.detectDifference);
  return { config: cfg, error };
}

/** A new variant for the list: a label not yet used, every learner field shared. */
export function newVariant(config) {
  const used = new Set((config.variants || []).map((v) => v.label));
  let n = (config.variants || []).length + 1;
  while (used.has(`Variant ${n}`)) n++;
  return { label: `Variant ${n}` };
}

/**
 * The config path at the start of a validation message ("variants[1].learner.actor_step: must be ..."),
 * or ''.
 */
export function pathOfMessage(message) {
  const m = /^\s*([A-Za-z_]\w*(?:\[\d+\])*(?:\.[A-Za-z_]\w*(?:\[\d+\])*)*)\s*:/.exec(message || '');
  return m ? m[1] : '';
}

/** The control showing `path` (or its nearest parent path), or null. */
export function controlForPath(els, path) {
  let p = path;
  while (p) {
    const hits = [...els.form.querySelectorAll('[data-path]')].filter((el) => el.dataset.path === p && !el.closest('[hidden]'));
    if (hits.length) return hits[0];
    const cut = Math.max(p.lastIndexOf('.'), p.lastIndexOf('['));
    p = cut > 0 ? p.slice(0, cut) : '';
  }
  return null;
}
