// The probe worker, for the inspection and gradient-variance views: it
// re-trains one job to a chosen step (jobs are deterministic, so the learner
// is the one the run had there) and answers questions about it: values and
// policy at given observations, an episode of the policy, the exact value of
// the policy; and it runs the core's gradient-variance probe. Requests are
// listed in protocol.js (PROBE); a newer training request replaces an older
// one still in progress.

import { serve, emit, Reply } from './rpc.js';
import { loadWasm } from './wasm.js';
import { PROBE } from './protocol.js';

/** The trained job: {id (the request), run} or null. */
let probe = null;

function freeProbe() {
  if (probe && probe.run) { try { probe.run.free(); } catch { /* already freed */ } }
  probe = null;
}

/** A Float64Array that owns its whole buffer (so it can be transferred). */
function owned(arr) {
  return arr.byteOffset === 0 && arr.byteLength === arr.buffer.byteLength ? arr : arr.slice();
}

async function train({ config, jobId, steps, chunk, chosen }, id) {
  freeProbe();
  const me = { id, run: null };
  probe = me;
  const replaced = () => { if (probe !== me) throw new Error('replaced by a newer request'); };
  const wasm = await loadWasm();
  replaced();
  try {
    me.run = Array.isArray(chosen)
      ? wasm.Run.withChoice(config, Uint32Array.from(chosen), Uint32Array.from([jobId]))
      : new wasm.Run(config, Uint32Array.from([jobId]));
  } catch (err) {
    if (probe === me) probe = null;
    throw err;
  }
  const target = Math.max(0, Math.floor(steps || 0));
  const size = Math.max(1, Math.floor(chunk || 5000));
  let done = 0;
  let status = 0;
  while (done < target && status === 0) {
    const finished = me.run.advance(Math.min(size, target - done));
    const p = me.run.progress();
    done = p[1];
    status = p[2];
    emit(PROBE.progress, { done, steps: target }, [], id);
    await new Promise((r) => setTimeout(r, 0)); // let a newer request in
    replaced();
    if (finished) break;
  }
  const failure = status === 2 ? (JSON.parse(me.run.failures())[0] || {}).reason || 'failed' : '';
  const states = owned(me.run.stateObservations());
  const values = status === 2 ? new Float64Array(0) : owned(me.run.policyValues(0));
  return new Reply({ done, status, failure, policyWidth: me.run.policyWidth(), states, values }, [states.buffer, values.buffer]);
}

function query({ kind, obs, maxSteps, seed, greedy }) {
  if (!probe || !probe.run) throw new Error('nothing is being inspected (train a seed first)');
  let data;
  if (kind === 'inspect') data = probe.run.inspect(0, obs);
  else if (kind === 'rollout') data = probe.run.rollout(0, maxSteps, seed, !!greedy);
  else throw new Error(`unknown question ${JSON.stringify(kind)}`);
  const out = owned(data);
  return new Reply(out, [out.buffer]);
}

async function variance({ config, variant, seed, checkpoints, estimates, episodes, chosen }) {
  const wasm = await loadWasm();
  return wasm.probe(config, variant, seed, checkpoints, estimates, episodes, Uint32Array.from(chosen || []));
}

serve({ [PROBE.train]: train, [PROBE.query]: query, [PROBE.variance]: variance });
