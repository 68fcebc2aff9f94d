// Where the page's files come from. Served (scripts/serve): ES modules next
// to this one, the wasm package in ../pkg, presets in ../presets, workers as
// module workers. Single file (dist/critbox.html, scripts/build-single): the
// build defines globalThis.__CRITBOX_BUNDLE__ with the wasm bytes, the
// presets and the worker source, and nothing is fetched. Only this module
// and wasm.js look at the difference.

/** The single-file bundle's description, or null when served. */
export const bundle = globalThis.__CRITBOX_BUNDLE__ || null;

const WORKER_URL = bundle ? null : new URL('./worker.js', import.meta.url);
let workerBlobUrl = null;

/** A new training worker. Throws when the browser refuses one. */
export function makeWorker(name) {
  if (!bundle) return new Worker(WORKER_URL, { type: 'module', name });
  if (!workerBlobUrl) {
    workerBlobUrl = URL.createObjectURL(new Blob([bundle.workerSource()], { type: 'text/javascript' }));
  }
  return new Worker(workerBlobUrl, { name });
}

/** What a worker's start message must carry so the worker can load the
 * wasm module: the bytes in single-file mode, nothing when served. */
export function wasmForWorker() {
  return bundle ? bundle.wasmBytes().slice().buffer : null;
}

/** The preset list: [{file, title, question?}]. */
export async function fetchPresetIndex() {
  if (bundle) return bundle.presets.index;
  const res = await fetch(new URL('../presets/index.json', import.meta.url));
  if (!res.ok) throw new Error(`presets/index.json: HTTP ${res.status}`);
  return res.json();
}

/** A preset's text. */
export async function fetchPresetText(file) {
  if (bundle) {
    const text = bundle.presets.files[file];
    if (typeof text !== 'string') throw new Error(`presets/${file}: not in this single-file build`);
    return text;
  }
  const res = await fetch(new URL(`../presets/${file}`, import.meta.url));
  if (!res.ok) throw new Error(`presets/${file}: HTTP ${res.status}`);
  return res.text();
}
