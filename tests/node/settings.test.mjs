// The page's settings (web/js/settings.js) take their defaults, ranges and
// help from the core's settings table (settingsTable() in the wasm binding),
// and the binding's table is the one `critbox settings` prints. Needs
// `scripts/build` first (web/pkg and target/release/critbox). Common
// practice, no source: the reference is the core's own table.
import { test } from 'node:test';
import assert from 'node:assert/strict';
import fs from 'node:fs';
import path from 'node:path';
import { execFileSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { TASKS, LEARNER_FIELDS, useCoreSettings } from '../../web/js/settings.js';

const root = process.env.CRITBOX_ROOT || path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const pkg = path.join(root, 'web/pkg');
const { default: init, ...cb } = await import(path.join(pkg, 'critbox_wasm.js'));
await init({ module_or_path: fs.readFileSync(path.join(pkg, 'critbox_wasm_bg.wasm')) });

test('the binding serves the table the CLI prints', () => {
  const cli = JSON.parse(execFileSync(path.join(root, 'target/release/critbox'), ['settings'], { encoding: 'utf8' }));
  assert.deepEqual(JSON.parse(cb.settingsTable()), cli);
});

test('every numeric field of the form gets its default, range and help from the core', () => {
  const table = JSON.parse(cb.settingsTable());
  const missing = useCoreSettings(table);
  // Fields the table does not describe: choices, maps and lists (no number
  // range), and the regulator's start, whose upper end is x_max.
  const numeric = missing.filter((p) => !/\.(layout|map|payments|mix|start|kind|family|baseline|features|actor|critic|hidden|activation)$/.test(p));
  assert.deepEqual(numeric, []);
  const slip = TASKS.grid.fields.find((f) => f.key === 'slip');
  assert.equal(slip.def, '0');
  assert.equal(slip.range, '[0, 0.5]');
  const actor = LEARNER_FIELDS.find((f) => f.key === 'actor_step');
  assert.equal(actor.value, 0.1);
  assert.equal(actor.range, '(0, 10]');
  const discount = LEARNER_FIELDS.find((f) => f.key === 'discount');
  assert.equal(discount.def, "the task's");
  assert.equal(discount.value, 0.99, 'an optional field keeps the value an override starts from');
});
