// The reward lab's WebAssembly API as the page calls it: the live formula
// check, the shaping audit (the same JSON as `critbox audit`) and the shaped
// curve. Needs `scripts/build` first (web/pkg and target/release/critbox).
import { test } from 'node:test';
import assert from 'node:assert/strict';
import fs from 'node:fs';
import path from 'node:path';
import { execFileSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { RECORD_KINDS } from '../../web/js/protocol.js';

const root = process.env.CRITBOX_ROOT || path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const pkg = path.join(root, 'web/pkg');
const cli = process.env.CRITBOX_CLI || path.join(root, 'target/release/critbox');
const { default: init, ...cb } = await import(path.join(pkg, 'critbox_wasm.js'));
await init({ module_or_path: fs.readFileSync(path.join(pkg, 'critbox_wasm_bg.wasm')) });

const preset = (name) => fs.readFileSync(path.join(root, 'web/presets', name), 'utf8');

test('checkFormula marks a typo in JavaScript string positions and suggests the name', () => {
  const cfg = JSON.parse(preset('rover-loop-bonus.json'));
  const ctx = JSON.stringify({ task: cfg.task, reward: cfg.reward });
  // "θ " is two UTF-16 units before the typo (θ is one unit, two UTF-8 bytes).
  const r = JSON.parse(cb.checkFormula('θ + rwo', ctx));
  assert.equal(r.ok, false);
  assert.deepEqual([r.errors[0].start, r.errors[0].end], [0, 1]);
  const r2 = JSON.parse(cb.checkFormula('abs(col\' - dock_col) + rwo', ctx));
  assert.equal(r2.ok, false);
  const e = r2.errors[0];
  assert.equal('abs(col\' - dock_col) + rwo'.slice(e.start, e.end), 'rwo');
  assert.equal(e.hint, 'did you mean row?');
  const ok = JSON.parse(cb.checkFormula('if col\'>col then  progress else 0', ctx));
  assert.equal(ok.ok, true);
  assert.equal(ok.pretty, "if col' > col then progress else 0");
  assert.ok(ok.names.some((n) => n.name === 'dock_row' && n.kind === 'constant'));
  // A potential may read the current state only.
  const pot = JSON.parse(cb.checkFormula("row'", JSON.stringify({ task: cfg.task, reward: { mode: 'potential' } })));
  assert.equal(pot.ok, false);
  assert.match(pot.errors[0].message, /cannot be used here/);
  assert.throws(() => cb.checkFormula('1', '{"task": {"kind": "moon"}}'), /task/);
});

test('audit equals critbox audit and locates the differing cells on the map', () => {
  for (const name of ['rover-loop-bonus.json', 'rover-potential-twin.json']) {
    const text = preset(name);
    const native = JSON.parse(execFileSync(cli, ['audit', path.join(root, 'web/presets', name)], { encoding: 'utf8' }));
    const wasm = JSON.parse(cb.audit(text));
    assert.deepEqual(wasm, native, name);
  }
  const loop = JSON.parse(cb.audit(preset('rover-loop-bonus.json')));
  assert.equal(loop.policy_changed, true);
  const map = JSON.parse(preset('rover-loop-bonus.json')).task;
  assert.equal(map.layout, 'rover');
  for (const d of loop.differing_states) {
    assert.ok(Number.isInteger(d.row) && Number.isInteger(d.col));
    assert.ok(d.base_actions.length > 0 && d.shaped_actions.length > 0);
  }
  assert.throws(() => cb.audit('{"schema": 1}'), /task|variants|steps/);
});

test('curveShaped has the stride of curve and the summary carries the hacking flag', () => {
  const v = JSON.parse(preset('rover-loop-bonus.json'));
  v.seeds = 2;
  v.steps = 4000;
  const json = JSON.stringify(v);
  const run = new cb.Run(json, Uint32Array.from([0, 1, 2, 3]));
  while (!run.advance(1000));
  const results = new cb.Results(json);
  for (const kind of RECORD_KINDS) results.addRecords(kind, run.takeRecords(kind));
  for (let j = 0; j < 4; j++) results.setSteps(j, 4000);
  const base = results.curve(1);
  const shaped = results.curveShaped(1);
  assert.equal(shaped.length, base.length);
  assert.equal(shaped.length % 5, 0);
  for (let i = 0; i < base.length; i += 5) assert.equal(shaped[i], base[i]); // same step edges
  const summary = JSON.parse(results.summaryJson());
  assert.equal(typeof summary.variants[1].hacking.flag, 'boolean');
  assert.ok(Array.isArray(summary.variants[1].curve_shaped.mean));
  assert.throws(() => results.curveShaped(9), /out of range/);
  run.free();
  results.free();
});
