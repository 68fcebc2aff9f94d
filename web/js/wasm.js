// Loader of the critbox WebAssembly package (web/pkg, built by wasm-bindgen
// with --target web). Used by the page and by every worker; each caller gets
// one initialised module namespace, loaded once per realm.

const GLUE_URL = new URL('../pkg/critbox_wasm.js', import.meta.url);
const WASM_URL = new URL('../pkg/critbox_wasm_bg.wasm', import.meta.url);

let loading = null;

/**
 * Load and initialise the wasm package once.
 * @returns {Promise<object>} the module namespace: validateConfig, Run, Results, TaskSim, Agent.
 * Rejects with an Error that says which file failed to load.
 */
export function loadWasm() {
  if (!loading) {
    loading = (async () => {
      let glue;
      try {
        glue = await import(GLUE_URL.href);
      } catch (err) {
        throw new Error(`could not load ${GLUE_URL.pathname}: ${messageOf(err)}`);
      }
      try {
        await glue.default({ module_or_path: WASM_URL });
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
