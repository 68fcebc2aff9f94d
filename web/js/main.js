// Wires the page: loads the wasm module and the presets, keeps the form and
// the config in step (validating on every edit), starts runs on a worker
// pool, feeds every episode record into one Results handle on this thread,
// redraws the curves at most once per animation frame, and fills the result
// tables when a run ends or a results file is opened.

import { loadWasm, messageOf } from './wasm.js';
import { Pool } from './pool.js';
import {
  createState, newRun, runFraction, variantFractions, secondsLeft, formatLeft, addMessage, dismissMessage,
  stepsCounted,
} from './state.js';
import { drawCurves, drawSample, sizeCanvas, seriesStyle } from './chart.js';
import { findControls, pathOfMessage, controlForPath, DEFAULT_GRID_TASK } from './controls.js';
import { bindForm } from './form.js';
import { createInspectView } from './inspectview.js';
import { createVarianceView } from './varianceview.js';
import {
  renderScores, renderComparisons, renderAdvisor, SCORE_COLUMNS, COMPARISON_COLUMNS, ADVISOR_COLUMNS,
} from './tables.js';
import { download, canvasPng, fileStem, readFileText } from './export.js';
import { fetchPresetIndex, fetchPresetText } from './platform.js';
import { encodeConfig, decodeFragment, linkFor } from './share.js';
import { saveExperiment, loadExperiment, saveResults, loadResults } from './storage.js';
import { ResultsClient } from './results.js';

/** Steps each job advances per chunk in a worker. */
const CHUNK_STEPS = 2000;

/** Used only when presets/index.json cannot be read, so the page still works. */
const FALLBACK_CONFIG = {
  schema: 1,
  title: 'Rover to dock (built-in fallback)',
  task: DEFAULT_GRID_TASK,
  base: { algo: 'a2c', discount: 0.99, actor_step: 0.1, critic_step: 0.2, features: { kind: 'tabular' } },
  variants: [{ label: 'A2C' }, { label: 'QAC', learner: { algo: 'qac', actor_step: 0.01 } }],
  seeds: 5,
  steps: 10000,
  master_seed: 1,
  curve_points: 40,
  final_fraction: 0.1,
};

const state = createState();
const els = findControls(document);
const $ = (id) => document.getElementById(id);
const ui = {
  train: $('train'),
  pause: $('pause'),
  cancel: $('cancel'),
  progress: $('progress'),
  percent: $('percent'),
  eta: $('eta'),
  reason: $('run-reason'),
  variantProgress: $('variant-progress'),
  messages: $('messages'),
  notes: $('notes'),
  canvas: $('curves'),
  canvasBox: $('canvas-box'),
  plotTitle: $('plot-title'),
  scoresHead: $('scores-head'),
  scoresBody: $('scores-body'),
  scoresNote: $('scores-note'),
  comparisonsHead: $('comparisons-head'),
  comparisonsBody: $('comparisons-body'),
  advisorHead: $('advisor-head'),
  advisorBody: $('advisor-body'),
  seedLines: $('seed-lines'),
  pngCurves: $('png-curves'),
  saveResults: $('save-results'),
  exportCsv: $('export-csv'),
  openFile: $('open-file'),
  copyLink: $('copy-link'),
  shareOut: $('share-out'),
  shareUrl: $('share-url'),
  resume: $('resume'),
  tabs: [...document.querySelectorAll('[role="tab"]')],
};
let pool = null;
let drawPending = false;
let curvesPending = false;
let lastCurveRequest = 0;
let curveTimer = 0;
/** Least time between two curve requests while a run trains (ms). */
const CURVE_INTERVAL_MS = 300;
let starting = false;
let lastBusy = null;
const form = bindForm(state, els, { onEdit, onPreset: (file) => choosePreset(file), isBusy: () => isActive() });
const inspector = createInspectView({
  state,
  showError: (t) => showError(t),
  colours: () => chartColours(),
  palette: () => readPalette(),
  font: () => getComputedStyle(document.body).fontFamily,
  accent: () => cssVar('--accent'),
});
let progressTimer = 0;

// For tests and for curious people in the console: read-only by convention.
const variance = createVarianceView({
  state,
  showError: (t) => showError(t),
  colours: () => chartColours(),
  palette: () => readPalette(),
  font: () => getComputedStyle(document.body).fontFamily,
});
const debug = { state, ready: false, draws: 0, lastDraw: null, checkpoints: [], inspected: () => inspector.debug(), variance: () => variance.debug() };
window.__critbox = debug;

// ---------------------------------------------------------------- messages

function showError(text) {
  addMessage(state, text);
  renderMessages();
}

