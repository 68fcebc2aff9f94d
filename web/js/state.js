// The one app-state object. main.js creates it, passes it to the views and is
// the only module that changes it. Nothing in here touches the DOM.

/**
 * @returns {object} a fresh state:
 *   wasm        the loaded wasm module namespace, or null while loading
 *   presets     [{file, title}] from presets/index.json
 *   presetFile  file of the preset last loaded, or ''
 *   config      the experiment config object being edited (schema 1)
 *   check       {ok: true, info} from validateConfig, or {ok: false, message, path}
 *   run         null, or the current/last run (see newRun)
 *   results     the Results handle of the last run, or null (owned here; freed by main.js)
 *   summary     parsed summaryJson() of the last finished or cancelled run, or null
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
    summary: null,
    messages: [],
  };
}

/**
 * A run record.
 * status: 'running' | 'paused' | 'done' | 'cancelled'
 * stepsDone[j], status[j] per job (0 running, 1 done, 2 failed), from progress messages.
 */
export function newRun(configJson, info) {
  const jobs = info.jobs;
  return {
    configJson,
    title: info.title,
    labels: info.labels.slice(),
    seeds: info.seeds,
    steps: info.steps,
    jobs,
    status: 'running',
    idle: false,        // true once every worker has acknowledged a pause
    workers: 0,
    stepsDone: new Float64Array(jobs),
    jobStatus: new Uint8Array(jobs),
    episodes: 0,
    startedAt: performance.now(),
  };
}

/** Fraction of the run's step budget done, in [0, 1]; failed jobs count as complete. */
export function runFraction(run) {
  if (!run || run.jobs === 0) return 0;
  let done = 0;
  for (let j = 0; j < run.jobs; j++) {
    done += run.jobStatus[j] === 0 ? Math.min(run.stepsDone[j], run.steps) : run.steps;
  }
  return done / (run.jobs * run.steps);
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
