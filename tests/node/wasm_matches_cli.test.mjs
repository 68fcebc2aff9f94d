// The WebAssembly build (run under Node, as the page's workers run it) and the
// native CLI give identical results for the same config: the same summary and
// the same results file (every episode record, truncated flags included),
// bit for bit. Needs `scripts/build` first (web/pkg and target/release/critbox).
import { test } from 'node:test';
import assert from 'node:assert/strict';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { execFileSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { RECORD_KINDS, PROGRESS_STRIDE } from '../../web/js/protocol.js';

const root = process.env.CRITBOX_ROOT || path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const pkg = path.join(root, 'web/pkg');
const cli = path.join(root, 'target/release/critbox');
const { default: init, ...cb } = await import(path.join(pkg, 'critbox_wasm.js'));
await init({ module_or_path: fs.readFileSync(path.join(pkg, 'critbox_wasm_bg.wasm')) });

/** Runs a config the way the page does: jobs dealt to `workers` Run handles,
 * advanced in chunks, every record kind of protocol.js moved to one Results
 * handle as the trainers' chunks are. Returns {summary, file} (the parsed
 * summary and results file). */
function runLikeThePage(json, workers, chunk) {
  const plan = JSON.parse(cb.validateConfig(json));
  const results = new cb.Results(json);
  const stage = (ids, chosen) => {
    const owned = Array.from({ length: workers }, () => []);
    ids.forEach((id, k) => owned[k % workers].push(id));
    const runs = owned.filter((list) => list.length).map((list) => (chosen
      ? cb.Run.withChoice(json, Uint32Array.from(chosen), Uint32Array.from(list))
      : new cb.Run(json, Uint32Array.from(list))));
    let busy = runs.slice();
    while (busy.length) {
      busy = busy.filter((run) => {
        const done = run.advance(chunk);
        for (const kind of RECORD_KINDS) results.addRecords(kind, run.takeRecords(kind));
        const p = run.progress();
        for (let i = 0; i < p.length; i += PROGRESS_STRIDE) results.setSteps(p[i], p[i + 1]);
        for (const f of JSON.parse(run.failures())) results.markFailed(f.job, f.reason);
        if (done) run.free();
        return !done;
      });
    }
  };
  const all = Array.from({ length: plan.jobs }, (_, id) => id);
  // A study: its tuning jobs, then the fresh jobs of the chosen points.
  stage(all.slice(0, plan.tuning_jobs), null);
  const chosen = plan.tuning_jobs ? Array.from(results.choice()) : null;
  stage(all.slice(plan.tuning_jobs), chosen);
  const summary = JSON.parse(results.summaryJson());
  const file = JSON.parse(results.saveJson());
  const csv = results.tidyCsv();
  results.free();
  return { summary, file, csv };
}

/** `critbox run CONFIG --save FILE --csv CSV`: {summary, file, csv}. */
function runNative(configPath) {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'critbox-save-'));
  try {
    const save = path.join(dir, 'results.json');
    const csv = path.join(dir, 'tidy.csv');
    const summary = JSON.parse(execFileSync(cli, ['run', configPath, '--save', save, '--csv', csv], { encoding: 'utf8', maxBuffer: 1 << 26 }));
    return { summary, file: JSON.parse(fs.readFileSync(save, 'utf8')), csv: fs.readFileSync(csv, 'utf8') };
  } finally {
    fs.rmSync(dir, { recursive: true, force: true });
  }
}

const presets = fs.readdirSync(path.join(root, 'web/presets')).filter((f) => f.endsWith('.json') && f !== 'index.json');