function renderMessages() {
  const nodes = state.messages.map((m) => {
    const div = document.createElement('div');
    div.className = 'msg';
    const p = document.createElement('p');
    p.textContent = m.text;
    const b = document.createElement('button');
    b.type = 'button';
    b.textContent = 'Dismiss';
    b.setAttribute('aria-label', `Dismiss: ${m.text.slice(0, 80)}`);
    b.addEventListener('click', () => { dismissMessage(state, m.id); renderMessages(); });
    div.append(p, b);
    return div;
  });
  ui.messages.replaceChildren(...nodes);
}

let noteTimer = 0;
/** A short confirmation ("Link copied") that goes away by itself. */
function showNote(text, ms = 6000) {
  ui.notes.textContent = text;
  clearTimeout(noteTimer);
  noteTimer = setTimeout(() => { ui.notes.textContent = ''; }, ms);
}

window.addEventListener('error', (e) => showError(`page error: ${e.message}`));
window.addEventListener('unhandledrejection', (e) => showError(`page error: ${messageOf(e.reason)}`));

// ---------------------------------------------------------------- validation

function isActive() {
  return !!state.run && (state.run.status === 'running' || state.run.status === 'paused');
}

/** After every edit of the config (form.js calls it). */
function onEdit() {
  if (!state.config) return;
  checkConfig();
}

let saveTimer = 0;
let storageWarned = false;
/** Keep the experiment in local storage shortly after the last edit. */
function scheduleSaveExperiment() {
  clearTimeout(saveTimer);
  saveTimer = setTimeout(() => {
    const problem = state.config ? saveExperiment(state.config, state.presetFile) : '';
    if (problem && !storageWarned) { storageWarned = true; showError(problem); }
  }, 300);
}

function checkConfig() {
  const config = state.config;
  const formError = state.formErrors.size ? { path: state.formErrors.keys().next().value, message: state.formErrors.values().next().value.message } : null;
  scheduleSaveExperiment();
  if (formError) {
    state.check = { ok: false, message: formError.message, path: formError.path };
  } else if (!state.wasm) {
    state.check = { ok: false, message: 'The WebAssembly module is not loaded, so nothing can be checked or trained.', path: '' };
  } else {
    try {
      const info = JSON.parse(state.wasm.validateConfig(JSON.stringify(config)));
      state.check = { ok: true, info };
    } catch (err) {
      const message = messageOf(err);
      state.check = { ok: false, message, path: pathOfMessage(message) };
    }
  }
  renderCheck();
  scheduleDraw();
}

function renderCheck() {
  for (const el of els.form.querySelectorAll('[aria-invalid]')) el.removeAttribute('aria-invalid');
  const c = state.check;
  if (c.ok && isActive()) {
    const r = state.run;
    ui.reason.textContent = `Training ${r.jobs} jobs on ${r.workers} worker${r.workers === 1 ? '' : 's'}; edits apply to the next run.`;
    ui.reason.classList.remove('bad');
  } else if (c.ok) {
    const i = c.info;
    ui.reason.textContent = `Ready: ${i.labels.length} variant${i.labels.length === 1 ? '' : 's'} × ${i.seeds} seed${i.seeds === 1 ? '' : 's'} = ${i.jobs} jobs of ${i.steps.toLocaleString('en')} steps.`;
    ui.reason.classList.remove('bad');
  } else {
    ui.reason.textContent = c.message;
    ui.reason.classList.add('bad');
    const el = c.path ? controlForPath(els, c.path) : null;
    if (el) el.setAttribute('aria-invalid', 'true');
  }
  renderButtons();
}

function renderButtons() {
  const active = isActive();
  ui.train.disabled = !state.check.ok || active;
  ui.pause.disabled = !active;
  ui.cancel.disabled = !active;
  ui.pause.textContent = state.run && state.run.status === 'paused' ? 'Resume' : 'Pause';
  if (active !== lastBusy) { lastBusy = active; form.renderPresets(); }
  const interrupted = !!state.run && state.run.status === 'interrupted';
  ui.resume.hidden = !interrupted;
  if (interrupted) {
    const left = state.run.jobStatus.reduce((n, st) => n + (st === 0 ? 1 : 0), 0);
    ui.resume.textContent = `Finish the interrupted run (${left} job${left === 1 ? '' : 's'} left)`;
    ui.resume.disabled = !state.wasm;
  }
  const haveResults = !!state.results && !!state.run;
  ui.saveResults.disabled = !haveResults || active;
  ui.exportCsv.disabled = !haveResults || active;
}

// ---------------------------------------------------------------- presets

async function loadPresetIndex() {
  const list = await fetchPresetIndex();
  if (!Array.isArray(list)) throw new Error('presets/index.json: expected a list of {file, title}');
  return list.filter((p) => p && typeof p.file === 'string' && /^[\w.-]+\.json$/.test(p.file));
}

