// What every setting of an experiment is: its config key, label, default,
// range and a short explanation. The form (controls.js) is drawn from these
// tables, so a new core setting is one entry here. // Numeric and on/off settings take their default, range and help from the
// core's settings table (useCoreSettings, at boot), the same table the core's
// validation reads its ranges from; labels, layout and `when` live here.
//
// Field descriptor:
//   key      config key within its object
//   label    what the form calls it
//   type     'number' | 'int' | 'choice' | 'bool' | 'lines' | 'numbers' | 'object' | 'tagged'
//   def      the default as text for the explanation ('0.1', "the task's")
//   value    the default as a value, used when an override starts (optional)
//   range    the accepted range as text ('(0, 10]')
//   help     one short sentence
//   optional blank means absent (the core's default; for 'tagged', its default kind)
//   choices  [[value, label, help?]] for 'choice' and 'tagged'
//   fields   for 'object': its fields; for 'tagged': {tagValue: [fields]}
//   tag      the tag key of a 'tagged' object (default 'kind')
//   when     (env) => bool: shown only when true; env = {setup, task, finite, continuous, continuing}
//   wide     the control takes the whole row

// A number or whole number whose default, range and help come from the
// core's settings table (useCoreSettings fills them in; extra may still set
// `def` text for a setting without a default, and `value` to start it with).
const num = (key, label, extra = {}) => ({ key, label, type: 'number', ...extra });
const int = (key, label, extra = {}) => ({ key, label, type: 'int', ...extra });

// ---------------------------------------------------------------- tasks

const maxSteps = () => int('max_steps', 'Episode step limit');

