// Learning-curve drawing. drawCurves(ctx, data, options) is a pure function of
// its arguments: it keeps no state between calls and returns the layout it
// used (so a caller or a test can find the plot area). Each variant gets a
// colour and a dash pattern (plot.js): a line of the chosen statistic over
// seeds (mean with its translucent pointwise 95% band, or the IQM, or the
// median), optionally one thin line per seed, faint background curves (the
// return while learning behind the learned policy's), an optional dotted
// threshold line, and a note when the points average different numbers of
// seeds or too few for a band. Shared chart helpers live in plot.js, the
// log-scale chart of the gradient-variance view in logchart.js.

import { PALETTE, seriesStyle, niceTicks, formatSteps, formatValue, runsWhere, drawSample } from './plot.js';

/** Curve record stride (contract): binEndStep, mean, lo95, hi95, nSeedsWithData. */
export const CURVE_STRIDE = 5;
/** Robust curve stride (Results.curveRobust): iqm, median. */
export const ROBUST_STRIDE = 2;

/** The statistics a curve can show, with the y-axis title of each. */
export const STATS = {
  mean: 'mean, pointwise 95% band',
  iqm: 'interquartile mean',
  median: 'median',
  shaped: 'shaped return: mean, pointwise 95%',
};

/** What the y axis measures, before the statistic. */
export const MEASURES = { training: 'return while learning', evaluation: 'learned policy' };

/**
 * Draw learning curves.
 * @param {CanvasRenderingContext2D} ctx  canvas already sized to width*dpr × height*dpr
 * @param {object} data
 *   variants: [{label: string, curve: Float64Array (stride 5, see CURVE_STRIDE),
 *               robust: Float64Array (stride 2, see ROBUST_STRIDE; needed for 'iqm' and 'median'),
 *               seeds: [Float64Array] (one value per point and seed, NaN where none; optional),
 *               background, backgroundRobust: the same for curves drawn faintly behind (optional)}]
 *   measure:   'training' (points are step bins) or 'evaluation' (points are checkpoints, marked)
 *   xMax:      the step budget (x runs from 0 to xMax)
 *   note:      text shown in the plot when no variant has data (optional)
 *   threshold: a return level drawn as a dotted line (optional)
 * @param {object} options
 *   width, height (CSS px), dpr,
 *   colours: {background, ink, muted, grid}, palette: [css colours], font: css font family,
 *   stat: 'mean' (default) | 'iqm' | 'median' | 'shaped' (curve then holds the shaped return's
 *   curve, same stride), seedLines: bool (draw data.variants[i].seeds),
 *   xLabel, yLabel (optional axis titles)
 * @returns {{plot:{x,y,w,h}, x:[number,number], y:[number,number], series:Array}}
 *   layout in CSS px; series[i] = {label, colour, dash, points (finite means drawn)}
 */
