// The training worker. Trains the job ids it is given in batches: one `Run`
// handle over `batch` jobs at a time, advanced in chunks; after every chunk
// it posts the jobs' progress, new failures and new records (every kind in
// protocol.js) on its results port, straight to the results worker. The
// chunk starts at the page's size and then adapts so that a chunk takes
// about CHUNK_MS (fewer messages leave the cores to training; chunk sizes
// never change the numbers). When a batch is finished its Run is freed and
// the next batch starts, so jobs finish batch by batch (a reload mid-run
// keeps every finished job), while each batch holds one seed of several
// variants, so all curves grow together. Started with `more`, it asks for
// the next batch when it has none left (need) instead of finishing, and the
// pool hands batches to whichever trainer is free first. The page hears only
// the trainer's state: paused, need, done, failed (messages in protocol.js,
// TRAIN).

import { serve, emit, Reply } from './rpc.js';
import { loadWasm, messageOf } from './wasm.js';
import { TRAIN, PORT, RECORD_KINDS } from './protocol.js';

/** Wall time a training chunk aims at: progress stays smooth and pause or
 * cancel answer within a fraction of a second. */
const CHUNK_MS = 40;
const MAX_CHUNK = 1 << 20;

/** The next chunk size after one of `steps` steps took `ms`: doubled while
 * under half the target, halved while over twice it. */
function adaptChunk(steps, ms) {
  if (ms < CHUNK_MS / 2) return Math.min(MAX_CHUNK, steps * 2);
  if (ms > CHUNK_MS * 2) return Math.max(1, Math.floor(steps / 2));
  return steps;
}

/** The work in hand, or null. */
let current = null;

serve({
  [TRAIN.start]: start,
  // Acknowledged (with the pause's epoch) once the chunk in progress ends,
  // or at once when the trainer is already idle.
  [TRAIN.pause]: ({ epoch }) => {
    if (!current) return;
    current.paused = true;
    current.epoch = epoch;
    if (current.idle) emit(TRAIN.paused, { sent: current.seq, epoch });
  },
  [TRAIN.resume]: () => {
    if (!current || !current.paused) return;
    current.paused = false;
    // A trainer waiting for work stays idle until the pool's `more`.
    if (current.idle && !current.waiting) { current.idle = false; schedule(); }
  },
  [TRAIN.more]: more,
  [TRAIN.cancel]: () => {
    const sent = current ? current.seq : 0;
    finish();
    return new Reply({ sent });
  },
});

async function start(msg) {
  if (!(msg.port instanceof MessagePort)) throw new Error('a training start needs a results port');
  if (current) finish();
  const ids = Array.isArray(msg.jobIds) ? msg.jobIds.slice() : [];
  const size = Math.max(1, Math.floor(msg.batch || ids.length || 1));
  const batches = [];
  for (let k = 0; k < ids.length; k += size) batches.push(ids.slice(k, k + size));
  const chunk = Math.max(1, Math.floor(msg.chunk || 2000));
  const job = {
    config: msg.config, chosen: Array.isArray(msg.chosen) ? msg.chosen : null, port: msg.port, batches, wasm: null, run: null, runIds: [],
    chunk, paused: !!msg.pause, idle: false, epoch: msg.pause || 0, busy: false, scheduled: false, failuresSeen: 0, seq: 0,
    size, more: !!msg.more, waiting: false,
  };
  current = job;
  try {
    job.wasm = await loadWasm();
  } catch (err) {
    if (current === job) current = null;
    emit(TRAIN.failed, { message: messageOf(err), jobIds: ids, sent: 0 });
    return;
  }
  if (current !== job) return; // cancelled or replaced while loading
  if (!nextBatch(job)) {
    if (current === job) outOfWork(job);
    return;
  }
  schedule();
}

/** No batch left: ask for more (a trainer started with `more`), else done. */
function outOfWork(job) {
  if (job.more) {
    job.waiting = true;
    job.idle = true; // a pause is acknowledged at once
    emit(TRAIN.need, { sent: job.seq });
    return;
  }
  finish();
  emit(TRAIN.done, { sent: job.seq });
}

