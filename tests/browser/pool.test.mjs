// The page's worker pool on its own (web/js/pool.js, imported into the served
// page): batches go to whichever trainer frees up first, and pausing and
// resuming at any moment, also while a trainer waits for its next batch,
// neither loses nor repeats a job. Common practice, no source.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { setUp, openPage, repoRoot } from './helpers.mjs';

let env;
before(async () => { env = await setUp(); });
after(async () => { await env?.close(); });

/** A small run of many short jobs: 3 variants x `seeds` seeds of the rover. */
async function config(seeds, steps) {
  const cfg = JSON.parse(await readFile(path.join(repoRoot, 'web', 'presets', 'rover-a2c-vs-qac.json'), 'utf8'));
  return { ...cfg, seeds, steps };
}

/**
 * Runs `cfg` through a Pool of 2 in the page; with `toggleMs`, pauses and
 * resumes every toggleMs (waiting for onPaused each time). Returns the last
 * progress per job, which trainer sent it, and the handler calls.
 */
async function runPool(page, cfg, toggleMs) {
  return page.evaluate(async ({ text, toggleMs }) => {
    const { Pool } = await import('/js/pool.js');
    const plan = JSON.parse(text);
    const jobs = plan.variants.length * plan.seeds;
    const last = {};
    const errors = [];
    let done = 0;
    let paused = 0;
    let pauses = 0;
    let pausedWait = null;
    let pool;
    const finished = new Promise((resolve) => {
      pool = new Pool({
        onProgress: (chunk, id) => {
          const p = chunk.progress;
          for (let k = 0; k + 2 < p.length; k += 3) last[p[k]] = { steps: p[k + 1], status: p[k + 2], trainer: id };
        },
        onError: (message, ids) => errors.push({ message, ids }),
        onPaused: () => { paused += 1; pausedWait?.(); },
        onDone: () => { done += 1; resolve(); },
      }, { concurrency: 2 });
    });
    await pool.start(text, Array.from({ length: jobs }, (_, i) => i), 500, { variants: plan.variants.length, seeds: plan.seeds });
    let over = false;
    finished.then(() => { over = true; });
    if (toggleMs) {
      while (!over) {
        await new Promise((r) => setTimeout(r, toggleMs));
        if (over) break;
        const held = new Promise((r) => { pausedWait = r; });
        pool.pause();
        pauses += 1;
        // A pause that meets the end of the run is answered by onDone instead.
        await Promise.race([held, finished]);
        pool.resume();
      }
    }
    await finished;
    await new Promise((r) => setTimeout(r, 50)); // nothing may come after onDone
    return { last, errors, done, paused, pauses, jobs };
  }, { text: JSON.stringify(cfg), toggleMs });
}

function checkAllDone(out, steps) {
  assert.deepEqual(out.errors, []);
  assert.equal(out.done, 1, 'onDone once');
  assert.equal(Object.keys(out.last).length, out.jobs, 'every job reported');
  for (const [job, p] of Object.entries(out.last)) {
    assert.equal(p.steps, steps, `job ${job} trained to its budget`);
    assert.equal(p.status, 1, `job ${job} done`);
  }
}

test('the pool hands batches to whichever trainer is free: every job once, both trainers used', { timeout: 120000 }, async () => {
  const { page, problems } = await openPage(env);
  const out = await runPool(page, await config(8, 4000), 0);
  checkAllDone(out, 4000);
  const trainers = new Set(Object.values(out.last).map((p) => p.trainer));
  assert.deepEqual([...trainers].sort(), [0, 1], 'both trainers finished jobs');
  assert.deepEqual(problems, []);
  await page.close();
});

test('pausing and resuming every few milliseconds, also while a trainer waits for work, loses no job', { timeout: 120000 }, async () => {
  const { page, problems } = await openPage(env);
  const out = await runPool(page, await config(8, 3000), 7);
  checkAllDone(out, 3000);
  assert.ok(out.pauses >= 3, `paused ${out.pauses} times`);
  assert.ok(out.paused >= out.pauses - 1, `onPaused ${out.paused} times for ${out.pauses} pauses`);
  assert.deepEqual(problems, []);
  await page.close();
});

test('when every trainer fails, the jobs still queued are reported once, with the failed ones', { timeout: 120000 }, async () => {
  const { page } = await openPage(env);
  const cfg = await config(4, 1000);
  // A task the core refuses: every trainer fails on its first batch.
  const bad = { ...cfg, task: { ...cfg.task, kind: 'no-such-task' } };
  const out = await page.evaluate(async (text) => {
    const { Pool } = await import('/js/pool.js');
    const errors = [];
    let done = 0;
    await new Promise((resolve) => {
      const pool = new Pool({
        onProgress: () => {},
        onError: (message, ids) => errors.push({ message, ids: Array.from(ids) }),
        onPaused: () => {},
        onDone: () => { done += 1; resolve(); },
      }, { concurrency: 2 });
      pool.start(text, Array.from({ length: 12 }, (_, i) => i), 500, { variants: 3, seeds: 4 });
    });
    await new Promise((r) => setTimeout(r, 50));
    return { errors, done };
  }, JSON.stringify(bad));
  assert.equal(out.done, 1, 'onDone once');
  const reported = out.errors.flatMap((e) => e.ids).sort((a, b) => a - b);
  assert.deepEqual(reported, Array.from({ length: 12 }, (_, i) => i), 'every job reported failed exactly once');
  assert.ok(out.errors.some((e) => /no-such-task/.test(e.message)), JSON.stringify(out.errors.map((e) => e.message)));
  assert.ok(out.errors.some((e) => /no training worker is left/.test(e.message)), 'the queued jobs are named too');
  await page.close();
});
