// The results area: score, comparison and advisor tables, the curve
// statistic and per-seed lines, the exports (CSV, results file, PNG), opening
// a results file without re-running, and the page's numbers against the
// native CLI's for the same config.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFile, writeFile, mkdtemp } from 'node:fs/promises';
import { execFile } from 'node:child_process';
import { promisify } from 'node:util';
import os from 'node:os';
import path from 'node:path';
import { setUp, openPage, repoRoot, runToEnd, shoot, nextFrame } from './helpers.mjs';

const ROOT = process.env.CRITBOX_ROOT || repoRoot;
const CLI = process.env.CRITBOX_CLI || path.join(ROOT, 'target', 'release', 'critbox');
let env;

before(async () => { env = await setUp(); });
after(async () => { await env?.close(); });

/** A number as the tables print it (a real minus sign) back to a JS number. */
const cellNumber = (t) => Number(String(t).trim().replace('−', '-'));

test('results: tables, curve statistics, exports, and a results file opened again without re-running', async () => {
  const { page, context, problems, requests } = await openPage(env);
  await page.fill('#seeds', '4');
  await page.fill('#steps', '4000');
  await runToEnd(page);
  const summary = await page.evaluate(() => window.__critbox.state.summary);
  const n = summary.variants.length;
  assert.ok(n >= 3, 'the rover preset compares at least three variants');

  // Scores: one row per variant; the printed mean is the summary's mean to
  // the 3 significant digits shown.
  const rows = page.locator('#scores-body tr');
  assert.equal(await rows.count(), n);
  for (let i = 0; i < n; i++) {
    const shown = cellNumber(await rows.nth(i).locator('td .main').first().textContent());
    const mean = summary.variants[i].final_return.mean;
    assert.ok(Math.abs(shown - mean) <= Math.max(0.01, Math.abs(mean) * 0.006), `row ${i}: ${shown} vs ${mean}`);
  }
  // Comparisons: every pair once, each with a verdict in plain words.
  assert.equal(await page.locator('#comparisons-body tr.pair-row').count(), (n * (n - 1)) / 2);
  const verdicts = await page.locator('#comparisons-body td.verdict').allTextContents();
  assert.equal(verdicts.length, (n * (n - 1)) / 2);
  for (const [k, v] of verdicts.entries()) assert.equal(v, summary.comparisons[k].verdict);
  // Seeds advisor: a row per pair, the seeds needed as the summary says.
  const advice = page.locator('#advisor-body tr.pair-row');
  assert.equal(await advice.count(), (n * (n - 1)) / 2);
  for (let k = 0; k < summary.comparisons.length; k++) {
    const a = summary.comparisons[k].seeds_advice;
    const text = await advice.nth(k).locator('td').nth(1).textContent();
    if (a) assert.match(text, new RegExp(`^${a.seeds_per_variant}\\b`), text);
  }
  await shoot(page, 'results-tables.png', { scrollBench: 430 });

  // Curve statistic: IQM and median draw lines of their own; per-seed lines
  // widen the y range to every seed's values.
  const drawAfter = async (fn) => { const before = await page.evaluate(() => window.__critbox.draws); await fn(); await page.waitForFunction((b) => window.__critbox.draws > b, before); return page.evaluate(() => window.__critbox.lastDraw); };
  const meanDraw = await page.evaluate(() => window.__critbox.lastDraw);
  assert.equal(meanDraw.stat, 'mean');
  for (const stat of ['iqm', 'median']) {
    await page.click(`label[for=stat-${stat}]`);
    await page.waitForFunction((s) => window.__critbox.lastDraw.stat === s, stat);
    const d = await page.evaluate(() => window.__critbox.lastDraw);
    for (const s of d.series) assert.ok(s.points >= 2, `${stat} of ${s.label}: ${s.points} points`);
  }
  const seeded = await drawAfter(() => page.check('#seed-lines'));
  assert.equal(seeded.seedLines, true);
  await page.waitForFunction(() => window.__critbox.state.curves?.seeds && window.__critbox.lastDraw.seedLines);
  const seedRange = await page.evaluate(() => {
    const { seeds } = window.__critbox.state.curves;
    let lo = Infinity; let hi = -Infinity;
    for (const variant of seeds) for (const curve of variant) {
      for (const y of curve) if (Number.isFinite(y)) { lo = Math.min(lo, y); hi = Math.max(hi, y); }
    }
    return [lo, hi];
  });
  assert.equal(await page.evaluate(() => window.__critbox.state.curves.seeds[0].length), 4, 'one curve per seed');
  await nextFrame(page);
  seeded.y = (await page.evaluate(() => window.__critbox.lastDraw)).y;
  assert.ok(seeded.y[0] <= seedRange[0] && seeded.y[1] >= seedRange[1], `y axis ${seeded.y} covers the seeds' ${seedRange}`);
  await shoot(page, 'results-median-seed-lines.png');
  await page.click('label[for=stat-mean]');

  // CSV: every seed's final return in the file equals the summary's value
  // exactly (shortest round-trip numbers).
  const [csvDl] = await Promise.all([page.waitForEvent('download'), page.click('#export-csv')]);
  assert.match(csvDl.suggestedFilename(), /\.csv$/);
  const csv = await readFile(await csvDl.path(), 'utf8');
  const lines = csv.trim().split('\n');
  assert.equal(lines[0], 'variant,label,seed,step,metric,value,settings');
  const finals = lines.slice(1).map((l) => l.match(/^(\d+),.*,(\d+),(\d+),final_return,([^,]*),$/)).filter(Boolean);
  const expected = summary.variants.flatMap((v) => v.per_seed_final.filter((x) => x !== null)).length;
  assert.equal(finals.length, expected);
  for (const m of finals) {
    assert.equal(Number(m[4]), summary.variants[Number(m[1])].per_seed_final[Number(m[2])]);
  }

  // PNG of the chart: a real PNG the size of the canvas.
  const [pngDl] = await Promise.all([page.waitForEvent('download'), page.click('#png-curves')]);
  const png = await readFile(await pngDl.path());
  assert.deepEqual([...png.subarray(0, 8)], [137, 80, 78, 71, 13, 10, 26, 10]);
  const size = await page.evaluate(() => [document.getElementById('curves').width, document.getElementById('curves').height]);
  assert.deepEqual([png.readUInt32BE(16), png.readUInt32BE(20)], size);

  // Results file: config, every job, and the same summary.
  const [jsonDl] = await Promise.all([page.waitForEvent('download'), page.click('#save-results')]);
  const saved = await readFile(await jsonDl.path(), 'utf8');
  const file = JSON.parse(saved);
  assert.equal(file.critbox_results, 2);
  assert.equal(file.jobs.length, n * 4);
  assert.deepEqual(file.summary, summary);
  assert.deepEqual(problems, []);
  await context.close();

  // A fresh page opens it: same summary, tables filled, no training.
  const second = await openPage(env);
  const savedPath = path.join(await mkdtemp(path.join(os.tmpdir(), 'critbox-')), 'rover-results.json');
  await writeFile(savedPath, saved);
  await second.page.setInputFiles('#open-file', savedPath);
  await second.page.waitForFunction(() => window.__critbox.state.run?.status === 'opened');
  assert.deepEqual(await second.page.evaluate(() => window.__critbox.state.summary), summary);
  assert.equal(await second.page.locator('#scores-body tr').count(), n);
  assert.match(await second.page.textContent('#plot-title'), /opened from rover-results\.json/);
  assert.equal(await second.page.inputValue('#title'), file.config.title);
  assert.equal(await second.page.evaluate(() => window.__critbox.state.run.workers), 0, 'nothing was trained');
  await shoot(second.page, 'results-opened.png');

  // A broken results file: a message naming the problem; the results stay.
  const badPath = path.join(path.dirname(savedPath), 'broken.json');
  const broken = JSON.parse(saved);
  broken.jobs[0].episodes[0][0] = 'soon';
  await writeFile(badPath, JSON.stringify(broken));
  await second.page.setInputFiles('#open-file', badPath);
  await second.page.waitForSelector('#messages .msg');
  assert.match(await second.page.textContent('#messages'), /broken\.json could not be opened: .*jobs\[0\]/);
  assert.equal(await second.page.evaluate(() => window.__critbox.state.run.fileName), 'rover-results.json');
  assert.deepEqual(second.problems, []);
  assert.ok(requests.every((u) => u.startsWith(env.server.url)), 'only the page\'s own files');
  await second.context.close();
});

