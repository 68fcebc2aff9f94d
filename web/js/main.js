// The page's entry point: it makes the app state, the run controller, the
// experiment (form, presets, links) and every view, and wires them
// together: a change reported by the controller or the experiment is passed
// to the views that show it. Then it boots: loads the wasm module and the
// presets, opens a share link or the experiment kept from the last visit (or
// a preset), and restores the results the browser kept. It holds no state of
// its own beyond the wiring.

import { loadWasm, messageOf } from './wasm.js';
import { createState } from './state.js';
import { createRunController } from './runcontrol.js';
import { createExperiment } from './experiment.js';
import { createMessages } from './messages.js';
import { createRunBar } from './runbar.js';
import { createCurvesView } from './curvesview.js';
import { createTablesView } from './tables.js';
import { createDiagnosticsView } from './diagnosticsview.js';
import { createFileBar } from './filebar.js';
import { createInspectView } from './inspectview.js';
import { createSensitivityView } from './sensitivityview.js';
import { createVarianceView } from './varianceview.js';
import { seriesColours } from './palette.js';
import { useCoreSettings } from './settings.js';

const state = createState();
const $ = (id) => document.getElementById(id);
const darkScheme = window.matchMedia('(prefers-color-scheme: dark)');
const cssVar = (name) => getComputedStyle(document.documentElement).getPropertyValue(name).trim();

// For tests and for curious people in the console: read-only by convention.
const debug = { state, ready: false, draws: 0, lastDraw: null, checkpoints: [] };
window.__critbox = debug;

const messages = createMessages(state, { messages: $('messages'), notes: $('notes') });

/** What every view may use: the state, messages, the theme's colours. */
const app = {
  state,
  debug,
  showError: messages.showError,
  showNote: messages.showNote,
  colours: () => ({ background: cssVar('--chart-bg'), ink: cssVar('--chart-ink'), muted: cssVar('--chart-muted'), grid: cssVar('--chart-grid') }),
  palette: () => seriesColours(darkScheme.matches),
  font: () => getComputedStyle(document.body).fontFamily,
  accent: () => cssVar('--accent'),
  isBusy: () => app.controller.isActive(),
  changed,
  checked,
  train,
  onBusyChange: () => app.experiment.form.renderPresets(),
};

window.addEventListener('error', (e) => app.showError(`page error: ${e.message}`));
window.addEventListener('unhandledrejection', (e) => app.showError(`page error: ${messageOf(e.reason)}`));

app.controller = createRunController(app);
debug.checkpoints = app.controller.checkpoints;
app.experiment = createExperiment(app);
const runBar = createRunBar(app);
const curves = createCurvesView(app);
const tables = createTablesView(app);
const diagnostics = createDiagnosticsView(app);
const fileBar = createFileBar(app);
const inspector = createInspectView(app);
const variance = createVarianceView(app);
const sensitivity = createSensitivityView(app);
debug.inspected = () => inspector.debug();
debug.variance = () => variance.debug();
debug.sensitivity = () => sensitivity.debug();

/** The run controller says what changed: 'run' (its state), 'progress' (the job table), 'results' (the summary). */
function changed(what) {
  if (what === 'progress') {
    runBar.renderProgress();
    curves.schedule();
    return;
  }
  runBar.render();
  fileBar.render();
  curves.schedule();
  if (what === 'results' || what === 'run') {
    tables.render();
    diagnostics.render();
    inspector.refresh();
    variance.refresh();
    sensitivity.render();
  }
}

/** The experiment was validated again (after an edit or a new config). */
function checked() {
  runBar.render();
  diagnostics.renderExpect();
  curves.schedule();
}

function train() {
  if (!state.check.ok || app.controller.isActive() || !state.wasm) return;
  app.controller.train(JSON.stringify(state.config), state.check.info);
}

/** The series colours of the current scheme as CSS variables (variant cards, progress bars). */
function applyPalette() {
  app.palette().forEach((c, i) => document.documentElement.style.setProperty(`--series-${i + 1}`, c));
}

// ---------------------------------------------------------------- tabs

const tabs = [...document.querySelectorAll('[role="tab"]')];

function selectTab(tab, focus = false) {
  for (const t of tabs) {
    const on = t === tab;
    t.setAttribute('aria-selected', String(on));
    t.tabIndex = on ? 0 : -1;
    $(t.getAttribute('aria-controls')).hidden = !on;
  }
  state.view.tab = tab.id.replace(/^tab-/, '');
  if (focus) tab.focus();
  curves.schedule();
  if (state.view.tab === 'inspect') { inspector.refresh(); requestAnimationFrame(() => inspector.draw()); }
  if (state.view.tab === 'variance') { variance.refresh(); requestAnimationFrame(() => variance.draw()); }
  if (state.view.tab === 'study') requestAnimationFrame(() => sensitivity.draw());
}

tabs.forEach((t, i) => {
  t.addEventListener('click', () => selectTab(t));
  t.addEventListener('keydown', (e) => {
    const k = { ArrowRight: (i + 1) % tabs.length, ArrowLeft: (i - 1 + tabs.length) % tabs.length, Home: 0, End: tabs.length - 1 }[e.key];
    if (k !== undefined) { e.preventDefault(); selectTab(tabs[k], true); }
  });
});

darkScheme.addEventListener('change', () => {
  applyPalette();
  curves.schedule();
  inspector.draw();
  variance.draw();
  sensitivity.draw();
  diagnostics.draw();
  tables.render();
});

// ---------------------------------------------------------------- boot

async function main() {
  applyPalette();
  changed('run');
  const wasmLoad = loadWasm().then((w) => { useCoreSettings(JSON.parse(w.settingsTable())); state.wasm = w; }, (err) => {
    app.showError(`The WebAssembly module did not load: ${messageOf(err)}`);
  });
  await app.experiment.loadPresets();
  await wasmLoad;

  // What to show first: a link in the address, else the experiment kept
  // from the last visit, else the default preset.
  const link = await app.experiment.openFromAddress();
  const kept = link === 'none' && await app.experiment.restoreKept();
  if (!kept && link !== 'opened') await app.experiment.applyDefault();
  if (state.wasm && link === 'none') await app.controller.restoreKept();
  changed('run');
  debug.ready = true;
}

main();
