// Training worker (module worker). Owns one `Run` over the job ids it is
// given and advances it in chunks, posting progress and episode records after
// every chunk. The message protocol is documented in pool.js.

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
    default:
      post({ type: 'error', runId: msg.runId ?? null, message: `worker: unknown message type ${JSON.stringify(msg.type)}` });
  }
};

async function start(msg) {
  if (current) finish();
  if (msg.wasm) provideWasmBytes(msg.wasm);
  const job = {
    runId: msg.runId,
    run: null,
    chunk: Math.max(1, Math.floor(msg.chunk || 2000)),
    paused: false,
    busy: false,
    scheduled: false,
    failuresSeen: 0,
  };
  current = job;
  let wasm;
  try {
    wasm = await loadWasm();
  } catch (err) {
    if (current === job) current = null;
    post({ type: 'error', runId: job.runId, message: messageOf(err) });
    return;
  }
  if (current !== job) return; // cancelled or replaced while loading
  try {
    job.run = new wasm.Run(msg.config, Uint32Array.from(msg.jobIds));
  } catch (err) {
    current = null;
    post({ type: 'error', runId: job.runId, message: `starting jobs ${msg.jobIds.join(', ')}: ${messageOf(err)}` });
    return;
  }
  schedule();
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
    finish();
    post({ type: 'error', runId: job.runId, message: messageOf(err) });
    return;
  }
  job.busy = false;
  if (finished) {
    finish();
    post({ type: 'done', runId: job.runId });
  } else if (job.paused) {
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

function post(msg, transfer) {
  self.postMessage(msg, transfer || []);
}