async function loadPreset(file) {
  const text = await fetchPresetText(file);
  try {
    return JSON.parse(text);
  } catch (err) {
    throw new Error(`presets/${file}: not valid JSON (${messageOf(err)})`);
  }
}

function renderPresetPicker() {
  form.renderPresets();
}

function applyConfig(config) {
  state.config = config && typeof config === 'object' ? config : {};
  state.formErrors.clear();
  form.redraw();
  checkConfig();
}

async function choosePreset(file) {
  if (isActive()) return;
  try {
    const config = await loadPreset(file);
    state.presetFile = file;
    applyConfig(config);
    renderPresetPicker();
    showNote(`Loaded the preset "${state.presets.find((p) => p.file === file)?.title || file}". Press Train to run it.`);
  } catch (err) {
    showError(messageOf(err));
  }
}

// ---------------------------------------------------------------- runs

function freeResults() {
  if (state.results) {
    state.results.close();
    state.results = null;
  }
  state.curves = null;
  curvesPending = false;
}

async function startRun() {
  if (!state.check.ok || isActive() || !state.wasm || starting) return;
  const json = JSON.stringify(state.config);
  const info = state.check.info;
  starting = true;
  freeResults();
  const rc = new ResultsClient();
  state.results = rc;
  state.run = newRun(json, info);
  state.run.threshold = typeof state.config.threshold === 'number' ? state.config.threshold : null;
  state.summary = null;
  renderResults();
  try {
    await rc.open(json);
  } catch (err) {
    starting = false;
    state.run.status = 'cancelled';
    showError(`could not set up the results: ${messageOf(err)}`);
    renderCheck();
    return;
  }
  starting = false;
  launch(Array.from({ length: info.jobs }, (_, j) => j));
  persistRun(false);
}

/** Interrupted run (restored after a reload): train the jobs that had not finished. */
function resumeRun() {
  const run = state.run;
  if (!run || run.status !== 'interrupted' || !state.results || isActive()) return;
  const left = [];
  for (let j = 0; j < run.jobs; j++) if (run.jobStatus[j] === 0) left.push(j);
  if (!left.length) { run.status = 'done'; finishSummary(); return; }
  run.stepsAtStart = stepsCounted(run);
  run.activeMs = 0;
  state.summary = null;
  renderResults();
  launch(left);
}

/** Start workers on the given job ids of state.run. */
function launch(jobIds) {
  const run = state.run;
  run.status = 'running';
  run.summarised = false;
  run.resumedAt = performance.now();
  pool = new Pool({ onProgress, onError: onWorkerError, onPaused, onDone });
  run.workers = Pool.workerCount(jobIds.length);
  pool.start(run.configJson, jobIds, CHUNK_STEPS, { variants: run.labels.length, seeds: run.seeds });
  clearInterval(progressTimer);
  progressTimer = setInterval(renderProgress, 1000);
  renderProgress();
  renderCheck();
  scheduleDraw();
}

function onProgress({ progress, episodes, failures }) {
  const run = state.run;
  if (!run || !state.results) return;
  run.episodes += episodes.length / 5;
  for (let k = 0; k + 3 <= progress.length; k += 3) {
    const job = progress[k];
    if (run.jobStatus[job] === 0 && progress[k + 2] !== 0) run.newlyFinished = true;
    run.stepsDone[job] = progress[k + 1];
    run.jobStatus[job] = progress[k + 2];
  }
  for (const f of failures) {
    run.jobStatus[f.job] = 2;
    run.newlyFinished = true;
  }
  try {
    state.results.add(progress, episodes, failures);
  } catch (err) {
    showError(`recording results: ${messageOf(err)}`);
  }
  run.version += 1;
  scheduleProgress();
  // New data: ask for fresh curves (throttled); their arrival redraws.
  if (state.results) requestCurves(run);
  if (run.newlyFinished) scheduleCheckpoint();
}

let progressPending = 0;
/** Progress is shown at most four times a second (messages come far more often). */
function scheduleProgress() {
  if (progressPending) return;
  progressPending = setTimeout(() => { progressPending = 0; renderProgress(); }, 250);
}

function onWorkerError(message, jobIds) {
  const run = state.run;
  showError(`training jobs ${jobIds.join(', ')} stopped: ${message}`);
  if (!run || !state.results) return;
  for (const j of jobIds) {
    if (run.jobStatus[j] === 0) {
      run.jobStatus[j] = 2;
      try { state.results.fail(j, message); } catch (err) { showError(`recording a failure: ${messageOf(err)}`); }
    }
  }
  run.version += 1;
  renderProgress();
}

function onPaused() {
  if (state.run && state.run.status === 'paused') state.run.idle = true;
  renderButtons();
}

function stopClock(run) {
  if (run.resumedAt) { run.activeMs += performance.now() - run.resumedAt; run.resumedAt = 0; }
}

