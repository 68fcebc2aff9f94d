// The one app-state object and what is computed from it. main.js creates
// it and passes it to every module; each part has one owner that changes it
// (the run controller: run, results, summary; the experiment: config, check,
// presets; the curves view: curves; the message area: messages); the views
// only read it. Also the run record's derived numbers (share done, time
// left). Nothing in here touches the DOM.

import { formatNumber } from './numbers.js';

/**
 * @returns {object} a fresh state:
 *   wasm        the loaded wasm module namespace, or null while loading
 *   presets     [{file, title, question?}] from presets/index.json
 *   presetFile  file of the preset last loaded, or ''
 *   config      the experiment config object being edited (schema 1)
 *   check       {ok: true, info} from validateConfig, or {ok: false, message, path}
 *   run         null, or the current or last run: the run controller's record (runcontrol.js),
 *               with stepsDone[j] and jobStatus[j] (0 unfinished, 1 done, 2 failed) copied from
 *               the results' job table
 *   results     the ResultsClient (results.js) of that run, or null
 *   curves      the last curves the results worker sent: {key, run, stat, curves, robust, seeds}, or null
 *   summary     parsed summaryJson() of the last finished or cancelled run, or null
 *   view        how results are shown: {stat: 'mean'|'iqm'|'median'|'shaped', seedLines: bool, tab}
 *   messages    [{id, text}] errors shown in the message area
 */
export function createState() {
  return {
    wasm: null,
    presets: [],
    presetFile: '',
    config: null,
    check: { ok: false, message: 'Loading the WebAssembly module…', path: '' },
    run: null,
    results: null,
    curves: null,
    summary: null,
    view: { stat: 'mean', seedLines: false, measure: 'evaluation', tab: 'results' },
    messages: [],
    formErrors: new Map(), // config path → {path, message} for text the form cannot read
  };
}

/** Fraction of the run's step budget done, in [0, 1]; failed jobs count as complete. */
export function runFraction(run) {
  if (!run || run.jobs === 0) return 0;
  return stepsCounted(run) / (run.jobs * run.steps);
}

/** Steps done over all jobs, failed jobs counting as complete. */
export function stepsCounted(run) {
  let done = 0;
  for (let j = 0; j < run.jobs; j++) {
    done += run.jobStatus[j] === 0 ? Math.min(run.stepsDone[j], run.steps) : run.steps;
  }
  return done;
}

/** Per variant: fraction of its steps done. */
export function variantFractions(run) {
  const out = [];
  const tuning = run.tuningJobs || 0;
  let base = 0;
  for (let v = 0; v < run.labels.length; v++) {
    // A study's variant owns its tuning jobs (points × tuning seeds) and its fresh ones.
    const ids = [];
    const mine = run.tuningPoints ? run.tuningPoints[v] * run.tuningSeeds : 0;
    for (let j = base; j < base + mine; j++) ids.push(j);
    base += mine;
    for (let s = 0; s < run.seeds; s++) ids.push(tuning + v * run.seeds + s);
    let done = 0;
    for (const j of ids) done += run.jobStatus[j] === 0 ? Math.min(run.stepsDone[j], run.steps) : run.steps;
    out.push(done / (ids.length * run.steps));
  }
  return out;
}

/** Seconds of training left, from the rate so far; null when too early to say. */
export function secondsLeft(run, now) {
  if (!run || !['running', 'pausing', 'paused'].includes(run.status)) return null;
  const active = run.activeMs + (run.resumedAt ? now - run.resumedAt : 0);
  const done = stepsCounted(run) - run.stepsAtStart;
  const total = run.jobs * run.steps;
  if (active < 1000 || done <= 0 || done < 0.02 * (total - run.stepsAtStart)) return null;
  return ((total - stepsCounted(run)) / done) * (active / 1000);
}

/** "about 40 s left", "about 3 min left". */
export function formatLeft(sec) {
  if (sec === null || !Number.isFinite(sec)) return '';
  if (sec < 1.5) return 'almost done';
  if (sec < 90) return `about ${Math.round(sec)} s left`;
  if (sec < 5400) return `about ${Math.round(sec / 60)} min left`;
  return `about ${formatNumber(sec / 3600, { digits: 2 })} h left`;
}

let nextMessageId = 1;

/** Add an error to the message area list; returns its id. */
export function addMessage(state, text) {
  const id = nextMessageId++;
  state.messages.push({ id, text: String(text) });
  return id;
}

export function dismissMessage(state, id) {
  state.messages = state.messages.filter((m) => m.id !== id);
}
