// The results worker: the experiment's one `Results` handle lives here. It
// takes the trainers' chunks straight from their MessagePorts (progress,
// failures and records of every kind in protocol.js), tells the page how far
// each job got (the handle's job table: the only record of it), and answers
// the page's requests for curves, summaries, exports, and for keeping the
// results in IndexedDB or reading them back (Results.pack/restore, so the
// kept bytes are the core's results file). Requests are handled strictly in
// order; protocol.js lists them (RESULTS).

import { serve, emit, Reply } from './rpc.js';
import { loadWasm } from './wasm.js';
import { RESULTS, PORT, PROGRESS_STRIDE, TABLE_STRIDE, JOB, KEPT } from './protocol.js';
import { getKept, putKept } from './store.js';

/** Format version of the kept entry (its bytes are Results.pack()). */
const KEPT_VERSION = 2;
/** Least time between two progress events (ms), unless a job finished. */
const PROGRESS_MS = 250;
/** How long `settle` waits for trainers' last chunks before giving up (ms). */
const SETTLE_MS = 20000;

/** {results, jobs, checkpoints (how many), configJson, ports: Map(id → {port, seq}), waits: [], table, timer} or null. */
let open = null;

function mustOpen() {
  if (!open) throw new Error('no results are open');
  return open;
}

function use(results) {
  if (open) close();
  const configJson = results.configJson();
  const table = results.jobTable();
  const checkpoints = results.checkpoints().length;
  open = { results, jobs: table.length / TABLE_STRIDE, checkpoints, configJson, ports: new Map(), waits: [], table, timer: 0, last: 0 };
  return open;
}

function close() {
  if (!open) return;
  for (const p of open.ports.values()) p.port.close();
  for (const w of open.waits) w.reject(new Error('the results were closed'));
  clearTimeout(open.timer);
  try { open.results.free(); } catch { /* already freed */ }
  open = null;
}

/** Apply one trainer chunk (PORT.chunk) to the results. */
function apply(o, id, msg) {
  const p = o.ports.get(id);
  if (!p || msg.type !== PORT.chunk) return;
  for (const [kind, data] of Object.entries(msg.records || {})) o.results.addRecords(kind, data);
  const progress = msg.progress || [];
  for (let k = 0; k + PROGRESS_STRIDE <= progress.length; k += PROGRESS_STRIDE) o.results.setSteps(progress[k], progress[k + 1]);
  for (const f of msg.failures || []) o.results.markFailed(f.job, String(f.reason));
  p.seq = Math.max(p.seq, msg.seq || 0);
  changed(o);
  release(o);
}

/** Tell the page the job table changed: at once when a job's status did, else at most every PROGRESS_MS. */
function changed(o) {
  const table = o.results.jobTable();
  let finished = false;
  for (let j = 0; j < o.jobs; j++) {
    if (table[j * TABLE_STRIDE + 1] !== o.table[j * TABLE_STRIDE + 1]) finished = true;
  }
  o.table = table;
  const wait = PROGRESS_MS - (performance.now() - o.last);
  if (finished || wait <= 0) { clearTimeout(o.timer); o.timer = 0; report(o); return; }
  if (!o.timer) o.timer = setTimeout(() => { o.timer = 0; if (open === o) report(o); }, wait);
}

function report(o) {
  o.last = performance.now();
  const table = o.table.slice();
  emit(RESULTS.progress, { table }, [table.buffer]);
}

/** Resolve the settle requests whose ports have all delivered what they wait for. */
function release(o) {
  o.waits = o.waits.filter((w) => {
    const ok = w.sent.every(([id, seq]) => { const p = o.ports.get(id); return !p || p.seq >= seq; });
    if (ok) { clearTimeout(w.timer); w.resolve({ table: o.table.slice() }); }
    return !ok;
  });
}

/**
 * Curves of every variant for the page's chart. `measure` is 'training' (the
 * return while learning, per step bin), 'evaluation' (the learned policy's
 * evaluation return, per checkpoint) or 'both' (evaluation, with the
 * training curves as `background`). The shaped return exists only while
 * learning, so stat 'shaped' always reads the training measure.
 */
