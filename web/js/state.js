// The one app-state object. main.js creates it, passes it to the views and is
// the only module that changes it. Nothing in here touches the DOM.

/**
 * @returns {object} a fresh state:
 *   wasm        the loaded wasm module namespace, or null while loading
 *   presets     [{file, title, question?}] from presets/index.json
 *   presetFile  file of the preset last loaded, or ''
 *   config      the experiment config object being edited (schema 1)
 *   check       {ok: true, info} from validateConfig, or {ok: false, message, path}
 *   run         null, or the current/last run (see newRun)
 *   results     the ResultsClient (results.js) of the last run, or null (closed by main.js)
 *   curves      the last curves the results worker sent: {key, run, stat, curves, robust, seeds}, or null
 *   summary     parsed summaryJson() of the last finished or cancelled run, or null
 *   view        how results are shown: {stat: 'mean'|'iqm'|'median', seedLines: bool, tab}
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
    view: { stat: 'mean', seedLines: false, tab: 'results' },
    messages: [],
    formErrors: new Map(), // config path → {path, message} for text the form cannot read
  };
}

/**
 * A run record.
 * status: 'running' | 'paused' | 'done' | 'cancelled' | 'interrupted' (a reload
 *   cut it; its finished jobs are kept) | 'opened' (read from a results file)
 * stepsDone[j], jobStatus[j] per job (0 running or not started, 1 done, 2 failed).
 * origin: 'run' | 'file' | 'storage'; fileName for opened files.
 */
export function newRun(configJson, info, origin = 'run') {
  const jobs = info.jobs;
  return {
    configJson,
    title: info.title,
    labels: info.labels.slice(),
    seeds: info.seeds,
    steps: info.steps,
    threshold: null,
    jobs,
    status: 'running',
    origin,
    fileName: '',
    idle: false,        // true once every worker has acknowledged a pause
    workers: 0,
    stepsDone: new Float64Array(jobs),
    jobStatus: new Uint8Array(jobs),
    episodes: 0,
    activeMs: 0,        // time spent running (not paused), for the time-left estimate
    resumedAt: 0,       // performance.now() when it last started running, 0 while paused
    stepsAtStart: 0,    // steps already done when this session of training started (resumed runs)
    version: 0,         // bumped whenever the results change (caches key on it)
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
  for (let v = 0; v < run.labels.length; v++) {
    let done = 0;
    for (let s = 0; s < run.seeds; s++) {
      const j = v * run.seeds + s;
      done += run.jobStatus[j] === 0 ? Math.min(run.stepsDone[j], run.steps) : run.steps;
    }
    out.push(done / (run.seeds * run.steps));
  }
  return out;
}

/** Seconds of training left, from the rate so far; null when too early to say. */
export function secondsLeft(run, now) {
  if (!run || (run.status !== 'running' && run.status !== 'paused')) return null;
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
  return `about ${(sec / 3600).toFixed(1)} h left`;
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
