// Inspection views: a trained seed re-trained in its own worker, its value
// map with policy arrows and the shaping audit's marks on a grid, a slice on
// a continuous task, and an episode of its policy played on the canvas.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { setUp, openPage, repoRoot, runToEnd, shoot } from './helpers.mjs';

const ROOT = process.env.CRITBOX_ROOT || repoRoot;
let env;

before(async () => { env = await setUp(); });
after(async () => { await env?.close(); });

async function preset(file) {
  return JSON.parse(await readFile(path.join(ROOT, 'web', 'presets', file), 'utf8'));
}

async function choose(page, file) {
  await page.click(`#presets button[data-preset="${file}"]`);
  await page.waitForFunction((f) => window.__critbox.state.presetFile === f, file);
}

/** Inspect variant v, seed s after the given share of steps; resolves with the debug view. */
async function inspect(page, { variant = 0, seed = 0, at = '1' } = {}) {
  await page.click('#tab-inspect');
  await page.selectOption('#inspect-variant', String(variant));
  await page.selectOption('#inspect-seed', String(seed));
  await page.selectOption('#inspect-at', at);
  const before = await page.evaluate(() => window.__critbox.inspected()?.serial ?? 0);
  await page.click('#inspect-go');
  await page.waitForFunction((b) => (window.__critbox.inspected()?.serial ?? 0) > b, before, { timeout: 60000 });
  return page.evaluate(() => window.__critbox.inspected());
}

/** Count pixels of a colour in a canvas. */
function countColour(page, id, colour, tol = 30) {
  return page.evaluate(({ id, colour, tol }) => {
    const c = document.getElementById(id);
    const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
    const want = [1, 3, 5].map((i) => parseInt(colour.slice(i, i + 2), 16));
    let n = 0;
    for (let i = 0; i < d.length; i += 4) if (Math.abs(d[i] - want[0]) <= tol && Math.abs(d[i + 1] - want[1]) <= tol && Math.abs(d[i + 2] - want[2]) <= tol) n++;
    return n;
  }, { id, colour, tol });
}

test('grid: an untrained policy is uniform; a trained one docks; the episode follows the map', async () => {
  const cfg = await preset('rover-a2c-vs-qac.json');
  const map = cfg.task.map;
  const find = (ch) => { for (let r = 0; r < map.length; r++) { const c = map[r].indexOf(ch); if (c >= 0) return [r, c]; } return null; };
  const start = find('S');
  const dock = find('D');
  const { page, context, problems } = await openPage(env);
  await page.fill('#seeds', '2');
  await page.fill('#steps', '20000');
  await runToEnd(page);

  // No step taken: zero weights, so the softmax policy is uniform over the
  // four moves (a softmax of equal preferences; common practice, no source).
  const fresh = await inspect(page, { at: '0' });
  assert.equal(fresh.steps, 0);
  for (const row of fresh.critic) for (const p of row.slice(1)) assert.ok(Math.abs(p - 0.25) < 1e-12, `untrained probability ${p}`);
  // Every floor cell of the map is a state, and only those.
  const floor = [];
  map.forEach((line, r) => [...line].forEach((ch, c) => { if (ch !== '#') floor.push(`${r},${c}`); }));
  const seen = [];
  for (let i = 0; i < fresh.stateObs.length; i += 2) seen.push(`${fresh.stateObs[i]},${fresh.stateObs[i + 1]}`);
  assert.deepEqual(seen.slice().sort(), floor.slice().sort());

  // Trained: the greedy episode starts at S, moves one cell at a time and
  // ends in the dock (the map's D) before the step limit.
  const trained = await inspect(page, { variant: 0, seed: 1 });
  assert.equal(trained.steps, 20000);
  assert.deepEqual(trained.states[0], start);
  for (let i = 1; i < trained.states.length; i++) {
    const [r0, c0] = trained.states[i - 1];
    const [r1, c1] = trained.states[i];
    assert.ok(Math.abs(r1 - r0) + Math.abs(c1 - c0) <= 1, `step ${i}: ${trained.states[i - 1]} → ${trained.states[i]}`);
    assert.notEqual(map[r1][c1], '#', `step ${i} enters a wall`);
  }
  assert.equal(trained.lastFlag, 2, 'the episode ends in a terminal state');
  assert.deepEqual(trained.states.at(-1), dock);
  // The exact value of the policy is highest next to the dock and never above the task's best (0 per step at the dock).
  assert.ok(trained.exact.every((v) => v <= 1e-9), 'no cell is worth more than zero under a -1 per step reward');
  await page.waitForTimeout(300);
  await shoot(page, 'inspect-grid.png', { scrollBench: 330 });
  assert.deepEqual(problems, []);
  await context.close();
});

