// The page's side of the results worker (resultsworker.js): one client per
// run or opened file. It opens results, hands the worker the trainers' ports,
// asks for curves, summaries and exports, and has the worker keep the
// results in IndexedDB or read them back. Answers come as promises, in the
// order asked; the worker's progress events (the job table) go to
// onProgress. Messages are listed in protocol.js (RESULTS).

import { WorkerClient } from './rpc.js';
import { RESULTS } from './protocol.js';

export class ResultsClient {
  constructor() {
    this.link = new WorkerClient('resultsworker', 'critbox-results');
    /** Called with {table: Float64Array, error?} when the job table changes. */
    this.onProgress = null;
    this.link.on(RESULTS.progress, (body) => this.onProgress?.(body));
  }

  /** Set a handler for the worker dying unasked. */
  set onDeath(fn) { this.link.onDeath = fn; }

  /** Empty results for a config (JSON text); resolves {jobs}. */
  open(configJson) { return this.link.request(RESULTS.open, { config: configJson }); }

  /** Results from a results file's text; resolves {configJson, table}. */
  openFile(text) { return this.link.request(RESULTS.openFile, { text }); }

  /** The results kept from the last visit, or null; resolves {meta, configJson, table}. */
  restoreKept() { return this.link.request(RESULTS.restoreKept); }

  /** Take trainer `id`'s chunks from `port` (transferred). */
  attach(id, port) { return this.link.request(RESULTS.attach, { id, port }, [port]); }

  /** Resolves with the job table once every listed trainer's chunks up to its count have been applied. */
  settle(sent) { return this.link.request(RESULTS.settle, { sent }); }

  /** Stop listening to trainer `id` (it died or was cancelled). */
  detach(id) { return this.link.request(RESULTS.detach, { id }); }

  /** Mark the unfinished ones among `jobs` as failed. */
  fail(jobs, reason) { return this.link.request(RESULTS.fail, { jobs, reason }); }

  /** A study's tuning choice: {chosen: [point per variant] | null}. */
  choice() { return this.link.request(RESULTS.choice); }

  /** Curves of every variant: {measure, curves, robust, seeds, background, backgroundRobust} (see protocol.js). */
  curves(stat, seeds, measure) { return this.link.request(RESULTS.curves, { stat, seeds, measure }); }

  async summary() { return JSON.parse(await this.link.request(RESULTS.summary)); }
  saveJson() { return this.link.request(RESULTS.save); }
  tidyCsv() { return this.link.request(RESULTS.csv); }

  /** Keep the results in IndexedDB: {status, final, origin, fileName} → {jobs, bytes, ms}. */
  keep(what) { return this.link.request(RESULTS.keep, what); }

  close() { this.link.close(); }
}
