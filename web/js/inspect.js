// The value views of a trained policy, drawn from the probe's answers
// (probe.js), with the diverging ramp of palette.js (hue for the sign,
// lightness for the size):
//   grid tasks      a map of the floor coloured by value, with the policy's
//                   action probabilities as arrows and the shaping audit's
//                   marks on cells where the shaped reward changes the best action;
//   other finite    one row per state: value bar and the policy's action shares;
//   continuous      a slice over two state variables (the others held at a
//                   chosen value), coloured by the value or by the action.
// Draw functions take (ctx, data, options) and keep no state.

import { SERIES_LIGHT, AUDIT_MARK, rampColour, rampPosition, inkOnRamp } from './palette.js';
import { formatNumber } from './numbers.js';

function range(values) {
  let lo = Infinity;
  let hi = -Infinity;
  for (const v of values) if (Number.isFinite(v)) { if (v < lo) lo = v; if (v > hi) hi = v; }
  if (!(lo <= hi)) return [0, 1];
  if (hi - lo < 1e-12) return [lo - 0.5, hi + 0.5];
  return [lo, hi];
}

const fmtNum = (v) => formatNumber(v);

/** A horizontal colour scale with its end values (and a tick at zero when the range holds it). */
function drawScale(ctx, x, y, w, h, lo, hi, label, colours) {
  for (let i = 0; i < w; i++) {
    ctx.fillStyle = rampColour(lo + ((hi - lo) * i) / Math.max(1, w - 1), lo, hi);
    ctx.fillRect(x + i, y, 1, h);
  }
  ctx.strokeStyle = colours.muted;
  ctx.strokeRect(x + 0.5, y + 0.5, w - 1, h - 1);
  if (lo < 0 && hi > 0) {
    const zx = Math.round(x + (-lo / (hi - lo)) * (w - 1)) + 0.5;
    ctx.beginPath();
    ctx.moveTo(zx, y - 3);
    ctx.lineTo(zx, y + h + 3);
    ctx.stroke();
  }
  ctx.fillStyle = colours.ink;
  ctx.textBaseline = 'middle';
  ctx.textAlign = 'right';
  ctx.fillText(fmtNum(lo), x - 4, y + h / 2);
  ctx.textAlign = 'left';
  ctx.fillText(fmtNum(hi), x + w + 4, y + h / 2);
  ctx.textAlign = 'center';
  ctx.textBaseline = 'top';
  ctx.fillText(label, x + w / 2, y + h + 3);
}

// ---------------------------------------------------------------- grid map

/** Unit vectors of the grid's actions (north, east, south, west). */
const GRID_DIRS = [[0, -1], [1, 0], [0, 1], [-1, 0]];

/**
 * Draw a grid task's floor coloured by value with policy arrows.
 * @param {object} data
 *   map: [string] rows of the map; cells: Map 'row,col' → {value, probs: number[]};
 *   marks: Set of 'row,col' where the audit finds a changed best action;
 *   valueLabel: text under the colour scale
 * @param {object} options {width, height, dpr, colours: {background, ink, muted, grid}, font}
 * @returns {{cell: number, x0: number, y0: number, range: [number, number]}}
 */
