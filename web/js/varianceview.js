// The "Gradient variance" panel: the core's gradient-variance probe (wasm
// `probe`, run in a worker of its own) for one variant and seed at a few
// checkpoints, drawn as the trace of the gradient estimate's covariance per
// baseline option (log scale) with a table of the numbers.

import { chosenOf } from './inspectview.js';
import { Probe } from './probe.js';
import { sizeCanvas } from './plot.js';
import { drawLogLines } from './logchart.js';
import { canvasPng, download, fileStem } from './export.js';
import { readNumber } from './configedit.js';
import { messageOf } from './wasm.js';
import { formatNumber } from './numbers.js';

const BASELINE_NAMES = {
  none: 'no baseline',
  average: 'running average',
  value: 'learned value',
  optimal: 'variance-minimising constant',
};

/**
 * @param {object} app {state, showError, colours(), palette(), font()}
 * @returns {{refresh(), draw(), debug()}}
 */
export function createVarianceView(app) {
  const $ = (id) => document.getElementById(id);
  const ui = {
    variant: $('var-variant'), seed: $('var-seed'), points: $('var-points'), k: $('var-k'), m: $('var-m'),
    go: $('var-go'), status: $('var-status'), fig: $('var-fig'), title: $('var-title'), box: $('var-box'),
    canvas: $('var-chart'), body: $('var-body'), png: $('png-var'),
  };
  const probe = new Probe();
  let result = null;
  let label = '';
  let shownRun = null;
  let lastDraw = null;

  function refresh() {
    const run = app.state.run;
    ui.go.disabled = !run;
    if (!run) { ui.status.textContent = 'Train or open results first.'; return; }
    if (ui.status.textContent === 'Train or open results first.') ui.status.textContent = '';
    if (shownRun === run) return;
    shownRun = run;
    ui.variant.replaceChildren(...run.labels.map((l, i) => new Option(l, String(i))));
    ui.seed.replaceChildren(...Array.from({ length: run.seeds }, (_, s) => new Option(`seed ${s}`, String(s))));
  }

  async function go() {
    const run = app.state.run;
    if (!run) return;
    const k = readNumber(ui.k.value, { integer: true });
    const m = readNumber(ui.m.value, { integer: true });
    if (k.error || m.error || k.value < 2 || k.value > 1000 || m.value < 1 || m.value > 1000) {
      app.showError(`gradient variance: K must be a whole number in [2, 1000] and M in [1, 1000]; got ${ui.k.value} and ${ui.m.value}`);
      return;
    }
    const n = Number(ui.points.value) || 5;
    const checkpoints = Array.from({ length: n }, (_, i) => Math.round((run.steps * i) / (n - 1)));
    const variant = Number(ui.variant.value) || 0;
    const seed = Number(ui.seed.value) || 0;
    ui.go.disabled = true;
    ui.status.textContent = `Measuring ${run.labels[variant]}, seed ${seed} at ${n} checkpoints…`;
    try {
      result = await probe.variance(run.configJson, variant, seed, checkpoints, k.value, m.value, chosenOf(app.state.summary));
      label = `${run.labels[variant]}, seed ${seed}`;
      // Each trace is itself estimated from K gradient estimates. For normal
      // estimates the relative standard error of a sample variance is
      // √(2/(K−1)) (a standard result for normal samples, from memory; a covariance trace is a sum of
      // variances, so this is its worst case, reached when one direction
      // dominates): differences smaller than about twice that are not resolved.
      const rse = Math.sqrt(2 / (k.value - 1));
      ui.status.textContent = `${label}: ${k.value} estimates of ${m.value} episodes each per baseline and checkpoint. `
        + `Each trace is itself an estimate, with a relative standard error of up to ${Math.round(100 * rse)}% at this K `
        + `(for normal gradient estimates): baselines whose traces differ by less than about ${Math.round(200 * rse)}% are not told apart; raise K to resolve smaller differences.`;
      ui.fig.hidden = false;
      renderTable();
      draw();
    } catch (err) {
      ui.status.textContent = '';
      app.showError(`gradient variance: ${messageOf(err)}`);
    } finally {
      ui.go.disabled = false;
    }
  }

  function options() {
    const names = [];
    for (const c of result.checkpoints) for (const o of c.options) if (!names.includes(o.baseline)) names.push(o.baseline);
    return names;
  }

  function renderTable() {
    const rows = [];
    for (const c of result.checkpoints) {
      for (const o of c.options) {
        const tr = document.createElement('tr');
        const cells = [String(c.step), BASELINE_NAMES[o.baseline] || o.baseline, formatNumber(o.trace_cov), formatNumber(o.mean_norm), formatNumber(o.constant)];
        cells.forEach((t, i) => {
          const td = document.createElement('td');
          td.textContent = t;
          if (i >= 2) td.className = 'num';
          tr.append(td);
        });
        rows.push(tr);
      }
    }
    ui.body.replaceChildren(...rows);
  }

  function draw() {
    if (!result || ui.fig.hidden) return;
    const w = Math.floor(ui.box.clientWidth);
    const h = Math.floor(ui.box.clientHeight);
    if (w < 10 || h < 10) return;
    const dpr = window.devicePixelRatio || 1;
    sizeCanvas(ui.canvas, w, h, dpr);
    const series = options().map((b) => ({
      label: BASELINE_NAMES[b] || b,
      points: result.checkpoints.map((c) => [c.step, (c.options.find((o) => o.baseline === b) || {}).trace_cov]),
    }));
    lastDraw = drawLogLines(ui.canvas.getContext('2d'), { series, yLabel: 'trace of the gradient covariance' }, {
      width: w, height: h, dpr, colours: app.colours(), palette: app.palette(), font: app.font(),
    });
    ui.title.textContent = `Gradient variance by baseline: ${label}`;
    ui.canvas.setAttribute('aria-label', `Trace of the gradient estimate's covariance against steps for ${series.map((s) => s.label).join(', ')} (log scale); the numbers are in the table below`);
  }

  ui.go.addEventListener('click', go);
  ui.png.addEventListener('click', async () => {
    try { download(`${fileStem(app.state.run?.title)}-gradient-variance.png`, await canvasPng(ui.canvas)); } catch (err) { app.showError(messageOf(err)); }
  });
  new ResizeObserver(draw).observe(ui.box);

  return { refresh, draw, debug: () => (result ? { result, drawn: lastDraw && lastDraw.series.map((s) => s.points) } : null) };
}
