// Nothing lost: the experiment being edited and the results of finished
// jobs survive a reload; a run cut by a reload can be finished, and the
// finished run equals the native CLI's run of the same config.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFile, writeFile, mkdtemp } from 'node:fs/promises';
import { gzipSync } from 'node:zlib';
import { execFile } from 'node:child_process';
import { promisify } from 'node:util';
import os from 'node:os';
import path from 'node:path';
import { setUp, openPage, repoRoot, runToEnd, shoot } from './helpers.mjs';

const ROOT = process.env.CRITBOX_ROOT || repoRoot;
const CLI = process.env.CRITBOX_CLI || path.join(ROOT, 'target', 'release', 'critbox');
let env;

before(async () => { env = await setUp(); });
after(async () => { await env?.close(); });

async function reload(page) {
  await page.reload();
  await page.waitForFunction(() => window.__critbox && window.__critbox.ready, null, { timeout: 30000 });
}

test('edits and a finished run survive a reload', async () => {
  const { page, context, problems } = await openPage(env);
  await page.fill('#title', 'Kept across reloads');
  await page.fill('#seeds', '3');
  await page.fill('#steps', '2000');
  await runToEnd(page);
  const summary = await page.evaluate(() => window.__critbox.state.summary);
  await page.waitForFunction(() => window.__critbox.checkpoints.some((c) => c.status === 'done'));
  await page.fill('#f-task-slip', '0.1'); // an edit after the run
  await page.waitForTimeout(500); // the experiment is written 300 ms after the last edit

  await reload(page);
  assert.equal(await page.inputValue('#title'), 'Kept across reloads');
  assert.equal(await page.inputValue('#f-task-slip'), '0.1');
  assert.equal(await page.evaluate(() => window.__critbox.state.run.status), 'done');
  assert.deepEqual(await page.evaluate(() => window.__critbox.state.summary), summary);
  assert.equal(await page.locator('#scores-body tr').count(), summary.variants.length);
  const drawn = await page.evaluate(() => window.__critbox.lastDraw.series.map((s) => s.points));
  assert.ok(drawn.every((p) => p >= 2), `curves drawn after the reload: ${drawn}`);
  assert.deepEqual(problems, []);
  await context.close();
});

test('a reload during a run keeps the finished jobs; finishing the run gives the CLI\'s numbers', async () => {
  const { page, context, problems } = await openPage(env);
  // Long enough (18 jobs of 2.5 M steps, several seconds even on a fast
  // machine: 1 M steps were done before the first checkpoint once the
  // learners got faster) that the reload lands while jobs are still training.
  await page.fill('#seeds', '6');
  await page.fill('#steps', '2500000');
  await page.waitForFunction(() => !document.getElementById('train').disabled);
  await page.click('#train');
  // Wait until a checkpoint with at least two finished jobs is written.
  await page.waitForFunction(() => window.__critbox.state.run
    && window.__critbox.checkpoints.some((c) => c.status === 'running' && c.jobs >= 2), null, { timeout: 60000, polling: 50 });
  const before = await page.evaluate(() => {
    const { run } = window.__critbox.state;
    const last = window.__critbox.checkpoints.at(-1);
    const finished = [];
    for (let j = 0; j < run.jobs; j++) if (run.jobStatus[j] !== 0) finished.push(j);
    return { configJson: run.configJson, jobs: run.jobs, saved: last.jobs, status: run.status, finished };
  });
  assert.equal(before.status, 'running');
  await reload(page);

  const after = await page.evaluate(() => {
    const { run } = window.__critbox.state;
    const done = [];
    for (let j = 0; j < run.jobs; j++) if (run.jobStatus[j] !== 0) done.push(j);
    return { status: run.status, done, configJson: run.configJson };
  });
  assert.equal(after.status, 'interrupted');
  // The restored run's config is the kept results' (defaults filled in by the core).
  const filled = await page.evaluate((json) => {
    const r = new window.__critbox.state.wasm.Results(json);
    try { return r.configJson(); } finally { r.free(); }
  }, before.configJson);
  assert.equal(after.configJson, filled);
  assert.ok(after.done.length >= before.saved, `${after.done.length} jobs restored, ${before.saved} were saved`);
  assert.ok(after.done.length < before.jobs, 'some jobs are left to train');
  assert.equal(await page.isVisible('#resume'), true);
  assert.match(await page.textContent('#resume'), new RegExp(`${before.jobs - after.done.length} jobs? left`));
  await shoot(page, 'interrupted-run.png');

  await page.click('#resume');
  await page.waitForFunction(() => window.__critbox.state.run.status === 'done', null, { timeout: 120000, polling: 200 });
  const summary = await page.evaluate(() => window.__critbox.state.summary);
  const dir = await mkdtemp(path.join(os.tmpdir(), 'critbox-'));
  await writeFile(path.join(dir, 'c.json'), before.configJson);
  const { stdout } = await promisify(execFile)(CLI, ['run', path.join(dir, 'c.json')], { maxBuffer: 1 << 26 });
  assert.deepEqual(summary, JSON.parse(stdout));
  assert.equal(await page.isVisible('#resume'), false);

  // And that finished run is what the next reload shows.
  await page.waitForFunction(() => window.__critbox.checkpoints.some((c) => c.status === 'done'));
  await reload(page);
  assert.equal(await page.evaluate(() => window.__critbox.state.run.status), 'done');
  assert.deepEqual(await page.evaluate(() => window.__critbox.state.summary), summary);
  assert.deepEqual(problems, []);
  await context.close();
});

