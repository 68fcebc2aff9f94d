// What every setting of an experiment is: its config key, label, default,
// range and a short explanation. The form (controls.js) is drawn from these
// tables, so a new core setting is one entry here. The ranges repeat the
// core's checks for the explanations only: the core (validateConfig) stays
// the judge, and its messages name the field.
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

const num = (key, label, def, range, help, extra = {}) => ({ key, label, type: 'number', def: String(def), value: def, range, help, ...extra });
const int = (key, label, def, range, help, extra = {}) => ({ key, label, type: 'int', def: String(def), value: def, range, help, ...extra });

// ---------------------------------------------------------------- tasks

const maxSteps = (def, help = 'An episode is cut (and bootstrapped) after this many steps.') =>
  int('max_steps', 'Episode step limit', def, '[1, 100000]', help);

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
      num('slip', 'Slip probability', 0, '[0, 0.5]', 'Chance that a move goes sideways instead.'),
      num('step_reward', 'Step reward', -1, '[−1000, 1000]', 'Reward for every move.'),
      num('hazard_reward', 'Spill reward', -10, '[−1000, 1000]', 'Extra reward for entering a spill.'),
      { key: 'hazard_restart', label: 'A spill sends the rover back to the start', type: 'bool', def: 'off', value: false, help: 'Otherwise it only costs the spill reward.' },
      num('goal_reward', 'Dock reward', 0, '[−1000, 1000]', 'Extra reward for reaching the dock.'),
      maxSteps(200),
    ],
  },
  cartpole: {
    label: 'Cart-pole',
    blurb: 'Keep a pole upright on a cart by pushing left or right; +1 per step until it falls or the cart leaves the track.',
    fields: [maxSteps(500)],
  },
  mountain_car: {
    label: 'Car on a hill (mountain car)',
    blurb: 'An underpowered car must rock back and forth to reach the hilltop; −1 per step.',
    fields: [maxSteps(1000)],
  },
  pendulum: {
    label: 'Pendulum swing-up',
    blurb: 'Swing a pendulum up and hold it with limited torque; continuous torque by default.',
    continuous: (task) => !task.torque_levels,
    fields: [
      maxSteps(1000, 'Steps per episode (at the default step of 0.02 s, 1000 steps are 20 s).'),
      num('dt', 'Time step (s)', 0.02, '[0.001, 0.1]', 'Control and integration step.'),
      int('torque_levels', 'Torque levels', 0, '0, or [2, 21]', '0: a continuous torque; n: n evenly spaced torques (discrete actions).'),
    ],
  },
  server: {
    label: 'Server admitting jobs (continuing)',
    blurb: 'Admit or reject arriving jobs of different pay into a few slots. Never ends: curves show the mean reward per step.',
    finite: true,
    continuing: true,
    fields: [
      int('slots', 'Slots', 3, '[1, 10]', 'Jobs that can run at once.'),
      { key: 'payments', label: 'Payment per class', type: 'numbers', def: '1, 2, 4', value: [1, 2, 4], range: '1 to 4 classes, each in [−1000, 1000]', help: 'Paid on admitting a job, lowest class first.' },
      num('arrival', 'Arrival probability', 0.9, '[0, 1]', 'Chance a job arrives in a step.'),
      { key: 'mix', label: 'Class mix', type: 'numbers', def: '0.5, 0.3, 0.2', value: [0.5, 0.3, 0.2], range: 'one share per class, summing to 1', help: 'Share of each class among arriving jobs.' },
      num('finish_prob', 'Finish probability', 0.2, '(0, 1]', 'Chance a busy slot finishes its job in a step.'),
      int('max_steps', 'Report window (steps)', 1000, '[1, 100000]', 'The task never ends; every this many steps one point of mean reward is recorded.'),
    ],
  },
  corridor: {
    label: 'Short corridor (switched actions)',
    blurb: 'Four cells where the actions are reversed in the second; the agent cannot tell the cells apart, so the best policy is stochastic.',
    finite: true,
    fields: [maxSteps(1000)],
  },
  lqr: {
    label: 'Linear-quadratic regulator',
    blurb: 'Drive x to 0: x′ = a·x + b·u + noise, cost q·x² + r·u². Continuous action; the optimal gain is known exactly.',
    continuous: () => true,
    fields: [
      num('a', 'a (state coefficient)', 1, '[−10, 10]', 'How x carries over.'),
      num('b', 'b (action coefficient)', 1, '[−10, 10], not 0', 'How the action moves x.'),
      num('q', 'q (state cost)', 1, '[0, 100]', 'Cost per unit of x².'),
      num('r', 'r (action cost)', 1, '(0, 100]', 'Cost per unit of u².'),
      num('noise', 'Noise SD', 0, '[0, 10]', 'Standard deviation of the process noise.'),
      num('start', 'Start range', 1, '(0, x limit]', 'Start states are uniform in [−start, start].'),
      num('u_max', 'Action limit', 3, '(0, 100]', 'Largest |u|.'),
      num('x_max', 'State limit', 4, '(0, 1000]', 'A wall at ±this.'),
      num('discount', 'Task discount', 0.9, '[0, 1]', 'Used when the learner sets none.'),
      maxSteps(30),
    ],
  },
  random_mdp: {
    label: 'Random finite model',
    blurb: 'A small random MDP drawn from its own seed; exact values are known.',
    finite: true,
    continuing: (task) => !!task.continuing,
    fields: [
      int('states', 'States', 5, '[2, 50]', 'Non-terminal states.'),
      int('actions', 'Actions', 3, '[2, 10]', 'Actions per state.'),
      int('seed', 'Model seed', 1, '[0, 2^53 − 1]', 'Draws the model (not the runs).'),
      { key: 'continuing', label: 'Continuing (no terminal state)', type: 'bool', def: 'off', value: false, help: 'Curves then show the mean reward per step.' },
      num('discount', 'Task discount', 0.9, '[0, 1]', 'Used when the learner sets none.'),
      maxSteps(100, 'Episode limit, or the report window of a continuing model.'),
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
    int('tilings', 'Tilings', 8, '[1, 64]', 'Offset tilings; step sizes are divided by this.'),
    int('intervals', 'Intervals', 8, '[1, 64]', 'Intervals per state variable in each tiling.'),
    int('hash', 'Hash size', 4096, '0 or [16, 4194304]', 'Tiles are hashed into this many weights (0: no hashing).'),
  ],
  fourier: [int('order', 'Order', 3, '[0, 20]', 'Highest frequency per variable; (order+1)^d features.')],
  rbf: [
    int('centers', 'Centres per variable', 5, '[2, 32]', 'centres^d Gaussian bumps on a grid.'),
    num('width', 'Width', 1, '[0.1, 10]', 'σ as a multiple of the centre spacing.'),
  ],
  poly: [int('degree', 'Degree', 2, '[1, 8]', 'All monomials up to this total degree.')],
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
  num('discount', 'Discount γ', 0.99, '[0, 1]', 'Weight of a reward one step later.', { def: "the task's", value: 0.99, optional: true, when: (env) => env.setup.family !== 'differential' }),
  num('actor_step', 'Actor step size', 0.1, '(0, 10]', 'Policy learning rate (per tiling with tile coding).'),
  num('critic_step', 'Critic step size', 0.2, '(0, 10]', 'Value learning rate (per tiling with tile coding).'),
  num('entropy', 'Entropy bonus β', 0, '[0, 10]', 'Pushes the policy to keep exploring.', { when: (env) => env.setup.family !== 'deterministic' }),
  {
    key: 'baseline', label: 'Baseline', type: 'choice', def: 'none', value: 'none', when: uses('reinforce'),
    help: 'What REINFORCE subtracts from the return to cut the gradient\'s variance.',
    choices: [['none', 'None'], ['average', 'Running average of returns'], ['value', 'Learned state value (critic)'], ['optimal', 'Variance-minimising constant']],
  },
  num('baseline_rate', 'Baseline rate', 0.05, '(0, 1]', 'Rate of the running averages behind the average and optimal baselines.',
    { when: (env) => env.setup.family === 'reinforce' && ['average', 'optimal'].includes(env.setup.baseline) }),
  int('segment', 'Steps per update n', 1, '[1, 1000]', 'A2C updates every n steps from n-step returns.', { when: uses('a2c') }),
  num('lambda', 'GAE λ', 1, '[0, 1]', 'Within a segment: 1 gives n-step returns, 0 the one-step TD error.', { when: uses('a2c') }),
  {
    key: 'behaviour', label: 'Behaviour policy', type: 'object', when: uses('off_policy'),
    fields: [
      {
        key: 'kind', label: 'Behaves with', type: 'choice', def: 'uniform', value: 'uniform',
        help: 'The policy that chooses the actions while the target policy learns.',
        choices: [['uniform', 'Uniformly random'], ['epsilon_mix', 'Mostly the target policy (ε-mix)'], ['snapshot', 'A frozen copy, refreshed']],
      },
      num('epsilon', 'ε', 0.1, '[0, 1]', 'Share of uniform actions.', { when: (env) => env.setup.behaviour?.kind === 'epsilon_mix' }),
      int('snapshot_every', 'Refresh every (steps)', 1000, '[1, 10000000]', 'Steps between copies of the target policy.', { when: (env) => env.setup.behaviour?.kind === 'snapshot' }),
    ],
  },
  num('rho_cap', 'Importance weight cap', 1, '(0, 1e6]', 'Largest importance weight; blank for no cap.', { def: 'no cap', optional: true, when: uses('off_policy') }),
  num('noise_std', 'Exploration noise', 0.1, '[0, 10]', 'SD of Gaussian action noise, as a share of the action half-range.', { when: uses('deterministic') }),
  {
    key: 'replay', label: 'Replay buffer', type: 'object', when: uses('deterministic'),
    fields: [
      int('capacity', 'Capacity', 0, '0 or [1, 100000]', 'Transitions kept; 0 learns from each transition once.'),
      int('batch', 'Batch', 32, '[1, 1024], at most the capacity', 'Transitions replayed per step.', { when: (env) => (env.setup.replay?.capacity || 0) > 0 }),
    ],
  },
  num('target_tau', 'Target update rate τ', 1, '(0, 1]', 'Soft update of target copies; 1 means no target copies.', { when: uses('deterministic') }),
  num('average_step', 'Average-reward step', 0.01, '(0, 1]', 'Step size of the average-reward estimate.', { when: uses('differential') }),
  features(),
  approx('actor', 'Actor', 'The policy\'s function.'),
  { ...approx('critic', 'Critic', 'The value function.'), def: 'linear over the features (deterministic learner: over degree-2 polynomials of state and action)' },
  {
    key: 'optimizer', label: 'Optimizer', type: 'object',
    fields: [
      { key: 'kind', label: 'Update rule', type: 'choice', def: 'SGD', value: 'sgd', choices: [['sgd', 'SGD'], ['adam', 'Adam']], help: 'How gradient steps are applied.' },
      num('clip', 'Clip norm', 1, '(0, 1e6]', 'Longer update directions are scaled down to this norm; blank for none.', { def: 'none', optional: true }),
      num('beta1', 'Adam β1', 0.9, '[0, 1)', 'First-moment decay.', { when: (env) => env.setup.optimizer?.kind === 'adam' }),
      num('beta2', 'Adam β2', 0.999, '[0, 1)', 'Second-moment decay.', { when: (env) => env.setup.optimizer?.kind === 'adam' }),
      num('epsilon', 'Adam ε', 1e-8, '(0, 1]', 'Denominator offset.', { when: (env) => env.setup.optimizer?.kind === 'adam' }),
    ],
  },
  {
    key: 'policy', label: 'Gaussian policy', type: 'object', when: (env) => env.continuous && env.setup.family !== 'deterministic',
    fields: [
      num('log_std', 'Initial log SD', -0.5, '[−10, 2]', 'Log standard deviation before squashing.'),
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
