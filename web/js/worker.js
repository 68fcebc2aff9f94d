// Training worker. Trains the job ids it is given in batches: one `Run`
// handle over `batch` jobs at a time, advanced in chunks, posting progress and
// episode records after every chunk (the chunk starts at the page's size and
// then adapts so that a chunk takes about CHUNK_MS: fast learners post a few
// dozen messages a second instead of hundreds, which would keep the page's
// main thread busy on a core the workers need); when a batch is finished its Run is freed
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
//   {type:'probe-variance', runId, qid, config, variant, seed, checkpoints: Float64Array,
//    estimates, episodes, wasm}  (the gradient-variance probe, wasm `probe`)
//     → {type:'probe-answer', runId, qid, data: JSON text}
//   Any failure: {type:'probe-error', runId, qid?, message}.
//
// And, in a third worker, the experiment's results (results.js is the page's
// side): the Results handle lives here, so binning, bootstrap bands and
// summaries never hold up the page. Messages are handled strictly in order.
//   {type:'res-open', qid, config}                → {type:'res-ok', qid}
//   {type:'res-open-saved', qid, text}            → {type:'res-ok', qid, configJson, jobs}
//   {type:'res-restore', qid, config, data}       → {type:'res-ok', qid, jobs}   (data: see pack)
//   {type:'res-add', progress, episodes, failures} (no answer; as training workers send them)
//   {type:'res-fail', job, reason}                 (no answer)
//   {type:'res-curves', qid, stat, seeds}         → {type:'res-curves', qid, curves: [Float64Array] (the shaped
//                                                     return's when stat is 'shaped'),
//                                                     robust: [Float64Array] | null, seeds: [[Float64Array]] | null}
//   {type:'res-summary' | 'res-save' | 'res-csv', qid} → {type:'res-text', qid, text}
//   {type:'res-pack', qid, final}                 → {type:'res-text', qid, text}: base64url of the gzip of
//       JSON {jobs: [{id, steps, status, failed, episodes}]}, episodes the base64url of the job's
//       records (Float64Array, stride 5); all jobs when final, else the finished ones
//   jobs in answers: [{id, steps, status, failed}]; any failure: {type:'res-error', qid, message}.
// Every message may carry `wasm` (the module's bytes, single-file build).

import { loadWasm, messageOf, provideWasmBytes, provideWasmModule } from './wasm.js';
import { compress, decompress, toBase64Url, fromBase64Url } from './share.js';

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
    case 'probe-variance': probeVariance(msg); break;
    default:
      if (typeof msg.type === 'string' && msg.type.startsWith('res-')) {
        if (msg.wasm) provideWasmBytes(msg.wasm);
        if (msg.module) provideWasmModule(msg.module);
        resQueue = resQueue.then(() => resHandle(msg));
        break;
      }
      post({ type: 'error', runId: msg.runId ?? null, message: `worker: unknown message type ${JSON.stringify(msg.type)}` });
  }
};