test('an opened results file is kept too', async () => {
  const { page, context } = await openPage(env);
  await page.fill('#seeds', '2');
  await page.fill('#steps', '1500');
  await runToEnd(page);
  const [dl] = await Promise.all([page.waitForEvent('download'), page.click('#save-results')]);
  const saved = await readFile(await dl.path());
  const summary = await page.evaluate(() => window.__critbox.state.summary);
  await context.close();

  const second = await openPage(env);
  await second.page.setInputFiles('#open-file', { name: 'kept.json', mimeType: 'application/json', buffer: saved });
  await second.page.waitForFunction(() => window.__critbox.state.run?.status === 'opened');
  await second.page.waitForTimeout(300);
  await reload(second.page);
  assert.equal(await second.page.evaluate(() => window.__critbox.state.run.status), 'opened');
  assert.deepEqual(await second.page.evaluate(() => window.__critbox.state.summary), summary);
  assert.match(await second.page.textContent('#plot-title'), /kept\.json/);
  await second.context.close();
});

test('results an older page kept in local storage are shown, then kept the new way', async () => {
  // Written as the previous page wrote them: gzip, base64url, episode records of stride 5.
  const preset = JSON.parse(await readFile(path.join(ROOT, 'web', 'presets', 'rover-a2c-vs-qac.json'), 'utf8'));
  const configJson = JSON.stringify({ ...preset, seeds: 2, steps: 1500 });
  const dir = await mkdtemp(path.join(os.tmpdir(), 'critbox-'));
  await writeFile(path.join(dir, 'c.json'), configJson);
  const { stdout } = await promisify(execFile)(CLI, ['run', path.join(dir, 'c.json'), '--save', path.join(dir, 'r.json')], { maxBuffer: 1 << 26 });
  const saved = JSON.parse(await readFile(path.join(dir, 'r.json'), 'utf8'));
  const b64url = (buf) => Buffer.from(buf).toString('base64').replace(/\+/g, '-').replace(/\//g, '_').replace(/=+$/, '');
  const jobs = saved.jobs.map((j) => ({
    id: j.id, steps: j.steps_done, status: j.failed ? 2 : 1, failed: j.failed,
    episodes: b64url(new Float64Array(j.episodes.flatMap((e) => [j.id, e[0], e[1], e[2], e[3]])).buffer),
  }));
  const entry = JSON.stringify({ v: 1, kind: 'jobs', status: 'done', configJson, fileName: '', savedAt: 1, data: b64url(gzipSync(JSON.stringify({ jobs }))) });

  // The older page kept no step diagnostics, so those (and the warnings
  // drawn from them) are the one part of the summary it cannot give back.
  const expected = JSON.parse(stdout);
  assert.ok(expected.variants.every((v) => v.diagnostics), 'the CLI run has diagnostics');
  const withoutDiagnostics = (s) => ({
    ...s, warnings: undefined, variants: s.variants.map((v) => ({ ...v, diagnostics: undefined })),
  });
  const restored = async () => {
    const s = await page.evaluate(() => window.__critbox.state.summary);
    for (const v of s.variants) {
      for (const curve of Object.values(v.diagnostics || {})) assert.ok(curve.mean.every((x) => x === null), 'no diagnostics invented');
    }
    return withoutDiagnostics(s);
  };

  const { page, context, problems } = await openPage(env);
  await page.evaluate((e) => localStorage.setItem('critbox:results', e), entry);
  await reload(page);
  assert.equal(await page.evaluate(() => window.__critbox.state.run.status), 'done');
  assert.deepEqual(await restored(), withoutDiagnostics(expected));
  await page.waitForFunction(() => localStorage.getItem('critbox:results') === null);
  await reload(page);
  assert.equal(await page.evaluate(() => window.__critbox.state.run.status), 'done');
  assert.deepEqual(await restored(), withoutDiagnostics(expected));
  assert.deepEqual(problems, []);
  await context.close();
});