test('shaping audit marks on the value map of a bonus that changes the best action', async () => {
  const { page, context, problems } = await openPage(env);
  await choose(page, 'rover-loop-bonus.json');
  await page.fill('#seeds', '1');
  await page.fill('#steps', '3000');
  await runToEnd(page);
  const expected = await page.evaluate(() => {
    const a = JSON.parse(window.__critbox.state.wasm.audit(window.__critbox.state.run.configJson));
    return a.variants.map((v) => v.differing_states.length);
  });
  assert.equal(expected[0], 0, 'the task reward changes nothing');
  assert.ok(expected[1] > 0, 'the progress bonus changes some best actions');
  const shaped = await inspect(page, { variant: 1 });
  assert.equal(shaped.marks, expected[1]);
  assert.equal(await page.locator('#audit-list li').count(), expected[1]);
  assert.match(await page.textContent('#value-note'), /Shaping audit: in \d+ cells? \(dashed\)/);
  assert.ok(await countColour(page, 'value-map', '#d7263d', 20) > 20, 'dashed marks drawn');
  await page.waitForTimeout(300);
  await shoot(page, 'inspect-audit.png', { scrollBench: 330 });
  const plain = await inspect(page, { variant: 0 });
  assert.equal(plain.marks, 0);
  assert.equal(await page.locator('#audit-list li').count(), 0);
  assert.deepEqual(problems, []);
  await context.close();
});

test('continuous task: a value slice and a cart-pole episode', async () => {
  const { page, context, problems } = await openPage(env);
  await choose(page, 'cartpole-nstep-gae.json');
  await page.fill('#seeds', '1');
  await page.fill('#steps', '4000');
  await runToEnd(page);
  const d = await inspect(page, { variant: 1 });
  assert.deepEqual([d.slice.ix, d.slice.iy], [2, 3], 'theta across, theta_dot up by default');
  assert.equal(d.slice.points, 36 * 36);
  // Cart-pole starts with every state variable uniform in ±0.05 (Barto,
  // Sutton & Anderson 1983 as commonly implemented; from memory).
  for (const v of d.states[0]) assert.ok(Math.abs(v) <= 0.05, `start state ${d.states[0]}`);
  // Playing moves the picture on; the slider and Step move it by hand.
  assert.ok(d.frames > 5, `${d.frames} frames`);
  await page.fill('#roll-pos', '0');
  assert.equal(await page.evaluate(() => window.__critbox.inspected().playing), false, 'moving the slider pauses');
  await page.click('#roll-play');
  await page.waitForFunction(() => window.__critbox.inspected().t > 3);
  await page.click('#roll-play');
  assert.equal(await page.evaluate(() => window.__critbox.inspected().playing), false);
  const t = await page.evaluate(() => window.__critbox.inspected().t);
  await page.click('#roll-step');
  assert.equal(await page.evaluate(() => window.__critbox.inspected().t), Math.min(t + 1, d.frames - 1));
  await shoot(page, 'inspect-cartpole.png', { scrollBench: 330 });
  assert.deepEqual(problems, []);
  await context.close();
});

test('gradient variance by baseline: the page shows what `critbox probe` computes', async () => {
  const { execFile } = await import('node:child_process');
  const { promisify } = await import('node:util');
  const { writeFile, mkdtemp } = await import('node:fs/promises');
  const os = await import('node:os');
  const CLI = process.env.CRITBOX_CLI || path.join(ROOT, 'target', 'release', 'critbox');
  const { page, context, problems } = await openPage(env);
  await page.fill('#seeds', '2');
  await page.fill('#steps', '4000');
  await runToEnd(page);
  await page.click('#tab-variance');
  await page.selectOption('#var-variant', '0');
  await page.selectOption('#var-seed', '1');
  await page.selectOption('#var-points', '3');
  await page.fill('#var-k', '12');
  await page.fill('#var-m', '3');
  await page.click('#var-go');
  await page.waitForFunction(() => window.__critbox.variance() && !document.getElementById('var-go').disabled, null, { timeout: 60000 });
  const { result, drawn } = await page.evaluate(() => window.__critbox.variance());
  const configJson = await page.evaluate(() => window.__critbox.state.run.configJson);
  const dir = await mkdtemp(path.join(os.tmpdir(), 'critbox-'));
  await writeFile(path.join(dir, 'c.json'), configJson);
  const { stdout } = await promisify(execFile)(CLI, ['probe', path.join(dir, 'c.json'), '--variant', '0', '--seed', '1',
    '--checkpoints', '0,2000,4000', '--estimates', '12', '--episodes', '3'], { maxBuffer: 1 << 24 });
  assert.deepEqual(result, JSON.parse(stdout));
  const options = result.checkpoints[0].options.length;
  assert.equal(await page.locator('#var-body tr').count(), 3 * options);
  assert.deepEqual(drawn, Array(options).fill(3), 'a line of three points per baseline option');
  await shoot(page, 'gradient-variance.png', { scrollBench: 200 });
  assert.deepEqual(problems, []);
  await context.close();
});