/** Tasks by config kind: label, blurb, fields, and what the page needs to know of them. */
export const TASKS = {
  grid: {
    label: 'Rover on a warehouse floor (grid)',
    blurb: 'A rover moves north, east, south or west towards its charging dock; spills cost extra. Finite: exact values and the shaping audit apply.',
    finite: true,
    fields: [
      {
        key: 'layout', label: 'Floor', type: 'choice', optional: true, def: 'your own map', wide: true,
        help: 'A built-in floor, or your own map below.',
        choices: [['', 'Your own map'], ['rover', 'Rover floor'], ['ledge', 'Ledge walk (a cliff along the way)'], ['maze', 'One-way maze (conveyor cells)']],
      },
      {
        key: 'map', label: 'Map', type: 'lines', wide: true, def: 'the rover floor', range: 'rows of # . S D ~',
        help: '# wall, . floor, S start, D dock, ~ spill, > < ^ v one-way conveyors. One row per line.',
        when: (env) => !env.task.layout,
      },
      num('slip', 'Slip probability'),
      num('step_reward', 'Step reward'),
      num('hazard_reward', 'Spill reward'),
      { key: 'hazard_restart', label: 'A spill sends the rover back to the start', type: 'bool', def: 'off', value: false, help: 'Otherwise it only costs the spill reward.' },
      num('goal_reward', 'Dock reward'),
      maxSteps(),
    ],
  },
  cartpole: {
    label: 'Cart-pole',
    blurb: 'Keep a pole upright on a cart by pushing left or right; +1 per step until it falls or the cart leaves the track.',
    fields: [maxSteps()],
  },
  mountain_car: {
    label: 'Car on a hill (mountain car)',
    blurb: 'An underpowered car must rock back and forth to reach the hilltop; −1 per step.',
    fields: [maxSteps()],
  },
  pendulum: {
    label: 'Pendulum swing-up',
    blurb: 'Swing a pendulum up and hold it with limited torque; continuous torque by default.',
    continuous: (task) => !task.torque_levels,
    fields: [
      maxSteps(),
      num('dt', 'Time step (s)'),
      int('torque_levels', 'Torque levels'),
    ],
  },
  server: {
    label: 'Server admitting jobs (continuing)',
    blurb: 'Admit or reject arriving jobs of different pay into a few slots. Never ends: curves show the mean reward per step.',
    finite: true,
    continuing: true,
    fields: [
      int('slots', 'Slots'),
      { key: 'payments', label: 'Payment per class', type: 'numbers', def: '1, 2, 4', value: [1, 2, 4], range: '1 to 4 classes, each in [−1000, 1000]', help: 'Paid on admitting a job, lowest class first.' },
      num('arrival', 'Arrival probability'),
      { key: 'mix', label: 'Class mix', type: 'numbers', def: '0.5, 0.3, 0.2', value: [0.5, 0.3, 0.2], range: 'one share per class, summing to 1', help: 'Share of each class among arriving jobs.' },
      num('finish_prob', 'Finish probability'),
      int('max_steps', 'Report window (steps)'),
    ],
  },
  corridor: {
    label: 'Short corridor (switched actions)',
    blurb: 'Four cells where the actions are reversed in the second; the agent cannot tell the cells apart, so the best policy is stochastic.',
    finite: true,
    fields: [maxSteps()],
  },
  lqr: {
    label: 'Linear-quadratic regulator',
    blurb: 'Drive x to 0: x′ = a·x + b·u + noise, cost q·x² + r·u². Continuous action; the optimal gain is known exactly.',
    continuous: () => true,
    fields: [
      num('a', 'a (state coefficient)'),
      num('b', 'b (action coefficient)'),
      num('q', 'q (state cost)'),
      num('r', 'r (action cost)'),
      num('noise', 'Noise SD'),
      num('start', 'Start range', { def: '1', value: 1, range: '(0, x limit]', help: 'Start states are uniform in [−start, start].' }),
      num('u_max', 'Action limit'),
      num('x_max', 'State limit'),
      num('discount', 'Task discount'),
      maxSteps(),
    ],
  },
  random_mdp: {
    label: 'Random finite model',
    blurb: 'A small random MDP drawn from its own seed; exact values are known.',
    finite: true,
    continuing: (task) => !!task.continuing,
    fields: [
      int('states', 'States'),
      int('actions', 'Actions'),
      int('seed', 'Model seed'),
      { key: 'continuing', label: 'Continuing (no terminal state)', type: 'bool', def: 'off', value: false, help: 'Curves then show the mean reward per step.' },
      num('discount', 'Task discount'),
      maxSteps(),
    ],
  },
  formula: {
    label: 'Your own model (formulas)',
    blurb: 'Write a small model of your own system: state variables, actions or controls, update formulas, when an episode ends and the task\'s own reward. Every learner, study and statistic runs on it; the exact shaping audit needs a finite task (a table).',
    editor: 'formula',
    continuous: (task) => Array.isArray(task.controls),
    fields: [
      num('dt', 'Control step (dt)'),
      int('substeps', 'Integration substeps'),
      num('discount', 'Task discount'),
      maxSteps(),
    ],
  },
  table: {
    label: 'Your own finite model (table)',
    blurb: 'Write a finite model as a table of transitions (or paste it as CSV). Finite: exact values, the exact shaping audit and Inspect work on it.',
    editor: 'table',
    finite: (task) => !task.observe,
    continuing: (task) => !!task.continuing,
    fields: [
      { key: 'continuing', label: 'Continuing (no terminal state)', type: 'bool', def: 'off', value: false, help: 'Curves then show the mean reward per step.' },
      num('discount', 'Task discount'),
      maxSteps(),
    ],
  },
};

/** Facts about a task config the form needs (before the core has checked it). */
export function taskFacts(task) {
  const t = TASKS[task && task.kind] || {};
  const get = (f) => (typeof f === 'function' ? !!f(task || {}) : !!f);
  return { finite: get(t.finite), continuous: get(t.continuous), continuing: get(t.continuing) };
}

// ---------------------------------------------------------------- learners

const FEATURE_FIELDS = {
  tabular: [],
  tiles: [
    int('tilings', 'Tilings'),
    int('intervals', 'Intervals'),
    int('hash', 'Hash size'),
  ],
  fourier: [int('order', 'Order')],
  rbf: [
    int('centers', 'Centres per variable'),
    num('width', 'Width'),
  ],
  poly: [int('degree', 'Degree')],
};
const FEATURE_CHOICES = [
  ['tabular', 'Tabular', 'One weight per state (finite tasks).'],
  ['tiles', 'Tile coding'],
  ['fourier', 'Fourier basis'],
  ['rbf', 'Radial basis'],
  ['poly', 'Polynomial'],
];