test('the page\'s summary and saved results file equal `critbox run --save` on the same config', async () => {
  const { page, context, problems } = await openPage(env);
  await page.fill('#seeds', '3');
  await page.fill('#steps', '2500');
  await page.fill('#threshold', '-40');
  await runToEnd(page);
  const { configJson, summary } = await page.evaluate(() => ({
    configJson: window.__critbox.state.run.configJson,
    summary: window.__critbox.state.summary,
  }));
  const [dl] = await Promise.all([page.waitForEvent('download'), page.click('#save-results')]);
  const pageFile = JSON.parse(await readFile(await dl.path(), 'utf8'));
  const dir = await mkdtemp(path.join(os.tmpdir(), 'critbox-'));
  const cfgPath = path.join(dir, 'page-config.json');
  const savePath = path.join(dir, 'cli-results.json');
  await writeFile(cfgPath, configJson);
  const { stdout } = await promisify(execFile)(CLI, ['run', cfgPath, '--save', savePath], { maxBuffer: 1 << 26 });
  assert.deepEqual(summary, JSON.parse(stdout));
  assert.equal(summary.seeds, 3);
  // The whole results file, every episode record (truncated flags included)
  // and the config with its defaults, not only the summary.
  const cliFile = JSON.parse(await readFile(savePath, 'utf8'));
  assert.deepEqual(pageFile, cliFile);
  assert.ok(pageFile.jobs.some((j) => j.episodes.some((e) => e[4] === true)), 'some rover episodes hit the time limit');
  assert.deepEqual(problems, []);
  await context.close();
});
