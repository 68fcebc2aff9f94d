// Results an older page kept in local storage ('critbox:results'), read once
// and turned into results-file text so the run controller can show and keep
// them like any other. Two kinds were written: 'file' (an opened results
// file, gzip then base64url) and 'jobs' (the finished jobs of a run: gzip
// then base64url of JSON {jobs: [{id, steps, status, failed, episodes}]},
// episodes the base64url of f64 records of stride 5: job id, end step, base
// return, shaped return, length; that page did not keep whether an episode
// was truncated, so it reads as not truncated).

import { decompress, fromBase64Url } from './share.js';

/** The local-storage key older pages used. */
export const LEGACY_RESULTS_KEY = 'critbox:results';
const OLD_STRIDE = 5;

/** The old entry, or null: {status, origin, fileName, text: results-file JSON}. Throws saying what is wrong. */
export async function readLegacyResults() {
  let raw = null;
  try { raw = window.localStorage.getItem(LEGACY_RESULTS_KEY); } catch { return null; }
  if (!raw) return null;
  const entry = JSON.parse(raw);
  if (!entry || entry.v !== 1 || typeof entry.data !== 'string' || typeof entry.configJson !== 'string') {
    throw new Error('they are in a format this page does not read');
  }
  const unpacked = new TextDecoder().decode(await decompress(fromBase64Url(entry.data), 'gzip'));
  if (entry.kind === 'file') return { status: 'opened', origin: 'file', fileName: String(entry.fileName || 'a results file'), text: unpacked };
  if (entry.kind !== 'jobs') throw new Error(`they are of an unknown kind ${JSON.stringify(entry.kind)}`);
  const body = JSON.parse(unpacked);
  const config = JSON.parse(entry.configJson);
  const count = (Array.isArray(config.variants) ? config.variants.length : 0) * (Number.isInteger(config.seeds) ? config.seeds : 10);
  const jobs = Array.from({ length: count }, (_, id) => ({ id, steps_done: 0, failed: null, episodes: [] }));
  for (const j of Array.isArray(body.jobs) ? body.jobs : []) {
    const id = Number(j.id);
    if (!jobs[id]) throw new Error(`job ${JSON.stringify(j.id)} is not in the experiment`);
    const bytes = fromBase64Url(String(j.episodes ?? ''));
    if (bytes.length % (8 * OLD_STRIDE)) throw new Error(`job ${id}: its episode list is cut short`);
    const eps = new Float64Array(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.length));
    for (let k = 0; k < eps.length; k += OLD_STRIDE) jobs[id].episodes.push([eps[k + 1], eps[k + 2], eps[k + 3], eps[k + 4], false]);
    jobs[id].steps_done = Number(j.steps) || 0;
    jobs[id].failed = j.failed === null || j.failed === undefined ? null : String(j.failed);
  }
  const text = JSON.stringify({ critbox_results: 1, config, jobs });
  return { status: String(entry.status), origin: 'run', fileName: '', text };
}

/** Forget the old entry (once its results are kept the new way). */
export function dropLegacyResults() {
  try { window.localStorage.removeItem(LEGACY_RESULTS_KEY); } catch { /* nothing to forget */ }
}
