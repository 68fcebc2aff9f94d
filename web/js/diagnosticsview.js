// The diagnostics panel under the learning curves: small charts that share
// the step axis, one per step diagnostic (mean |TD error|, the policy's
// entropy or the Gaussian's σ, the actor and critic update norms on a log
// scale, and for off-policy variants the importance weights' effective
// sample size fraction and the share of capped weights), each with every
// variant that has it: the mean over seeds with its pointwise 95% band,
// read from the summary's `variants[].diagnostics` (the numbers `critbox
// run` prints). Checkboxes choose which charts show; a chart no variant has
// is left out. The summary's diagnostic warnings are listed above the
// comparisons. drawDiagnostics(ctx, data, options) is a pure function of its
// arguments, like the other draw functions.

import { beginDrawing, formatSteps, niceTicks, seriesStyle, sizeCanvas, drawSample } from './plot.js';
import { canvasPng, download, fileStem } from './export.js';
import { formatNumber } from './numbers.js';
import { messageOf } from './wasm.js';

/** The diagnostics, in panel order: summary key, title, log scale. */
export const DIAGNOSTICS = Object.freeze([
  Object.freeze({ key: 'td_abs', title: 'mean |TD error|', log: false }),
  Object.freeze({ key: 'entropy', title: 'policy entropy (nats)', log: false }),
  Object.freeze({ key: 'sd', title: 'Gaussian σ', log: false }),
  Object.freeze({ key: 'actor_norm', title: 'actor update norm (log)', log: true }),
  Object.freeze({ key: 'critic_norm', title: 'critic update norm (log)', log: true }),
  Object.freeze({ key: 'ess_fraction', title: 'effective sample size fraction', log: false }),
  Object.freeze({ key: 'capped_share', title: 'share of capped weights', log: false }),
]);

const PANEL_H = 130;
const LEGEND_H = 26;
const AXIS_H = 34;

/** Finite number or null. */
const fin = (x) => (typeof x === 'number' && Number.isFinite(x) ? x : null);

/**
 * Where the legend's entries go (12px font set on ctx): rows of 20 px from
 * the chart's left edge, wrapped at its width. Returns {items: [{index,
 * label, x, y}], height}.
 */
function legendLayout(ctx, panels, width) {
  const seen = new Map();
  for (const p of panels) for (const s of p.series) seen.set(s.index, s.label);
  const items = [];
  let x = 70;
  let row = 0;
  for (const [index, label] of [...seen].sort((a, b) => a[0] - b[0])) {
    const w = 32 + ctx.measureText(label).width + 16;
    if (x > 70 && x + w > width - 8) { row += 1; x = 70; }
    items.push({ index, label, x, y: 13 + 20 * row });
    x += w;
  }
  return { items, height: LEGEND_H + 20 * row };
}

/** The CSS height the chart of `panels` needs at `width`. */
export function diagnosticsHeight(ctx, panels, width, font) {
  ctx.save();
  ctx.font = `12px ${font || 'sans-serif'}`;
  const h = legendLayout(ctx, panels, width).height;
  ctx.restore();
  return h + Math.max(1, panels.length) * PANEL_H + AXIS_H;
}

/**
 * Draw the diagnostics as stacked panels sharing the x axis.
 * @param {object} data {xMax, panels: [{title, log, series: [{index, label, curve: {step, mean, lo, hi}}]}], labels}
 * @param {object} options {width, height, dpr, colours, palette, font}
 * @returns {{panels: [{title, y: [lo, hi], log, series: [{label, points}]}], x: [0, xMax]}}
 */
