// The "Sensitivity" panel of a study: per variant, the tuning criterion
// (mean over tuning seeds with its Student-t 95% interval) at every grid
// point, against the swept setting (a log axis when the grid is a log2
// range) or, for two settings, as a heat map; the chosen point marked; and
// a table of each chosen point's tuning score, fresh score and bootstrap of
// the maximum, with the study's warnings. Everything comes from the summary
// (`study`, `variants[].study`), the same numbers `critbox run` prints.
// drawSensitivity(ctx, study, options) is a pure function of its arguments.

import { beginDrawing, sizeCanvas, niceTicks, formatValue } from './plot.js';
import { rampColour, rampPosition, inkOnRamp } from './palette.js';
import { formatNumber } from './numbers.js';
import { canvasPng, download, fileStem } from './export.js';
import { messageOf } from './wasm.js';

function el(tag, text, className) {
  const e = document.createElement(tag);
  if (text !== undefined && text !== null) e.textContent = String(text);
  if (className) e.className = className;
  return e;
}

const fmt = (x) => formatNumber(x);
const settingsText = (s) => (s && Object.keys(s).length ? Object.entries(s).map(([k, v]) => `${k} = ${fmt(v)}`).join(', ') : 'its own settings');

/**
 * Draw one variant's sensitivity: a curve over one axis (error bars of the
 * 95% interval, the chosen point filled) or a heat map over two.
 * @param {CanvasRenderingContext2D} ctx canvas sized to width*dpr × height*dpr
 * @param {object} study the variant's `study` from the summary
 * @param {object} options {width, height, dpr, colour, colours: {background, ink, muted, grid}, font, criterion}
 * @returns {{kind: 'curve'|'map'|'none', points: number}}
 */