export function drawGridMap(ctx, data, options) {
  const { width, height, dpr = 1 } = options;
  const colours = { background: '#fff', ink: '#222', muted: '#666', grid: '#ddd', ...options.colours };
  const font = options.font || 'sans-serif';
  ctx.save();
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  ctx.fillStyle = colours.background;
  ctx.fillRect(0, 0, width, height);
  const rows = data.map.length;
  const cols = Math.max(1, ...data.map.map((r) => r.length));
  const scaleH = 34;
  const cell = Math.max(4, Math.floor(Math.min((width - 16) / cols, (height - scaleH - 16) / rows)));
  const x0 = Math.floor((width - cell * cols) / 2);
  const y0 = 8;
  const values = [...data.cells.values()].map((c) => c.value);
  const [lo, hi] = range(values);
  ctx.font = `${Math.max(9, Math.floor(cell * 0.32))}px ${font}`;
  for (let r = 0; r < rows; r++) {
    for (let c = 0; c < cols; c++) {
      const ch = data.map[r][c] ?? '#';
      const x = x0 + c * cell;
      const y = y0 + r * cell;
      const info = data.cells.get(`${r},${c}`);
      if (ch === '#' || !info) {
        ctx.fillStyle = ch === '#' ? colours.grid : colours.background;
        ctx.fillRect(x, y, cell, cell);
        if (ch === '#') {
          ctx.strokeStyle = colours.muted;
          ctx.globalAlpha = 0.35;
          ctx.beginPath();
          ctx.moveTo(x, y + cell); ctx.lineTo(x + cell, y);
          ctx.stroke();
          ctx.globalAlpha = 1;
        }
        if (ch === 'D' || ch === 'S' || ch === '~') {
          ctx.fillStyle = colours.ink;
          ctx.textAlign = 'center';
          ctx.textBaseline = 'middle';
          ctx.fillText(ch === 'D' ? 'dock' : ch, x + cell / 2, y + cell / 2);
        }
        continue;
      }
      ctx.fillStyle = Number.isFinite(info.value) ? rampColour(info.value, lo, hi) : colours.grid;
      ctx.fillRect(x, y, cell, cell);
      const ink = inkOnRamp(rampPosition(info.value, lo, hi));
      if (ch === '~') { // a spill: hatch it
        ctx.strokeStyle = ink;
        ctx.globalAlpha = 0.5;
        ctx.beginPath();
        for (let k = -cell; k < cell; k += 6) { ctx.moveTo(x + k, y + cell); ctx.lineTo(x + k + cell, y); }
        ctx.save(); ctx.rect(x, y, cell, cell); ctx.clip(); ctx.stroke(); ctx.restore();
        ctx.globalAlpha = 1;
      }
      if (ch === 'D') {
        ctx.strokeStyle = ink;
        ctx.lineWidth = 2;
        ctx.strokeRect(x + 3, y + 3, cell - 6, cell - 6);
        ctx.lineWidth = 1;
      }
      if (ch === 'S') {
        ctx.fillStyle = ink;
        ctx.textAlign = 'left';
        ctx.textBaseline = 'top';
        ctx.fillText('S', x + 2, y + 1);
      }
      // arrows: one per action, length by probability
      if (Array.isArray(info.probs) && info.probs.length === 4 && ch !== 'D') {
        const cx = x + cell / 2;
        const cy = y + cell / 2;
        ctx.strokeStyle = ink;
        ctx.fillStyle = ink;
        ctx.lineWidth = Math.max(1, cell / 22);
        for (let a = 0; a < 4; a++) {
          const p = info.probs[a];
          if (!(p > 0.04)) continue;
          const len = (cell / 2 - 3) * p;
          const [dx, dy] = GRID_DIRS[a];
          const ex = cx + dx * len;
          const ey = cy + dy * len;
          ctx.beginPath(); ctx.moveTo(cx, cy); ctx.lineTo(ex, ey); ctx.stroke();
          const head = Math.min(cell / 6, 3 + len / 3);
          ctx.beginPath();
          ctx.moveTo(ex + dx * head * 0.6, ey + dy * head * 0.6);
          ctx.lineTo(ex - dy * head * 0.5, ey + dx * head * 0.5);
          ctx.lineTo(ex + dy * head * 0.5, ey - dx * head * 0.5);
          ctx.closePath(); ctx.fill();
        }
        ctx.lineWidth = 1;
      }
      if (data.marks && data.marks.has(`${r},${c}`)) {
        ctx.strokeStyle = colours.background;
        ctx.lineWidth = 4;
        ctx.strokeRect(x + 2, y + 2, cell - 4, cell - 4);
        ctx.strokeStyle = AUDIT_MARK;
        ctx.lineWidth = 2;
        ctx.setLineDash([4, 3]);
        ctx.strokeRect(x + 2, y + 2, cell - 4, cell - 4);
        ctx.setLineDash([]);
        ctx.lineWidth = 1;
        ctx.fillStyle = AUDIT_MARK;
        ctx.textAlign = 'right';
        ctx.textBaseline = 'top';
        ctx.fillText('!', x + cell - 4, y + 2);
      }
    }
  }
  ctx.font = `11px ${font}`;
  const sw = Math.min(220, cell * cols - 80);
  drawScale(ctx, x0 + (cell * cols - sw) / 2, y0 + rows * cell + 6, sw, 10, lo, hi, data.valueLabel || 'value', colours);
  ctx.restore();
  return { cell, x0, y0, range: [lo, hi] };
}

