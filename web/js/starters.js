// Tasks of our own that an empty own-task editor starts from: a small
// formula model and a small table, each valid as it stands, so a user edits
// something that runs rather than a blank form.

/** A small model to start from: a water tank whose level a valve holds (our own). */
export const STARTER_FORMULA = {
  kind: 'formula',
  state: [
    { name: 'level', start: [0.2, 0.8], low: 0, high: 1, clip: true },
    { name: 'demand', start: [0.01, 0.05], low: 0, high: 0.1 },
  ],
  actions: [
    { name: 'closed', set: { inflow: 0 } },
    { name: 'half', set: { inflow: 0.04 } },
    { name: 'open', set: { inflow: 0.08 } },
  ],
  let: [{ name: 'change', formula: 'inflow - demand' }],
  update: {
    level: 'level + dt * change',
    demand: 'clamp(demand + 0.005 * noise(), 0, 0.1)',
  },
  terminal: 'level <= 0',
  reward: '-abs(level\' - target) - 0.1 * inflow',
  constants: { target: 0.5 },
  dt: 1,
  max_steps: 200,
};

/** A small finite model to start from: a queue that is served or not (our own). */
export const STARTER_TABLE = {
  kind: 'table',
  states: ['empty', 'short', 'long'],
  actions: ['wait', 'serve'],
  rows: [
    { from: 'empty', action: 'wait', to: 'short', probability: 0.5, reward: 0 },
    { from: 'empty', action: 'wait', to: 'empty', probability: 0.5, reward: 0 },
    { from: 'empty', action: 'serve', to: 'empty', probability: 1, reward: -1 },
    { from: 'short', action: 'wait', to: 'long', probability: 0.4, reward: -1 },
    { from: 'short', action: 'wait', to: 'short', probability: 0.6, reward: -1 },
    { from: 'short', action: 'serve', to: 'empty', probability: 0.8, reward: 1 },
    { from: 'short', action: 'serve', to: 'short', probability: 0.2, reward: -1 },
    { from: 'long', action: 'wait', to: 'long', probability: 1, reward: -3 },
    { from: 'long', action: 'serve', to: 'short', probability: 0.9, reward: 0 },
    { from: 'long', action: 'serve', to: 'long', probability: 0.1, reward: -3 },
  ],
  start: { empty: 1 },
  discount: 0.9,
  max_steps: 100,
};
