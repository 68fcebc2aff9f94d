// The record layouts of web/js/protocol.js against the WebAssembly build's
// own (recordLayouts, crate/wasm/src/records.rs), and the way the page keeps
// results: Results.pack/restore, finishedOnly and jobTable, including a run
// kept half way, restored and finished, which must equal `critbox run --save`.
// Needs `scripts/build` first.
import { test } from 'node:test';
import assert from 'node:assert/strict';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { execFileSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { RECORDS, RECORD_KINDS, strideOf, TABLE_STRIDE, JOB } from '../../web/js/protocol.js';

const root = process.env.CRITBOX_ROOT || path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const cli = process.env.CRITBOX_CLI || path.join(root, 'target/release/critbox');
const pkg = path.join(root, 'web/pkg');
const { default: init, ...cb } = await import(path.join(pkg, 'critbox_wasm.js'));
await init({ module_or_path: fs.readFileSync(path.join(pkg, 'critbox_wasm_bg.wasm')) });

const rover = JSON.parse(fs.readFileSync(path.join(root, 'web/presets/rover-a2c-vs-qac.json'), 'utf8'));
const small = JSON.stringify({ ...rover, seeds: 2, steps: 3000 });

test('the page and the WebAssembly build lay records out the same way', () => {
  // Common practice, no source: one layout, checked from both sides.
  assert.deepEqual(JSON.parse(cb.recordLayouts()), RECORDS);
  for (const kind of RECORD_KINDS) assert.equal(RECORDS[kind][0], 'job', `${kind}: the job id comes first`);
  assert.equal(strideOf('episode'), 6);
  assert.throws(() => strideOf('nothing'), /unknown record kind/);
});

/** Train `jobIds` of a config to the end, moving records into `results`. */
function train(json, jobIds, results, chunk = 700) {
  const run = new cb.Run(json, Uint32Array.from(jobIds));
  for (let done = false; !done;) {
    done = run.advance(chunk);
    for (const kind of RECORD_KINDS) results.addRecords(kind, run.takeRecords(kind));
    const p = run.progress();
    for (let i = 0; i < p.length; i += 3) results.setSteps(p[i], p[i + 1]);
  }
  run.free();
}

test('pack and restore give back the same results file; bad bytes are refused', () => {
  const results = new cb.Results(small);
  train(small, [0, 1, 2, 3, 4, 5], results);
  const bytes = results.pack();
  assert.ok(bytes instanceof Uint8Array && bytes.length > 0);
  const text = results.saveJson();
  assert.ok(bytes.length < text.length / 2, `packed ${bytes.length} bytes of ${text.length}`);
  const back = cb.Results.restore(bytes);
  assert.equal(back.saveJson(), text);
  // A results file's plain text restores too.
  const plain = cb.Results.restore(new TextEncoder().encode(text));
  assert.equal(plain.saveJson(), text);
  const cut = bytes.slice(0, bytes.length >> 1);
  assert.throws(() => cb.Results.restore(cut), /damaged/);
  assert.throws(() => cb.Results.restore(new Uint8Array()), /empty/);
  for (const r of [results, back, plain]) r.free();
});

test('a run kept half way, restored and finished equals `critbox run --save`', () => {
  const results = new cb.Results(small);
  // Jobs 0 and 3 finish; job 1 is cut short, as by a reload.
  train(small, [0, 3], results);
  const cutShort = new cb.Run(small, Uint32Array.from([1]));
  cutShort.advance(1000);
  results.addRecords('episode', cutShort.takeRecords('episode'));
  results.setSteps(1, cutShort.progress()[1]);
  cutShort.free();
  const table = results.jobTable();
  const status = (t, j) => t[j * TABLE_STRIDE + 1];
  assert.deepEqual([0, 1, 2, 3].map((j) => status(table, j)), [JOB.done, JOB.unfinished, JOB.unfinished, JOB.done]);
  assert.equal(table[1 * TABLE_STRIDE], 1000);

  const kept = results.finishedOnly();
  const restored = cb.Results.restore(kept.pack());
  const again = restored.jobTable();
  assert.equal(again[1 * TABLE_STRIDE], 0, 'the unfinished job starts again from nothing');
  const left = [];
  for (let j = 0; j < again.length / TABLE_STRIDE; j++) if (status(again, j) === JOB.unfinished) left.push(j);
  assert.deepEqual(left, [1, 2, 4, 5]);
  train(small, left, restored);

  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'critbox-keep-'));
  try {
    const config = path.join(dir, 'config.json');
    const save = path.join(dir, 'results.json');
    fs.writeFileSync(config, small);
    execFileSync(cli, ['run', config, '--save', save], { encoding: 'utf8', maxBuffer: 1 << 26 });
    assert.deepEqual(JSON.parse(restored.saveJson()), JSON.parse(fs.readFileSync(save, 'utf8')));
  } finally {
    fs.rmSync(dir, { recursive: true, force: true });
  }
  for (const r of [results, kept, restored]) r.free();
});
