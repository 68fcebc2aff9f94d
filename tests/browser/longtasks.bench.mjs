// Benchmark, not a test (timings never go in tests): how long the page's
// main thread is busy in one go while a run trains. Uses the browser's Long
// Tasks API (tasks over 50 ms) and prints the longest tasks seen during and
// right after a run, for a few experiment sizes.
//
// Run: cd tests/browser && node longtasks.bench.mjs   (needs web/pkg built)

import { setUp, openPage } from './helpers.mjs';

const CASES = [
  { name: 'rover, 3 variants × 10 seeds × 100k steps', preset: 'rover-a2c-vs-qac.json', seeds: 10, steps: 100000 },
  { name: 'rover, 8 variants × 30 seeds × 50k steps', preset: 'rover-a2c-vs-qac.json', seeds: 30, steps: 50000, variants: 8 },
  { name: 'same, with one line per seed', preset: 'rover-a2c-vs-qac.json', seeds: 30, steps: 50000, variants: 8, seedLines: true },
  { name: 'cart-pole n-step, 3 variants × 8 seeds × 60k steps', preset: 'cartpole-nstep-gae.json', seeds: 8, steps: 60000 },
];

const env = await setUp();
try {
  for (const c of CASES) {
    const { page, context } = await openPage(env, {
      before: (p) => p.addInitScript(() => {
        window.__long = [];
        new PerformanceObserver((list) => {
          for (const e of list.getEntries()) window.__long.push({ start: e.startTime, ms: e.duration });
        }).observe({ type: 'longtask', buffered: false });
      }),
    });
    await page.click(`#presets button[data-preset="${c.preset}"]`);
    await page.waitForFunction((f) => window.__critbox.state.presetFile === f, c.preset);
    if (c.variants) {
      await page.evaluate((n) => {
        while (window.__critbox.state.config.variants.length < n) document.getElementById('add-variant').click();
      }, c.variants);
    }
    await page.fill('#seeds', String(c.seeds));
    await page.fill('#steps', String(c.steps));
    if (c.seedLines) await page.check('#seed-lines');
    await page.waitForFunction(() => !document.getElementById('train').disabled);
    await page.evaluate(() => { window.__long = []; });
    const t0 = Date.now();
    await page.click('#train');
    await page.waitForFunction(() => window.__critbox.state.run?.status === 'done', null, { timeout: 600000, polling: 500 });
    const wall = (Date.now() - t0) / 1000;
    await page.waitForTimeout(500);
    const long = await page.evaluate(() => window.__long);
    const worst = long.map((l) => l.ms).sort((a, b) => b - a);
    console.log(`${c.name}: ${wall.toFixed(1)} s; ${long.length} tasks over 50 ms; longest ${worst.slice(0, 5).map((m) => m.toFixed(0)).join(', ') || '-'} ms`);
    await context.close();
  }
} finally {
  await env.close();
}