export function drawCurves(ctx, data, options) {
  const { width, height, dpr = 1 } = options;
  const colours = { background: '#fff', ink: '#222', muted: '#666', grid: '#ddd', ...options.colours };
  const palette = options.palette && options.palette.length ? options.palette : PALETTE;
  const family = options.font || 'sans-serif';
  const xLabel = options.xLabel ?? 'environment steps';
  const stat = STATS[options.stat] ? options.stat : 'mean';
  const measure = MEASURES[data.measure] ? data.measure : 'training';
  const yLabel = options.yLabel ?? (stat === 'shaped' ? STATS[stat] : `${MEASURES[measure]}: ${STATS[stat]}`);
  const variants = data.variants || [];
  const seedLines = !!options.seedLines;
  // The value of the drawn statistic at bin k of variant v.
  const lineAt = variants.map((v) => {
    const c = v.curve || [];
    const r = v.robust || [];
    if (stat === 'iqm') return (k) => r[k * ROBUST_STRIDE];
    if (stat === 'median') return (k) => r[k * ROBUST_STRIDE + 1];
    return (k) => c[k * CURVE_STRIDE + 1];
  });

  ctx.save();
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  ctx.fillStyle = colours.background;
  ctx.fillRect(0, 0, width, height);

  // ---- data ranges
  const xMax = data.xMax > 0 ? data.xMax : 1;
  let yMin = Infinity;
  let yMax = -Infinity;
  const widen = (y) => { if (Number.isFinite(y)) { if (y < yMin) yMin = y; if (y > yMax) yMax = y; } };
  variants.forEach((v, i) => {
    const c = v.curve || [];
    const n = Math.floor(c.length / CURVE_STRIDE);
    for (let k = 0; k < n; k++) {
      widen(lineAt[i](k));
      if (stat === 'mean' || stat === 'shaped') { widen(c[k * CURVE_STRIDE + 2]); widen(c[k * CURVE_STRIDE + 3]); }
    }
    if (seedLines && v.seeds) for (const s of v.seeds) for (const y of s) widen(y);
  });
  const backAt = variants.map((v) => {
    const c = v.background || [];
    const r = v.backgroundRobust || [];
    if (stat === 'iqm') return (k) => r[k * ROBUST_STRIDE];
    if (stat === 'median') return (k) => r[k * ROBUST_STRIDE + 1];
    return (k) => c[k * CURVE_STRIDE + 1];
  });
  variants.forEach((v, i) => {
    const n = Math.floor((v.background || []).length / CURVE_STRIDE);
    for (let k = 0; k < n; k++) widen(backAt[i](k));
  });
  // How many seeds the points average (field 4): said on the plot when it
  // varies, or when it is too few for a band.
  let nMin = Infinity;
  let nMax = 0;
  variants.forEach((v, i) => {
    const c = v.curve || [];
    const n = Math.floor(c.length / CURVE_STRIDE);
    for (let k = 0; k < n; k++) {
      if (!Number.isFinite(lineAt[i](k))) continue;
      nMin = Math.min(nMin, c[k * CURVE_STRIDE + 4]);
      nMax = Math.max(nMax, c[k * CURVE_STRIDE + 4]);
    }
  });
  const hasData = yMin <= yMax;
  if (hasData && Number.isFinite(data.threshold)) widen(data.threshold);
  if (!hasData) { yMin = -1; yMax = 1; }
  if (yMax - yMin < 1e-9) { const pad = Math.max(1, Math.abs(yMax) * 0.1); yMin -= pad; yMax += pad; }
  const yPad = (yMax - yMin) * 0.04;
  const yTicks0 = niceTicks(yMin - yPad, yMax + yPad, Math.max(3, Math.round(height / 70)));
  const yLo = Math.min(yMin - yPad, Math.floor((yMin - yPad) / yTicks0.step) * yTicks0.step);
  const yHi = Math.max(yMax + yPad, Math.ceil((yMax + yPad) / yTicks0.step) * yTicks0.step);
  const yTicks = niceTicks(yLo, yHi, Math.max(3, Math.round(height / 70)));

  // ---- layout: legend on top, y labels left, x labels below
  ctx.font = `12px ${family}`;
  const sample = 30;
  const gap = 18;
  const rows = [[]];
  let rowWidth = 0;
  const legendMax = width - 24;
  variants.forEach((v, i) => {
    const w = sample + 6 + ctx.measureText(v.label).width;
    if (rowWidth > 0 && rowWidth + gap + w > legendMax) { rows.push([]); rowWidth = 0; }
    rows[rows.length - 1].push({ i, w });
    rowWidth += (rowWidth > 0 ? gap : 0) + w;
  });
  const hasBackground = variants.some((v) => v.background && v.background.length);
  if (hasBackground) {
    const w = ctx.measureText('faint: while learning').width;
    if (rowWidth > 0 && rowWidth + gap + w > legendMax) { rows.push([]); rowWidth = 0; }
    rows[rows.length - 1].push({ i: -1, w });
    rowWidth += (rowWidth > 0 ? gap : 0) + w;
  }
  const legendH = variants.length ? rows.length * 18 + 8 : 0;
  const yLabelsW = Math.max(...yTicks.ticks.map((t) => ctx.measureText(formatValue(t, yTicks.step)).width), 10);
  const plot = { x: 12 + 16 + yLabelsW + 6, y: 10 + legendH, w: 0, h: 0 };
  plot.w = Math.max(10, width - plot.x - 18);
  plot.h = Math.max(10, height - plot.y - 44);
  const sx = (x) => plot.x + (x / xMax) * plot.w;
  const sy = (y) => plot.y + plot.h - ((y - yLo) / (yHi - yLo)) * plot.h;

  // ---- grid and ticks
  const xTicks = niceTicks(0, xMax, Math.max(3, Math.round(plot.w / 110)));
  ctx.lineWidth = 1;
  ctx.strokeStyle = colours.grid;
  ctx.beginPath();
  for (const t of yTicks.ticks) { const y = Math.round(sy(t)) + 0.5; ctx.moveTo(plot.x, y); ctx.lineTo(plot.x + plot.w, y); }
  for (const t of xTicks.ticks) { const x = Math.round(sx(t)) + 0.5; ctx.moveTo(x, plot.y); ctx.lineTo(x, plot.y + plot.h); }
  ctx.stroke();

  ctx.fillStyle = colours.muted;
  ctx.textAlign = 'right';
  ctx.textBaseline = 'middle';
  for (const t of yTicks.ticks) ctx.fillText(formatValue(t, yTicks.step), plot.x - 6, sy(t));
  ctx.textAlign = 'center';
  ctx.textBaseline = 'top';
  for (const t of xTicks.ticks) ctx.fillText(formatSteps(t), sx(t), plot.y + plot.h + 6);

  // ---- bands, then lines, clipped to the plot
  const series = variants.map((v, i) => ({ label: v.label, ...seriesStyle(i, palette), points: 0 }));
  ctx.save();
  ctx.beginPath();
  ctx.rect(plot.x, plot.y, plot.w, plot.h);
  ctx.clip();
  if (seedLines) {
    variants.forEach((v, i) => {
      const c = v.curve || [];
      const n = Math.floor(c.length / CURVE_STRIDE);
      ctx.strokeStyle = series[i].colour;
      ctx.globalAlpha = 0.35;
      ctx.lineWidth = 1;
      ctx.setLineDash([]);
      for (const s of v.seeds || []) {
        for (const [a, b] of runsWhere(Math.min(n, s.length), (k) => Number.isFinite(s[k]))) {
          if (a === b) continue;
          ctx.beginPath();
          for (let k = a; k <= b; k++) ctx.lineTo(sx(c[k * CURVE_STRIDE]), sy(s[k]));
          ctx.stroke();
        }
      }
      ctx.globalAlpha = 1;
    });
  }
  variants.forEach((v, i) => {
    const c = v.background || [];
    const n = Math.floor(c.length / CURVE_STRIDE);
    if (!n) return;
    const y = backAt[i];
    ctx.strokeStyle = series[i].colour;
    ctx.globalAlpha = 0.4;
    ctx.lineWidth = 1.5;
    ctx.setLineDash(series[i].dash);
    for (const [a, b] of runsWhere(n, (k) => Number.isFinite(y(k)))) {
      if (a === b) continue;
      ctx.beginPath();
      for (let k = a; k <= b; k++) ctx.lineTo(sx(c[k * CURVE_STRIDE]), sy(y(k)));
      ctx.stroke();
    }
    ctx.setLineDash([]);
    ctx.globalAlpha = 1;
  });
  variants.forEach((v, i) => {
    if (stat !== 'mean' && stat !== 'shaped') return;
    const c = v.curve || [];
    const n = Math.floor(c.length / CURVE_STRIDE);
    const at = (k, f) => c[k * CURVE_STRIDE + f];
    ctx.fillStyle = series[i].colour;
    ctx.globalAlpha = 0.17;
    for (const [a, b] of runsWhere(n, (k) => Number.isFinite(at(k, 2)) && Number.isFinite(at(k, 3)))) {
      if (a === b) continue;
      ctx.beginPath();
      for (let k = a; k <= b; k++) ctx.lineTo(sx(at(k, 0)), sy(at(k, 3)));
      for (let k = b; k >= a; k--) ctx.lineTo(sx(at(k, 0)), sy(at(k, 2)));
      ctx.closePath();
      ctx.fill();
    }
    ctx.globalAlpha = 1;
  });
  variants.forEach((v, i) => {
    const c = v.curve || [];
    const n = Math.floor(c.length / CURVE_STRIDE);
    const at = (k, f) => c[k * CURVE_STRIDE + f];
    ctx.strokeStyle = series[i].colour;
    ctx.fillStyle = series[i].colour;
    ctx.lineWidth = 2;
    ctx.lineJoin = 'round';
    ctx.setLineDash(series[i].dash);
    const y = lineAt[i];
    for (const [a, b] of runsWhere(n, (k) => Number.isFinite(y(k)) && Number.isFinite(at(k, 0)))) {
      series[i].points += b - a + 1;
      if (a === b) {
        ctx.beginPath();
        ctx.arc(sx(at(a, 0)), sy(y(a)), 2.5, 0, 2 * Math.PI);
        ctx.fill();
        continue;
      }
      ctx.beginPath();
      for (let k = a; k <= b; k++) ctx.lineTo(sx(at(k, 0)), sy(y(k)));
      ctx.stroke();
      if (measure === 'evaluation') {
        // Evaluation points are checkpoints, not bins: mark each one.
        for (let k = a; k <= b; k++) {
          ctx.beginPath();
          ctx.arc(sx(at(k, 0)), sy(y(k)), 2.2, 0, 2 * Math.PI);
          ctx.fill();
        }
      }
    }
    ctx.setLineDash([]);
  });
  if (hasData && Number.isFinite(data.threshold)) {
    const ty = Math.round(sy(data.threshold)) + 0.5;
    ctx.strokeStyle = colours.ink;
    ctx.lineWidth = 1;
    ctx.setLineDash([1, 3]);
    ctx.beginPath();
    ctx.moveTo(plot.x, ty);
    ctx.lineTo(plot.x + plot.w, ty);
    ctx.stroke();
    ctx.setLineDash([]);
    ctx.fillStyle = colours.muted;
    ctx.textAlign = 'right';
    const below = ty - 16 < plot.y;
    ctx.textBaseline = below ? 'top' : 'bottom';
    ctx.fillText(`threshold ${formatValue(data.threshold, yTicks.step / 10)}`, plot.x + plot.w - 4, below ? ty + 3 : ty - 2);
  }
  const seedNote = !hasData ? '' : nMax < 3 && (stat === 'mean' || stat === 'shaped')
    ? `no band: ${nMax === 1 ? 'one seed' : `${nMax} seeds`} per point (a band needs 3 or more)`
    : nMin !== nMax ? `points average ${nMin} to ${nMax} seeds` : '';
  if (seedNote) {
    ctx.fillStyle = colours.muted;
    ctx.textAlign = 'left';
    ctx.textBaseline = 'bottom';
    ctx.fillText(seedNote, plot.x + 6, plot.y + plot.h - 4);
  }
  ctx.restore();

  // ---- frame, axis titles, note
  ctx.strokeStyle = colours.muted;
  ctx.lineWidth = 1;
  ctx.beginPath();
  ctx.moveTo(plot.x + 0.5, plot.y);
  ctx.lineTo(plot.x + 0.5, plot.y + plot.h + 0.5);
  ctx.lineTo(plot.x + plot.w, plot.y + plot.h + 0.5);
  ctx.stroke();

  ctx.fillStyle = colours.muted;
  ctx.textAlign = 'center';
  ctx.textBaseline = 'bottom';
  ctx.fillText(xLabel, plot.x + plot.w / 2, height - 4);
  ctx.save();
  ctx.translate(14, plot.y + plot.h / 2);
  ctx.rotate(-Math.PI / 2);
  ctx.textBaseline = 'middle';
  ctx.fillText(yLabel, 0, 0);
  ctx.restore();

  if (!hasData && data.note) {
    ctx.fillStyle = colours.muted;
    ctx.font = `14px ${family}`;
    ctx.textAlign = 'center';
    ctx.textBaseline = 'middle';
    ctx.fillText(data.note, plot.x + plot.w / 2, plot.y + plot.h / 2);
    ctx.font = `12px ${family}`;
  }

  // ---- legend
  ctx.textAlign = 'left';
  ctx.textBaseline = 'middle';
  rows.forEach((row, r) => {
    let x = plot.x;
    const y = 10 + r * 18 + 8;
    for (const { i, w } of row) {
      if (i < 0) {
        ctx.fillStyle = colours.muted;
        ctx.fillText('faint: while learning', x, y);
        x += w + gap;
        continue;
      }
      drawSample(ctx, x, y, sample, series[i]);
      ctx.fillStyle = colours.ink;
      ctx.fillText(variants[i].label, x + sample + 6, y);
      x += w + gap;
    }
  });

  ctx.restore();
  return { plot, x: [0, xMax], y: [yLo, yHi], series, stat, seedLines, measure, seedNote };
}
