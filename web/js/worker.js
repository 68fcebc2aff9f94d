// Training worker. Trains the job ids it is given in batches: one `Run`
// handle over `batch` jobs at a time, advanced in chunks, posting progress and
// episode records after every chunk; when a batch is finished its Run is freed
// and the next batch starts. So jobs finish one batch after another (and a
// page reload mid-run keeps every finished job), while each batch still holds
// one seed of several variants, so all curves grow together. The message
// protocol is documented in pool.js.
//
// The same script also serves the inspection views (inspect.js) in a worker
// of their own: it re-trains one job to a chosen step (jobs are
// deterministic, so the learner is the one the run had there) and answers
// questions about it. Protocol (page → worker, then worker → page):
//   {type:'probe-train', runId, config, jobId, steps, chunk, wasm}
//     → {type:'probe-progress', runId, done, steps} after each chunk
//     → {type:'probe-ready', runId, done, status: 0|1|2, failure, policyWidth,
//        states: Float64Array (stateObservations), values: Float64Array (policyValues)}
//   {type:'probe-query', runId, qid, kind: 'inspect', obs: Float64Array}
//     → {type:'probe-answer', runId, qid, data: Float64Array}
//   {type:'probe-query', runId, qid, kind: 'rollout', maxSteps, seed, greedy}
//     → {type:'probe-answer', runId, qid, data: Float64Array}
//   Any failure: {type:'probe-error', runId, qid?, message}.

import { loadWasm, messageOf, provideWasmBytes } from './wasm.js';

/** The current run in this worker, or null. */
let current = null;

self.onmessage = (event) => {
  const msg = event.data || {};
  switch (msg.type) {
    case 'start': start(msg); break;
    case 'pause':
      if (current && current.runId === msg.runId) {
        // Acknowledged by the loop once the chunk in progress has ended.
        current.paused = true;
      }
      break;
    case 'resume':
      if (current && current.runId === msg.runId && current.paused) {
        current.paused = false;
        schedule();
      }
      break;
    case 'cancel':
      if (current && current.runId === msg.runId) {
        finish();
      }
      post({ type: 'cancelled', runId: msg.runId });
      break;
    case 'probe-train': probeTrain(msg); break;
    case 'probe-query': probeQuery(msg); break;
    default:
      post({ type: 'error', runId: msg.runId ?? null, message: `worker: unknown message type ${JSON.stringify(msg.type)}` });
  }
};

async function start(msg) {
  if (current) finish();
  if (msg.wasm) provideWasmBytes(msg.wasm);
  const ids = Array.isArray(msg.jobIds) ? msg.jobIds.slice() : [];
  const size = Math.max(1, Math.floor(msg.batch || ids.length || 1));
  const batches = [];
  for (let k = 0; k < ids.length; k += size) batches.push(ids.slice(k, k + size));
  const job = {
    runId: msg.runId,
    config: msg.config,
    batches,
    wasm: null,
    run: null,
    runIds: [],
    chunk: Math.max(1, Math.floor(msg.chunk || 2000)),
    paused: false,
    busy: false,
    scheduled: false,
    failuresSeen: 0,
  };
  current = job;
  try {
    job.wasm = await loadWasm();
  } catch (err) {
    if (current === job) current = null;
    post({ type: 'error', runId: job.runId, message: messageOf(err) });
    return;
  }
  if (current !== job) return; // cancelled or replaced while loading
  if (!nextBatch(job)) {
    current = null;
    post({ type: 'done', runId: job.runId });
    return;
  }
  schedule();
}