/** The pool's answer to `need`: the next job ids, or none (then done). */
function more({ jobIds }) {
  const job = current;
  if (!job || !job.waiting) return;
  job.waiting = false;
  const ids = Array.isArray(jobIds) ? jobIds : [];
  if (ids.length === 0) { finish(); emit(TRAIN.done, { sent: job.seq }); return; }
  for (let k = 0; k < ids.length; k += job.size) job.batches.push(ids.slice(k, k + job.size));
  if (!nextBatch(job)) return; // failed, and said so
  if (job.paused) return; // stays idle; resume schedules it
  job.idle = false;
  schedule();
}

/** Open the next batch's Run; false when none is left or it could not start. */
function nextBatch(job) {
  if (job.run) { try { job.run.free(); } catch { /* already freed */ } job.run = null; }
  const ids = job.batches.shift();
  if (!ids) return false;
  try {
    job.run = job.chosen
      ? job.wasm.Run.withChoice(job.config, Uint32Array.from(job.chosen), Uint32Array.from(ids))
      : new job.wasm.Run(job.config, Uint32Array.from(ids));
    job.runIds = ids;
    job.failuresSeen = 0;
  } catch (err) {
    // Every job left in this worker fails the same way: report them all.
    const all = [ids, ...job.batches].flat();
    job.batches = [];
    current = null;
    emit(TRAIN.failed, { message: `starting jobs ${all.join(', ')}: ${messageOf(err)}`, jobIds: all, sent: job.seq });
    return false;
  }
  return true;
}

// Yield to the event loop between chunks so pause/cancel messages are seen.
const tick = new MessageChannel();
tick.port1.onmessage = step;
function schedule() {
  if (!current || current.scheduled) return;
  current.scheduled = true;
  tick.port2.postMessage(null);
}

/** A Float64Array that owns its whole buffer, so it can be transferred
 * without detaching anything else (never a view over wasm memory). */
function owned(arr) {
  if (arr.byteOffset === 0 && arr.byteLength === arr.buffer.byteLength
      && !(typeof SharedArrayBuffer !== 'undefined' && arr.buffer instanceof SharedArrayBuffer)) {
    return arr;
  }
  return arr.slice();
}

/** Post the chunk's progress, failures and records on the results port. */
function send(job, advanceMs) {
  const progress = owned(job.run.progress());
  const records = {};
  const transfer = [progress.buffer];
  for (const kind of RECORD_KINDS) {
    const data = owned(job.run.takeRecords(kind));
    if (data.length) { records[kind] = data; transfer.push(data.buffer); }
  }
  const failures = JSON.parse(job.run.failures());
  const fresh = failures.slice(job.failuresSeen);
  job.failuresSeen = failures.length;
  job.seq += 1;
  job.port.postMessage({ type: PORT.chunk, seq: job.seq, progress, failures: fresh, records, advanceMs }, transfer);
}

function step() {
  const job = current;
  if (!job) return;
  job.scheduled = false;
  if (!job.run || job.busy) return;
  if (job.paused) { idle(job); return; }
  let finished;
  job.busy = true;
  try {
    const t0 = performance.now();
    finished = job.run.advance(job.chunk);
    const ms = performance.now() - t0;
    job.chunk = adaptChunk(job.chunk, ms);
    send(job, ms);
  } catch (err) {
    job.busy = false;
    const left = [job.runIds, ...job.batches].flat();
    finish();
    emit(TRAIN.failed, { message: `jobs ${left.join(', ')}: ${messageOf(err)}`, jobIds: left, sent: job.seq });
    return;
  }
  job.busy = false;
  if (finished && !nextBatch(job)) {
    if (current === job) outOfWork(job);
    return;
  }
  if (job.paused) idle(job);
  else schedule();
}

/** Stop between chunks until resumed, and say so. */
function idle(job) {
  job.idle = true;
  emit(TRAIN.paused, { sent: job.seq, epoch: job.epoch });
}

/** Free the current run (if any) and forget it. */
function finish() {
  const job = current;
  current = null;
  if (job && job.run) {
    try { job.run.free(); } catch { /* already freed */ }
    job.run = null;
  }
}