function onDone() {
  if (!state.run) return;
  stopClock(state.run);
  state.run.status = 'done';
  pool = null;
  finishSummary();
}

function togglePause() {
  if (!pool || !state.run) return;
  if (state.run.status === 'running') {
    state.run.status = 'paused';
    stopClock(state.run);
    pool.pause();
  } else if (state.run.status === 'paused') {
    state.run.status = 'running';
    state.run.idle = false;
    state.run.resumedAt = performance.now();
    pool.resume();
  }
  renderProgress();
  renderButtons();
}

function cancelRun() {
  if (!pool || !state.run) return;
  pool.cancel();
  pool = null;
  stopClock(state.run);
  state.run.status = 'cancelled';
  finishSummary();
}

/** The run is over (done or cancelled): summarise it in the results worker, then keep it. */
async function finishSummary() {
  clearInterval(progressTimer);
  const run = state.run;
  const rc = state.results;
  run.version += 1;
  renderProgress();
  renderCheck();
  scheduleDraw();
  try {
    const summary = await rc.summary();
    if (state.run !== run) return;
    state.summary = summary;
  } catch (err) {
    if (state.run !== run) return;
    state.summary = null;
    showError(`could not summarise the run: ${messageOf(err)}`);
  }
  run.summarised = true;
  renderResults();
  scheduleDraw();
  await persistRun(true);
}

function renderProgress() {
  const run = state.run;
  const pct = run ? Math.floor(runFraction(run) * 100) : 0;
  ui.progress.value = pct;
  let text = `${pct}%`;
  if (run && run.status === 'paused') text += ' (paused)';
  if (run && run.status === 'cancelled') text += ' (cancelled)';
  if (run && run.status === 'interrupted') text += ' (interrupted)';
  const failed = run ? run.jobStatus.reduce((n, st) => n + (st === 2 ? 1 : 0), 0) : 0;
  if (failed) text += ` · ${failed} job${failed === 1 ? '' : 's'} failed`;
  ui.percent.textContent = text;
  ui.eta.textContent = run && run.status === 'running' ? formatLeft(secondsLeft(run, performance.now())) : '';

  const show = !!run && run.status !== 'opened' && run.labels.length > 1;
  ui.variantProgress.hidden = !show;
  if (!show) return;
  const fr = variantFractions(run);
  if (ui.variantProgress.children.length !== fr.length || ui.variantProgress.dataset.run !== String(run.configJson.length)) {
    ui.variantProgress.dataset.run = String(run.configJson.length);
    ui.variantProgress.replaceChildren(...run.labels.map((label, i) => {
      const li = document.createElement('li');
      const lab = document.createElement('label');
      const name = document.createElement('span');
      name.textContent = label;
      const p = document.createElement('progress');
      p.max = 100;
      lab.append(name, p);
      li.style.setProperty('--series-colour', `var(--series-${(i % 6) + 1})`);
      li.append(lab);
      return li;
    }));
  }
  fr.forEach((f, i) => {
    const p = ui.variantProgress.children[i].querySelector('progress');
    p.value = Math.floor(f * 100);
  });
}

// ---------------------------------------------------------------- keeping results

let checkpointTimer = 0;
let lastWriteMs = 0;
/** A checkpoint soon after jobs finish; the larger the results, the rarer
 * (writing them to storage blocks this thread for as long as it takes). */
function scheduleCheckpoint() {
  if (checkpointTimer) return;
  const delay = Math.max(1500, lastWriteMs * 40);
  checkpointTimer = setTimeout(() => { checkpointTimer = 0; if (isActive()) persistRun(false); }, delay);
}

/**
 * Write the run to local storage. `final`: the run is over (done or
 * cancelled) and every job is written; otherwise only finished jobs, so a
 * reload restores them and offers to train the rest. The results worker
 * packs the records; this thread only stores the text.
 */
async function persistRun(final) {
  const run = state.run;
  const rc = state.results;
  if (!run || !rc || run.origin === 'file') return;
  run.newlyFinished = false;
  // The worker has every message sent before this request, so the jobs
  // finished now are the ones it packs.
  const finished = run.jobStatus.reduce((n, st) => n + (st !== 0 ? 1 : 0), 0);
  let data;
  try {
    data = await rc.pack(final);
  } catch (err) {
    if (state.results === rc) showError(`results could not be packed for keeping: ${messageOf(err)}`);
    return;
  }
  if (state.run !== run) return;
  const status = final ? run.status : 'running';
  const t0 = performance.now();
  const problem = await saveResults({ kind: 'jobs', status, configJson: run.configJson, data });
  lastWriteMs = performance.now() - t0;
  if (problem) showError(problem);
  debug.checkpoints.push({ status, jobs: final ? run.jobs : finished });
}

