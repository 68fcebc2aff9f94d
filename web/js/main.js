// Wires the page: loads the wasm module and the presets, keeps the form and
// the config in step (validating on every edit), starts runs on a worker
// pool, feeds every episode record into one Results handle on this thread and
// redraws the curves at most once per animation frame.

import { loadWasm, messageOf } from './wasm.js';
import { Pool } from './pool.js';
import { createState, newRun, runFraction, addMessage, dismissMessage } from './state.js';
import { drawCurves, drawSample, sizeCanvas, seriesStyle } from './chart.js';
import {
  findControls, writeForm, readForm, refreshForm, renderVariants, newVariant,
  pathOfMessage, controlForPath, DEFAULT_GRID_TASK,
} from './controls.js';

/** Steps each job advances per chunk in a worker. */
const CHUNK_STEPS = 2000;

/** Used only when presets/index.json cannot be read, so the page still works. */
const FALLBACK_CONFIG = {
  schema: 1,
  title: 'Rover to dock (built-in fallback)',
  task: DEFAULT_GRID_TASK,
  base: { algo: 'a2c', discount: 0.99, actor_step: 0.1, critic_step: 0.2, features: { kind: 'tabular' } },
  variants: [{ label: 'A2C' }, { label: 'QAC', learner: { algo: 'qac' } }],
  seeds: 5,
  steps: 10000,
  master_seed: 1,
  curve_points: 40,
  final_fraction: 0.1,
};

const state = createState();
const els = findControls(document);
const ui = {
  train: document.getElementById('train'),
  pause: document.getElementById('pause'),
  cancel: document.getElementById('cancel'),
  progress: document.getElementById('progress'),
  percent: document.getElementById('percent'),
  reason: document.getElementById('run-reason'),
  messages: document.getElementById('messages'),
  canvas: document.getElementById('curves'),
  canvasBox: document.getElementById('canvas-box'),
  plotTitle: document.getElementById('plot-title'),
  summaryBody: document.getElementById('summary-body'),
  summaryNote: document.getElementById('summary-note'),
};
let pool = null;
let drawPending = false;

// For tests and for curious people in the console: read-only by convention.
const debug = { state, ready: false, draws: 0, lastDraw: null };
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
    b.addEventListener('click', () => { dismissMessage(state, m.id); renderMessages(); });
    div.append(p, b);
    return div;
  });
  ui.messages.replaceChildren(...nodes);
}

window.addEventListener('error', (e) => showError(`page error: ${e.message}`));
window.addEventListener('unhandledrejection', (e) => showError(`page error: ${messageOf(e.reason)}`));

// ---------------------------------------------------------------- validation

function isActive() {
  return !!state.run && (state.run.status === 'running' || state.run.status === 'paused');
}