export function drawSensitivity(ctx, study, options) {
  const { width, height, colours, family } = beginDrawing(ctx, options, 11);
  const axes = study.axes || [];
  const points = study.points || [];
  const chosen = study.chosen_point;
  const out = { kind: 'none', points: points.length };
  if (axes.length === 0) {
    ctx.fillStyle = colours.muted;
    ctx.textAlign = 'center';
    ctx.textBaseline = 'middle';
    ctx.fillText('no sweep: one point, its own settings', width / 2, height / 2);
    ctx.restore();
    return out;
  }
  const plot = { x: 52, y: 10, w: Math.max(10, width - 64), h: Math.max(10, height - 46) };
  if (axes.length === 1) {
    out.kind = 'curve';
    const a = axes[0];
    const xs = a.values.map((v) => (a.log ? Math.log2(v) : v));
    const xLo = Math.min(...xs); const xHi = Math.max(...xs);
    const span = xHi - xLo || 1;
    const sx = (x) => plot.x + (xs.length === 1 ? plot.w / 2 : ((x - xLo) / span) * plot.w);
    let yLo = Infinity; let yHi = -Infinity;
    for (const p of points) for (const y of [p.mean, ...(p.ci95 || [])]) if (Number.isFinite(y)) { yLo = Math.min(yLo, y); yHi = Math.max(yHi, y); }
    if (!(yLo <= yHi)) { yLo = -1; yHi = 1; }
    if (yHi - yLo < 1e-9) { yLo -= 1; yHi += 1; }
    const ticks = niceTicks(yLo, yHi, 4);
    const sy = (y) => plot.y + plot.h - ((y - yLo) / (yHi - yLo)) * plot.h;
    ctx.strokeStyle = colours.grid;
    ctx.lineWidth = 1;
    ctx.fillStyle = colours.muted;
    ctx.textAlign = 'right';
    ctx.textBaseline = 'middle';
    for (const t of ticks.ticks) {
      if (t < yLo || t > yHi) continue;
      ctx.beginPath(); ctx.moveTo(plot.x, Math.round(sy(t)) + 0.5); ctx.lineTo(plot.x + plot.w, Math.round(sy(t)) + 0.5); ctx.stroke();
      ctx.fillText(formatValue(t, ticks.step), plot.x - 4, sy(t));
    }
    ctx.textAlign = 'center';
    ctx.textBaseline = 'top';
    // Log grids read as powers of two; labels thinned so none overlap.
    const label = (v) => {
      const e = Math.log2(v);
      return a.log && Math.abs(e - Math.round(e)) < 1e-9 ? `2^${Math.round(e)}` : fmt(v);
    };
    const widest = Math.max(...a.values.map((v) => ctx.measureText(label(v)).width)) + 6;
    const gap = a.values.length > 1 ? plot.w / (a.values.length - 1) : plot.w;
    const every = Math.max(1, Math.ceil(widest / gap));
    a.values.forEach((v, k) => { if (k % every === 0) ctx.fillText(label(v), sx(xs[k]), plot.y + plot.h + 4); });
    ctx.fillText(`${a.path}${a.log ? ' (log scale)' : ''}`, plot.x + plot.w / 2, plot.y + plot.h + 20);
    ctx.strokeStyle = options.colour;
    ctx.fillStyle = options.colour;
    ctx.lineWidth = 1.5;
    ctx.beginPath();
    let started = false;
    points.forEach((p, k) => {
      if (!Number.isFinite(p.mean)) { started = false; return; }
      const x = sx(xs[k]); const y = sy(p.mean);
      if (started) ctx.lineTo(x, y); else { ctx.moveTo(x, y); started = true; }
    });
    ctx.stroke();
    points.forEach((p, k) => {
      const x = sx(xs[k]);
      if (Array.isArray(p.ci95) && p.ci95.every(Number.isFinite)) {
        ctx.beginPath(); ctx.moveTo(x, sy(p.ci95[0])); ctx.lineTo(x, sy(p.ci95[1])); ctx.stroke();
        ctx.beginPath(); ctx.moveTo(x - 3, sy(p.ci95[0])); ctx.lineTo(x + 3, sy(p.ci95[0]));
        ctx.moveTo(x - 3, sy(p.ci95[1])); ctx.lineTo(x + 3, sy(p.ci95[1])); ctx.stroke();
      }
      if (!Number.isFinite(p.mean)) return;
      ctx.beginPath();
      ctx.arc(x, sy(p.mean), k === chosen ? 5 : 3, 0, 2 * Math.PI);
      if (k === chosen) { ctx.fill(); ctx.strokeStyle = colours.ink; ctx.stroke(); ctx.strokeStyle = options.colour; } else { ctx.fillStyle = colours.background; ctx.fill(); ctx.stroke(); ctx.fillStyle = options.colour; }
    });
  } else {
    out.kind = 'map';
    const [a, b] = axes;
    const means = points.map((p) => p.mean).filter(Number.isFinite);
    const lo = Math.min(...means); const hi = Math.max(...means);
    const cw = plot.w / b.values.length; const ch = plot.h / a.values.length;
    ctx.textAlign = 'center';
    ctx.textBaseline = 'middle';
    points.forEach((p, k) => {
      const r = Math.floor(k / b.values.length); const c = k % b.values.length;
      const x = plot.x + c * cw; const y = plot.y + r * ch;
      ctx.fillStyle = Number.isFinite(p.mean) ? rampColour(p.mean, lo, hi) : colours.grid;
      ctx.fillRect(x, y, cw - 1, ch - 1);
      if (k === chosen) { ctx.strokeStyle = colours.ink; ctx.lineWidth = 2.5; ctx.strokeRect(x + 1.5, y + 1.5, cw - 4, ch - 4); }
      ctx.fillStyle = Number.isFinite(p.mean) ? inkOnRamp(rampPosition(p.mean, lo, hi)) : colours.muted;
      if (cw > 34 && ch > 14) ctx.fillText(Number.isFinite(p.mean) ? fmt(p.mean) : '–', x + cw / 2, y + ch / 2);
    });
    ctx.fillStyle = colours.muted;
    b.values.forEach((v, c) => ctx.fillText(fmt(v), plot.x + (c + 0.5) * cw, plot.y + plot.h + 9));
    ctx.fillText(`${b.path}${b.log ? ' (log2 grid)' : ''}`, plot.x + plot.w / 2, plot.y + plot.h + 25);
    ctx.textAlign = 'right';
    a.values.forEach((v, r) => ctx.fillText(fmt(v), plot.x - 4, plot.y + (r + 0.5) * ch));
  }
  ctx.restore();
  return out;
}

