// The diagnostics panel: small charts under the learning curves, one per
// learner diagnostic, drawn from the summary the page shares with `critbox
// run`; toggles; the preset's stated outcome; screenshots of the off-policy
// and pendulum presets' diagnostics in the test-output folder.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { execFile } from 'node:child_process';
import { mkdir, mkdtemp, writeFile } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';
import { setUp, openPage, runToEnd, nextFrame, outDir, repoRoot } from './helpers.mjs';

const CLI = process.env.CRITBOX_CLI || path.join(repoRoot, 'target', 'release', 'critbox');
let env;
before(async () => { env = await setUp(); });
after(async () => { await env.close(); });

async function load(page, preset) {
  await page.click(`#presets button[data-preset="${preset}"]`);
  await page.waitForFunction((p) => window.__critbox.state.presetFile === p, preset);
}

/** The whole diagnostics chart (taller than the window) as a PNG in the test-output folder. */
async function shootDiagnostics(page, name) {
  await page.locator('#diagnostics-box').scrollIntoViewIfNeeded();
  await nextFrame(page);
  const url = await page.evaluate(() => document.getElementById('diagnostics').toDataURL('image/png'));
  await mkdir(outDir, { recursive: true });
  await writeFile(path.join(outDir, name), Buffer.from(url.slice(url.indexOf(',') + 1), 'base64'));
}

test('off-policy preset: weights diagnostics drawn, toggles work, page = CLI', async () => {
  const { page, context, problems } = await openPage(env);
  await load(page, 'rover-off-policy.json');
  assert.match(await page.textContent('#expect-note'), /every variant reaches at least −19/);
  await runToEnd(page);
  await page.waitForFunction(() => window.__critbox.lastDiagnostics?.panels.length > 0);
  const { summary, configJson, layout } = await page.evaluate(() => ({
    summary: window.__critbox.state.summary, configJson: window.__critbox.state.run.configJson, layout: window.__critbox.lastDiagnostics,
  }));
  const titles = layout.panels.map((p) => p.title);
  assert.deepEqual(titles, ['mean |TD error|', 'policy entropy (nats)', 'actor update norm (log)', 'critic update norm (log)',
    'effective sample size fraction', 'share of capped weights']);
  const ess = layout.panels[4];
  assert.equal(ess.series.length, 3, 'only the three off-policy variants have importance weights');
  assert.ok(ess.series.every((s) => s.points >= 10));
  assert.equal(await page.isVisible('#diagnostic-warnings'), false, 'no warning on this healthy preset');
  await shootDiagnostics(page, 'diagnostics-off-policy.png');
  // Toggle the capped share off: one chart fewer.
  await page.uncheck('#diagnostics-toggles input[data-key="capped_share"]');
  await page.waitForFunction(() => window.__critbox.lastDiagnostics.panels.length === 5);
  // The page's diagnostics are the CLI's.
  const dir = await mkdtemp(path.join(os.tmpdir(), 'critbox-'));
  const cfg = path.join(dir, 'config.json');
  await writeFile(cfg, configJson);
  const { stdout } = await promisify(execFile)(CLI, ['run', cfg], { maxBuffer: 1 << 26 });
  assert.deepEqual(summary.variants.map((v) => v.diagnostics), JSON.parse(stdout).variants.map((v) => v.diagnostics));
  assert.deepEqual(problems, []);
  await context.close();
});

test('pendulum preset: trains in under a minute, σ and norms drawn', async () => {
  const { page, context, problems } = await openPage(env);
  await load(page, 'pendulum-dac.json');
  assert.match(await page.textContent('#expect-note'), /swings the pendulum up and holds it/);
  const t0 = Date.now();
  await runToEnd(page, 120000);
  const seconds = (Date.now() - t0) / 1000;
  console.log(`pendulum-dac trained in the page in ${seconds.toFixed(1)} s`);
  await page.waitForFunction(() => window.__critbox.lastDiagnostics?.panels.length > 0);
  const layout = await page.evaluate(() => window.__critbox.lastDiagnostics);
  assert.deepEqual(layout.panels.map((p) => p.title), ['mean |TD error|', 'Gaussian σ', 'actor update norm (log)', 'critic update norm (log)']);
  assert.ok(layout.panels.every((p) => p.series.length === 2 && p.series.every((s) => s.points >= 10)));
  await shootDiagnostics(page, 'diagnostics-pendulum.png');
  assert.deepEqual(problems, []);
  await context.close();
});