/** Rebuild a run from what storage kept. Returns true when it worked. */
async function restoreResults() {
  let rec;
  try {
    rec = await loadResults();
  } catch (err) {
    showError(`Results kept from the last visit could not be read: ${messageOf(err)}`);
    return false;
  }
  if (!rec) return false;
  if (rec.kind === 'file') return showResultsText(rec.text, rec.fileName || 'a results file', 'storage');
  let info;
  try {
    info = JSON.parse(state.wasm.validateConfig(rec.configJson));
  } catch (err) {
    showError(`Results kept from the last visit could not be restored: ${messageOf(err)}`);
    return false;
  }
  const rc = new ResultsClient();
  let answer;
  try {
    answer = await rc.restore(rec.configJson, rec.data);
  } catch (err) {
    rc.close();
    showError(`Results kept from the last visit could not be restored: ${messageOf(err)}`);
    return false;
  }
  freeResults();
  state.results = rc;
  const run = newRun(rec.configJson, info, 'storage');
  for (const j of answer.jobs) {
    run.stepsDone[j.id] = j.steps;
    run.jobStatus[j.id] = j.status;
  }
  run.status = ['done', 'cancelled'].includes(rec.status) ? rec.status : 'interrupted';
  const config = JSON.parse(rec.configJson);
  run.threshold = typeof config.threshold === 'number' ? config.threshold : null;
  state.run = run;
  try {
    state.summary = await rc.summary();
  } catch {
    state.summary = null;
  }
  run.summarised = true;
  renderResults();
  renderProgress();
  renderButtons();
  scheduleDraw();
  if (run.status === 'interrupted') {
    const done = run.jobStatus.reduce((n, st) => n + (st !== 0 ? 1 : 0), 0);
    showNote(`The last run was interrupted; its ${done} finished job${done === 1 ? ' is' : 's are'} shown. Finish it to train the other ${run.jobs - done}.`, 15000);
  }
  return true;
}

// ---------------------------------------------------------------- results

function headRow(tr, columns) {
  if (tr.children.length) return;
  tr.replaceChildren(...columns.map((c, i) => {
    const th = document.createElement('th');
    th.scope = 'col';
    th.textContent = c;
    if (i > 0 && i < columns.length - 1) th.className = 'num';
    return th;
  }));
}

function swatch(i) {
  const sw = document.createElement('canvas');
  sw.className = 'swatch';
  const dpr = window.devicePixelRatio || 1;
  sizeCanvas(sw, 30, 12, dpr);
  const sctx = sw.getContext('2d');
  sctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  drawSample(sctx, 0, 6, 30, seriesStyle(i, readPalette()));
  sw.setAttribute('aria-hidden', 'true');
  return sw;
}

function renderResults() {
  headRow(ui.scoresHead, SCORE_COLUMNS);
  headRow(ui.comparisonsHead, COMPARISON_COLUMNS);
  headRow(ui.advisorHead, ADVISOR_COLUMNS);
  const s = state.summary;
  const run = state.run;
  const emptyText = isActive() ? 'Training… filled in when the run finishes.' : 'Filled in when a run finishes.';
  renderScores(ui.scoresBody, s, { swatch, emptyText });
  renderComparisons(ui.comparisonsBody, s, { emptyText });
  renderAdvisor(ui.advisorBody, s, { emptyText });
  let note = '';
  if (s) {
    const frac = typeof s.final_fraction === 'number' ? s.final_fraction : null;
    note = frac ? `(final return: mean base return over the last ${Math.round(frac * 100)}% of each seed's steps, then over seeds)` : '';
    if (run && run.status === 'cancelled') note += ' — run cancelled, partial data';
    if (run && run.status === 'interrupted') note += ' — finished jobs only; the run was interrupted';
    if (run && run.origin === 'file') note += ` — opened from ${run.fileName}`;
  }
  ui.scoresNote.textContent = note;
  renderButtons();
  inspector.refresh();
  variance.refresh();
}

function exportBase() {
  return fileStem(state.run?.title || state.config?.title);
}

async function saveResultsFile() {
  if (!state.results) return;
  try {
    download(`${exportBase()}-results.json`, await state.results.saveJson(), 'application/json');
  } catch (err) {
    showError(`could not write the results file: ${messageOf(err)}`);
  }
}

async function exportCsv() {
  if (!state.results) return;
  try {
    download(`${exportBase()}.csv`, await state.results.tidyCsv(), 'text/csv');
  } catch (err) {
    showError(`could not write the CSV: ${messageOf(err)}`);
  }
}

async function savePng(canvas, name) {
  try {
    download(`${exportBase()}-${name}.png`, await canvasPng(canvas));
  } catch (err) {
    showError(messageOf(err));
  }
}