const features = (label = 'Features', help = 'What the linear actor and critic see.') => ({
  key: 'features', label, type: 'tagged', optional: true, def: 'tabular on finite tasks, tiles otherwise',
  help, choices: FEATURE_CHOICES, fields: FEATURE_FIELDS,
});

const approx = (key, label, help) => ({
  key, label, type: 'tagged', optional: true, def: 'linear over the features', help,
  choices: [['linear', 'Linear'], ['mlp', 'Neural network (MLP)']],
  fields: {
    linear: [{ ...features('Own features', 'Features for this function only.'), def: 'the shared features' }],
    mlp: [
      { key: 'hidden', label: 'Hidden units per layer', type: 'numbers', def: '32', value: [32], range: '1 to 4 layers of 1 to 512', help: 'For example 64, 64 for two layers.' },
      { key: 'activation', label: 'Activation', type: 'choice', def: 'tanh', value: 'tanh', choices: [['tanh', 'tanh'], ['relu', 'ReLU']] },
    ],
  },
});

const uses = (...families) => (env) => families.includes(env.setup.family || 'a2c');

/** The learner setup (config `base`, and what a variant's `learner` overrides). */
export const LEARNER_FIELDS = [
  {
    key: 'family', label: 'Learner', type: 'choice', def: 'A2C', value: 'a2c', wide: true,
    help: 'Which actor-critic family trains the policy.',
    choices: [
      ['a2c', 'A2C: state-value critic, TD or n-step/GAE advantages'],
      ['qac', 'QAC: action-value (Sarsa) critic'],
      ['reinforce', 'REINFORCE: Monte Carlo returns, with a baseline'],
      ['off_policy', 'Off-policy actor-critic (importance weights)'],
      ['deterministic', 'Deterministic actor-critic (continuous actions)'],
      ['differential', 'Differential actor-critic (average reward, continuing tasks)'],
    ],
  },
  num('discount', 'Discount γ', { value: 0.99, optional: true, when: (env) => env.setup.family !== 'differential' }),
  num('actor_step', 'Actor step size'),
  num('critic_step', 'Critic step size'),
  num('entropy', 'Entropy bonus β', { when: (env) => env.setup.family !== 'deterministic' }),
  {
    key: 'baseline', label: 'Baseline', type: 'choice', def: 'none', value: 'none', when: uses('reinforce'),
    help: 'What REINFORCE subtracts from the return to cut the gradient\'s variance.',
    choices: [['none', 'None'], ['average', 'Running average of returns'], ['value', 'Learned state value (critic)'], ['optimal', 'Variance-minimising constant']],
  },
  num('baseline_rate', 'Baseline rate',
    { when: (env) => env.setup.family === 'reinforce' && ['average', 'optimal'].includes(env.setup.baseline) }),
  int('segment', 'Steps per update n', { when: uses('a2c') }),
  num('lambda', 'GAE λ', { when: uses('a2c') }),
  {
    key: 'behaviour', label: 'Behaviour policy', type: 'object', when: uses('off_policy'),
    fields: [
      {
        key: 'kind', label: 'Behaves with', type: 'choice', def: 'uniform', value: 'uniform',
        help: 'The policy that chooses the actions while the target policy learns.',
        choices: [['uniform', 'Uniformly random'], ['epsilon_mix', 'Mostly the target policy (ε-mix)'], ['snapshot', 'A frozen copy, refreshed']],
      },
      num('epsilon', 'ε', { when: (env) => env.setup.behaviour?.kind === 'epsilon_mix' }),
      int('snapshot_every', 'Refresh every (steps)', { when: (env) => env.setup.behaviour?.kind === 'snapshot' }),
    ],
  },
  num('rho_cap', 'Importance weight cap', { value: 1, optional: true, when: uses('off_policy') }),
  num('noise_std', 'Exploration noise', { when: uses('deterministic') }),
  {
    key: 'replay', label: 'Replay buffer', type: 'object', when: uses('deterministic'),
    fields: [
      int('capacity', 'Capacity'),
      int('batch', 'Batch', { when: (env) => (env.setup.replay?.capacity || 0) > 0 }),
    ],
  },
  num('target_tau', 'Target update rate τ', { when: uses('deterministic') }),
  num('average_step', 'Average-reward step', { when: uses('differential') }),
  features(),
  approx('actor', 'Actor', 'The policy\'s function.'),
  { ...approx('critic', 'Critic', 'The value function.'), def: 'linear over the features (deterministic learner: over degree-2 polynomials of state and action)' },
  {
    key: 'optimizer', label: 'Optimizer', type: 'object',
    fields: [
      { key: 'kind', label: 'Update rule', type: 'choice', def: 'SGD', value: 'sgd', choices: [['sgd', 'SGD'], ['adam', 'Adam']], help: 'How gradient steps are applied.' },
      num('clip', 'Clip norm', { value: 1, optional: true }),
      num('beta1', 'Adam β1', { when: (env) => env.setup.optimizer?.kind === 'adam' }),
      num('beta2', 'Adam β2', { when: (env) => env.setup.optimizer?.kind === 'adam' }),
      num('epsilon', 'Adam ε', { when: (env) => env.setup.optimizer?.kind === 'adam' }),
    ],
  },
  {
    key: 'policy', label: 'Gaussian policy', type: 'object', when: (env) => env.continuous && env.setup.family !== 'deterministic',
    fields: [
      num('log_std', 'Initial log SD'),
      { key: 'sd_trainable', label: 'Learn the SD', type: 'bool', def: 'on', value: true, help: 'Otherwise the SD stays fixed.' },
    ],
  },
];

