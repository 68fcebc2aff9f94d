// Evaluation episodes in the page: an off-policy preset is scored on its
// learned policy, the chart shows the learned policy's curve, the return
// while learning, or both, and the page's numbers (evaluation records
// included) equal `critbox run --save`'s bit for bit.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { execFile } from 'node:child_process';
import { mkdtemp, readFile, writeFile } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';
import { setUp, openPage, runToEnd, shoot, nextFrame, repoRoot } from './helpers.mjs';

const CLI = process.env.CRITBOX_CLI || path.join(repoRoot, 'target', 'release', 'critbox');
const PRESET = 'rover-off-policy.json';
let env;
before(async () => { env = await setUp(); });
after(async () => { await env.close(); });

test('an off-policy preset is judged on its learned policy, and the page equals the CLI', async () => {
  const { page, context, problems } = await openPage(env);
  await page.click(`#presets button[data-preset="${PRESET}"]`);
  await page.waitForFunction((p) => window.__critbox.state.presetFile === p, PRESET);
  await page.fill('#seeds', '4');
  await page.fill('#steps', '6000');
  await runToEnd(page);
  const { configJson, summary, lastDraw } = await page.evaluate(() => ({
    configJson: window.__critbox.state.run.configJson,
    summary: window.__critbox.state.summary,
    lastDraw: window.__critbox.lastDraw,
  }));
  assert.equal(summary.score_on, 'evaluation');
  assert.equal(lastDraw.measure, 'evaluation', 'the learned policy is drawn first');
  assert.ok(lastDraw.series.every((s) => s.points >= 2), 'every variant has an evaluation curve');
  assert.equal(await page.isVisible('#curve-measure'), true);
  assert.match(await page.textContent('#scores-note'), /scored on the learned policy/);
  assert.match(await page.textContent('#compare-note'), /learned policy; B − A; each variant against on-policy A2C \(reference\); p adjusted by Holm's method over 3 comparisons/);
  // The first number of each score row is the evaluation return.
  const rows = page.locator('#scores-body > tr:not(.fail-row)');
  for (let i = 0; i < summary.variants.length; i++) {
    const shown = Number((await rows.nth(i).locator('td .main').first().textContent()).replace('−', '-'));
    const mean = summary.variants[i].eval_return.mean;
    assert.ok(Math.abs(shown - mean) <= Math.max(0.01, Math.abs(mean) * 0.006), `row ${i}: ${shown} vs ${mean}`);
  }
  await shoot(page, 'evaluation-learned-policy.png');
  await shoot(page, 'evaluation-tables.png', { scrollBench: 520 });
  // While learning: the behaviour's returns, far below.
  await page.click('label[for=measure-train]');
  await page.waitForFunction(() => window.__critbox.lastDraw.measure === 'training');
  const train = await page.evaluate(() => window.__critbox.lastDraw);
  assert.ok(train.y[0] < lastDraw.y[0], `the random behaviour earns less: ${train.y} against ${lastDraw.y}`);
  await shoot(page, 'evaluation-while-learning.png');
  await page.click('label[for=measure-both]');
  await page.waitForFunction(() => window.__critbox.state.curves?.background && window.__critbox.lastDraw.measure === 'evaluation');
  await nextFrame(page);
  await shoot(page, 'evaluation-both.png');

  // Page = CLI, summary and whole results file (evaluation records included).
  const [dl] = await Promise.all([page.waitForEvent('download'), page.click('#save-results')]);
  const pageFile = JSON.parse(await readFile(await dl.path(), 'utf8'));
  const dir = await mkdtemp(path.join(os.tmpdir(), 'critbox-'));
  const cfgPath = path.join(dir, 'config.json');
  const savePath = path.join(dir, 'results.json');
  await writeFile(cfgPath, configJson);
  const { stdout } = await promisify(execFile)(CLI, ['run', cfgPath, '--save', savePath], { maxBuffer: 1 << 26 });
  assert.deepEqual(summary, JSON.parse(stdout));
  assert.deepEqual(pageFile, JSON.parse(await readFile(savePath, 'utf8')));
  assert.ok(pageFile.jobs.every((j) => j.evaluations.length === summary.evaluation.checkpoints.length));
  assert.deepEqual(problems, []);
  await context.close();
});
