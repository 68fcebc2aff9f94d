// The learning-curve panel: the plot title, the curve statistic, which
// measure (the learned policy's evaluation return, the return while learning,
// or both, when the run evaluates) and per-seed lines, the PNG button, and
// the chart itself. It asks the results worker
// for curves when the shown ones are out of date (one request at a time, at
// most about three a second while training), keeps the last answer in
// state.curves (its one owner), and draws at most once per animation frame
// with chart.js's drawCurves.

import { drawCurves } from './chart.js';
import { sizeCanvas } from './plot.js';
import { canvasPng, download, fileStem } from './export.js';
import { messageOf } from './wasm.js';

/** Least time between two curve requests while a run trains (ms). */
const CURVE_INTERVAL_MS = 300;

/** How the plot title names a run's state. */
const STATUS_WORD = {
  starting: 'starting', running: 'training', pausing: 'pausing', paused: 'paused', finishing: 'finishing',
  done: 'finished', cancelled: 'cancelled', interrupted: 'interrupted', opened: 'opened',
};
const STAT_WORD = { mean: 'mean with pointwise 95% band', iqm: 'interquartile mean', median: 'median', shaped: 'mean shaped return' };
const MEASURE_WORD = { training: 'return while learning', evaluation: 'return of the learned policy (evaluation episodes)' };

/**
 * @param {object} app {state, controller, showError, colours(), palette(), font(), debug}
 * @returns {{schedule()}}
 */
export function createCurvesView(app) {
  const { state } = app;
  const $ = (id) => document.getElementById(id);
  const ui = {
    canvas: $('curves'), box: $('canvas-box'), title: $('plot-title'), seedLines: $('seed-lines'), png: $('png-curves'),
    measureGroup: $('curve-measure'),
  };
  let drawPending = false;
  let asking = false;
  let lastAsk = 0;
  let askTimer = 0;
  let errorShown = false;

  function schedule() {
    if (drawPending) return;
    drawPending = true;
    requestAnimationFrame(() => { drawPending = false; draw(); });
  }

  /** Ask for fresh curves when the shown ones are out of date; the answer redraws. */
  function ask(run) {
    const { stat, seedLines } = state.view;
    const measure = run.evaluates ? state.view.measure : 'training';
    const key = `${run.version}/${stat}/${seedLines}/${measure}`;
    const c = state.curves;
    if (asking || (c && c.run === run && c.key === key)) return;
    const sameView = c && c.run === run && c.stat === stat && c.seedLines === seedLines && c.asked === measure;
    const wait = CURVE_INTERVAL_MS - (performance.now() - lastAsk);
    if (app.controller.isActive() && sameView && wait > 0) {
      if (!askTimer) askTimer = setTimeout(() => { askTimer = 0; if (state.run === run) ask(run); }, wait);
      return;
    }
    lastAsk = performance.now();
    const rc = state.results;
    asking = true;
    rc.curves(stat, seedLines, measure).then((got) => {
      asking = false;
      if (state.results !== rc || state.run !== run) return;
      state.curves = {
        key, run, stat, seedLines, asked: measure, measure: got.measure, curves: got.curves, robust: got.robust,
        seeds: got.seeds, background: got.background, backgroundRobust: got.backgroundRobust,
      };
      schedule();
      // The view may have changed, or new data come, while the worker was busy.
      ask(run);
    }, (err) => {
      asking = false;
      if (state.results === rc && !errorShown) { errorShown = true; app.showError(`reading a curve: ${messageOf(err)}`); }
    });
  }

  function draw() {
    const width = Math.floor(ui.box.clientWidth);
    const height = Math.floor(ui.box.clientHeight);
    if (width < 10 || height < 10) return;
    const dpr = window.devicePixelRatio || 1;
    sizeCanvas(ui.canvas, width, height, dpr);
    const run = state.run;
    const { stat } = state.view;
    let drawStat = stat;
    let variants;
    let xMax;
    let note;
    let threshold = null;
    let measure = 'training';
    if (ui.measureGroup) ui.measureGroup.hidden = !(run && run.evaluates);
    if (run && state.results) {
      ask(run);
      const c = state.curves && state.curves.run === run ? state.curves : null;
      variants = run.labels.map((label, v) => ({
        label,
        curve: c ? c.curves[v] : new Float64Array(0),
        robust: c && c.robust ? c.robust[v] : undefined,
        seeds: c && c.seeds && state.view.seedLines ? c.seeds[v] : undefined,
        background: c && c.background ? c.background[v] : undefined,
        backgroundRobust: c && c.backgroundRobust ? c.backgroundRobust[v] : undefined,
      }));
      measure = c ? c.measure : 'training';
      // Until the worker answers for a new statistic, draw what it has.
      if (!c || c.stat !== stat) drawStat = c ? c.stat : 'mean';
      xMax = run.steps;
      threshold = run.threshold;
      note = run.stage === 'tuning' && run.status !== 'done'
        ? 'Tuning: every grid point on the tuning seeds; the curves show the chosen points on fresh seeds next.'
        : run.status === 'running' ? 'Waiting for the first finished episodes…' : 'No finished episodes to show.';
      const where = run.origin === 'file' ? ` — opened from ${run.fileName}` : ` — ${STATUS_WORD[run.status] || run.status}`;
      ui.title.textContent = `${run.title || 'Untitled experiment'}${where}`;
    } else {
      const cfg = state.config || {};
      const labels = state.check.ok ? state.check.info.labels : (cfg.variants || []).map((v, i) => String(v.label ?? `variant ${i + 1}`));
      variants = labels.map((label) => ({ label, curve: new Float64Array(0) }));
      xMax = typeof cfg.steps === 'number' && cfg.steps > 0 ? cfg.steps : 1;
      note = state.wasm ? 'Press Train to see learning curves.' : 'Training needs the WebAssembly module.';
      ui.title.textContent = state.config ? `${cfg.title || 'Untitled experiment'} — not trained yet` : 'No run yet';
    }
    const layout = drawCurves(ui.canvas.getContext('2d'), { variants, xMax, note, threshold, measure }, {
      width, height, dpr, stat: drawStat, seedLines: state.view.seedLines,
      colours: app.colours(), palette: app.palette(), font: app.font(),
    });
    ui.canvas.setAttribute('aria-label', `Learning curves (${STAT_WORD[drawStat]} over seeds of the ${MEASURE_WORD[measure]}) of ${variants.map((v) => v.label).join(', ') || 'no variants'}: return against environment steps`);
    app.debug.draws += 1;
    app.debug.lastDraw = { ...layout, dpr, width, height };
  }

  for (const r of document.querySelectorAll('input[name="curve-stat"]')) {
    r.addEventListener('change', () => { if (r.checked) { state.view.stat = r.value; schedule(); } });
  }
  ui.seedLines.addEventListener('change', () => { state.view.seedLines = ui.seedLines.checked; schedule(); });
  for (const r of document.querySelectorAll('input[name="curve-measure"]')) {
    r.addEventListener('change', () => { if (r.checked) { state.view.measure = r.value; schedule(); } });
  }
  ui.png.addEventListener('click', async () => {
    try {
      download(`${fileStem(state.run?.title || state.config?.title)}-curves.png`, await canvasPng(ui.canvas));
    } catch (err) {
      app.showError(messageOf(err));
    }
  });
  new ResizeObserver(schedule).observe(ui.box);

  return { schedule };
}
