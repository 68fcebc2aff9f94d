// Bench driver: the WebAssembly build (web/pkg) under Node. Times one job of
// a bench config the way a page worker runs it (a Run handle advanced in
// chunks of 10 000 steps) and prints one JSON line: {steps, seconds, steps_per_sec}.
// First a quarter as many steps run untimed in another Run handle, so the
// engine has optimised the hot functions (as it has a second into any real run).
// usage: node bench/node.mjs CONFIG.json STEPS
import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const pkg = path.join(root, 'web/pkg');
const [configPath, stepsArg] = process.argv.slice(2);
if (!configPath || !stepsArg) {
  console.error('usage: node bench/node.mjs CONFIG.json STEPS');
  process.exit(2);
}
const steps = Number(stepsArg);
const { default: init, Run } = await import(path.join(pkg, 'critbox_wasm.js'));
await init({ module_or_path: fs.readFileSync(path.join(pkg, 'critbox_wasm_bg.wasm')) });
const configText = fs.readFileSync(configPath, 'utf8');
const warm = new Run(configText, Uint32Array.of(0));
for (let done = 0; done < steps / 4;) {
  if (warm.advance(Math.min(10000, Math.ceil(steps / 4) - done))) break;
  done = warm.progress()[1];
}
warm.free();
const run = new Run(configText, Uint32Array.of(0));
const t0 = performance.now();
let done = 0;
while (done < steps) {
  const n = Math.min(10000, steps - done);
  if (run.advance(n)) break;
  done = run.progress()[1];
}
done = run.progress()[1];
const seconds = (performance.now() - t0) / 1000;
const failures = run.failures();
run.free();
console.log(JSON.stringify({ steps: done, seconds, steps_per_sec: done / seconds, failures }));
