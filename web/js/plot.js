// What every chart of the page shares, with no chart of its own: a variant's
// colour and dash pattern (the dash is a second cue for readers who cannot
// tell the colours apart), sizing a canvas to the device's pixels, round tick
// values, tick labels, the legend sample, and finding the runs of finite
// points a line is drawn through. The learning curves (chart.js), the
// log-scale lines (logchart.js), the sensitivity plots and the tables' legend
// swatches build on these. Colours come from palette.js, numbers are written
// by numbers.js.

import { SERIES_LIGHT } from './palette.js';
import { formatNumber } from './numbers.js';

/** Dash patterns, one per variant in order (CSS px); the first is solid. */
export const DASHES = [[], [9, 4], [2, 3], [11, 3, 2, 3], [5, 5], [14, 3, 2, 3, 2, 3]];

/** Series colours when the caller gives none (the light theme's). */
export const PALETTE = SERIES_LIGHT;

/** The colour and dash pattern of the i-th series. */
export function seriesStyle(i, palette = PALETTE) {
  // Past the palette's length the dash cycle is shifted, so no two of the
  // first palette.length × DASHES.length variants share both cues.
  const lap = Math.floor(i / palette.length);
  return { colour: palette[i % palette.length], dash: DASHES[(i + lap) % DASHES.length] };
}

/** Size a canvas to css px × devicePixelRatio; returns true when it changed. */
export function sizeCanvas(canvas, cssWidth, cssHeight, dpr) {
  const w = Math.max(1, Math.round(cssWidth * dpr));
  const h = Math.max(1, Math.round(cssHeight * dpr));
  canvas.style.width = `${cssWidth}px`;
  canvas.style.height = `${cssHeight}px`;
  if (canvas.width === w && canvas.height === h) return false;
  canvas.width = w;
  canvas.height = h;
  return true;
}

/** About `target` round tick values (1, 2, 5 × 10^k) covering [min, max]. */
export function niceTicks(min, max, target = 5) {
  if (!(Number.isFinite(min) && Number.isFinite(max)) || max <= min) return { step: 1, ticks: [min] };
  const raw = (max - min) / Math.max(1, target);
  const mag = 10 ** Math.floor(Math.log10(raw));
  const norm = raw / mag;
  const step = (norm < 1.5 ? 1 : norm < 3.5 ? 2 : norm < 7.5 ? 5 : 10) * mag;
  const ticks = [];
  const first = Math.ceil(min / step - 1e-9) * step;
  for (let t = first; t <= max + step * 1e-9; t += step) ticks.push(Math.abs(t) < step * 1e-9 ? 0 : t);
  return { step, ticks };
}

/** Environment-step labels: 500, 2K, 12.5K, 1.2M. */
export function formatSteps(v) {
  return formatNumber(v);
}

/** A value label with as many decimals as the tick step needs. */
export function formatValue(v, step) {
  return formatNumber(v, { decimals: step >= 1 ? 0 : Math.min(6, Math.ceil(-Math.log10(step) - 1e-9)) });
}

/** Contiguous index runs where pred(i) holds. */
export function runsWhere(n, pred) {
  const runs = [];
  let start = -1;
  for (let i = 0; i < n; i++) {
    if (pred(i)) { if (start < 0) start = i; } else if (start >= 0) { runs.push([start, i - 1]); start = -1; }
  }
  if (start >= 0) runs.push([start, n - 1]);
  return runs;
}

/** A legend sample: band patch behind a short line in the variant's style. */
export function drawSample(ctx, x, y, length, style) {
  ctx.save();
  ctx.fillStyle = style.colour;
  ctx.globalAlpha = 0.17;
  ctx.fillRect(x, y - 5, length, 10);
  ctx.globalAlpha = 1;
  ctx.strokeStyle = style.colour;
  ctx.lineWidth = 2;
  ctx.setLineDash(style.dash);
  ctx.beginPath();
  ctx.moveTo(x, y);
  ctx.lineTo(x + length, y);
  ctx.stroke();
  ctx.restore();
}

/**
 * Starts a drawing on `ctx`: scaled to CSS pixels (`options.dpr`), the
 * background filled, the font set to `fontPx`. Saves the context (the
 * caller restores it). Returns the size, the colours (defaults filled in)
 * and the font family.
 */
export function beginDrawing(ctx, options, fontPx) {
  const { width, height, dpr = 1 } = options;
  const colours = { background: '#fff', ink: '#222', muted: '#666', grid: '#ddd', ...options.colours };
  const family = options.font || 'sans-serif';
  ctx.save();
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  ctx.fillStyle = colours.background;
  ctx.fillRect(0, 0, width, height);
  ctx.font = `${fontPx}px ${family}`;
  return { width, height, colours, family };
}