for (const file of presets) {
  test(`${file}: WebAssembly and native CLI agree exactly, summary and results file`, () => {
    const configPath = path.join(root, 'web/presets', file);
    const json = fs.readFileSync(configPath, 'utf8');
    const native = runNative(configPath);
    const wasm = runLikeThePage(json, 2, 1500);
    assert.deepEqual(wasm.summary, native.summary);
    assert.deepEqual(wasm.file, native.file);
    assert.equal(wasm.csv, native.csv);
    assert.ok(native.summary.variants.length >= 1);
    // The diagnostics reach both outputs: every variant has its update norm
    // and entropy (or σ) curves, off-policy variants their weights' curves,
    // with the same names as CSV metrics.
    for (const v of native.summary.variants) {
      const d = v.diagnostics;
      assert.ok(d.actor_norm && (d.entropy || d.sd), `${v.label}: ${Object.keys(d)}`);
      assert.equal(Boolean(d.ess_fraction && d.capped_share), v.family === 'off_policy', v.label);
      for (const key of Object.keys(d)) assert.match(native.csv, new RegExp(`,${key},`));
    }
  });
}

// The MLP's dense kernels have hand-written simd128 versions in the
// WebAssembly build (crate/core/src/approx/kernels.rs) and compiler-vectorised
// ones natively; no preset uses an MLP, so the bench's MLP workload (W2, tanh,
// plain SGD: the fused update path) and a ReLU / Adam / clipping variant (the
// gradient-buffer path) are compared here, shortened.
for (const [name, edit] of [
  ['W2: MLP tanh, SGD', (v) => v],
  ['MLP ReLU, Adam, clipping, 2-step', (v) => {
    v.base.actor = { kind: 'mlp', hidden: [24, 13], activation: 'relu' };
    v.base.critic = { kind: 'mlp', hidden: [17], activation: 'tanh' };
    v.base.optimizer = { kind: 'adam', clip: 1 };
    v.base.n_steps = 2;
    v.base.actor_step = 0.001;
    v.base.critic_step = 0.001;
    return v;
  }],
]) {
  test(`${name}: WebAssembly and native CLI agree exactly`, () => {
    const v = edit(JSON.parse(fs.readFileSync(path.join(root, 'bench/w2.json'), 'utf8')));
    v.steps = 6000;
    v.seeds = 2;
    const json = JSON.stringify(v);
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'critbox-mlp-'));
    try {
      const configPath = path.join(dir, 'config.json');
      fs.writeFileSync(configPath, json);
      const native = runNative(configPath);
      const wasm = runLikeThePage(json, 2, 1000);
      assert.deepEqual(wasm.summary, native.summary);
      assert.deepEqual(wasm.file, native.file);
      assert.ok(native.summary.variants[0].episodes > 10);
    } finally {
      fs.rmSync(dir, { recursive: true, force: true });
    }
  });
}

test('chunk size and worker count do not change the numbers', () => {
  const v = JSON.parse(fs.readFileSync(path.join(root, 'web/presets', presets[0]), 'utf8'));
  v.seeds = 3;
  v.steps = 5000;
  const json = JSON.stringify(v);
  assert.deepEqual(runLikeThePage(json, 1, 5000), runLikeThePage(json, 3, 333));
});

test('bad configs throw an Error naming the field, never trap', () => {
  const v = JSON.parse(fs.readFileSync(path.join(root, 'web/presets', presets[0]), 'utf8'));
  v.variants[0].learner = { actor_step: 'fast' };
  assert.throws(() => cb.validateConfig(JSON.stringify(v)), /variants\[0\]\.learner\.actor_step: invalid type/);
  assert.throws(() => new cb.Run('{"schema": 1', new Uint32Array([0])), /not valid JSON at line 1/);
  assert.throws(() => new cb.Run(JSON.stringify({ ...v, variants: [{ label: 'x' }] }), new Uint32Array([99])), /job id 99 is out of range/);
  const results = new cb.Results(JSON.stringify({ ...v, variants: [{ label: 'x' }] }));
  assert.throws(() => results.addRecords('episode', new Float64Array([0, 1, 2])), /episode records come in groups of 6/);
  assert.throws(() => results.addRecords('episode', new Float64Array([0, 1, 2, 2, 1, 7])), /episode record 0 .*truncated must be 0 or 1/);
  assert.throws(() => results.addRecords('score', new Float64Array()), /unknown record kind "score"/);
  assert.throws(() => cb.Results.restore(new Uint8Array([1, 2, 3])), /damaged/);
  assert.throws(() => results.curve(5), /out of range/);
  results.free();
});

