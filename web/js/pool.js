// The trainer pool: spreads the jobs of one run over training workers
// (trainworker.js) and tells its owner when they pause, finish or fail. One
// Pool serves one run; make a new Pool per run.
//
// Workers: min(navigator.hardwareConcurrency || 2, jobs). The job ids of a
// run (all of them, or the unfinished ones when a run is finished later) are
// put in seed-major order (seed 0 of every variant, then seed 1, ...) and cut
// into batches of ceil(variants / workers) jobs (fewer when few jobs are
// left, so that every worker gets a batch), so every variant's curve
// grows from the start and jobs finish batch by batch. Each worker starts
// with one batch; the rest wait in a queue, and whichever worker finishes
// first gets the next (TRAIN.need / TRAIN.more), so jobs that take longer
// than others do not leave one core idle at the end. Job ids follow the
// contract job = variant_index * seeds + seed_index.
//
// Each trainer gets a MessageChannel of its own for its chunks: one end goes
// to the trainer, the other to the results (opts.results, a ResultsClient),
// so records never pass through this thread. Without opts.results (the
// benchmark page) the pool listens on the other end itself and hands every
// chunk to handlers.onProgress. Messages are listed in protocol.js (TRAIN).

import { WorkerClient, POST_FAILED } from './rpc.js';
import { TRAIN } from './protocol.js';

export class Pool {
  /**
   * @param {object} handlers
   *   onError(message, jobIds)  a trainer failed or died; jobIds are the jobs it leaves unfinished
   *   onPaused()                every trainer is idle (or finished) after pause()
   *   onDone()                  once, when every trainer is finished or dead
   *   onProgress(chunk, id)     only without opts.results: each trainer chunk, and the trainer's id
   * @param {object} [opts] {concurrency, results}
   */
  constructor(handlers, opts = {}) {
    this.handlers = handlers;
    this.concurrency = opts.concurrency || navigator.hardwareConcurrency || 2;
    this.results = opts.results || null;
    this.slots = []; // {id, link, jobIds (every id it was given), state: 'running'|'paused'|'done', sent, waiting}
    this.queue = []; // batches of job ids not yet given to a worker
    this.closed = false;
    this.epoch = 0; // counts pauses and resumes, so a late acknowledgement of an old pause is ignored
    this.pausing = false;
  }

  /** Number of workers a run of `jobs` jobs gets. */
  static workerCount(jobs, concurrency = navigator.hardwareConcurrency || 2) {
    return Math.max(1, Math.min(concurrency, jobs));
  }

  /** Cut the job ids into batches of `size`, in order. */
  static batches(ids, size) {
    const out = [];
    for (let k = 0; k < ids.length; k += size) out.push(ids.slice(k, k + size));
    return out;
  }

  /** Job ids in seed-major order (ids are offset + group * seeds + seed). */
  static seedMajor(ids, seeds, offset = 0) {
    const seed = (j) => (j - offset) % seeds;
    return Array.from(ids).sort((a, b) => seed(a) - seed(b) || a - b);
  }