/** Open a results file: rebuild the results without re-running. */
async function openResultsFile(file) {
  if (!state.wasm) { showError('The WebAssembly module is not loaded, so results files cannot be read.'); return; }
  if (isActive()) { showError('A run is in progress; cancel it before opening a results file.'); return; }
  let text;
  try {
    text = await readFileText(file);
  } catch (err) {
    showError(messageOf(err));
    return;
  }
  await showResultsText(text, file.name, 'file');
}

/** Show saved results (results file format); resolves true when it worked. */
async function showResultsText(text, fileName, origin) {
  const rc = new ResultsClient();
  let configJson;
  let info;
  let summary = null;
  try {
    ({ configJson } = await rc.openSaved(text));
    info = JSON.parse(state.wasm.validateConfig(configJson));
    summary = await rc.summary();
  } catch (err) {
    rc.close();
    showError(`${fileName} could not be opened: ${messageOf(err)}`);
    return false;
  }
  freeResults();
  state.results = rc;
  const config = JSON.parse(configJson);
  const run = newRun(configJson, info, 'file');
  run.status = 'opened';
  run.fileName = fileName;
  run.summarised = true;
  run.threshold = typeof config.threshold === 'number' ? config.threshold : null;
  run.jobStatus.fill(1);
  run.stepsDone.fill(run.steps);
  state.run = run;
  state.summary = summary;
  // The form shows the experiment that produced the results.
  state.presetFile = '';
  renderPresetPicker();
  applyConfig(config);
  renderResults();
  renderProgress();
  scheduleDraw();
  if (origin === 'file') {
    showNote(`Opened ${fileName}: ${info.labels.length} variants × ${info.seeds} seeds, not re-run.`);
    const problem = await saveResults({ kind: 'file', status: 'opened', configJson, fileName, text });
    if (problem) showError(problem);
  }
  return true;
}

// ---------------------------------------------------------------- drawing

function cssVar(name) {
  return getComputedStyle(document.documentElement).getPropertyValue(name).trim();
}

function chartColours() {
  return { background: cssVar('--chart-bg'), ink: cssVar('--chart-ink'), muted: cssVar('--chart-muted'), grid: cssVar('--chart-grid') };
}

function readPalette() {
  const out = [];
  for (let i = 1; i <= 6; i++) { const c = cssVar(`--series-${i}`); if (c) out.push(c); }
  return out;
}

function scheduleDraw() {
  if (drawPending) return;
  drawPending = true;
  requestAnimationFrame(() => { drawPending = false; draw(); });
}

/**
 * Ask the results worker for fresh curves when the shown ones are out of
 * date (one request at a time); the answer triggers a redraw.
 */
function requestCurves(run) {
  const key = `${run.version}/${state.view.stat}/${state.view.seedLines}`;
  if (curvesPending || (state.curves && state.curves.key === key && state.curves.run === run)) return;
  // While training, fresh curves at most about three times a second.
  const wait = CURVE_INTERVAL_MS - (performance.now() - lastCurveRequest);
  const sameView = state.curves && state.curves.run === run && state.curves.key.endsWith(`/${state.view.stat}/${state.view.seedLines}`);
  if (isActive() && sameView && wait > 0) {
    if (!curveTimer) curveTimer = setTimeout(() => { curveTimer = 0; if (state.run === run) requestCurves(run); }, wait);
    return;
  }
  lastCurveRequest = performance.now();
  const rc = state.results;
  const { stat, seedLines } = state.view;
  curvesPending = true;
  rc.curves(stat, seedLines).then((c) => {
    curvesPending = false;
    if (state.results !== rc || state.run !== run) return;
    state.curves = { key, run, stat, seedLines, curves: c.curves, robust: c.robust, seeds: c.seeds };
    scheduleDraw();
    // The view may have changed while the worker was busy.
    if (state.view.stat !== stat || state.view.seedLines !== seedLines) requestCurves(run);
  }, (err) => {
    curvesPending = false;
    if (state.results === rc) reportDrawError(err);
  });
}