export function drawDiagnostics(ctx, data, options) {
  const { width, height, colours, family } = beginDrawing(ctx, options, 12);
  const xMax = data.xMax > 0 ? data.xMax : 1;
  const left = 70;
  const right = 16;
  const w = Math.max(10, width - left - right);
  const sx = (x) => left + (x / xMax) * w;
  const out = [];
  // Legend: every variant that appears in some panel, wrapped into rows.
  const legend = legendLayout(ctx, data.panels, width);
  ctx.textAlign = 'left';
  ctx.textBaseline = 'middle';
  for (const { index, label, x, y } of legend.items) {
    drawSample(ctx, x, y, 26, seriesStyle(index, options.palette));
    ctx.fillStyle = colours.ink;
    ctx.fillText(label, x + 32, y);
  }
  if (data.panels.length === 0) {
    ctx.fillStyle = colours.muted;
    ctx.textAlign = 'center';
    ctx.fillText(data.note || 'No diagnostics to show.', left + w / 2, height / 2);
  }
  data.panels.forEach((panel, k) => {
    const top = legend.height + k * PANEL_H + 16;
    const h = PANEL_H - 30;
    const vals = [];
    for (const s of panel.series) {
      for (const arr of [s.curve.mean, s.curve.lo, s.curve.hi]) {
        for (const v of arr || []) { const x = fin(v); if (x !== null && (!panel.log || x > 0)) vals.push(x); }
      }
    }
    let lo = vals.length ? Math.min(...vals) : 0;
    let hi = vals.length ? Math.max(...vals) : 1;
    let ty;
    let ticks;
    if (panel.log) {
      if (!vals.length) { lo = 1; hi = 10; }
      const e0 = Math.floor(Math.log10(lo));
      const e1 = Math.max(e0 + 1, Math.ceil(Math.log10(hi)));
      lo = 10 ** e0; hi = 10 ** e1;
      ty = (v) => top + h - ((Math.log10(v) - e0) / (e1 - e0)) * h;
      const every = Math.max(1, Math.ceil((e1 - e0) / 4));
      ticks = [];
      for (let e = e0; e <= e1; e += every) ticks.push(10 ** e);
    } else {
      if (lo > 0 && lo < 0.25 * hi) lo = 0;
      if (hi <= lo) { hi = lo + 1; }
      const t = niceTicks(lo, hi, 3);
      lo = Math.min(lo, t.ticks[0]); hi = Math.max(hi, t.ticks[t.ticks.length - 1]);
      ty = (v) => top + h - ((v - lo) / (hi - lo)) * h;
      ticks = t.ticks;
    }
    ctx.strokeStyle = colours.grid;
    ctx.lineWidth = 1;
    ctx.beginPath();
    for (const t of ticks) { const y = Math.round(ty(t)) + 0.5; ctx.moveTo(left, y); ctx.lineTo(left + w, y); }
    ctx.stroke();
    ctx.fillStyle = colours.muted;
    ctx.textAlign = 'right';
    for (const t of ticks) ctx.fillText(formatNumber(t), left - 6, ty(t));
    ctx.textAlign = 'left';
    ctx.fillStyle = colours.ink;
    ctx.fillText(panel.title, left + 4, top - 8);
    const series = [];
    for (const s of panel.series) {
      const style = seriesStyle(s.index, options.palette);
      const pts = [];
      const band = [];
      s.curve.step.forEach((x, b) => {
        const m = fin(s.curve.mean[b]);
        if (m !== null && (!panel.log || m > 0)) pts.push([x, m]);
        const a = fin(s.curve.lo[b]);
        const z = fin(s.curve.hi[b]);
        if (a !== null && z !== null && (!panel.log || (a > 0 && z > 0))) band.push([x, a, z]);
      });
      if (band.length > 1) {
        ctx.fillStyle = style.colour;
        ctx.globalAlpha = 0.17;
        ctx.beginPath();
        band.forEach(([x, a], i) => (i ? ctx.lineTo(sx(x), ty(a)) : ctx.moveTo(sx(x), ty(a))));
        for (let i = band.length - 1; i >= 0; i--) ctx.lineTo(sx(band[i][0]), ty(band[i][2]));
        ctx.closePath();
        ctx.fill();
        ctx.globalAlpha = 1;
      }
      ctx.strokeStyle = style.colour;
      ctx.lineWidth = 2;
      ctx.setLineDash(style.dash);
      ctx.beginPath();
      pts.forEach(([x, y], i) => (i ? ctx.lineTo(sx(x), ty(y)) : ctx.moveTo(sx(x), ty(y))));
      ctx.stroke();
      ctx.setLineDash([]);
      series.push({ label: s.label, points: pts.length });
    }
    ctx.strokeStyle = colours.muted;
    ctx.beginPath();
    ctx.moveTo(left + 0.5, top); ctx.lineTo(left + 0.5, top + h + 0.5); ctx.lineTo(left + w, top + h + 0.5);
    ctx.stroke();
    out.push({ title: panel.title, log: panel.log, y: [lo, hi], series });
  });
  // The shared step axis under the last panel.
  const bottom = legend.height + data.panels.length * PANEL_H;
  ctx.fillStyle = colours.muted;
  ctx.textAlign = 'center';
  ctx.textBaseline = 'top';
  for (const t of niceTicks(0, xMax, 6).ticks) if (t >= 0 && t <= xMax) ctx.fillText(formatSteps(t), sx(t), bottom);
  ctx.textBaseline = 'bottom';
  ctx.fillText('environment steps', left + w / 2, height - 2);
  ctx.restore();
  return { panels: out, x: [0, xMax] };
}