  /**
   * Start the run: config JSON text, the job ids to run, steps per job per
   * chunk, the shape of the ids {variants, seeds, offset} (ids are offset +
   * group * seeds + seed), and for a study's fresh jobs each variant's
   * chosen grid point (`chosen`, else null). Resolves once every trainer has
   * its work (and the results listen to its port).
   */
  async start(configJson, jobIds, chunk = 2000, shape = { variants: 1, seeds: 1 }, chosen = null) {
    const ids = Pool.seedMajor(jobIds, Math.max(1, shape.seeds), shape.offset || 0);
    const n = Pool.workerCount(ids.length, this.concurrency);
    // At least one batch per worker, even when few jobs are left to run.
    const batch = Math.max(1, Math.min(Math.ceil(shape.variants / n), Math.floor(ids.length / n)));
    this.queue = Pool.batches(ids, batch);
    const first = this.queue.splice(0, n);
    for (const list of first) {
      const slot = { id: this.slots.length, link: null, jobIds: list.slice(), state: 'running', sent: 0, waiting: false };
      this.slots.push(slot);
      try {
        slot.link = new WorkerClient('trainworker', `critbox-trainer-${slot.id}`);
      } catch (err) {
        this.#fail(slot, `could not start a worker: ${err.message || err}`);
        continue;
      }
      slot.link.on(TRAIN.paused, ({ sent, epoch }) => this.#paused(slot, sent, epoch));
      slot.link.on(TRAIN.need, ({ sent }) => this.#need(slot, sent));
      slot.link.on(TRAIN.done, ({ sent }) => { slot.sent = sent; this.#retire(slot); });
      slot.link.on(TRAIN.failed, ({ message, jobIds: left, sent }) => { slot.sent = sent; this.#fail(slot, message, left); });
      slot.link.on(POST_FAILED, ({ message }) => this.#fail(slot, message));
      slot.link.onDeath = (message) => this.#fail(slot, message);
      const channel = new MessageChannel();
      if (this.results) {
        await this.results.attach(slot.id, channel.port2);
      } else {
        channel.port2.onmessage = (e) => { if (!this.closed) this.handlers.onProgress?.(e.data, slot.id); };
      }
      if (this.closed) return; // cancelled while the ports were handed over
      if (slot.state === 'done') continue; // died meanwhile
      // A pause asked before this trainer started holds it from its first chunk.
      const pause = this.pausing ? this.epoch : 0;
      slot.link.post(TRAIN.start, { config: configJson, jobIds: list, chunk, batch, pause, chosen, more: true, port: channel.port1 }, [channel.port1]);
    }
    this.#checkDone();
  }

  /** Ask every trainer to stop after its chunk; onPaused fires once all have. */
  pause() {
    this.epoch += 1;
    this.pausing = true;
    for (const s of this.slots) if (s.state === 'paused') s.state = 'running';
    this.#broadcast(TRAIN.pause, { epoch: this.epoch });
  }

  resume() {
    this.epoch += 1;
    this.pausing = false;
    for (const s of this.slots) if (s.state === 'paused') s.state = 'running';
    this.#broadcast(TRAIN.resume);
    for (const s of this.slots) if (s.waiting && s.state !== 'done') this.#feed(s);
  }

  /** [[trainer id, chunks sent]] as the trainers last said: what the results must have seen. */
  sent() {
    return this.slots.map((s) => [s.id, s.sent]);
  }

  /**
   * Stop every trainer; no handler is called after this. Resolves once each
   * has freed its Run and said how many chunks it sent (see sent()), or has
   * been stopped by force after `ms` (its port is then detached from the
   * results, so nothing late arrives).
   */
  async cancel(ms = 2000) {
    this.closed = true;
    await Promise.all(this.slots.map(async (s) => {
      if (!s.link || s.link.dead) return;
      let timer = 0;
      const late = new Promise((resolve) => { timer = setTimeout(() => resolve(null), ms); });
      const answer = await Promise.race([s.link.request(TRAIN.cancel).catch(() => null), late]);
      clearTimeout(timer);
      if (answer) s.sent = answer.sent;
      else if (this.results) await this.results.detach(s.id).catch(() => {});
      s.link.close('cancelled');
      s.state = 'done';
    }));
  }

  #broadcast(type, body = {}) {
    if (this.closed) return;
    for (const s of this.slots) if (s.link && s.state !== 'done') s.link.post(type, body);
  }

  /** A trainer finished what it held: the next batch, unless pausing. */
  #need(slot, sent) {
    if (this.closed || slot.state === 'done') return;
    slot.sent = sent;
    slot.waiting = true;
    if (this.pausing) {
      // Fed on resume. It acknowledges the pause as well (it is idle).
      slot.state = 'paused';
      if (this.slots.every((s) => s.state !== 'running')) this.handlers.onPaused?.();
      return;
    }
    this.#feed(slot);
  }

  /** Hand a waiting trainer the next batch, or none (it then says done). */
  #feed(slot) {
    if (this.closed || !slot.link) return;
    const ids = this.queue.shift() || [];
    slot.waiting = false;
    slot.state = 'running';
    slot.jobIds.push(...ids);
    slot.link.post(TRAIN.more, { jobIds: ids });
  }

  #paused(slot, sent, epoch) {
    if (this.closed || slot.state === 'done' || !this.pausing || epoch !== this.epoch) return;
    slot.sent = sent;
    slot.state = 'paused';
    if (this.slots.every((s) => s.state !== 'running')) this.handlers.onPaused?.();
  }

  #fail(slot, message, jobIds = slot.jobIds) {
    if (this.closed || slot.state === 'done') return;
    // A worker that died cannot say what it sent: stop listening to it.
    if (slot.link?.dead && this.results) this.results.detach(slot.id).catch(() => {});
    this.handlers.onError(message, jobIds);
    this.#retire(slot);
  }

  #retire(slot) {
    if (slot.state === 'done') return;
    slot.state = 'done';
    slot.link?.close('finished');
    this.#checkDone();
  }

  #checkDone() {
    if (this.closed || this.slots.length === 0) return;
    if (this.slots.every((s) => s.state === 'done')) {
      // Every trainer failed or died with batches still queued: those jobs
      // never started, and nothing is left to run them.
      const left = this.queue.flat();
      this.queue = [];
      if (left.length) this.handlers.onError('no training worker is left to run these jobs', left);
      this.closed = true;
      this.handlers.onDone();
    } else if (this.pausing && this.slots.every((s) => s.state !== 'running')) {
      this.handlers.onPaused?.(); // the last running trainer finished during a pause
    }
  }
}
