// The single-file build (dist/critbox.html, written by scripts/build-single)
// opened from file://: it loads with no console error, runs a preset in its
// workers, and makes no network request at all; its Content-Security-Policy
// (the page's own with 'self' taken out and the inline elements' hashes let
// in) refuses one when the page tries.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { stat, readdir, readFile } from 'node:fs/promises';
import { createHash } from 'node:crypto';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { setUp, repoRoot, outDir, runToEnd } from './helpers.mjs';

const ROOT = process.env.CRITBOX_ROOT || repoRoot;
const SINGLE = path.join(ROOT, 'dist', 'critbox.html');
let env;

before(async () => { env = await setUp(); });
after(async () => { await env?.close(); });

/** The page's sources that go into the single file. */
async function sources() {
  const web = path.join(ROOT, 'web');
  const js = (await readdir(path.join(web, 'js'))).filter((f) => f.endsWith('.js')).map((f) => path.join(web, 'js', f));
  return [path.join(web, 'index.html'), path.join(web, 'style.css'), ...js];
}

/** A policy text as {directive: [sources]}. */
const directives = (policy) => Object.fromEntries(policy.split(';').map((d) => d.trim()).filter(Boolean)
  .map((d) => d.split(/\s+/)).map(([k, ...v]) => [k, v]));

test('the single file\'s policy is the page\'s, with its inline scripts and style let in by hash', async () => {
  const meta = (html) => /<meta http-equiv="Content-Security-Policy" content="([^"]*)">/.exec(html)[1];
  const pagePolicy = directives(meta(await readFile(path.join(ROOT, 'web', 'index.html'), 'utf8')));
  const html = await readFile(SINGLE, 'utf8');
  const single = directives(meta(html));
  // CSP Level 3, hash sources: base64 of the SHA-256 of the element's text (common practice, no source).
  const hash = (text) => `'sha256-${createHash('sha256').update(text, 'utf8').digest('base64')}'`;
  const scripts = [...html.matchAll(/<script id="[\w-]+">([\s\S]*?)<\/script>/g)].map((m) => hash(m[1]));
  const styles = [...html.matchAll(/<style>([\s\S]*?)<\/style>/g)].map((m) => hash(m[1]));
  assert.equal(scripts.length, 3, 'glue, set-up and page scripts run; the worker sources are text');
  assert.deepEqual(Object.keys(single), Object.keys(pagePolicy));
  for (const [name, sources] of Object.entries(pagePolicy)) {
    const kept = sources.filter((x) => x !== "'self'");
    const extra = { 'script-src': scripts, 'style-src': styles, 'worker-src': ['blob:'] }[name] || [];
    const want = [...kept, ...extra];
    assert.deepEqual(single[name], want.length ? want : ["'none'"], name);
  }
});

test('dist/critbox.html from file:// runs a preset with zero network requests', async () => {
  const built = await stat(SINGLE).catch(() => null);
  assert.ok(built, `${SINGLE} is missing: run scripts/build-single (scripts/test does)`);
  for (const f of await sources()) {
    const s = await stat(f);
    assert.ok(s.mtimeMs <= built.mtimeMs + 1000, `${path.relative(ROOT, f)} is newer than dist/critbox.html: run scripts/build-single`);
  }

  const context = await env.browser.newContext({ viewport: { width: 1280, height: 720 } });
  const page = await context.newPage();
  const requests = [];
  const problems = [];
  const url = pathToFileURL(SINGLE).href;
  context.on('request', (r) => requests.push(r.url()));
  page.on('console', (m) => { if (m.type() === 'error') problems.push(`console: ${m.text()}`); });
  page.on('pageerror', (e) => problems.push(`pageerror: ${e.message}`));
  page.on('worker', (w) => w.on('console', (m) => { if (m.type() === 'error') problems.push(`worker console: ${m.text()}`); }));
  await page.addInitScript(() => {
    window.__violations = [];
    document.addEventListener('securitypolicyviolation', (e) => window.__violations.push(`${e.violatedDirective} ${e.blockedURI}`));
  });
  await page.goto(url);
  await page.waitForFunction(() => window.__critbox && window.__critbox.ready, null, { timeout: 30000 });

  // The presets are in the file, each one click away.
  const presets = await page.locator('#presets button[data-preset]').evaluateAll((bs) => bs.map((b) => b.dataset.preset));
  assert.ok(presets.length >= 5, `presets inside the file: ${presets}`);
  assert.equal(await page.getAttribute('#presets button[data-preset="rover-a2c-vs-qac.json"]', 'aria-pressed'), 'true');
  await page.fill('#seeds', '2');
  await page.fill('#steps', '3000');
  await runToEnd(page, 60000);
  const summary = await page.evaluate(() => window.__critbox.state.summary);
  assert.equal(summary.seeds, 2);
  assert.equal(await page.locator('#scores-body tr').count(), summary.variants.length);
  assert.ok(summary.variants.every((v) => v.final_return.n === 2), 'every seed has a final return');
  const workers = page.workers().length + (await page.evaluate(() => window.__critbox.state.run.workers));
  assert.ok(workers >= 1, 'training ran in workers');

  // A share link works from file:// as well (made and read without a network).
  await page.click('#copy-link');
  await page.waitForFunction(() => document.getElementById('share-url').value.includes('#v1.'));

  // The CSP refuses a request the page might try.
  const tried = await page.evaluate(async (target) => {
    try { await fetch(target); return 'fetched'; } catch { return 'refused'; }
  }, env.server.url);
  assert.equal(tried, 'refused');

  const network = requests.filter((u) => u !== url && !u.startsWith('blob:') && !u.startsWith('data:'));
  assert.deepEqual(network, [], 'no request other than the file itself, blob: workers and data: URLs');
  const violations = await page.evaluate(() => window.__violations);
  assert.deepEqual(violations.filter((v) => !v.includes(env.server.url.replace(/\/$/, ''))), [], 'only the deliberate fetch was refused');
  assert.deepEqual(problems.filter((p) => !/Content Security Policy|Failed to fetch/.test(p)), []);
  await page.screenshot({ path: path.join(outDir, 'single-file.png') });
  await context.close();
});