/** The reward modes. */
export const REWARD_MODES = [
  ['base', 'Task reward', 'The task\'s own reward; no formula.'],
  ['replace', 'Replace', 'The formula\'s value is the reward.'],
  ['bonus', 'Add a bonus', 'The reward is the task\'s reward plus the formula.'],
  ['potential', 'Potential shaping', 'The formula is a potential Φ(s); the reward is r + γΦ(s′) − Φ(s), which leaves the best policy unchanged.'],
];

/** The explanation under a field: help, default and range. */
export function explain(f) {
  const parts = [];
  if (f.help) parts.push(f.help);
  const tail = [];
  if (f.def !== undefined && f.def !== '') tail.push(`Default ${f.def}`);
  if (f.range) tail.push(`range ${f.range}`);
  if (tail.length) parts.push(`${tail.join('; ')}.`);
  return parts.join(' ');
}

/** Top-level learner fields a variant may override, shown for this setup. */
export function overridable(env) {
  return LEARNER_FIELDS.filter((f) => !f.when || f.when(env));
}

/** Each field's path in the core's settings table (`null` if it has none). */
function corePaths() {
  const out = [];
  for (const [kind, t] of Object.entries(TASKS)) for (const f of t.fields) out.push([`task.${kind}.${f.key}`, f]);
  const learner = (fields, prefix) => {
    for (const f of fields) {
      if (f.type === 'object') learner(f.fields, `${prefix}${f.key}.`);
      else out.push([`${prefix}${f.key}`, f]);
    }
  };
  learner(LEARNER_FIELDS, 'learner.');
  for (const fields of Object.values(FEATURE_FIELDS)) learner(fields, 'learner.features.');
  return out;
}

/**
 * Fills every field's default, range and help from the core's settings
 * table (JSON of `settingsTable()`). Returns the paths of fields the table
 * does not describe (for tests).
 * @param {Array<{path: string, default: any, default_text: string, range_text: string|null, help: string}>} table
 */
export function useCoreSettings(table) {
  const byPath = new Map(table.map((s) => [s.path, s]));
  const missing = [];
  for (const [path, f] of corePaths()) {
    const s = byPath.get(path);
    if (!s) { missing.push(path); continue; }
    f.def = f.type === 'bool' ? (s.default ? 'on' : 'off') : s.default_text;
    if (s.default !== null) f.value = s.default;
    if (s.range_text) f.range = s.range_text.replace(/-/g, '−');
    f.help = s.help;
  }
  return missing;
}