// ---------------------------------------------------------------- state list

/**
 * Finite tasks that are not grids: one row per state with its value and the
 * policy's share of each action (stacked, in the series colours with
 * patterns as a second cue).
 * data: {states: [{label, value, probs}], actions: [names], valueLabel}
 */
export function drawStateList(ctx, data, options) {
  const { width, height, dpr = 1 } = options;
  const colours = { background: '#fff', ink: '#222', muted: '#666', grid: '#ddd', ...options.colours };
  const palette = options.palette && options.palette.length ? options.palette : SERIES_LIGHT;
  const font = options.font || 'sans-serif';
  ctx.save();
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  ctx.fillStyle = colours.background;
  ctx.fillRect(0, 0, width, height);
  ctx.font = `11px ${font}`;
  const n = data.states.length;
  const top = 26;
  const rowH = Math.max(8, Math.min(22, Math.floor((height - top - 8) / Math.max(1, n))));
  const labelW = Math.min(160, Math.max(60, ...data.states.map((s) => ctx.measureText(s.label).width + 8)));
  const valueW = Math.floor((width - labelW - 70) * 0.45);
  const policyX = labelW + valueW + 56;
  const policyW = width - policyX - 8;
  const [lo, hi] = range(data.states.map((s) => s.value));
  const zeroIn = lo < 0 && hi > 0;
  const vx = (v) => labelW + ((v - Math.min(lo, 0)) / (Math.max(hi, 0) - Math.min(lo, 0) || 1)) * valueW;
  ctx.fillStyle = colours.muted;
  ctx.textBaseline = 'top';
  ctx.textAlign = 'left';
  let vl = data.valueLabel || 'value';
  while (vl.length > 4 && ctx.measureText(vl).width > valueW + 40) vl = `${vl.slice(0, -2)}…`;
  ctx.fillText(vl, labelW, 4);
  let lx = policyX;
  data.actions.forEach((a, k) => {
    ctx.fillStyle = palette[k % palette.length];
    ctx.fillRect(lx, 6, 10, 10);
    ctx.fillStyle = colours.ink;
    ctx.fillText(a, lx + 13, 4);
    lx += ctx.measureText(a).width + 26;
  });
  ctx.textBaseline = 'middle';
  data.states.forEach((s, i) => {
    const y = top + i * rowH;
    ctx.fillStyle = colours.ink;
    ctx.textAlign = 'right';
    if (rowH >= 10) ctx.fillText(s.label, labelW - 6, y + rowH / 2);
    if (Number.isFinite(s.value)) {
      const a = vx(Math.min(0, s.value));
      const b = vx(Math.max(0, s.value));
      ctx.fillStyle = rampColour(s.value, lo, hi);
      ctx.fillRect(a, y + 2, Math.max(1, b - a), rowH - 4);
      if (rowH >= 12) {
        ctx.fillStyle = colours.ink;
        ctx.textAlign = 'left';
        ctx.fillText(fmtNum(s.value), labelW + valueW + 6, y + rowH / 2);
      }
    }
    if (Array.isArray(s.probs)) {
      let x = policyX;
      s.probs.forEach((p, k) => {
        const w = Math.max(0, p) * policyW;
        ctx.fillStyle = palette[k % palette.length];
        ctx.fillRect(x, y + 2, w, rowH - 4);
        x += w;
      });
    }
  });
  if (zeroIn) {
    ctx.strokeStyle = colours.muted;
    ctx.beginPath();
    ctx.moveTo(vx(0) + 0.5, top);
    ctx.lineTo(vx(0) + 0.5, top + n * rowH);
    ctx.stroke();
  }
  ctx.restore();
}

