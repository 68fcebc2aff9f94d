// The page's side of the results worker (protocol in worker.js): the
// experiment's Results handle lives in a worker, so curves, bootstrap bands
// and summaries are computed off the main thread. Episode records are
// forwarded as the training workers send them; answers come back as
// promises, in order.

import { makeWorker, wasmForWorker } from './platform.js';
import { compiledModule } from './wasm.js';

export class ResultsClient {
  constructor() {
    this.worker = makeWorker('critbox-results');
    this.pending = new Map();
    this.nextQid = 1;
    this.dead = null;
    this.sentWasm = false;
    this.worker.onmessage = (e) => this.#receive(e.data || {});
    this.worker.onerror = (e) => {
      e.preventDefault();
      this.#die(`the results worker stopped: ${e.message || 'it could not run'}`);
    };
  }

  #die(message) {
    this.dead = message;
    for (const p of this.pending.values()) p.reject(new Error(message));
    this.pending.clear();
    this.worker.terminate();
  }

  #receive(msg) {
    const p = this.pending.get(msg.qid);
    if (!p) return;
    this.pending.delete(msg.qid);
    if (msg.type === 'res-error') p.reject(new Error(msg.message));
    else p.resolve(msg);
  }

  #send(msg, transfer = []) {
    if (this.dead) throw new Error(this.dead);
    if (!this.sentWasm) {
      this.sentWasm = true;
      const wasm = wasmForWorker();
      if (wasm) { msg.wasm = wasm; transfer = [...transfer, wasm]; }
      const module = compiledModule();
      if (module) msg.module = module;
    }
    this.worker.postMessage(msg, transfer);
  }

  #ask(msg, transfer = []) {
    if (this.dead) return Promise.reject(new Error(this.dead));
    const qid = this.nextQid++;
    return new Promise((resolve, reject) => {
      this.pending.set(qid, { resolve, reject });
      this.#send({ ...msg, qid }, transfer);
    });
  }

  /** Empty results for a config (JSON text). */
  open(configJson) { return this.#ask({ type: 'res-open', config: configJson }); }

  /** Results from a results file's text; resolves {configJson, jobs}. */
  openSaved(text) { return this.#ask({ type: 'res-open-saved', text }); }

  /** Results from what storage kept (see pack); resolves {jobs}. */
  restore(configJson, data) { return this.#ask({ type: 'res-restore', config: configJson, data }); }

  /** A training worker's progress message, forwarded (its arrays are transferred). */
  add(progress, episodes, failures) {
    this.#send({ type: 'res-add', progress, episodes, failures }, [progress.buffer, episodes.buffer]);
  }

  /** A job that failed outside the learner (a worker that died). */
  fail(job, reason) { this.#send({ type: 'res-fail', job, reason }); }

  /** Curves of every variant: {curves, robust, seeds} (see worker.js). */
  curves(stat, seeds) { return this.#ask({ type: 'res-curves', stat, seeds }); }

  async summary() { return JSON.parse((await this.#ask({ type: 'res-summary' })).text); }
  async saveJson() { return (await this.#ask({ type: 'res-save' })).text; }
  async tidyCsv() { return (await this.#ask({ type: 'res-csv' })).text; }

  /** The results packed for local storage: every job when final, else the finished ones. */
  async pack(final) { return (await this.#ask({ type: 'res-pack', final })).text; }

  close() {
    if (!this.dead) this.#die('closed');
  }
}
