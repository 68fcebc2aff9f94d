// The one description of what crosses between the page and its workers:
// the record kinds a trainer hands to the results worker (their layouts),
// and the message types of the three workers (trainer, results, probe).
// Messages travel through rpc.js; nothing here touches the DOM, so workers
// and Node tests import it too.
//
// Paths:
//   page → trainer        TRAIN.start/pause/resume/more (posts), TRAIN.cancel (request)
//   trainer → page        TRAIN.paused/need/done/failed (events, each with `sent`)
//   trainer → results     PORT.chunk on a MessagePort of its own (MessageChannel)
//   page → results        RESULTS.* requests; RESULTS.progress event back
//   page → probe          PROBE.* requests; PROBE.progress event back
// The main thread never sees a record: only job progress (the results'
// job table) and curves.

/**
 * Record kinds: name → field names in record order (the stride is the
 * number of fields; every field is an f64, the job id first). The trainer
 * takes them with `Run.takeRecords(name)`, the results worker adds them with
 * `Results.addRecords(name, data)`. crate/wasm/src/records.rs lays out the
 * same kinds (`recordLayouts()`), and tests/node/protocol.test.mjs checks
 * that the two agree. A new kind is one entry here and one there.
 */
export const RECORDS = Object.freeze({
  episode: Object.freeze(['job', 'end_step', 'base_return', 'shaped_return', 'length', 'truncated']),
  evaluation: Object.freeze(['job', 'checkpoint', 'step', 'mean_return', 'episodes']),
  diagnostic: Object.freeze(['job', 'bin', 'count', 'td', 'abs_td', 'entropy', 'actor_norm', 'critic_norm',
    'weights', 'weight_sum', 'weight_sq', 'weight_max', 'capped']),
});

/** The record kind names, in a fixed order. */
export const RECORD_KINDS = Object.freeze(Object.keys(RECORDS));

/** Numbers per record of `kind`. */
export function strideOf(kind) {
  const fields = RECORDS[kind];
  if (!fields) throw new Error(`unknown record kind ${JSON.stringify(kind)}`);
  return fields.length;
}

/** Job progress as `Run.progress()` gives it, stride 3: job id, steps done, status. */
export const PROGRESS_STRIDE = 3;
/** The results' job table (`Results.jobTable()`), stride 2 per job in id order: steps done, status. */
export const TABLE_STRIDE = 2;
/** Job status codes in both layouts. */
export const JOB = Object.freeze({ unfinished: 0, done: 1, failed: 2 });

/**
 * Trainer worker (trainworker.js).
 *   start  {config: JSON text, jobIds, chunk: steps per job per chunk, batch: jobs trained at once,
 *           chosen: each variant's chosen grid point for a study's fresh jobs, or null,
 *           pause: 0, or the epoch of a pause asked before the start, port: MessagePort (transferred)
 *           for PORT.chunk messages, more: true when the pool deals further jobs as trainers free up}
 *   pause {epoch}: stop after the chunk in progress; resume (no body)
 *   more {jobIds}: the answer to `need`: the next jobs (cut into batches of the start's size), or none
 *   cancel (request) → {sent}: the Run is freed
 *   paused {sent, epoch}, done {sent}: every chunk up to `sent` is on the port; `epoch` is the pause's
 *   need {sent}: (started with `more`) every job it was given is finished; it waits, idle, on the
 *           same port (its chunk numbering goes on) for `more`; a pause is acknowledged at once
 *   failed {message, jobIds, sent}: the wasm module failed or threw; jobIds are the jobs it leaves unfinished
 */
export const TRAIN = Object.freeze({
  start: 'train.start', pause: 'train.pause', resume: 'train.resume', cancel: 'train.cancel',
  more: 'train.more',
  paused: 'train.paused', need: 'train.need', done: 'train.done', failed: 'train.failed',
});

/**
 * On a trainer's results port, one message per chunk:
 *   {type: PORT.chunk, seq: 1, 2, …, progress: Float64Array (PROGRESS_STRIDE),
 *    failures: [{job, reason}] (new since the last chunk),
 *    records: {kind: Float64Array}} (kinds with no new record left out; buffers transferred),
 *    advanceMs: wall time of the chunk's Run.advance (the benchmark sums it; the results ignore it)}
 */
export const PORT = Object.freeze({ chunk: 'port.chunk' });

/**
 * Results worker (resultsworker.js); requests are answered strictly in order.
 *   open {config}                      → {jobs}
 *   openFile {text}                    → {configJson, table}
 *   restoreKept                        → null | {meta: {status, origin, fileName, savedAt}, configJson, table}
 *   attach {id, port} (port transferred) → null; the port's chunks are applied as they come
 *   settle {sent: [[id, seq]]}         → {table} once every listed port has delivered chunk `seq`
 *   detach {id}                        → null; the port is closed, later chunks are dropped
 *   fail {jobs, reason}                → null; the unfinished ones among `jobs` are marked failed
 *   curves {stat, seeds, measure}      → {measure, curves: [Float64Array], robust: [Float64Array] | null,
 *                                         seeds: [[Float64Array]] | null, background: [Float64Array] | null,
 *                                         backgroundRobust: [Float64Array] | null}; measure 'training' |
 *                                         'evaluation' | 'both' (evaluation curves with the training ones
 *                                         as background); the answer's measure is what was drawn
 *   summary | save | csv               → text
 *   choice                             → {chosen: [point per variant] | null}: a study's tuning choice
 *   keep {status, final, origin, fileName} → {jobs, bytes, ms}: packed into IndexedDB (all jobs when final,
 *                                         else the finished ones)
 *   progress (event) {table: Float64Array (TABLE_STRIDE)}: after chunks change it, at most about 4 a
 *                                         second, and at once when a job finishes
 */
export const RESULTS = Object.freeze({
  open: 'results.open', openFile: 'results.openFile', restoreKept: 'results.restoreKept',
  attach: 'results.attach', settle: 'results.settle', detach: 'results.detach', fail: 'results.fail',
  curves: 'results.curves', summary: 'results.summary', save: 'results.save', csv: 'results.csv', choice: 'results.choice',
  keep: 'results.keep', progress: 'results.progress',
});

/**
 * Probe worker (probeworker.js): one job re-trained to a step, then asked about.
 *   train {config, jobId, steps, chunk, chosen} → {done, status, failure, policyWidth, states, values}
 *       (chosen: a study's chosen point per variant, for its fresh jobs; null otherwise)
 *       (a newer train request makes an older one fail with "replaced by a newer request")
 *   progress (event, for the train request) {done, steps}
 *   query {kind: 'inspect', obs} | {kind: 'rollout', maxSteps, seed, greedy} → Float64Array
 *   variance {config, variant, seed, checkpoints: Float64Array, estimates, episodes, chosen} → JSON text
 */
export const PROBE = Object.freeze({
  train: 'probe.train', progress: 'probe.progress', query: 'probe.query', variance: 'probe.variance',
});

/** The keys under which the page keeps things (store.js). */
export const KEPT = Object.freeze({ experiment: 'experiment', results: 'results' });
