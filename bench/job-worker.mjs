// Bench worker: times one job (job 0) of a config with the WebAssembly build,
// a Run handle advanced in chunks of 10 000 steps. Answers {steps, seconds, steps_per_sec}.
import init, { Run } from '../web/pkg/critbox_wasm.js';

self.onmessage = async (e) => {
  try {
    await init();
    const { config, steps } = e.data;
    const run = new Run(config, Uint32Array.of(0));
    const t0 = performance.now();
    let done = 0;
    while (done < steps) {
      if (run.advance(Math.min(10000, steps - done))) break;
      done = run.progress()[1];
    }
    done = run.progress()[1];
    const seconds = (performance.now() - t0) / 1000;
    run.free();
    self.postMessage({ steps: done, seconds, steps_per_sec: done / seconds });
  } catch (err) {
    self.postMessage({ error: String(err && err.message || err) });
  }
};