/**
 * @param {object} app {state, colours(), palette(), font(), showError}
 * @returns {{render(), draw(), debug()}}
 */
export function createSensitivityView(app) {
  const { state } = app;
  const $ = (id) => document.getElementById(id);
  const ui = { intro: $('study-intro'), warnings: $('study-warnings'), charts: $('study-charts'), body: $('study-body'), empty: $('study-empty') };
  let shown = null;
  const drawn = [];

  function render() {
    const s = state.summary;
    const study = s && s.study;
    ui.empty.hidden = !!study;
    ui.intro.textContent = study
      ? `${study.text[0].toUpperCase()}${study.text.slice(1)}. The scores, comparisons and verdicts use the fresh seeds only.`
      : '';
    ui.warnings.replaceChildren(...(study ? study.warnings : []).map((w) => el('li', w, 'fail')));
    if (!study) { ui.charts.replaceChildren(); ui.body.replaceChildren(); shown = null; return; }
    if (shown !== s) {
      shown = s;
      ui.charts.replaceChildren(...s.variants.map((v, i) => {
        const fig = el('figure', null, 'study-chart');
        const cap = el('figcaption', `${v.label}: ${study.choose_by === 'auc' ? 'area under the curve' : 'final return'} over ${study.tuning_seeds} tuning seeds`);
        const canvas = document.createElement('canvas');
        canvas.setAttribute('role', 'img');
        canvas.setAttribute('aria-label', `Sensitivity of ${v.label}: the tuning criterion at each grid point`);
        const png = el('button', 'PNG', 'small');
        png.type = 'button';
        png.addEventListener('click', async () => {
          try { download(`${fileStem(s.title)}-sensitivity-${i + 1}.png`, await canvasPng(canvas)); } catch (err) { app.showError(messageOf(err)); }
        });
        fig.append(cap, canvas, png);
        return fig;
      }));
      ui.body.replaceChildren(...s.variants.map((v) => {
        const st = v.study || {};
        const tr = el('tr');
        const th = el('th', v.label);
        th.scope = 'row';
        const boot = st.max_bootstrap || {};
        tr.append(th,
          el('td', st.chosen ? settingsText(st.chosen) : 'none: every tuning seed failed'),
          el('td', fmt(st.tuning_score), 'num'),
          el('td', fmt(st.fresh_score), 'num'),
          el('td', `${fmt(boot.mean)} (${Array.isArray(boot.ci95) ? `${fmt(boot.ci95[0])} to ${fmt(boot.ci95[1])}` : '–'})`, 'num'),
          el('td', (st.warnings || []).join(' ') || '—'));
        return tr;
      }));
    }
    draw();
  }

  function draw() {
    const s = shown;
    drawn.length = 0;
    if (!s || state.view.tab !== 'study') return;
    const dpr = window.devicePixelRatio || 1;
    const palette = app.palette();
    [...ui.charts.querySelectorAll('canvas')].forEach((canvas, i) => {
      const width = Math.max(200, Math.floor(canvas.parentElement.clientWidth || 320));
      const height = 210;
      sizeCanvas(canvas, width, height, dpr);
      drawn.push(drawSensitivity(canvas.getContext('2d'), s.variants[i].study || {}, {
        width, height, dpr, colour: palette[i % palette.length], colours: app.colours(), font: app.font(),
      }));
    });
  }

  return { render, draw, debug: () => drawn.slice() };
}
