// Keeping things in the browser: a tiny wrapper over one IndexedDB object
// store, usable from the page and from workers. The page keeps the
// experiment being edited (KEPT.experiment); the results worker keeps the
// last run's packed results (KEPT.results, bytes from Results.pack()). Values
// are structured-cloned, so typed arrays go in as they are. Every failure
// becomes an Error whose message says what could not be kept or read.

const DB_NAME = 'critbox';
const DB_VERSION = 1;
const STORE = 'kept';

let opening = null;

/** The database, opened once per realm. */
function db() {
  if (!opening) {
    opening = new Promise((resolve, reject) => {
      let req;
      try {
        if (typeof indexedDB === 'undefined') throw new Error('this browser has no IndexedDB');
        req = indexedDB.open(DB_NAME, DB_VERSION);
      } catch (err) {
        reject(new Error(`the browser's storage is not available (${err.message || err})`));
        return;
      }
      req.onupgradeneeded = () => {
        if (!req.result.objectStoreNames.contains(STORE)) req.result.createObjectStore(STORE);
      };
      req.onsuccess = () => resolve(req.result);
      req.onerror = () => reject(new Error(`the browser's storage could not be opened (${req.error?.name || 'unknown error'})`));
      req.onblocked = () => reject(new Error('the browser\'s storage is held by another critbox tab; close it and reload'));
    });
    opening.catch(() => { opening = null; });
  }
  return opening;
}

/** Run one request in a transaction; resolves with its result once the transaction is done. */
async function run(mode, what, make) {
  const d = await db();
  return new Promise((resolve, reject) => {
    let result;
    const tx = d.transaction(STORE, mode);
    const req = make(tx.objectStore(STORE));
    req.onsuccess = () => { result = req.result; };
    tx.oncomplete = () => resolve(result);
    const fail = () => reject(new Error(`${what} (${(tx.error || req.error)?.name || 'unknown error'})`));
    tx.onerror = fail;
    tx.onabort = fail;
  });
}

/** The value kept under `key`, or undefined. */
export function getKept(key) {
  return run('readonly', `"${key}" could not be read from the browser's storage`, (s) => s.get(key));
}

/** Keep `value` under `key` (replacing what was there). */
export function putKept(key, value) {
  return run('readwrite', `"${key}" could not be kept in the browser's storage`, (s) => s.put(value, key));
}

/** Forget what is kept under `key`. */
export function dropKept(key) {
  return run('readwrite', `"${key}" could not be removed from the browser's storage`, (s) => s.delete(key));
}
