// Keeping work in the browser's local storage, so a reload or a closed tab
// loses nothing finished.
//
// Two entries, both JSON text:
//   critbox:experiment  {v: 1, config, presetFile, savedAt}
//       the experiment being edited, written shortly after every edit.
//   critbox:results     {v: 1, kind, status, configJson, fileName, savedAt, data}
//       the last run's results. kind 'jobs': data is base64url of the gzip of
//       JSON {jobs: [{id, steps, status, failed, episodes}]} with episodes the
//       base64url of a Float64Array of episode records (stride 5: job id, end
//       step, base return, shaped return, length) as the workers send them;
//       during a run only finished jobs are written. The results worker packs
//       and unpacks it (worker.js, 'res-pack' and 'res-restore'). kind
//       'file': data is base64url of the gzip of an opened results file's text.
// Anything unreadable is ignored with a message, never trusted: restored
// configs go through the core's validator and records through Results.

import { compress, decompress, toBase64Url, fromBase64Url } from './share.js';

export const EXPERIMENT_KEY = 'critbox:experiment';
export const RESULTS_KEY = 'critbox:results';
const VERSION = 1;

function store() {
  try {
    return window.localStorage;
  } catch {
    return null; // storage disabled by the browser's settings
  }
}

/** Save the experiment being edited. Returns an error message or ''. */
export function saveExperiment(config, presetFile) {
  const s = store();
  if (!s) return 'this browser does not allow local storage, so edits are not kept across reloads';
  try {
    s.setItem(EXPERIMENT_KEY, JSON.stringify({ v: VERSION, config, presetFile: presetFile || '', savedAt: Date.now() }));
    return '';
  } catch (err) {
    return `the experiment could not be kept in local storage (${err.name || err.message})`;
  }
}

/** The saved experiment {config, presetFile}, or null. Throws with a message when it is unreadable. */
export function loadExperiment() {
  const s = store();
  const text = s && s.getItem(EXPERIMENT_KEY);
  if (!text) return null;
  const v = JSON.parse(text);
  if (!v || v.v !== VERSION || !v.config || typeof v.config !== 'object') {
    throw new Error('the experiment kept from the last visit is in a format this page does not read');
  }
  return { config: v.config, presetFile: typeof v.presetFile === 'string' ? v.presetFile : '' };
}

async function pack(text) {
  return toBase64Url(await compress(new TextEncoder().encode(text), 'gzip'));
}

async function unpack(data) {
  return new TextDecoder().decode(await decompress(fromBase64Url(data), 'gzip'));
}

/**
 * Save results.
 * @param {object} rec {kind: 'jobs', status, configJson, data (packed by the results worker)}
 *                  or {kind: 'file', status: 'opened', configJson, fileName, text}
 * @returns {Promise<string>} '' or a message saying why they were not kept
 */
export async function saveResults(rec) {
  const s = store();
  if (!s) return 'this browser does not allow local storage, so results are not kept across reloads';
  let data = rec.data;
  if (rec.kind === 'file') {
    try {
      data = await pack(rec.text);
    } catch (err) {
      return `results could not be packed for local storage (${err.message})`;
    }
  }
  const entry = JSON.stringify({
    v: VERSION, kind: rec.kind, status: rec.status, configJson: rec.configJson,
    fileName: rec.fileName || '', savedAt: Date.now(), data,
  });
  try {
    s.setItem(RESULTS_KEY, entry);
    return '';
  } catch (err) {
    try { s.removeItem(RESULTS_KEY); } catch { /* nothing more to do */ }
    const mb = (entry.length / 1048576).toFixed(1);
    return `these results (${mb} MB packed) do not fit in this browser's local storage (${err.name || err.message}); save them as a results file to keep them`;
  }
}

/**
 * The saved results, or null: kind 'file' unpacked to its text, kind 'jobs'
 * with its packed data (for the results worker).
 * @returns {Promise<null | {kind, status, configJson, fileName, data?, text?}>}
 * Throws an Error with a message when the entry is unreadable.
 */
export async function loadResults() {
  const s = store();
  const text = s && s.getItem(RESULTS_KEY);
  if (!text) return null;
  const v = JSON.parse(text);
  if (!v || v.v !== VERSION || typeof v.data !== 'string' || typeof v.configJson !== 'string') {
    throw new Error('the results kept from the last visit are in a format this page does not read');
  }
  if (v.kind === 'file') return { kind: 'file', status: 'opened', configJson: v.configJson, fileName: v.fileName, text: await unpack(v.data) };
  if (v.kind !== 'jobs') throw new Error(`the kept results are of an unknown kind ${JSON.stringify(v.kind)}`);
  return { kind: 'jobs', status: String(v.status), configJson: v.configJson, fileName: '', data: v.data };
}