/** Read the form into state.config and check it. */
function revalidate() {
  if (!state.config) return;
  refreshForm(els);
  const { config, error } = readForm(els, state.config);
  state.config = config;
  if (error) {
    state.check = { ok: false, message: error.message, path: error.path };
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
  els.preset.disabled = active;
}

// ---------------------------------------------------------------- presets

async function loadPresetIndex() {
  const res = await fetch('presets/index.json');
  if (!res.ok) throw new Error(`presets/index.json: HTTP ${res.status}`);
  const list = await res.json();
  if (!Array.isArray(list)) throw new Error('presets/index.json: expected a list of {file, title}');
  return list.filter((p) => p && typeof p.file === 'string' && /^[\w.-]+\.json$/.test(p.file));
}

async function loadPreset(file) {
  const res = await fetch(`presets/${file}`);
  if (!res.ok) throw new Error(`presets/${file}: HTTP ${res.status}`);
  const text = await res.text();
  try {
    return JSON.parse(text);
  } catch (err) {
    throw new Error(`presets/${file}: not valid JSON (${messageOf(err)})`);
  }
}

function renderPresetPicker() {
  const opts = state.presets.map((p) => {
    const o = document.createElement('option');
    o.value = p.file;
    o.textContent = typeof p.title === 'string' && p.title ? p.title : p.file;
    return o;
  });
  if (!opts.length) {
    const o = document.createElement('option');
    o.value = '';
    o.textContent = '(no presets found)';
    opts.push(o);
  }
  els.preset.replaceChildren(...opts);
  els.preset.value = state.presetFile;
}

function applyConfig(config) {
  state.config = config;
  writeForm(els, config);
  revalidate();
}

async function choosePreset(file) {
  try {
    const config = await loadPreset(file);
    state.presetFile = file;
    applyConfig(config);
  } catch (err) {
    showError(messageOf(err));
    els.preset.value = state.presetFile;
  }
}

// ---------------------------------------------------------------- runs

function startRun() {
  if (!state.check.ok || isActive() || !state.wasm) return;
  const json = JSON.stringify(state.config);
  const info = state.check.info;
  if (state.results) { try { state.results.free(); } catch { /* already freed */ } state.results = null; }
  try {
    state.results = new state.wasm.Results(json);
  } catch (err) {
    showError(`could not set up the results: ${messageOf(err)}`);
    return;
  }
  state.run = newRun(json, info);
  state.summary = null;
  renderSummary();
  pool = new Pool({ onProgress, onError: onWorkerError, onPaused, onDone });
  pool.start(json, info.jobs, CHUNK_STEPS);
  state.run.workers = Pool.workerCount(info.jobs);
  renderProgress();
  renderCheck();
  scheduleDraw();
}

function onProgress({ progress, episodes, failures }) {
  const run = state.run;
  if (!run || !state.results) return;
  try {
    if (episodes.length) {
      state.results.addEpisodes(episodes);
      run.episodes += episodes.length / 5;
    }
    for (let k = 0; k + 3 <= progress.length; k += 3) {
      const job = progress[k];
      run.stepsDone[job] = progress[k + 1];
      run.jobStatus[job] = progress[k + 2];
      state.results.setSteps(job, progress[k + 1]);
    }
    for (const f of failures) {
      run.jobStatus[f.job] = 2;
      state.results.markFailed(f.job, String(f.reason));
    }
  } catch (err) {
    showError(`recording results: ${messageOf(err)}`);
  }
  renderProgress();
  scheduleDraw();
}

function onWorkerError(message, jobIds) {
  const run = state.run;
  showError(`training jobs ${jobIds.join(', ')} stopped: ${message}`);
  if (!run || !state.results) return;
  for (const j of jobIds) {
    if (run.jobStatus[j] === 0) {
      run.jobStatus[j] = 2;
      try { state.results.markFailed(j, message); } catch (err) { showError(`recording a failure: ${messageOf(err)}`); }
    }
  }
  renderProgress();
}

function onPaused() {
  if (state.run && state.run.status === 'paused') state.run.idle = true;
  renderButtons();
}

function onDone() {
  if (!state.run) return;
  state.run.status = 'done';
  pool = null;
  finishSummary();
}

function togglePause() {
  if (!pool || !state.run) return;
  if (state.run.status === 'running') {
    state.run.status = 'paused';
    pool.pause();
  } else if (state.run.status === 'paused') {
    state.run.status = 'running';
    state.run.idle = false;
    pool.resume();
  }
  renderProgress();
  renderButtons();
}

function cancelRun() {
  if (!pool || !state.run) return;
  pool.cancel();
  pool = null;
  state.run.status = 'cancelled';
  finishSummary();
}

function finishSummary() {
  try {
    state.summary = JSON.parse(state.results.summaryJson());
  } catch (err) {
    state.summary = null;
    showError(`could not summarise the run: ${messageOf(err)}`);
  }
  renderSummary();
  renderProgress();
  renderCheck();
  scheduleDraw();
}

function renderProgress() {
  const run = state.run;
  const pct = run ? Math.floor(runFraction(run) * 100) : 0;
  ui.progress.value = pct;
  let text = `${pct}%`;
  if (run && run.status === 'paused') text += ' (paused)';
  if (run && run.status === 'cancelled') text += ' (cancelled)';
  const failed = run ? run.jobStatus.reduce((n, st) => n + (st === 2 ? 1 : 0), 0) : 0;
  if (failed) text += ` · ${failed} job${failed === 1 ? '' : 's'} failed`;
  ui.percent.textContent = text;
}

// ---------------------------------------------------------------- summary

function fmt(x) {
  if (typeof x !== 'number' || !Number.isFinite(x)) return '–';
  const a = Math.abs(x);
  return a >= 1000 ? x.toFixed(0) : a >= 100 ? x.toFixed(1) : x.toFixed(2);
}

function renderSummary() {
  const s = state.summary;
  const run = state.run;
  if (!s) {
    const tr = document.createElement('tr');
    tr.className = 'empty';
    const td = document.createElement('td');
    td.colSpan = 6;
    td.textContent = isActive() ? 'Training… the table is filled in when the run finishes.' : 'Filled in when a run finishes.';
    tr.append(td);
    ui.summaryBody.replaceChildren(tr);
    ui.summaryNote.textContent = '';
    return;
  }
  const palette = readPalette();
  const rows = (s.variants || []).map((v, i) => {
    const tr = document.createElement('tr');
    const name = document.createElement('td');
    const sw = document.createElement('canvas');
    sw.className = 'swatch';
    const dpr = window.devicePixelRatio || 1;
    sizeCanvas(sw, 30, 12, dpr);
    const sctx = sw.getContext('2d');
    sctx.setTransform(dpr, 0, 0, dpr, 0, 0);
    drawSample(sctx, 0, 6, 30, seriesStyle(i, palette));
    sw.setAttribute('aria-hidden', 'true');
    const label = document.createElement('span');
    label.textContent = String(v.label ?? `variant ${i + 1}`);
    name.append(sw, label);

    const fr = v.final_return || {};
    const ci = Array.isArray(fr.ci95) ? fr.ci95 : [];
    const failed = Array.isArray(v.failed) ? v.failed : [];
    const cells = [
      numCell(fmt(fr.mean)),
      numCell(ci.length === 2 ? `${fmt(ci[0])} to ${fmt(ci[1])}` : '–'),
      numCell(`${fr.n ?? 0} of ${s.seeds ?? '?'}`),
      numCell(String(v.episodes ?? 0)),
    ];
    const fail = document.createElement('td');
    if (failed.length) {
      fail.className = 'fail';
      fail.textContent = failed.map((f) => `seed ${f.seed}: ${f.reason}`).join('; ');
    } else {
      fail.textContent = 'none';
    }
    tr.append(name, ...cells, fail);
    return tr;
  });
  ui.summaryBody.replaceChildren(...rows);
  const frac = typeof state.config?.final_fraction === 'number' ? state.config.final_fraction : null;
  let note = frac ? `(mean over the last ${Math.round(frac * 100)}% of steps per seed` : '(per seed';
  note += ', then over seeds)';
  if (run && run.status === 'cancelled') note += ' — run cancelled, partial data';
  ui.summaryNote.textContent = note;
}

function numCell(text) {
  const td = document.createElement('td');
  td.className = 'num';
  td.textContent = text;
  return td;
}

// ---------------------------------------------------------------- drawing

function cssVar(name) {
  return getComputedStyle(document.documentElement).getPropertyValue(name).trim();
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

function draw() {
  const box = ui.canvasBox;
  const width = Math.floor(box.clientWidth);
  const height = Math.floor(box.clientHeight);
  if (width < 10 || height < 10) return;
  const dpr = window.devicePixelRatio || 1;
  sizeCanvas(ui.canvas, width, height, dpr);
  const ctx = ui.canvas.getContext('2d');

  const run = state.run;
  let variants;
  let xMax;
  let note = '';
  if (run && state.results) {
    variants = run.labels.map((label, v) => {
      let curve;
      try { curve = state.results.curve(v); } catch (err) { curve = new Float64Array(0); reportDrawError(err); }
      return { label, curve };
    });
    xMax = run.steps;
    note = run.status === 'running' ? 'Waiting for the first finished episodes…' : 'No finished episodes to show.';
    ui.plotTitle.textContent = `${run.title || 'Untitled experiment'} — ${statusWord(run)}`;
  } else {
    const cfg = state.config || {};
    const labels = state.check.ok ? state.check.info.labels : (cfg.variants || []).map((v, i) => String(v.label ?? `variant ${i + 1}`));
    variants = labels.map((label) => ({ label, curve: new Float64Array(0) }));
    xMax = typeof cfg.steps === 'number' && cfg.steps > 0 ? cfg.steps : 1;
    note = state.wasm ? 'Press Train to see learning curves.' : 'Training needs the WebAssembly module.';
    ui.plotTitle.textContent = state.config ? `${cfg.title || 'Untitled experiment'} — not trained yet` : 'No run yet';
  }
  const layout = drawCurves(ctx, { variants, xMax, note }, {
    width,
    height,
    dpr,
    colours: { background: cssVar('--chart-bg'), ink: cssVar('--chart-ink'), muted: cssVar('--chart-muted'), grid: cssVar('--chart-grid') },
    palette: readPalette(),
    font: getComputedStyle(document.body).fontFamily,
  });
  ui.canvas.setAttribute('aria-label', `Learning curves of ${variants.map((v) => v.label).join(', ') || 'no variants'}: return against environment steps`);
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
    default: return 'finished';
  }
}

// ---------------------------------------------------------------- events

function bind() {
  els.form.addEventListener('input', (e) => {
    if (e.target === els.preset) return;
    revalidate();
  });
  els.form.addEventListener('change', (e) => {
    if (e.target === els.preset) return;
    revalidate();
  });
  els.form.addEventListener('submit', (e) => e.preventDefault());
  els.preset.addEventListener('change', () => { if (els.preset.value) choosePreset(els.preset.value); });
  els.addVariant.addEventListener('click', () => {
    if (!state.config) return;
    revalidate();
    state.config.variants = [...(state.config.variants || []), newVariant(state.config)];
    renderVariants(els, state.config);
    revalidate();
    els.variants.lastElementChild?.querySelector('input')?.focus();
  });
  els.variants.addEventListener('click', (e) => {
    const b = e.target.closest('button[data-remove]');
    if (!b || !state.config) return;
    revalidate();
    const i = Number(b.dataset.remove);
    state.config.variants = state.config.variants.filter((_, k) => k !== i);
    renderVariants(els, state.config);
    revalidate();
  });
  ui.train.addEventListener('click', startRun);
  ui.pause.addEventListener('click', togglePause);
  ui.cancel.addEventListener('click', cancelRun);
  new ResizeObserver(scheduleDraw).observe(ui.canvasBox);
  window.matchMedia('(prefers-color-scheme: dark)').addEventListener('change', () => {
    scheduleDraw();
    if (state.summary) renderSummary();
  });
}

async function main() {
  bind();
  renderButtons();
  scheduleDraw();

  const wasmLoad = loadWasm().then((w) => { state.wasm = w; }, (err) => {
    showError(`The WebAssembly module did not load: ${messageOf(err)}`);
  });

  let first = null;
  try {
    state.presets = await loadPresetIndex();
    const rover = state.presets.find((p) => /rover/i.test(p.file));
    const pick = rover || state.presets[0];
    if (pick) {
      first = await loadPreset(pick.file);
      state.presetFile = pick.file;
    }
  } catch (err) {
    showError(`Presets could not be read (${messageOf(err)}); starting from a built-in example.`);
  }
  renderPresetPicker();
  await wasmLoad;
  applyConfig(first || JSON.parse(JSON.stringify(FALLBACK_CONFIG)));
  debug.ready = true;
}

main();
