// Worker pool: spreads the jobs of one run over module workers and relays
// what they report. One Pool serves one run; make a new Pool per run.
//
// Workers: min(navigator.hardwareConcurrency || 2, jobs). The job ids of a
// run (all of them, or the unfinished ones when a run is resumed) are put in
// seed-major order (seed 0 of every variant, then seed 1, ...) and dealt
// round-robin over the workers; each worker trains its list in batches of
// ceil(variants / workers) jobs, so every variant's curve grows from the start
// and jobs finish batch by batch. Job ids follow the contract:
// job = variant_index * seeds + seed_index.
//
// Message protocol (every message is a plain object with a `type` and the
// `runId` it belongs to; a message whose runId is not the pool's is ignored):
//
//   page → worker
//     {type:'start',  runId, config: string /* config JSON */, jobIds: number[], chunk: number /* steps per job per chunk */,
//        batch: number /* jobs trained at once */,
//        wasm: ArrayBuffer | null /* the module's bytes in the single-file build (see platform.js) */,
//        module: WebAssembly.Module | null /* served: the module the page compiled (see wasm.js) */}
//     {type:'pause',  runId}   stop after the chunk in progress
//     {type:'resume', runId}   go on from where it paused
//     {type:'cancel', runId}   stop and free the Run; answered by 'cancelled'
//
//   worker → page
//     {type:'progress', runId,
//        progress: Float64Array /* stride 3: jobId, stepsDone, status 0 running|1 done|2 failed */,
//        episodes: Float64Array /* stride 5: jobId, endStep, baseReturn, shapedReturn, length; new since the last message */,
//        failures: [{job, reason}] /* jobs that failed since the last message */}
//       sent after every chunk; both arrays' buffers are transferred.
//     {type:'paused', runId}     the worker is idle until 'resume' or 'cancel'
//     {type:'done', runId}       every job of this worker is finished (done or failed)
//     {type:'cancelled', runId}  the Run is freed
//     {type:'error', runId, message}  the wasm module failed to load or threw;
//       the worker has freed its Run and its unfinished jobs count as failed.
//   A worker that dies without a message (uncaught error, bad message data) is
//   reported through the same onError path by the pool itself.

import { makeWorker, wasmForWorker } from './platform.js';
import { compiledModule } from './wasm.js';

let nextRunId = 1;

export class Pool {
  /**
   * @param {object} handlers
   *   onProgress({progress, episodes, failures}), onError(message, jobIds),
   *   onPaused(), onDone()  — onDone fires once, when every worker is done or dead.
   * @param {object} [opts] {concurrency}
   */
  constructor(handlers, opts = {}) {
    this.handlers = handlers;
    this.concurrency = opts.concurrency || navigator.hardwareConcurrency || 2;
    this.runId = nextRunId++;
    this.slots = [];      // {worker, jobIds, state: 'running'|'paused'|'done'}
    this.closed = false;
  }

  /** Number of workers a run of `jobs` jobs gets. */
  static workerCount(jobs, concurrency = navigator.hardwareConcurrency || 2) {
    return Math.max(1, Math.min(concurrency, jobs));
  }

  /** Deal the job ids round-robin over `workers` lists. */
  static deal(ids, workers) {
    const lists = Array.from({ length: workers }, () => []);
    ids.forEach((j, k) => lists[k % workers].push(j));
    return lists;
  }

  /** Job ids in seed-major order (ids are variant * seeds + seed). */
  static seedMajor(ids, seeds) {
    return Array.from(ids).sort((a, b) => (a % seeds) - (b % seeds) || a - b);
  }

  /**
   * Start the run: config JSON text, the job ids to run, steps per job per
   * chunk, and the plan's shape {variants, seeds}.
   */
  start(configJson, jobIds, chunk = 2000, shape = { variants: 1, seeds: 1 }) {
    const ids = Pool.seedMajor(jobIds, Math.max(1, shape.seeds));
    const n = Pool.workerCount(ids.length, this.concurrency);
    const batch = Math.max(1, Math.ceil(shape.variants / n));
    for (const jobIds of Pool.deal(ids, n)) {
      let worker;
      try {
        worker = makeWorker(`critbox-trainer-${this.slots.length}`);
      } catch (err) {
        const slot = { worker: null, jobIds, state: 'done' };
        this.slots.push(slot);
        this.handlers.onError(`could not start a worker: ${err.message || err}`, jobIds);
        continue;
      }
      const slot = { worker, jobIds, state: 'running' };
      this.slots.push(slot);
      worker.onmessage = (e) => this.#receive(slot, e.data);
      worker.onerror = (e) => {
        e.preventDefault();
        const where = e.filename ? ` (${e.filename.split('/').pop()}:${e.lineno})` : '';
        this.#fail(slot, `worker error: ${e.message || 'the worker script could not run'}${where}`);
      };
      worker.onmessageerror = () => this.#fail(slot, 'worker sent a message that could not be read');
      const wasm = wasmForWorker();
      const module = compiledModule();
      worker.postMessage({ type: 'start', runId: this.runId, config: configJson, jobIds, chunk, batch, wasm, module },
        wasm ? [wasm] : []);
    }
    this.#checkDone();
  }

  pause() { this.#broadcast('pause'); }
  resume() {
    for (const s of this.slots) if (s.state === 'paused') s.state = 'running';
    this.#broadcast('resume');
  }

  /** Stop every worker; no handler is called after this. */
  cancel() {
    this.#broadcast('cancel');
    this.closed = true;
    // The worker frees its Run on 'cancel'; terminate it shortly after in any
    // case, so a worker stuck in a long chunk cannot hold a core.
    for (const s of this.slots) {
      const w = s.worker;
      if (!w) continue;
      const timer = setTimeout(() => w.terminate(), 2000);
      w.onmessage = (e) => {
        if (e.data && e.data.type === 'cancelled') { clearTimeout(timer); w.terminate(); }
      };
      w.onerror = null;
      s.state = 'done';
    }
  }

  #broadcast(type) {
    if (this.closed) return;
    for (const s of this.slots) {
      if (s.worker && s.state !== 'done') s.worker.postMessage({ type, runId: this.runId });
    }
  }

  #receive(slot, msg) {
    if (this.closed || !msg || msg.runId !== this.runId) return;
    switch (msg.type) {
      case 'progress':
        this.handlers.onProgress({ progress: msg.progress, episodes: msg.episodes, failures: msg.failures || [] });
        break;
      case 'paused':
        slot.state = 'paused';
        if (this.slots.every((s) => s.state !== 'running')) this.handlers.onPaused?.();
        break;
      case 'done':
        this.#retire(slot);
        break;
      case 'error':
        this.#fail(slot, msg.message);
        break;
      case 'cancelled':
        break;
      default:
        this.#fail(slot, `unknown message from worker: ${JSON.stringify(msg.type)}`);
    }
  }

  #fail(slot, message) {
    if (this.closed || slot.state === 'done') return;
    this.handlers.onError(message, slot.jobIds);
    this.#retire(slot);
  }

  #retire(slot) {
    slot.state = 'done';
    if (slot.worker) slot.worker.terminate();
    this.#checkDone();
  }

  #checkDone() {
    if (this.closed || this.slots.length === 0) return;
    if (this.slots.every((s) => s.state === 'done')) {
      this.closed = true;
      this.handlers.onDone();
    }
  }
}