// ---------------------------------------------------------------- slices

/**
 * A heatmap over two state variables.
 * data: {nx, ny, x: [lo, hi], y: [lo, hi], z: Float64Array (row-major, y
 *        from low to high), xLabel, yLabel, zLabel}
 */
export function drawSlice(ctx, data, options) {
  const { width, height, dpr = 1 } = options;
  const colours = { background: '#fff', ink: '#222', muted: '#666', grid: '#ddd', ...options.colours };
  const font = options.font || 'sans-serif';
  ctx.save();
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  ctx.fillStyle = colours.background;
  ctx.fillRect(0, 0, width, height);
  ctx.font = `11px ${font}`;
  const plot = { x: 58, y: 8, w: width - 70, h: height - 8 - 64 };
  const [lo, hi] = range(data.z);
  const cw = plot.w / data.nx;
  const ch = plot.h / data.ny;
  for (let j = 0; j < data.ny; j++) {
    for (let i = 0; i < data.nx; i++) {
      const v = data.z[j * data.nx + i];
      ctx.fillStyle = Number.isFinite(v) ? rampColour(v, lo, hi) : colours.grid;
      ctx.fillRect(plot.x + i * cw, plot.y + plot.h - (j + 1) * ch, Math.ceil(cw), Math.ceil(ch));
    }
  }
  ctx.strokeStyle = colours.muted;
  ctx.strokeRect(plot.x + 0.5, plot.y + 0.5, plot.w, plot.h);
  ctx.fillStyle = colours.ink;
  ctx.textBaseline = 'top';
  ctx.textAlign = 'left';
  ctx.fillText(fmtNum(data.x[0]), plot.x, plot.y + plot.h + 3);
  ctx.textAlign = 'right';
  ctx.fillText(fmtNum(data.x[1]), plot.x + plot.w, plot.y + plot.h + 3);
  ctx.textAlign = 'center';
  ctx.fillText(data.xLabel, plot.x + plot.w / 2, plot.y + plot.h + 3);
  ctx.textAlign = 'right';
  ctx.textBaseline = 'bottom';
  ctx.fillText(fmtNum(data.y[1]), plot.x - 4, plot.y + 12);
  ctx.textBaseline = 'top';
  ctx.fillText(fmtNum(data.y[0]), plot.x - 4, plot.y + plot.h - 12);
  ctx.save();
  ctx.translate(12, plot.y + plot.h / 2);
  ctx.rotate(-Math.PI / 2);
  ctx.textAlign = 'center';
  ctx.textBaseline = 'middle';
  ctx.fillText(data.yLabel, 0, 0);
  ctx.restore();
  const sw = Math.min(220, plot.w - 80);
  drawScale(ctx, plot.x + (plot.w - sw) / 2, plot.y + plot.h + 22, sw, 10, lo, hi, data.zLabel, colours);
  ctx.restore();
  return { plot, range: [lo, hi] };
}

/** Observations for a slice: nx × ny points over vars ix, iy, the others at `fixed`. */
export function sliceObservations(k, ix, iy, xr, yr, nx, ny, fixed) {
  const obs = new Float64Array(nx * ny * k);
  for (let j = 0; j < ny; j++) {
    for (let i = 0; i < nx; i++) {
      const o = (j * nx + i) * k;
      for (let d = 0; d < k; d++) obs[o + d] = fixed[d];
      obs[o + ix] = xr[0] + ((i + 0.5) / nx) * (xr[1] - xr[0]);
      obs[o + iy] = yr[0] + ((j + 0.5) / ny) * (yr[1] - yr[0]);
    }
  }
  return obs;
}