/** The panels of a summary for the shown diagnostics. */
export function diagnosticPanels(summary, shown) {
  const variants = summary && Array.isArray(summary.variants) ? summary.variants : [];
  return DIAGNOSTICS.filter((d) => shown[d.key] !== false).map((d) => ({
    key: d.key,
    title: d.title,
    log: d.log,
    series: variants
      .map((v, index) => ({ index, label: v.label ?? `variant ${index + 1}`, curve: v.diagnostics && v.diagnostics[d.key] }))
      .filter((s) => s.curve && Array.isArray(s.curve.step)),
  })).filter((p) => p.series.length > 0);
}

/**
 * @param {object} app {state, showError, colours(), palette(), font(), debug}
 * @returns {{render(), draw(), renderExpect()}}
 */
export function createDiagnosticsView(app) {
  const { state } = app;
  const $ = (id) => document.getElementById(id);
  const ui = {
    canvas: $('diagnostics'), box: $('diagnostics-box'), toggles: $('diagnostics-toggles'),
    png: $('png-diagnostics'), warnings: $('diagnostic-warnings'), note: $('diagnostics-note'),
    expect: $('expect-note'),
  };
  const shown = {};
  let pending = false;

  /** The config's stated outcome (presets carry one), as text. */
  function renderExpect() {
    const e = state.config && state.config.expect;
    const text = e && typeof e.text === 'string' ? e.text : '';
    ui.expect.textContent = text ? `What this experiment is expected to show (checked by a test): ${text}` : '';
    ui.expect.hidden = !text;
  }

  function render() {
    renderExpect();
    const s = state.summary;
    const list = s && Array.isArray(s.warnings) ? s.warnings : [];
    ui.warnings.replaceChildren(...list.map((w) => { const li = document.createElement('li'); li.textContent = String(w); return li; }));
    ui.warnings.hidden = list.length === 0;
    const present = new Set(diagnosticPanels(s, {}).map((p) => p.key));
    ui.toggles.replaceChildren(...DIAGNOSTICS.filter((d) => present.has(d.key)).map((d) => {
      const label = document.createElement('label');
      label.className = 'check';
      const box = document.createElement('input');
      box.type = 'checkbox';
      box.checked = shown[d.key] !== false;
      box.dataset.key = d.key;
      box.addEventListener('change', () => { shown[d.key] = box.checked; draw(); });
      label.append(box, document.createTextNode(` ${d.title.replace(' (log)', '')}`));
      return label;
    }));
    ui.note.textContent = s ? '' : 'Drawn when a run finishes (or a results file is opened).';
    draw();
  }

  function draw() {
    if (pending) return;
    pending = true;
    requestAnimationFrame(() => {
      pending = false;
      const panels = diagnosticPanels(state.summary, shown);
      const width = Math.floor(ui.box.clientWidth);
      if (width < 10) return;
      const height = diagnosticsHeight(ui.canvas.getContext('2d'), panels, width, app.font());
      ui.box.style.height = `${height}px`;
      const dpr = window.devicePixelRatio || 1;
      sizeCanvas(ui.canvas, width, height, dpr);
      const xMax = state.summary ? state.summary.steps : (state.config?.steps || 1);
      const layout = drawDiagnostics(ui.canvas.getContext('2d'), { xMax, panels, note: 'No diagnostics to show yet.' }, {
        width, height, dpr, colours: app.colours(), palette: app.palette(), font: app.font(),
      });
      ui.canvas.setAttribute('aria-label', `Learner diagnostics against environment steps: ${panels.map((p) => p.title).join('; ') || 'none yet'}`);
      app.debug.lastDiagnostics = layout;
    });
  }

  ui.png.addEventListener('click', async () => {
    try {
      download(`${fileStem(state.run?.title || state.config?.title)}-diagnostics.png`, await canvasPng(ui.canvas));
    } catch (err) {
      app.showError(messageOf(err));
    }
  });
  new ResizeObserver(() => draw()).observe(ui.box);
  return { render, draw, renderExpect };
}
