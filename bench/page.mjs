// Bench page (served from the repository root, so ../web/ is reachable):
// window.__bench.single(configUrl, steps) times one job in a dedicated worker
// (bench/job-worker.mjs, the WebAssembly build in web/pkg); window.__bench.pool(configUrl,
// workers) runs every job of a config through the page's own worker pool
// (web/js/pool.js, chunk 2000 steps as the page uses) and times it wall to wall,
// with the time to the first progress message (workers started, wasm
// instantiated from the module the page compiled, one chunk) and the time
// spent in Run.advance, summed over the workers and that of the busiest
// worker (the wall time less the latter is start-up, batch changes and
// messages).
import { Pool } from '../web/js/pool.js';
import { loadWasm } from '../web/js/wasm.js';

async function text(url) {
  const res = await fetch(url);
  if (!res.ok) throw new Error(`${url}: HTTP ${res.status}`);
  return res.text();
}

function single(configUrl, steps) {
  return new Promise((resolve, reject) => {
    const w = new Worker(new URL('./job-worker.mjs', import.meta.url), { type: 'module' });
    w.onmessage = (e) => { w.terminate(); e.data.error ? reject(new Error(e.data.error)) : resolve(e.data); };
    w.onerror = (e) => { w.terminate(); reject(new Error(e.message || 'bench worker failed')); };
    text(configUrl).then((config) => w.postMessage({ config, steps }), reject);
  });
}

async function pool(configUrl, workers, chunk = 2000) {
  const config = await text(configUrl);
  const plan = JSON.parse(config);
  const jobs = plan.variants.length * plan.seeds;
  const ids = Array.from({ length: jobs }, (_, i) => i);
  const errors = [];
  const advanceMs = [];
  const t0 = performance.now();
  let firstProgress = null;
  await new Promise((resolve) => {
    const p = new Pool({
      onProgress: (chunk, id) => {
        advanceMs[id] = (advanceMs[id] || 0) + (chunk.advanceMs || 0);
        if (firstProgress === null) firstProgress = (performance.now() - t0) / 1000;
      },
      onError: (message) => errors.push(message),
      onPaused: () => {},
      onDone: () => resolve(),
    }, { concurrency: workers });
    p.start(config, ids, chunk, { variants: plan.variants.length, seeds: plan.seeds });
  });
  const seconds = (performance.now() - t0) / 1000;
  const steps = jobs * plan.steps;
  return { workers, jobs, steps, seconds, steps_per_sec: steps / seconds, first_progress_seconds: firstProgress,
    advance_seconds: advanceMs.reduce((a, b) => a + (b || 0), 0) / 1000,
    advance_max_seconds: Math.max(0, ...advanceMs.map((b) => b || 0)) / 1000, errors };
}

// As on the page, the module is loaded (and compiled) on the main thread
// before any run, and the pool hands it to its workers.
await loadWasm();
window.__bench = { single, pool, cores: navigator.hardwareConcurrency };
document.getElementById('out').textContent = 'ready';
