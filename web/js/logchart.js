// The gradient-variance chart: drawLogLines(ctx, data, options) draws a few
// series over a few x points on a log-scale y axis (the trace of the gradient
// estimate's covariance per baseline option, at each checkpoint), with a
// legend on top. Like drawCurves it is a pure function of its arguments and
// returns the layout it used. Series styles, canvas helpers and the legend
// sample come from plot.js, numbers are written by numbers.js.

import { PALETTE, beginDrawing, seriesStyle, formatSteps, drawSample } from './plot.js';
import { formatNumber } from './numbers.js';

/**
 * Lines over a few x points on a log-scale y axis (the gradient-variance
 * probe: trace of the gradient estimate's covariance per baseline option).
 * @param {object} data {series: [{label, points: [[x, y]]}], xLabel, yLabel}
 *   y values that are not finite and > 0 are left out.
 * @param {object} options {width, height, dpr, colours, palette, font}
 * @returns {{plot, y: [number, number], series: [{label, points}]}}
 */
export function drawLogLines(ctx, data, options) {
  const { width, height, colours, family } = beginDrawing(ctx, options, 12);
  const palette = options.palette && options.palette.length ? options.palette : PALETTE;
  const pts = data.series.map((s) => s.points.filter(([x, y]) => Number.isFinite(x) && Number.isFinite(y) && y > 0));
  let lo = Infinity;
  let hi = -Infinity;
  let xMin = Infinity;
  let xMax = -Infinity;
  for (const p of pts) for (const [x, y] of p) { lo = Math.min(lo, y); hi = Math.max(hi, y); xMin = Math.min(xMin, x); xMax = Math.max(xMax, x); }
  const has = lo <= hi;
  if (!has) { lo = 1; hi = 10; xMin = 0; xMax = 1; }
  const e0 = Math.floor(Math.log10(lo));
  const e1 = Math.max(e0 + 1, Math.ceil(Math.log10(hi)));
  if (xMax <= xMin) { xMin -= 1; xMax += 1; }
  const legendH = 26;
  const labW = Math.max(...Array.from({ length: e1 - e0 + 1 }, (_, i) => ctx.measureText(formatNumber(10 ** (e0 + i))).width)) + 8;
  const plot = { x: 30 + labW, y: 8 + legendH, w: 0, h: 0 };
  plot.w = Math.max(10, width - plot.x - 16);
  plot.h = Math.max(10, height - plot.y - 40);
  const pad = (xMax - xMin) * 0.04;
  const sx = (x) => plot.x + ((x - xMin + pad) / (xMax - xMin + 2 * pad)) * plot.w;
  const sy = (y) => plot.y + plot.h - ((Math.log10(y) - e0) / (e1 - e0)) * plot.h;
  ctx.strokeStyle = colours.grid;
  ctx.lineWidth = 1;
  ctx.beginPath();
  for (let e = e0; e <= e1; e++) { const y = Math.round(sy(10 ** e)) + 0.5; ctx.moveTo(plot.x, y); ctx.lineTo(plot.x + plot.w, y); }
  ctx.stroke();
  ctx.fillStyle = colours.muted;
  ctx.textAlign = 'right';
  ctx.textBaseline = 'middle';
  for (let e = e0; e <= e1; e++) ctx.fillText(formatNumber(10 ** e), plot.x - 6, sy(10 ** e));
  const xs = [...new Set(pts.flat().map(([x]) => x))].sort((a, b) => a - b);
  ctx.textAlign = 'center';
  ctx.textBaseline = 'top';
  for (const x of xs) ctx.fillText(formatSteps(x), sx(x), plot.y + plot.h + 6);
  ctx.strokeStyle = colours.muted;
  ctx.beginPath();
  ctx.moveTo(plot.x + 0.5, plot.y); ctx.lineTo(plot.x + 0.5, plot.y + plot.h + 0.5); ctx.lineTo(plot.x + plot.w, plot.y + plot.h + 0.5);
  ctx.stroke();
  ctx.fillStyle = colours.muted;
  ctx.textBaseline = 'bottom';
  ctx.fillText(data.xLabel || 'environment steps', plot.x + plot.w / 2, height - 2);
  ctx.save();
  ctx.translate(12, plot.y + plot.h / 2);
  ctx.rotate(-Math.PI / 2);
  ctx.textBaseline = 'middle';
  ctx.fillText(data.yLabel || '', 0, 0);
  ctx.restore();
  const series = data.series.map((s, i) => ({ label: s.label, ...seriesStyle(i, palette), points: pts[i].length }));
  pts.forEach((p, i) => {
    ctx.strokeStyle = series[i].colour;
    ctx.fillStyle = series[i].colour;
    ctx.lineWidth = 2;
    ctx.setLineDash(series[i].dash);
    ctx.beginPath();
    p.forEach(([x, y], k) => (k ? ctx.lineTo(sx(x), sy(y)) : ctx.moveTo(sx(x), sy(y))));
    ctx.stroke();
    ctx.setLineDash([]);
    for (const [x, y] of p) { ctx.beginPath(); ctx.arc(sx(x), sy(y), 3, 0, 2 * Math.PI); ctx.fill(); }
  });
  let lx = plot.x;
  ctx.textAlign = 'left';
  ctx.textBaseline = 'middle';
  series.forEach((s) => {
    drawSample(ctx, lx, 14, 26, s);
    ctx.fillStyle = colours.ink;
    ctx.fillText(s.label, lx + 32, 14);
    lx += 32 + ctx.measureText(s.label).width + 16;
  });
  ctx.restore();
  return { plot, y: [10 ** e0, 10 ** e1], series };
}