function draw() {
  const box = ui.canvasBox;
  const width = Math.floor(box.clientWidth);
  const height = Math.floor(box.clientHeight);
  if (width < 10 || height < 10) return;
  const dpr = window.devicePixelRatio || 1;
  sizeCanvas(ui.canvas, width, height, dpr);
  const ctx = ui.canvas.getContext('2d');

  const run = state.run;
  const stat = state.view.stat;
  let drawStat = stat;
  let variants;
  let xMax;
  let note = '';
  let threshold = null;
  if (run && state.results) {
    requestCurves(run);
    const c = state.curves && state.curves.run === run ? state.curves : null;
    variants = run.labels.map((label, v) => ({
      label,
      curve: c ? c.curves[v] : new Float64Array(0),
      robust: c && c.robust ? c.robust[v] : undefined,
      seeds: c && c.seeds && state.view.seedLines ? c.seeds[v] : undefined,
    }));
    // Until the worker answers for a new statistic, draw what it has.
    if (!c || c.stat !== stat) drawStat = c ? c.stat : 'mean';
    xMax = run.steps;
    threshold = run.threshold;
    note = run.status === 'running' ? 'Waiting for the first finished episodes…' : 'No finished episodes to show.';
    const where = run.origin === 'file' ? ` — opened from ${run.fileName}` : ` — ${statusWord(run)}`;
    ui.plotTitle.textContent = `${run.title || 'Untitled experiment'}${where}`;
  } else {
    const cfg = state.config || {};
    const labels = state.check.ok ? state.check.info.labels : (cfg.variants || []).map((v, i) => String(v.label ?? `variant ${i + 1}`));
    variants = labels.map((label) => ({ label, curve: new Float64Array(0) }));
    xMax = typeof cfg.steps === 'number' && cfg.steps > 0 ? cfg.steps : 1;
    note = state.wasm ? 'Press Train to see learning curves.' : 'Training needs the WebAssembly module.';
    ui.plotTitle.textContent = state.config ? `${cfg.title || 'Untitled experiment'} — not trained yet` : 'No run yet';
  }
  const layout = drawCurves(ctx, { variants, xMax, note, threshold }, {
    width,
    height,
    dpr,
    stat: drawStat,
    seedLines: state.view.seedLines,
    colours: chartColours(),
    palette: readPalette(),
    font: getComputedStyle(document.body).fontFamily,
  });
  const statWord = { mean: 'mean with 95% band', iqm: 'interquartile mean', median: 'median', shaped: 'mean shaped return' }[drawStat];
  ui.canvas.setAttribute('aria-label', `Learning curves (${statWord} over seeds) of ${variants.map((v) => v.label).join(', ') || 'no variants'}: return against environment steps`);
  debug.draws += 1;
  debug.lastDraw = { ...layout, dpr, width, height };
}

let drawErrorShown = false;
function reportDrawError(err) {
  if (drawErrorShown) return;
  drawErrorShown = true;
  showError(`reading a curve: ${messageOf(err)}`);
}

function statusWord(run) {
  switch (run.status) {
    case 'running': return 'training';
    case 'paused': return 'paused';
    case 'cancelled': return 'cancelled';
    case 'interrupted': return 'interrupted';
    case 'opened': return 'opened';
    default: return 'finished';
  }
}

// ---------------------------------------------------------------- share links

async function copyLink() {
  if (!state.config) return;
  let link;
  try {
    link = linkFor(await encodeConfig(state.config));
  } catch (err) {
    showError(`could not make a link: ${messageOf(err)}`);
    return;
  }
  ui.shareUrl.value = link;
  ui.shareOut.hidden = false;
  let copied = false;
  try {
    await navigator.clipboard.writeText(link);
    copied = true;
  } catch {
    ui.shareUrl.focus();
    ui.shareUrl.select();
    try { copied = document.execCommand('copy'); } catch { copied = false; }
  }
  const kb = (link.length / 1024).toFixed(1);
  let text = copied ? `Link copied (${kb} KB). It holds the whole experiment; opening it reproduces the same numbers.`
    : 'The browser did not allow copying: select the link in the field and copy it.';
  if (!state.check.ok) text += ` Note: this experiment has a problem (${state.check.message}).`;
  showNote(text, 10000);
}

/**
 * Open the experiment in the address's fragment, if any. Returns 'none' (no
 * link), 'opened', or 'refused' (a message says why; the caller shows a safe
 * default). The fragment is removed from the address either way, so a reload
 * shows the kept experiment (with any edits) instead of the link again.
 */
