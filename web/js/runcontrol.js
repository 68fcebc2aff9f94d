// The run controller: the one owner of the current run. It holds the run
// record (state.run), its results client (state.results) and its summary
// (state.summary), and moves the run through named states, refusing any move
// the table below does not list. Training, pausing, cancelling, finishing an
// interrupted run, opening a results file and restoring what the browser
// kept all go through here; views only read the state and call these
// functions. How far each job got is the results' job table, copied into
// the run record as the results worker reports it (never counted here).
//
// A study trains in two stages inside `running` (run.stage 'tuning', then
// 'fresh'): the tuning jobs, then the fresh jobs of each variant's chosen
// grid point, which the results choose once every tuning chunk is recorded.
//
// States (run.status):
//   starting     the results and the trainers are being set up
//   running      trainers are training
//   pausing      pause asked; trainers finish their chunk
//   paused       every trainer idle, every chunk they sent recorded
//   finishing    training is over (done or cancelled); the summary is being made
//   done         every job finished and summarised
//   cancelled    stopped early and summarised; partial data
//   interrupted  restored from the browser with jobs left to train
//   opened       read from a results file, nothing trained
// A new run (or an opened file) replaces a run that is not active.

import { Pool } from './pool.js';
import { ResultsClient } from './results.js';
import { TABLE_STRIDE, JOB } from './protocol.js';
import { messageOf } from './wasm.js';
import { stepsCounted } from './state.js';
import { readLegacyResults, dropLegacyResults } from './legacy.js';

/** Every state and the states it may move to. */
export const MOVES = Object.freeze({
  starting: ['running', 'cancelled'],
  running: ['pausing', 'finishing'],
  pausing: ['paused', 'running', 'finishing'],
  paused: ['running', 'finishing'],
  finishing: ['done', 'cancelled'],
  interrupted: ['starting'],
  done: [],
  cancelled: [],
  opened: [],
});

/** States in which the run owns trainers or is about to. */
const ACTIVE = new Set(['starting', 'running', 'pausing', 'paused', 'finishing']);

/** Steps each job advances per chunk at first (trainers adapt it). */
const CHUNK_STEPS = 2000;

/**
 * @param {object} app {state, showError(text), showNote(text, ms), changed(what)}:
 *   changed('run') after a state change, changed('progress') when the job
 *   table moved, changed('results') when the summary changed.
 */