/** A Run of one job (variant, seed) trained to `steps` in chunks, as the
 * page's inspection worker does. */
function trainedRun(json, variant, seed, steps, chunk) {
  const plan = JSON.parse(cb.validateConfig(json));
  const run = new cb.Run(json, Uint32Array.from([variant * plan.seeds + seed]));
  for (let done = 0; done < steps; done += chunk) run.advance(Math.min(chunk, steps - done));
  return run;
}

const finiteOrNull = (x) => (Number.isFinite(x) ? x : null);

test('inspection through the Run handle agrees with critbox inspect', () => {
  // A grid: per state the critic's value, π(a|s) and the exact value of the policy.
  const grid = path.join(root, 'web/presets/rover-a2c-vs-qac.json');
  const native = JSON.parse(execFileSync(cli, ['inspect', grid, '--variant', '1', '--seed', '2', '--at', '3000'], { encoding: 'utf8' }));
  const run = trainedRun(fs.readFileSync(grid, 'utf8'), 1, 2, 3000, 700);
  const k = native.state_names.length;
  const width = run.policyWidth();
  assert.equal(width, native.action_names.length);
  const obs = run.stateObservations();
  assert.equal(obs.length, native.states.length * k);
  const read = run.inspect(0, obs);
  const exact = run.policyValues(0);
  native.states.forEach((s, i) => {
    assert.deepEqual(Array.from(obs.slice(i * k, (i + 1) * k)), s.values);
    assert.equal(finiteOrNull(read[i * (1 + width)]), s.critic);
    assert.deepEqual(Array.from(read.slice(i * (1 + width) + 1, (i + 1) * (1 + width))), s.policy);
    assert.equal(finiteOrNull(exact[i]), s.exact);
  });
  assert.throws(() => run.inspect(0, new Float64Array([1, 2, 3])), /groups of 2/);
  assert.throws(() => run.inspect(0, new Float64Array([0, 99])), /is not a state of this task/);
  assert.throws(() => run.policyValues(4), /job index 4 is out of range/);
  // Rollouts: stride k + width + 2, the same frames for the same seed, a last
  // frame with NaN action and reward and flag 2 (terminal) or 3 (step limit).
  const a = run.rollout(0, 500, 9, false);
  assert.deepEqual(Array.from(run.rollout(0, 500, 9, false)), Array.from(a));
  const stride = k + width + 2;
  assert.equal(a.length % stride, 0);
  const last = a.slice(a.length - stride);
  assert.ok([2, 3].includes(last[stride - 1]));
  assert.ok(last.slice(k, k + width + 1).every(Number.isNaN));
  assert.throws(() => run.rollout(0, 10, -1, true), /seed must be a number/);
  run.free();

  // The regulator: the preferred action and the critic's value on the slice.
  const lqr = path.join(root, 'web/presets/dpg-lqr.json');
  const nat = JSON.parse(execFileSync(cli, ['inspect', lqr, '--seed', '1', '--at', '6000'], { encoding: 'utf8' }));
  const r = trainedRun(fs.readFileSync(lqr, 'utf8'), 0, 1, 6000, 2500);
  assert.deepEqual(Array.from(r.stateObservations()), []);
  assert.deepEqual(Array.from(r.policyValues(0)), []);
  const xs = Float64Array.from(nat.slice.points.map((p) => p.at[0]));
  const got = r.inspect(0, xs);
  nat.slice.points.forEach((p, i) => {
    assert.equal(got[2 * i], p.value);
    assert.equal(got[2 * i + 1], p.policy[0]);
  });
  r.free();
});
