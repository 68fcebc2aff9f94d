// Loader of the critbox WebAssembly package. Served: web/pkg, built by
// wasm-bindgen with --target web, imported as an ES module. Single file: the
// no-modules glue is already in the page (or the worker) as the global
// `wasm_bindgen`, and the bytes come from the bundle (page) or from the
// first message every worker gets from rpc.js (see provideWasmBytes); a
// served worker gets the page's compiled module the same way. Each realm
// loads it once.

import { bundle } from './platform.js';

const GLUE_URL = bundle ? null : new URL('../pkg/critbox_wasm.js', import.meta.url);
const WASM_URL = bundle ? null : new URL('../pkg/critbox_wasm_bg.wasm', import.meta.url);

let loading = null;
let bytesGiven = null;
let moduleGiven = null;
let compiled = null;

/** Single-file workers: the wasm bytes handed over by the page. */
export function provideWasmBytes(buffer) {
  if (buffer && !bytesGiven) bytesGiven = buffer;
}

/** Served workers: the module the page compiled, so a worker instantiates
 * it without fetching or compiling (the engine shares the compiled code,
 * optimised functions included, between the page and its workers). */
export function provideWasmModule(module) {
  if (!moduleGiven && typeof WebAssembly === 'object' && module instanceof WebAssembly.Module) moduleGiven = module;
}

/** The compiled module this realm runs (served page only; null before the
 * load or in the single-file build), to hand to workers. */
export function compiledModule() {
  return compiled;
}

/** Compile the package's .wasm: streaming when the server labels it
 * application/wasm, from the bytes otherwise. */
async function compileServed() {
  const res = await fetch(WASM_URL);
  if (!res.ok) throw new Error(`HTTP ${res.status}`);
  if (WebAssembly.compileStreaming && (res.headers.get('Content-Type') || '').startsWith('application/wasm')) {
    return WebAssembly.compileStreaming(res);
  }
  return WebAssembly.compile(await res.arrayBuffer());
}

async function loadBundled() {
  const glue = globalThis.wasm_bindgen;
  if (typeof glue !== 'function') throw new Error('the single-file build lacks its WebAssembly glue');
  const bytes = bytesGiven || (bundle && bundle.wasmBytes && bundle.wasmBytes());
  if (!bytes) throw new Error('no WebAssembly bytes were handed to this worker');
  await glue({ module_or_path: bytes });
  return glue;
}

/**
 * Load and initialise the wasm package once.
 * @returns {Promise<object>} the module namespace: validateConfig, Run, Results, TaskSim, Agent, ...
 * Rejects with an Error that says which file failed to load.
 */
export function loadWasm() {
  if (!loading) {
    loading = (async () => {
      if (!GLUE_URL || globalThis.wasm_bindgen) return loadBundled();
      let glue;
      try {
        glue = await import(GLUE_URL.href);
      } catch (err) {
        throw new Error(`could not load ${GLUE_URL.pathname}: ${messageOf(err)}`);
      }
      try {
        const module = moduleGiven || await compileServed();
        await glue.default({ module_or_path: module });
        compiled = module;
      } catch (err) {
        throw new Error(`could not start ${WASM_URL.pathname}: ${messageOf(err)}`);
      }
      return glue;
    })();
    // A failed load may be retried later (say, after the package is rebuilt).
    loading.catch(() => { loading = null; });
  }
  return loading;
}

/** The message of anything thrown: Error, string, or other. */
export function messageOf(err) {
  if (err instanceof Error) return err.message || String(err);
  if (typeof err === 'string') return err;
  try { return JSON.stringify(err); } catch { return String(err); }
}