function curves(o, { stat, seeds, measure }) {
  const r = o.results;
  const n = JSON.parse(o.configJson).variants.length;
  const perVariant = o.jobs / n;
  const evaluating = o.checkpoints > 0;
  const main = stat !== 'shaped' && evaluating && (measure === 'evaluation' || measure === 'both') ? 'evaluation' : 'training';
  const robustStat = stat && stat !== 'mean' && stat !== 'shaped';
  const out = {
    measure: main,
    curves: [],
    robust: robustStat ? [] : null,
    seeds: seeds ? [] : null,
    background: main === 'evaluation' && measure === 'both' ? [] : null,
    backgroundRobust: main === 'evaluation' && measure === 'both' && robustStat ? [] : null,
  };
  for (let v = 0; v < n; v++) {
    if (main === 'evaluation') {
      out.curves.push(r.curveEval(v));
      if (out.robust) out.robust.push(r.curveEvalRobust(v));
      if (out.seeds) out.seeds.push(Array.from({ length: perVariant }, (_, s) => r.seedEvalCurve(v, s)));
      if (out.background) out.background.push(r.curve(v));
      if (out.backgroundRobust) out.backgroundRobust.push(r.curveRobust(v));
    } else {
      out.curves.push(stat === 'shaped' ? r.curveShaped(v) : r.curve(v));
      if (out.robust) out.robust.push(r.curveRobust(v));
      if (out.seeds) out.seeds.push(Array.from({ length: perVariant }, (_, s) => r.seedCurve(v, s)));
    }
  }
  const transfer = [
    ...out.curves, ...(out.robust || []), ...(out.seeds || []).flat(), ...(out.background || []), ...(out.backgroundRobust || []),
  ].map((a) => a.buffer);
  return new Reply(out, transfer);
}

/** Pack the results (the finished jobs only unless `final`) into IndexedDB. */
async function keep(o, { status, final, origin, fileName }) {
  const t0 = performance.now();
  const part = final ? null : o.results.finishedOnly();
  let bytes;
  let jobs = 0;
  try {
    const from = part || o.results;
    bytes = from.pack();
    const table = from.jobTable();
    for (let j = 0; j < o.jobs; j++) if (table[j * TABLE_STRIDE + 1] !== JOB.unfinished) jobs += 1;
  } finally {
    part?.free();
  }
  await putKept(KEPT.results, {
    v: KEPT_VERSION, status: String(status), origin: String(origin || 'run'), fileName: String(fileName || ''),
    savedAt: Date.now(), bytes,
  });
  return { jobs, bytes: bytes.length, ms: performance.now() - t0 };
}

async function restoreKept(wasm) {
  const entry = await getKept(KEPT.results);
  if (!entry) return null;
  if (entry.v !== KEPT_VERSION || !(entry.bytes instanceof Uint8Array)) {
    throw new Error('the results kept from the last visit are in a format this page does not read');
  }
  const o = use(wasm.Results.restore(entry.bytes));
  const meta = { status: String(entry.status), origin: String(entry.origin), fileName: String(entry.fileName || ''), savedAt: entry.savedAt };
  return { meta, configJson: o.configJson, table: o.table.slice() };
}

serve({
  [RESULTS.open]: async ({ config }) => ({ jobs: use(new (await loadWasm()).Results(config)).jobs }),
  [RESULTS.openFile]: async ({ text }) => {
    const o = use((await loadWasm()).Results.fromSaved(text));
    return { configJson: o.configJson, table: o.table.slice() };
  },
  [RESULTS.restoreKept]: async () => restoreKept(await loadWasm()),
  [RESULTS.attach]: ({ id, port }) => {
    const o = mustOpen();
    o.ports.set(id, { port, seq: 0 });
    port.onmessage = (e) => {
      if (open !== o) return;
      try {
        apply(o, id, e.data || {});
      } catch (err) {
        emit(RESULTS.progress, { table: o.table.slice(), error: `recording results: ${err.message || err}` });
      }
    };
    return null;
  },
  [RESULTS.settle]: ({ sent }) => {
    const o = mustOpen();
    return new Promise((resolve, reject) => {
      const w = { sent: sent || [], resolve, reject, timer: 0 };
      w.timer = setTimeout(() => {
        o.waits = o.waits.filter((x) => x !== w);
        reject(new Error('some trainers\' last results did not arrive; the summary may miss their final chunk'));
      }, SETTLE_MS);
      o.waits.push(w);
      release(o);
    });
  },
  [RESULTS.detach]: ({ id }) => {
    const o = mustOpen();
    const p = o.ports.get(id);
    if (p) { p.port.close(); o.ports.delete(id); }
    release(o);
    return null;
  },
  [RESULTS.fail]: ({ jobs, reason }) => {
    const o = mustOpen();
    for (const j of jobs || []) {
      if (o.table[j * TABLE_STRIDE + 1] === JOB.unfinished) o.results.markFailed(j, String(reason));
    }
    changed(o);
    return null;
  },
  [RESULTS.curves]: (body) => curves(mustOpen(), body),
  [RESULTS.summary]: () => mustOpen().results.summaryJson(),
  [RESULTS.choice]: () => {
    const c = mustOpen().results.choice();
    return { chosen: c.length ? Array.from(c) : null };
  },
  [RESULTS.save]: () => mustOpen().results.saveJson(),
  [RESULTS.csv]: () => mustOpen().results.tidyCsv(),
  [RESULTS.keep]: (body) => keep(mustOpen(), body),
}, { ordered: true });