async function openLinkFromAddress() {
  const hash = location.hash;
  if (!hash || hash === '#') return 'none';
  const got = await decodeFragment(hash);
  history.replaceState(null, '', location.href.replace(/#.*$/s, ''));
  if (!got) return 'none';
  let problem = got.ok ? '' : got.message;
  if (!problem && state.wasm) {
    try {
      state.wasm.validateConfig(got.text);
    } catch (err) {
      problem = `its experiment does not pass the checks: ${messageOf(err)}`;
    }
  } else if (!problem) {
    problem = 'the WebAssembly module is not loaded, so the experiment cannot be checked';
  }
  if (problem) {
    showError(`This link could not be opened: ${problem}. The page shows a default experiment instead.`);
    return 'refused';
  }
  state.presetFile = '';
  renderPresetPicker();
  applyConfig(got.config);
  showNote('Opened the experiment from the link. Press Train to reproduce its numbers.', 10000);
  return 'opened';
}

async function onHashChange() {
  if (!location.hash || location.hash === '#') return;
  if (isActive()) {
    showError('A link was opened while a run is in progress; cancel the run, then open the link again.');
    return;
  }
  if (await openLinkFromAddress() === 'refused') await applyDefault();
}

// ---------------------------------------------------------------- tabs

function selectTab(tab, focus = false) {
  for (const t of ui.tabs) {
    const on = t === tab;
    t.setAttribute('aria-selected', String(on));
    t.tabIndex = on ? 0 : -1;
    $(t.getAttribute('aria-controls')).hidden = !on;
  }
  state.view.tab = tab.id.replace(/^tab-/, '');
  if (focus) tab.focus();
  scheduleDraw();
  if (state.view.tab === 'inspect') { inspector.refresh(); requestAnimationFrame(() => inspector.draw()); }
  if (state.view.tab === 'variance') { variance.refresh(); requestAnimationFrame(() => variance.draw()); }
}

function bindTabs() {
  ui.tabs.forEach((t, i) => {
    t.addEventListener('click', () => selectTab(t));
    t.addEventListener('keydown', (e) => {
      let k = -1;
      if (e.key === 'ArrowRight') k = (i + 1) % ui.tabs.length;
      else if (e.key === 'ArrowLeft') k = (i - 1 + ui.tabs.length) % ui.tabs.length;
      else if (e.key === 'Home') k = 0;
      else if (e.key === 'End') k = ui.tabs.length - 1;
      if (k >= 0) { e.preventDefault(); selectTab(ui.tabs[k], true); }
    });
  });
}

// ---------------------------------------------------------------- events

function bind() {
  ui.train.addEventListener('click', startRun);
  ui.pause.addEventListener('click', togglePause);
  ui.cancel.addEventListener('click', cancelRun);
  for (const r of document.querySelectorAll('input[name="curve-stat"]')) {
    r.addEventListener('change', () => { if (r.checked) { state.view.stat = r.value; scheduleDraw(); } });
  }
  ui.seedLines.addEventListener('change', () => { state.view.seedLines = ui.seedLines.checked; scheduleDraw(); });
  ui.pngCurves.addEventListener('click', () => savePng(ui.canvas, 'curves'));
  ui.saveResults.addEventListener('click', saveResultsFile);
  ui.exportCsv.addEventListener('click', exportCsv);
  ui.copyLink.addEventListener('click', copyLink);
  ui.shareUrl.addEventListener('focus', () => ui.shareUrl.select());
  ui.resume.addEventListener('click', resumeRun);
  window.addEventListener('hashchange', onHashChange);
  ui.openFile.addEventListener('change', () => {
    const f = ui.openFile.files && ui.openFile.files[0];
    ui.openFile.value = '';
    if (f) openResultsFile(f);
  });
  bindTabs();
  new ResizeObserver(scheduleDraw).observe(ui.canvasBox);
  window.matchMedia('(prefers-color-scheme: dark)').addEventListener('change', () => {
    scheduleDraw();
    inspector.draw();
    variance.draw();
    if (state.summary) renderResults();
  });
}

/** The first preset (the rover's when there is one), or the built-in fallback. */
async function applyDefault() {
  let first = null;
  const rover = state.presets.find((p) => /rover/i.test(p.file));
  const pick = rover || state.presets[0];
  if (pick) {
    try {
      first = await loadPreset(pick.file);
      state.presetFile = pick.file;
    } catch (err) {
      showError(`The preset ${pick.file} could not be read (${messageOf(err)}); starting from a built-in example.`);
    }
  }
  if (!first) state.presetFile = '';
  renderPresetPicker();
  applyConfig(first || JSON.parse(JSON.stringify(FALLBACK_CONFIG)));
}

async function main() {
  bind();
  renderButtons();
  renderResults();
  scheduleDraw();

  const wasmLoad = loadWasm().then((w) => { state.wasm = w; }, (err) => {
    showError(`The WebAssembly module did not load: ${messageOf(err)}`);
  });
  try {
    state.presets = await loadPresetIndex();
  } catch (err) {
    showError(`Presets could not be read (${messageOf(err)}); starting from a built-in example.`);
  }
  renderPresetPicker();
  await wasmLoad;

  // What to show first: a link in the address, else the experiment kept
  // from the last visit, else the default preset.
  const link = await openLinkFromAddress();
  let kept = null;
  if (link === 'none') {
    try {
      kept = loadExperiment();
    } catch (err) {
      showError(`The experiment kept from the last visit could not be read (${messageOf(err)}); starting from a preset.`);
    }
  }
  if (kept) {
    state.presetFile = state.presets.some((p) => p.file === kept.presetFile) ? kept.presetFile : '';
    renderPresetPicker();
    applyConfig(kept.config);
  } else if (link !== 'opened') {
    await applyDefault();
  }
  if (state.wasm && link === 'none') await restoreResults();
  debug.ready = true;
}

main();
