// One Content-Security-Policy: web/index.html's meta element is where it is
// written, and `critbox serve` sends exactly that policy with every file
// (workers take theirs from their own response). Needs `scripts/build`
// first (target/release/critbox).
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { startServe } from '../serve.mjs';

const root = process.env.CRITBOX_ROOT || path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const page = fs.readFileSync(path.join(root, 'web/index.html'), 'utf8');
const metas = [...page.matchAll(/<meta http-equiv="Content-Security-Policy" content="([^"]*)">/g)];
let server;

before(async () => { server = await startServe(path.join(root, 'web')); });
after(async () => { await server?.close(); });

test('the page states one policy that forbids every request but its own files', () => {
  // Common practice, no source: CSP Level 3 directive names and fallbacks.
  assert.equal(metas.length, 1, 'one Content-Security-Policy meta element');
  const policy = Object.fromEntries(metas[0][1].split(';').map((d) => d.trim().split(/\s+/)).map(([k, ...v]) => [k, v]));
  assert.deepEqual(policy['default-src'], ["'none'"]);
  assert.deepEqual(policy['connect-src'], ["'self'"]);
  assert.deepEqual(policy['worker-src'], ["'self'"]);
  assert.ok(policy['script-src'].includes("'wasm-unsafe-eval'"));
  assert.ok(!metas[0][1].includes('unsafe-inline'), 'no inline script or style on the served page');
});

test('critbox serve sends the page\'s policy with the page, its modules, workers and data', async () => {
  for (const file of ['', 'js/main.js', 'js/trainworker.js', 'js/resultsworker.js', 'presets/index.json', 'pkg/critbox_wasm_bg.wasm']) {
    const res = await fetch(server.url + file);
    assert.equal(res.status, 200, file);
    assert.equal(res.headers.get('content-security-policy'), metas[0][1], `${file || 'index.html'}: the header is the meta element's policy`);
    await res.arrayBuffer();
  }
});
