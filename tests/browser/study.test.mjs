// Studies in the page: the study editor in a variant card writes a sweep,
// a study trains in two stages (tuning jobs, then the chosen points on
// fresh seeds), the Sensitivity tab draws every variant's grid, and the
// page's numbers equal `critbox run --save` bit for bit.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { execFile } from 'node:child_process';
import { mkdtemp, readFile, writeFile } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';
import { setUp, openPage, runToEnd, shoot, nextFrame, repoRoot } from './helpers.mjs';

const CLI = process.env.CRITBOX_CLI || path.join(repoRoot, 'target', 'release', 'critbox');
let env;
before(async () => { env = await setUp(); });
after(async () => { await env.close(); });

test('the study editor sweeps a setting; a study trains in two stages and its sensitivity is drawn', async () => {
  const { page, context, problems } = await openPage(env);
  // The editor: sweep the first variant's actor step, switch to a list of values.
  await page.selectOption('#v0-sweep-add', 'actor_step');
  await page.waitForFunction(() => window.__critbox.state.config.variants[0].sweep?.actor_step);
  const first = await page.evaluate(() => window.__critbox.state.config.variants[0].sweep.actor_step);
  assert.deepEqual(first, { log2: [-5, -1], count: 5 }, 'a log2 range around the current step 0.1');
  await page.selectOption('[data-sweep="0"][data-sweep-part="mode"]', 'list');
  await page.fill('[data-sweep="0"][data-sweep-part="values"]', '0.05, 0.1, 0.2');
  await page.waitForFunction(() => JSON.stringify(window.__critbox.state.config.variants[0].sweep.actor_step) === '[0.05,0.1,0.2]');
  // The study editor's controls have label elements too.
  const unlabelled = await page.evaluate(() => [...document.querySelectorAll('.study input, .study select')]
    .filter((e) => !e.labels || e.labels.length === 0).map((e) => e.id || e.outerHTML.slice(0, 80)));
  assert.deepEqual(unlabelled, []);
  await page.fill('#seeds', '3');
  await page.fill('#tuning-seeds', '2');
  await page.fill('#steps', '3000');
  await page.waitForFunction(() => window.__critbox.state.check.ok && window.__critbox.state.check.info.tuning_jobs > 0);
  assert.match(await page.textContent('#run-reason'), /a study of \d+ tuning jobs/);
  await shoot(page, 'study-editor.png');
  await runToEnd(page);
  const { configJson, summary } = await page.evaluate(() => ({
    configJson: window.__critbox.state.run.configJson, summary: window.__critbox.state.summary,
  }));
  assert.ok(summary.study, 'the summary has a study');
  assert.deepEqual(summary.variants[0].study.axes[0].values, [0.05, 0.1, 0.2]);
  assert.equal(summary.variants[0].final_return.n, 3, 'scored on the fresh seeds');

  // The Sensitivity tab: one chart per variant, the swept one a curve.
  await page.click('#tab-study');
  await page.waitForFunction(() => window.__critbox.sensitivity().length > 0);
  const drawn = await page.evaluate(() => window.__critbox.sensitivity());
  assert.equal(drawn.length, summary.variants.length);
  assert.equal(drawn[0].kind, 'curve');
  assert.equal(drawn[0].points, 3);
  assert.match(await page.textContent('#study-intro'), /on 2 tuning seeds, reported on 3 fresh seeds/);
  await nextFrame(page);
  await shoot(page, 'study-sensitivity-editor-run.png');

  // Page = CLI: summary and whole results file (tuning jobs included).
  const [dl] = await Promise.all([page.waitForEvent('download'), page.click('#save-results')]);
  const pageFile = JSON.parse(await readFile(await dl.path(), 'utf8'));
  const dir = await mkdtemp(path.join(os.tmpdir(), 'critbox-'));
  await writeFile(path.join(dir, 'c.json'), configJson);
  const { stdout } = await promisify(execFile)(CLI, ['run', path.join(dir, 'c.json'), '--save', path.join(dir, 'r.json')], { maxBuffer: 1 << 26 });
  assert.deepEqual(summary, JSON.parse(stdout));
  assert.deepEqual(pageFile, JSON.parse(await readFile(path.join(dir, 'r.json'), 'utf8')));
  assert.deepEqual(problems, []);
  await context.close();
});

for (const [file, name] of [['rover-tuned-a2c-vs-qac.json', 'rover'], ['corridor-tuned-baselines.json', 'corridor']]) {
  test(`the ${name} study preset trains in the page and shows its sensitivity`, async () => {
    const { page, context, problems } = await openPage(env);
    await page.click(`#presets button[data-preset="${file}"]`);
    await page.waitForFunction((p) => window.__critbox.state.presetFile === p, file);
    await runToEnd(page, 300000);
    const summary = await page.evaluate(() => window.__critbox.state.summary);
    assert.ok(summary.study && summary.variants.every((v) => v.study.chosen_point !== null));
    await page.click('#tab-study');
    await page.waitForFunction(() => window.__critbox.sensitivity().length > 0);
    await nextFrame(page);
    await shoot(page, `study-sensitivity-${name}.png`);
    await page.evaluate(() => { document.querySelector('.bench').scrollTop = 600; });
    await nextFrame(page);
    await page.screenshot({ path: path.join(process.env.CRITBOX_TEST_OUTPUT || path.join(repoRoot, 'test-output'), 'browser', `study-table-${name}.png`) });
    assert.deepEqual(problems, []);
    await context.close();
  });
}