/** Open the next batch's Run; false when none is left or it could not start. */
function nextBatch(job) {
  if (job.run) { try { job.run.free(); } catch { /* already freed */ } job.run = null; }
  const ids = job.batches.shift();
  if (!ids) return false;
  try {
    job.run = new job.wasm.Run(job.config, Uint32Array.from(ids));
    job.runIds = ids;
    job.failuresSeen = 0;
  } catch (err) {
    // Every job left in this worker fails the same way: report them all.
    const all = [ids, ...job.batches].flat();
    job.batches = [];
    current = null;
    post({ type: 'error', runId: job.runId, message: `starting jobs ${all.join(', ')}: ${messageOf(err)}` });
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
  tick.port2.postMessage(current.runId);
}

function step(event) {
  const job = current;
  if (!job || event.data !== job.runId) return; // a tick left over from an older run
  job.scheduled = false;
  if (!job.run || job.busy) return;
  if (job.paused) { post({ type: 'paused', runId: job.runId }); return; }
  let finished;
  job.busy = true;
  try {
    finished = job.run.advance(job.chunk);
    const progress = owned(job.run.progress());
    const episodes = owned(job.run.takeEpisodes());
    const failures = JSON.parse(job.run.failures());
    const fresh = failures.slice(job.failuresSeen);
    job.failuresSeen = failures.length;
    post({ type: 'progress', runId: job.runId, progress, episodes, failures: fresh },
      [progress.buffer, episodes.buffer]);
  } catch (err) {
    job.busy = false;
    const left = [job.runIds, ...job.batches].flat();
    finish();
    post({ type: 'error', runId: job.runId, message: `jobs ${left.join(', ')}: ${messageOf(err)}` });
    return;
  }
  job.busy = false;
  if (finished) {
    if (!nextBatch(job)) {
      if (current === job) {
        finish();
        post({ type: 'done', runId: job.runId });
      }
      return;
    }
  }
  if (job.paused) {
    post({ type: 'paused', runId: job.runId });
  } else {
    schedule();
  }
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

/** A Float64Array that owns its whole buffer, so it can be transferred
 * without detaching anything else (never a view over wasm memory). */
function owned(arr) {
  if (arr.byteOffset === 0 && arr.byteLength === arr.buffer.byteLength
      && !(typeof SharedArrayBuffer !== 'undefined' && arr.buffer instanceof SharedArrayBuffer)) {
    return arr;
  }
  return arr.slice();
}

// ---------------------------------------------------------------- inspection

/** The probed job: {runId, run} or null. */
let probe = null;

function freeProbe() {
  if (probe && probe.run) { try { probe.run.free(); } catch { /* already freed */ } }
  probe = null;
}

async function probeTrain(msg) {
  freeProbe();
  const me = { runId: msg.runId, run: null };
  probe = me;
  const fail = (message) => { if (probe === me) freeProbe(); post({ type: 'probe-error', runId: me.runId, message }); };
  if (msg.wasm) provideWasmBytes(msg.wasm);
  let wasm;
  try {
    wasm = await loadWasm();
    if (probe !== me) return;
    me.run = new wasm.Run(msg.config, Uint32Array.from([msg.jobId]));
  } catch (err) {
    fail(messageOf(err));
    return;
  }
  const target = Math.max(0, Math.floor(msg.steps || 0));
  const chunk = Math.max(1, Math.floor(msg.chunk || 5000));
  let done = 0;
  let status = 0;
  try {
    while (done < target && status === 0) {
      const finished = me.run.advance(Math.min(chunk, target - done));
      const p = me.run.progress();
      done = p[1];
      status = p[2];
      post({ type: 'probe-progress', runId: me.runId, done, steps: target });
      await new Promise((r) => setTimeout(r, 0)); // let a newer request in
      if (probe !== me) return;
      if (finished) break;
    }
    const failure = status === 2 ? (JSON.parse(me.run.failures())[0] || {}).reason || 'failed' : '';
    const states = owned(me.run.stateObservations());
    const values = status === 2 ? new Float64Array(0) : owned(me.run.policyValues(0));
    post({ type: 'probe-ready', runId: me.runId, done, status, failure, policyWidth: me.run.policyWidth(), states, values },
      [states.buffer, values.buffer]);
  } catch (err) {
    fail(messageOf(err));
  }
}

function probeQuery(msg) {
  if (!probe || probe.runId !== msg.runId || !probe.run) {
    post({ type: 'probe-error', runId: msg.runId, qid: msg.qid, message: 'nothing is being inspected (train a seed first)' });
    return;
  }
  try {
    let data;
    if (msg.kind === 'inspect') data = probe.run.inspect(0, msg.obs);
    else if (msg.kind === 'rollout') data = probe.run.rollout(0, msg.maxSteps, msg.seed, !!msg.greedy);
    else throw new Error(`unknown question ${JSON.stringify(msg.kind)}`);
    const out = owned(data);
    post({ type: 'probe-answer', runId: msg.runId, qid: msg.qid, data: out }, [out.buffer]);
  } catch (err) {
    post({ type: 'probe-error', runId: msg.runId, qid: msg.qid, message: messageOf(err) });
  }
}

function post(msg, transfer) {
  self.postMessage(msg, transfer || []);
}
