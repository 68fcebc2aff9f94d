// Where the page's files come from. Served (scripts/serve): ES modules next
// to this one, the wasm package in ../pkg, presets in ../presets, workers as
// module workers (trainworker.js, resultsworker.js, probeworker.js). Single
// file (dist/critbox.html, scripts/build-single): the build defines
// globalThis.__CRITBOX_BUNDLE__ with the wasm bytes, the presets and each
// worker's source, and nothing is fetched. Only this module and wasm.js look
// at the difference.

/** The single-file bundle's description, or null when served. */
export const bundle = globalThis.__CRITBOX_BUNDLE__ || null;

/** The page's worker scripts (module names in this folder). */
export const WORKER_SCRIPTS = ['trainworker', 'resultsworker', 'probeworker'];

const blobUrls = new Map();

/** A new worker running `script` (one of WORKER_SCRIPTS). Throws when the browser refuses one. */
export function makeWorker(script, name) {
  if (!WORKER_SCRIPTS.includes(script)) throw new Error(`no worker script called ${JSON.stringify(script)}`);
  if (!bundle) return new Worker(new URL(`./${script}.js`, import.meta.url), { type: 'module', name });
  if (!blobUrls.has(script)) {
    blobUrls.set(script, URL.createObjectURL(new Blob([bundle.workerSource(script)], { type: 'text/javascript' })));
  }
  return new Worker(blobUrls.get(script), { name });
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