async function start(msg) {
  if (current) finish();
  if (msg.wasm) provideWasmBytes(msg.wasm);
  if (msg.module) provideWasmModule(msg.module);
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
    chunkNow: Math.max(1, Math.floor(msg.chunk || 2000)),
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

/** Wall time a training chunk aims at: progress stays smooth and pause or
 * cancel answer within a fraction of a second. */
const CHUNK_MS = 40;
const MAX_CHUNK = 1 << 20;

/** The next chunk size after one of `steps` steps took `ms`: doubled while
 * under half the target, halved while over twice it (chunk sizes never
 * change the numbers, only how often progress is posted). */
function adaptChunk(steps, ms) {
  if (ms < CHUNK_MS / 2) return Math.min(MAX_CHUNK, steps * 2);
  if (ms > CHUNK_MS * 2) return Math.max(1, Math.floor(steps / 2));
  return steps;
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
    const t0 = performance.now();
    finished = job.run.advance(job.chunkNow);
    job.chunkNow = adaptChunk(job.chunkNow, performance.now() - t0);
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
  if (msg.module) provideWasmModule(msg.module);
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

async function probeVariance(msg) {
  if (msg.wasm) provideWasmBytes(msg.wasm);
  if (msg.module) provideWasmModule(msg.module);
  try {
    const wasm = await loadWasm();
    const text = wasm.probe(msg.config, msg.variant, msg.seed, msg.checkpoints, msg.estimates, msg.episodes);
    post({ type: 'probe-answer', runId: msg.runId, qid: msg.qid, data: text });
  } catch (err) {
    post({ type: 'probe-error', runId: msg.runId, qid: msg.qid, message: messageOf(err) });
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

// ---------------------------------------------------------------- results

let resQueue = Promise.resolve();
/** {results, jobs, records, steps, status, failed} or null. */
let res = null;

function resEmpty(results, jobs) {
  return {
    results,
    jobs,
    records: Array.from({ length: jobs }, () => null),
    steps: new Float64Array(jobs),
    status: new Uint8Array(jobs),
    failed: new Map(),
  };
}

function resKeep(episodes) {
  for (let i = 0; i + 5 <= episodes.length; i += 5) {
    const j = episodes[i];
    let r = res.records[j];
    if (!r) { r = { data: new Float64Array(5 * 64), n: 0 }; res.records[j] = r; }
    if (r.n + 5 > r.data.length) {
      const bigger = new Float64Array(r.data.length * 2);
      bigger.set(r.data.subarray(0, r.n));
      r.data = bigger;
    }
    r.data.set(episodes.subarray(i, i + 5), r.n);
    r.n += 5;
  }
}

function resJobs() {
  return Array.from({ length: res.jobs }, (_, id) => ({ id, steps: res.steps[id], status: res.status[id], failed: res.failed.get(id) ?? null }));
}

function resFree() {
  if (res && res.results) { try { res.results.free(); } catch { /* already freed */ } }
  res = null;
}

const f64b64 = (a) => toBase64Url(new Uint8Array(a.buffer, a.byteOffset, a.byteLength));

async function resHandle(msg) {
  const answer = (m, transfer) => post({ qid: msg.qid, ...m }, transfer);
  try {
    const wasm = await loadWasm();
    switch (msg.type) {
      case 'res-open': {
        resFree();
        const results = new wasm.Results(msg.config);
        res = resEmpty(results, JSON.parse(wasm.validateConfig(msg.config)).jobs);
        answer({ type: 'res-ok' });
        break;
      }
      case 'res-open-saved': {
        resFree();
        const results = wasm.Results.fromSaved(msg.text);
        const configJson = results.configJson();
        const info = JSON.parse(wasm.validateConfig(configJson));
        res = resEmpty(results, info.jobs);
        // The records of a results file, for keeping it: read them back from its own save.
        const saved = JSON.parse(msg.text);
        for (const j of saved.jobs || []) {
          const id = Number(j.id);
          const eps = new Float64Array((j.episodes || []).length * 5);
          (j.episodes || []).forEach((e, k) => eps.set([id, e[0], e[1], e[2], e[3]], k * 5));
          resKeep(eps);
          res.steps[id] = Number(j.steps_done) || 0;
          res.status[id] = j.failed ? 2 : 1;
          if (j.failed) res.failed.set(id, String(j.failed));
        }
        answer({ type: 'res-ok', configJson, jobs: resJobs() });
        break;
      }
      case 'res-restore': {
        resFree();
        const results = new wasm.Results(msg.config);
        res = resEmpty(results, JSON.parse(wasm.validateConfig(msg.config)).jobs);
        const body = new TextDecoder().decode(await decompress(fromBase64Url(msg.data), 'gzip'));
        const parsed = JSON.parse(body);
        if (!parsed || !Array.isArray(parsed.jobs)) throw new Error('the kept results have no job list');
        for (const j of parsed.jobs) {
          const id = Number(j.id);
          if (!Number.isInteger(id) || id < 0 || id >= res.jobs) throw new Error(`job ${JSON.stringify(j.id)} is not in the experiment`);
          const bytes = fromBase64Url(String(j.episodes ?? ''));
          if (bytes.length % 8 !== 0) throw new Error(`job ${id}: an episode list that is not a whole number of values`);
          const eps = new Float64Array(bytes.buffer, bytes.byteOffset, bytes.length / 8);
          results.addEpisodes(eps);
          resKeep(eps);
          const steps = Number(j.steps) || 0;
          results.setSteps(id, steps);
          res.steps[id] = steps;
          res.status[id] = j.status === 2 ? 2 : j.status === 1 ? 1 : 0;
          if (j.failed !== null && j.failed !== undefined) {
            results.markFailed(id, String(j.failed));
            res.failed.set(id, String(j.failed));
          }
        }
        answer({ type: 'res-ok', jobs: resJobs() });
        break;
      }
      case 'res-add': {
        if (!res) return;
        if (msg.episodes && msg.episodes.length) { res.results.addEpisodes(msg.episodes); resKeep(msg.episodes); }
        const p = msg.progress || [];
        for (let k = 0; k + 3 <= p.length; k += 3) {
          res.results.setSteps(p[k], p[k + 1]);
          res.steps[p[k]] = p[k + 1];
          res.status[p[k]] = p[k + 2];
        }
        for (const f of msg.failures || []) {
          res.results.markFailed(f.job, String(f.reason));
          res.status[f.job] = 2;
          res.failed.set(f.job, String(f.reason));
        }
        break;
      }
      case 'res-fail': {
        if (!res) return;
        if (res.status[msg.job] === 0) {
          res.results.markFailed(msg.job, String(msg.reason));
          res.status[msg.job] = 2;
          res.failed.set(msg.job, String(msg.reason));
        }
        break;
      }
      case 'res-curves': {
        if (!res) throw new Error('no results are open');
        const n = JSON.parse(res.results.configJson()).variants.length;
        const seeds = res.jobs / n;
        const curves = [];
        const robust = msg.stat && msg.stat !== 'mean' ? [] : null;
        const perSeed = msg.seeds ? [] : null;
        for (let v = 0; v < n; v++) {
          curves.push(owned(msg.stat === 'shaped' ? res.results.curveShaped(v) : res.results.curve(v)));
          if (robust) robust.push(owned(res.results.curveRobust(v)));
          if (perSeed) perSeed.push(Array.from({ length: seeds }, (_, s) => owned(res.results.seedCurve(v, s))));
        }
        const transfer = [...curves, ...(robust || []), ...(perSeed || []).flat()].map((a) => a.buffer);
        answer({ type: 'res-curves', curves, robust, seeds: perSeed }, transfer);
        break;
      }
      case 'res-summary': answer({ type: 'res-text', text: mustRes().results.summaryJson() }); break;
      case 'res-save': answer({ type: 'res-text', text: mustRes().results.saveJson() }); break;
      case 'res-csv': answer({ type: 'res-text', text: mustRes().results.tidyCsv() }); break;
      case 'res-pack': {
        mustRes();
        const jobs = [];
        for (let id = 0; id < res.jobs; id++) {
          if (!msg.final && res.status[id] === 0) continue;
          const r = res.records[id];
          jobs.push({ id, steps: res.steps[id], status: res.status[id], failed: res.failed.get(id) ?? null, episodes: f64b64(r ? r.data.subarray(0, r.n) : new Float64Array(0)) });
        }
        const packed = await compress(new TextEncoder().encode(JSON.stringify({ jobs })), 'gzip');
        answer({ type: 'res-text', text: toBase64Url(packed) });
        break;
      }
      case 'res-close': resFree(); break;
      default: throw new Error(`unknown results message ${JSON.stringify(msg.type)}`);
    }
  } catch (err) {
    if (msg.qid) answer({ type: 'res-error', message: messageOf(err) });
  }
}

function mustRes() {
  if (!res) throw new Error('no results are open');
  return res;
}

function post(msg, transfer) {
  self.postMessage(msg, transfer || []);
}