export function createRunController(app) {
  const { state } = app;
  let pool = null;
  let keepTimer = 0;
  let lastKeepMs = 0;
  /** Checkpoints written (for tests): [{status, jobs}]. */
  const checkpoints = [];

  const isActive = () => !!state.run && ACTIVE.has(state.run.status);

  function go(run, next) {
    if (!MOVES[run.status].includes(next)) {
      throw new Error(`run controller: no move from ${run.status} to ${next}`);
    }
    if (next === 'running') run.resumedAt = performance.now();
    else if (run.resumedAt) { run.activeMs += performance.now() - run.resumedAt; run.resumedAt = 0; }
    run.status = next;
    app.changed('run');
  }

  function newRun(configJson, info, origin, fileName = '') {
    const config = JSON.parse(configJson);
    return {
      configJson, origin, fileName, title: info.title, labels: info.labels.slice(), seeds: info.seeds,
      steps: info.steps, jobs: info.jobs, threshold: typeof config.threshold === 'number' ? config.threshold : null,
      evaluates: !!info.evaluation, scoreOn: info.score_on || 'training',
      tuningJobs: info.tuning_jobs || 0, tuningSeeds: info.tuning_seeds || info.seeds,
      tuningPoints: info.tuning_points || null, stage: 'fresh', cancelAsked: false,
      status: 'starting', ending: 'done', workers: 0,
      stepsDone: new Float64Array(info.jobs), jobStatus: new Uint8Array(info.jobs),
      activeMs: 0, resumedAt: 0, stepsAtStart: 0, version: 0,
    };
  }

  /** Make `results` and `run` the current ones, closing what they replace. */
  function adopt(run, results) {
    if (state.results && state.results !== results) state.results.close();
    clearTimeout(keepTimer);
    keepTimer = 0;
    state.results = results;
    state.run = run;
    state.summary = null;
    results.onProgress = (p) => onTable(run, p);
    results.onDeath = (message) => {
      if (state.run !== run) return;
      app.showError(`the results worker stopped, so this run's results are lost: ${message}`);
      if (pool) { pool.cancel(); pool = null; }
      if (!ACTIVE.has(run.status)) return;
      if (run.status !== 'starting' && run.status !== 'finishing') go(run, 'finishing');
      go(run, 'cancelled');
    };
  }

  /** Copy the results' job table into the run record. */
  function setTable(run, table) {
    let finished = false;
    for (let j = 0; j < run.jobs; j++) {
      const status = table[j * TABLE_STRIDE + 1];
      if (status !== JOB.unfinished && run.jobStatus[j] === JOB.unfinished) finished = true;
      run.stepsDone[j] = table[j * TABLE_STRIDE];
      run.jobStatus[j] = status;
    }
    run.version += 1;
    return finished;
  }

  function onTable(run, { table, error }) {
    if (state.run !== run) return;
    if (error) app.showError(error);
    const finished = setTable(run, table);
    app.changed('progress');
    if (finished && ACTIVE.has(run.status)) scheduleKeep(run);
  }

  // ------------------------------------------------------------ training

  async function train(configJson, info) {
    if (isActive()) return;
    const run = newRun(configJson, info, 'run');
    const results = new ResultsClient();
    adopt(run, results);
    app.changed('run');
    try {
      await results.open(configJson);
    } catch (err) {
      if (state.run !== run) return;
      app.showError(`could not set up the results: ${messageOf(err)}`);
      go(run, 'cancelled');
      return;
    }
    if (state.run !== run) return;
    await launch(run, Array.from({ length: run.jobs }, (_, j) => j));
    keep(run, false);
  }

  /** An interrupted run: train the jobs that had not finished. */
  async function finishInterrupted() {
    const run = state.run;
    if (!run || run.status !== 'interrupted') return;
    const left = [];
    for (let j = 0; j < run.jobs; j++) if (run.jobStatus[j] === JOB.unfinished) left.push(j);
    go(run, 'starting');
    run.stepsAtStart = stepsCounted(run);
    run.activeMs = 0;
    state.summary = null;
    app.changed('results');
    await launch(run, left);
  }

  /**
   * Train `jobIds`. A study trains in two stages: its tuning jobs first, then
   * (once every tuning chunk is recorded) the results choose each variant's
   * grid point and the fresh jobs of the chosen points train.
   */
  async function launch(run, jobIds) {
    const tuning = jobIds.filter((j) => j < run.tuningJobs);
    const fresh = jobIds.filter((j) => j >= run.tuningJobs);
    go(run, 'running');
    if (!tuning.length) { await startFresh(run, fresh); return; }
    run.stage = 'tuning';
    await startPool(run, tuning, { variants: run.labels.length, seeds: run.tuningSeeds, offset: 0 }, null, async (me) => {
      try {
        const { table } = await state.results.settle(me.sent());
        if (state.run === run) setTable(run, table);
      } catch (err) {
        app.showError(messageOf(err));
      }
      await startFresh(run, fresh);
    });
  }

  /** The fresh stage (every job of a run that is no study): the study's choice, then train. */
  async function startFresh(run, fresh) {
    if (state.run !== run) return;
    let chosen = null;
    if (run.tuningJobs > 0) {
      try {
        chosen = (await state.results.choice()).chosen;
      } catch (err) {
        app.showError(`could not choose the study's points: ${messageOf(err)}`);
        await finish(run, null, 'cancelled');
        return;
      }
    }
    run.stage = 'fresh';
    if (run.cancelAsked) { await finish(run, null, 'cancelled'); return; }
    if (!fresh.length) { await finish(run, null, 'done'); return; }
    await startPool(run, fresh, { variants: run.labels.length, seeds: run.seeds, offset: run.tuningJobs }, chosen,
      (me) => finish(run, me, 'done'));
  }

  async function startPool(run, jobIds, shape, chosen, onDone) {
    run.workers = Pool.workerCount(jobIds.length);
    const me = new Pool({
      onError: (message, jobs) => onTrainerError(run, message, jobs),
      onPaused: () => onPaused(run, me),
      onDone: () => { if (pool === me) { pool = null; onDone(me); } },
    }, { results: state.results });
    pool = me;
    // A pause asked between the stages holds the next stage from its start.
    if (run.status === 'pausing' || run.status === 'paused') me.pause();
    try {
      await me.start(run.configJson, jobIds, CHUNK_STEPS, shape, chosen);
    } catch (err) {
      app.showError(`could not start training: ${messageOf(err)}`);
    }
  }

  function onTrainerError(run, message, jobs) {
    if (state.run !== run) return;
    app.showError(`training jobs ${jobs.join(', ')} stopped: ${message}`);
    state.results.fail(jobs, message).catch((err) => app.showError(`recording a failure: ${messageOf(err)}`));
  }

  async function onPaused(run, me) {
    if (state.run !== run || run.status !== 'pausing') return;
    try {
      const { table } = await state.results.settle(me.sent());
      if (state.run === run) setTable(run, table);
    } catch (err) {
      app.showError(messageOf(err));
    }
    if (state.run === run && run.status === 'pausing') go(run, 'paused');
  }

  function togglePause() {
    const run = state.run;
    if (!run || !pool) return;
    if (run.status === 'running') { go(run, 'pausing'); pool.pause(); }
    else if (run.status === 'pausing' || run.status === 'paused') { go(run, 'running'); pool.resume(); }
  }

  async function cancel() {
    const run = state.run;
    if (!run || !['running', 'pausing', 'paused'].includes(run.status)) return;
    // Between a study's stages no trainer runs: the next stage sees this and stops.
    if (!pool) { run.cancelAsked = true; return; }
    const me = pool;
    pool = null;
    go(run, 'finishing');
    run.ending = 'cancelled';
    await me.cancel();
    await finish(run, me, 'cancelled');
  }

  /** Training is over: wait for the trainers' last chunks, summarise, keep. */
  async function finish(run, me, ending) {
    if (state.run !== run) return;
    if (run.status !== 'finishing') go(run, 'finishing');
    run.ending = ending;
    const rc = state.results;
    if (me) {
      try {
        const { table } = await rc.settle(me.sent());
        if (state.run === run) setTable(run, table);
      } catch (err) {
        app.showError(messageOf(err));
      }
    }
    try {
      const summary = await rc.summary();
      if (state.run !== run) return;
      state.summary = summary;
    } catch (err) {
      if (state.run !== run) return;
      app.showError(`could not summarise the run: ${messageOf(err)}`);
    }
    go(run, run.ending);
    app.changed('results');
    await keep(run, true);
  }

  // ------------------------------------------------------------ keeping

  /** A checkpoint soon after jobs finish; rarer the longer the last one took. */
  function scheduleKeep(run) {
    if (keepTimer) return;
    keepTimer = setTimeout(() => {
      keepTimer = 0;
      if (state.run === run && ACTIVE.has(run.status) && run.status !== 'finishing') keep(run, false);
    }, Math.max(1500, lastKeepMs * 20));
  }

  /** Have the results worker keep the run in the browser: every job when `final`, else the
   * finished ones. Resolves true when it was kept. */
  async function keep(run, final) {
    const rc = state.results;
    if (!rc || state.run !== run) return false;
    const status = final ? run.status : 'running';
    try {
      const kept = await rc.keep({ status, final, origin: run.origin, fileName: run.fileName });
      lastKeepMs = kept.ms;
      checkpoints.push({ status, jobs: kept.jobs });
      return true;
    } catch (err) {
      if (state.results === rc) app.showError(`these results could not be kept in the browser: ${messageOf(err)}; save them as a results file to keep them`);
      return false;
    }
  }

  // ------------------------------------------------------------ opening

  /**
   * Open results that were not trained here: `load(rc)` resolves {configJson,
   * table, origin, fileName, status} or null (nothing there). Shows them as a
   * run and resolves it, or null (a message, prefixed with `what`, says why).
   */
  async function show(what, load) {
    const rc = new ResultsClient();
    let got;
    let info;
    let summary;
    try {
      got = await load(rc);
      if (got) {
        info = JSON.parse(state.wasm.validateConfig(got.configJson));
        summary = await rc.summary();
      }
    } catch (err) {
      rc.close();
      app.showError(`${what}: ${messageOf(err)}`);
      return null;
    }
    if (!got) { rc.close(); return null; }
    const origin = got.origin === 'file' ? 'file' : 'run';
    const run = newRun(got.configJson, info, origin, got.fileName || '');
    run.status = origin === 'file' ? 'opened' : ['done', 'cancelled'].includes(got.status) ? got.status : 'interrupted';
    adopt(run, rc);
    setTable(run, got.table);
    state.summary = summary;
    app.changed('run');
    app.changed('results');
    if (run.status === 'interrupted') {
      const done = run.jobStatus.reduce((n, st) => n + (st !== JOB.unfinished ? 1 : 0), 0);
      app.showNote(`The last run was interrupted; its ${done} finished job${done === 1 ? ' is' : 's are'} shown. Finish it to train the other ${run.jobs - done}.`, 15000);
    }
    return run;
  }

  /** Show a results file and keep it; resolves true when it worked (a message says why not). */
  async function openFile(text, fileName) {
    if (isActive()) { app.showError('A run is in progress; cancel it before opening a results file.'); return false; }
    const run = await show(`${fileName} could not be opened`,
      async (rc) => ({ ...(await rc.openFile(text)), origin: 'file', fileName }));
    if (run) await keep(run, true);
    return !!run;
  }

  /** Show what the browser kept from the last visit (or what an older page
   * kept in local storage, moved to IndexedDB); resolves true when there was something. */
  async function restoreKept() {
    const run = await show('Results kept from the last visit could not be restored', async (rc) => {
      const got = await rc.restoreKept();
      return got && { ...got, ...got.meta };
    });
    return !!run || restoreLegacy();
  }

  async function restoreLegacy() {
    let old;
    try {
      old = await readLegacyResults();
    } catch (err) {
      app.showError(`Results an older version of this page kept could not be read (${messageOf(err)}); they are left where they were.`);
      return false;
    }
    if (!old) return false;
    const run = await show('Results an older version of this page kept could not be restored',
      async (rc) => ({ ...(await rc.openFile(old.text)), origin: old.origin, fileName: old.fileName, status: old.status }));
    if (run && await keep(run, run.status !== 'interrupted')) dropLegacyResults();
    return !!run;
  }

  return { train, togglePause, cancel, finishInterrupted, openFile, restoreKept, isActive, checkpoints };
}
