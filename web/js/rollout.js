// Rollout pictures: one frame of an episode played by a trained policy
// (Run.rollout in the wasm layer gives the frames). drawFrame(ctx, scene, t,
// options) is pure; the page steps t with requestAnimationFrame.
//
// scene: {kind, frames: Float64Array, stride, k (state variables), width
//   (action part), names (state variable names), actions (action names),
//   low, high (state ranges), map (grid rows) or null}
// Frame t: frames[t*stride ..]: k state values, `width` action values (a
// discrete action is its index then NaNs), the task's reward, a flag (0 going
// on, 1 the step ended the episode, 2/3 the final frame after a terminal
// state / the step limit).

import { formatNumber } from './numbers.js';
import { SPILL } from './palette.js';

/** Number of frames in a scene. */
export function frameCount(scene) {
  return Math.floor(scene.frames.length / scene.stride);
}

/** The state, action, reward and flag of frame t. */
export function frameAt(scene, t) {
  const o = t * scene.stride;
  const f = scene.frames;
  return {
    state: Array.from(f.subarray(o, o + scene.k)),
    action: Array.from(f.subarray(o + scene.k, o + scene.k + scene.width)),
    reward: f[o + scene.k + scene.width],
    flag: f[o + scene.k + scene.width + 1],
  };
}

/** Sum of rewards before frame t. */
export function returnBefore(scene, t) {
  let g = 0;
  for (let i = 0; i < t; i++) {
    const r = scene.frames[i * scene.stride + scene.k + scene.width];
    if (Number.isFinite(r)) g += r;
  }
  return g;
}

/** A read-out number with `d` decimals. */
function fmt(v, d = 2) {
  return formatNumber(v, { decimals: d });
}

function actionText(scene, fr) {
  if (!fr.action.length || !Number.isFinite(fr.action[0])) return '';
  const discrete = fr.action.slice(1).every((x) => Number.isNaN(x)) && Number.isInteger(fr.action[0]) && scene.actions.length > 1;
  if (discrete && scene.actions[fr.action[0]] !== undefined) return scene.actions[fr.action[0]];
  return fr.action.map((a, i) => `${scene.actions[i] || 'a'} ${fmt(a)}`).join(', ');
}

/**
 * Draw frame t.
 * options: {width, height, dpr, colours: {background, ink, muted, grid, accent}, font}
 */
export function drawFrame(ctx, scene, t, options) {
  const { width, height, dpr = 1 } = options;
  const colours = { background: '#fff', ink: '#222', muted: '#666', grid: '#ddd', accent: '#136a58', ...options.colours };
  const font = options.font || 'sans-serif';
  ctx.save();
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  ctx.fillStyle = colours.background;
  ctx.fillRect(0, 0, width, height);
  ctx.font = `12px ${font}`;
  const n = frameCount(scene);
  const tt = Math.max(0, Math.min(n - 1, t));
  const fr = frameAt(scene, tt);
  const area = { x: 8, y: 8, w: width - 16, h: height - 44 };
  const draw = PAINTERS[scene.kind] || paintSeries;
  draw(ctx, scene, tt, fr, area, colours);
  // caption: step, action, return so far
  const last = fr.flag >= 2;
  const g = returnBefore(scene, tt);
  let text = `step ${tt} of ${n - 1}`;
  if (!last) text += ` · action: ${actionText(scene, fr)}`;
  text += ` · return so far ${fmt(g)}`;
  if (last) text += fr.flag === 2 ? ' · episode over (terminal state)' : ' · stopped at the step limit';
  ctx.fillStyle = colours.ink;
  ctx.textAlign = 'left';
  ctx.textBaseline = 'bottom';
  ctx.fillText(text, 8, height - 8);
  ctx.restore();
}

// ---------------------------------------------------------------- painters

function paintGrid(ctx, scene, t, fr, a, c) {
  const map = scene.map || [];
  const rows = map.length || 1;
  const cols = Math.max(1, ...map.map((r) => r.length));
  const cell = Math.floor(Math.min(a.w / cols, a.h / rows));
  const x0 = a.x + Math.floor((a.w - cell * cols) / 2);
  const y0 = a.y;
  for (let r = 0; r < rows; r++) {
    for (let col = 0; col < cols; col++) {
      const ch = map[r][col] ?? '#';
      const x = x0 + col * cell;
      const y = y0 + r * cell;
      ctx.fillStyle = ch === '#' ? c.muted : c.background;
      ctx.globalAlpha = ch === '#' ? 0.55 : 1;
      ctx.fillRect(x, y, cell, cell);
      ctx.globalAlpha = 1;
      ctx.strokeStyle = c.grid;
      ctx.strokeRect(x + 0.5, y + 0.5, cell - 1, cell - 1);
      if (ch === '~') {
        ctx.fillStyle = SPILL;
        ctx.globalAlpha = 0.35;
        ctx.beginPath();
        ctx.ellipse(x + cell / 2, y + cell / 2, cell * 0.38, cell * 0.24, 0, 0, 2 * Math.PI);
        ctx.fill();
        ctx.globalAlpha = 1;
      } else if (ch === 'D') {
        ctx.strokeStyle = c.accent;
        ctx.lineWidth = 2;
        ctx.strokeRect(x + 4, y + 4, cell - 8, cell - 8);
        ctx.lineWidth = 1;
        ctx.fillStyle = c.accent;
        ctx.textAlign = 'center';
        ctx.textBaseline = 'middle';
        ctx.fillText('D', x + cell / 2, y + cell / 2);
      } else if ('<>^v'.includes(ch)) {
        ctx.fillStyle = c.muted;
        ctx.textAlign = 'center';
        ctx.textBaseline = 'middle';
        ctx.fillText(ch, x + cell / 2, y + cell / 2);
      }
    }
  }
  // the trail so far, then the rover
  ctx.strokeStyle = c.accent;
  ctx.globalAlpha = 0.45;
  ctx.lineWidth = Math.max(2, cell / 10);
  ctx.beginPath();
  for (let i = 0; i <= t; i++) {
    const o = i * scene.stride;
    const x = x0 + (scene.frames[o + 1] + 0.5) * cell;
    const y = y0 + (scene.frames[o] + 0.5) * cell;
    if (i === 0) ctx.moveTo(x, y); else ctx.lineTo(x, y);
  }
  ctx.stroke();
  ctx.globalAlpha = 1;
  ctx.lineWidth = 1;
  const rx = x0 + (fr.state[1] + 0.5) * cell;
  const ry = y0 + (fr.state[0] + 0.5) * cell;
  ctx.fillStyle = c.ink;
  ctx.fillRect(rx - cell * 0.3, ry - cell * 0.22, cell * 0.6, cell * 0.44);
  ctx.fillStyle = c.background;
  for (const dx of [-0.18, 0.18]) {
    ctx.beginPath();
    ctx.arc(rx + dx * cell, ry + cell * 0.22, cell * 0.08, 0, 2 * Math.PI);
    ctx.fill();
  }
  const dir = fr.flag < 2 && Number.isInteger(fr.action[0]) ? [[0, -1], [1, 0], [0, 1], [-1, 0]][fr.action[0]] : null;
  if (dir) {
    ctx.strokeStyle = c.accent;
    ctx.lineWidth = 2;
    ctx.beginPath();
    ctx.moveTo(rx, ry);
    ctx.lineTo(rx + dir[0] * cell * 0.5, ry + dir[1] * cell * 0.5);
    ctx.stroke();
    ctx.lineWidth = 1;
  }
}

function paintCartpole(ctx, scene, t, fr, a, c) {
  const [x, , theta] = fr.state;
  const lim = scene.high[0] || 2.4;
  const groundY = a.y + a.h * 0.78;
  const sx = (v) => a.x + a.w / 2 + (v / lim) * (a.w / 2 - 30);
  ctx.strokeStyle = c.muted;
  ctx.beginPath();
  ctx.moveTo(sx(-lim), groundY); ctx.lineTo(sx(lim), groundY);
  for (const e of [-lim, lim]) { ctx.moveTo(sx(e), groundY - 10); ctx.lineTo(sx(e), groundY + 10); }
  ctx.stroke();
  const cx = sx(x);
  const cw = 56;
  const chh = 24;
  ctx.fillStyle = c.ink;
  ctx.fillRect(cx - cw / 2, groundY - chh - 6, cw, chh);
  const poleLen = a.h * 0.6;
  const px = cx;
  const py = groundY - chh - 6;
  ctx.strokeStyle = c.accent;
  ctx.lineWidth = 6;
  ctx.lineCap = 'round';
  ctx.beginPath();
  ctx.moveTo(px, py);
  ctx.lineTo(px + Math.sin(theta) * poleLen, py - Math.cos(theta) * poleLen);
  ctx.stroke();
  ctx.lineWidth = 1;
  ctx.lineCap = 'butt';
  if (fr.flag < 2 && Number.isInteger(fr.action[0])) {
    const dirn = fr.action[0] === 0 ? -1 : 1;
    ctx.fillStyle = c.muted;
    ctx.beginPath();
    const ax = cx + dirn * (cw / 2 + 6);
    ctx.moveTo(ax, groundY - chh / 2 - 6 - 8);
    ctx.lineTo(ax + dirn * 14, groundY - chh / 2 - 6);
    ctx.lineTo(ax, groundY - chh / 2 - 6 + 8);
    ctx.closePath();
    ctx.fill();
  }
}

function paintMountainCar(ctx, scene, t, fr, a, c) {
  const lo = scene.low[0];
  const hi = scene.high[0];
  const hill = (p) => Math.sin(3 * p);
  const sx = (p) => a.x + 20 + ((p - lo) / (hi - lo)) * (a.w - 40);
  const sy = (h) => a.y + a.h * 0.85 - ((h + 1) / 2) * a.h * 0.7;
  ctx.strokeStyle = c.muted;
  ctx.lineWidth = 2;
  ctx.beginPath();
  for (let i = 0; i <= 120; i++) {
    const p = lo + ((hi - lo) * i) / 120;
    if (i === 0) ctx.moveTo(sx(p), sy(hill(p))); else ctx.lineTo(sx(p), sy(hill(p)));
  }
  ctx.stroke();
  ctx.lineWidth = 1;
  // the goal flag at the right edge
  ctx.strokeStyle = c.ink;
  ctx.beginPath();
  ctx.moveTo(sx(hi), sy(hill(hi)));
  ctx.lineTo(sx(hi), sy(hill(hi)) - 30);
  ctx.stroke();
  ctx.fillStyle = c.accent;
  ctx.fillRect(sx(hi), sy(hill(hi)) - 30, 16, 10);
  const p = fr.state[0];
  const slope = Math.atan(3 * Math.cos(3 * p) * ((a.h * 0.35) / ((a.w - 40) / (hi - lo))));
  ctx.save();
  ctx.translate(sx(p), sy(hill(p)));
  ctx.rotate(-slope);
  ctx.fillStyle = c.ink;
  ctx.fillRect(-16, -16, 32, 12);
  ctx.fillStyle = c.background;
  ctx.strokeStyle = c.ink;
  for (const dx of [-9, 9]) { ctx.beginPath(); ctx.arc(dx, -4, 4, 0, 2 * Math.PI); ctx.fill(); ctx.stroke(); }
  ctx.restore();
}

function paintPendulum(ctx, scene, t, fr, a, c) {
  const theta = fr.state[0];
  const cx = a.x + a.w / 2;
  const cy = a.y + a.h / 2;
  const len = Math.min(a.w, a.h) * 0.4;
  ctx.strokeStyle = c.grid;
  ctx.beginPath();
  ctx.arc(cx, cy, len, 0, 2 * Math.PI);
  ctx.stroke();
  ctx.strokeStyle = c.accent;
  ctx.lineWidth = 6;
  ctx.lineCap = 'round';
  const ex = cx + Math.sin(theta) * len;
  const ey = cy - Math.cos(theta) * len;
  ctx.beginPath();
  ctx.moveTo(cx, cy);
  ctx.lineTo(ex, ey);
  ctx.stroke();
  ctx.lineCap = 'butt';
  ctx.lineWidth = 1;
  ctx.fillStyle = c.ink;
  ctx.beginPath(); ctx.arc(ex, ey, 9, 0, 2 * Math.PI); ctx.fill();
  ctx.beginPath(); ctx.arc(cx, cy, 4, 0, 2 * Math.PI); ctx.fill();
  const u = fr.action[0];
  if (fr.flag < 2 && Number.isFinite(u)) {
    // the torque as an arc around the pivot, its length by size (limit 5)
    const span = Math.max(-1, Math.min(1, u / 5)) * Math.PI * 0.8;
    ctx.strokeStyle = c.muted;
    ctx.lineWidth = 3;
    ctx.beginPath();
    ctx.arc(cx, cy, 22, -Math.PI / 2, -Math.PI / 2 + span, span < 0);
    ctx.stroke();
    ctx.lineWidth = 1;
  }
}

function paintLine(ctx, scene, t, fr, a, c) {
  const lo = scene.low[0];
  const hi = scene.high[0];
  const sx = (v) => a.x + 20 + ((v - lo) / (hi - lo)) * (a.w - 40);
  const y = a.y + a.h / 2;
  ctx.strokeStyle = c.muted;
  ctx.beginPath();
  ctx.moveTo(sx(lo), y); ctx.lineTo(sx(hi), y);
  ctx.moveTo(sx(0), y - 14); ctx.lineTo(sx(0), y + 14);
  ctx.stroke();
  // the path so far
  ctx.strokeStyle = c.accent;
  ctx.globalAlpha = 0.4;
  ctx.beginPath();
  for (let i = 0; i <= t; i++) {
    const v = scene.frames[i * scene.stride];
    const yy = y + 20 + (i / Math.max(1, frameCount(scene) - 1)) * (a.h / 2 - 30);
    if (i === 0) ctx.moveTo(sx(v), yy); else ctx.lineTo(sx(v), yy);
  }
  ctx.stroke();
  ctx.globalAlpha = 1;
  ctx.fillStyle = c.ink;
  ctx.beginPath(); ctx.arc(sx(fr.state[0]), y, 8, 0, 2 * Math.PI); ctx.fill();
  const u = fr.action[0];
  if (fr.flag < 2 && Number.isFinite(u)) {
    ctx.strokeStyle = c.accent;
    ctx.lineWidth = 3;
    ctx.beginPath();
    ctx.moveTo(sx(fr.state[0]), y - 16);
    ctx.lineTo(sx(fr.state[0]) + u * 12, y - 16);
    ctx.stroke();
    ctx.lineWidth = 1;
  }
}

/** Any other task: each state variable against time, the current step marked. */
function paintSeries(ctx, scene, t, fr, a, c) {
  const n = frameCount(scene);
  const k = scene.k;
  const bandH = a.h / Math.max(1, k);
  for (let d = 0; d < k; d++) {
    const y0 = a.y + d * bandH;
    const vals = [];
    for (let i = 0; i < n; i++) vals.push(scene.frames[i * scene.stride + d]);
    let lo = Math.min(...vals);
    let hi = Math.max(...vals);
    if (!(hi > lo)) { lo -= 1; hi += 1; }
    const sx = (i) => a.x + 90 + (i / Math.max(1, n - 1)) * (a.w - 100);
    const sy = (v) => y0 + bandH - 6 - ((v - lo) / (hi - lo)) * (bandH - 12);
    ctx.fillStyle = c.ink;
    ctx.textAlign = 'left';
    ctx.textBaseline = 'middle';
    const named = k === 1 && scene.tableStates && scene.tableStates[fr.state[d]];
    ctx.fillText(named ? `state = ${named}` : `${scene.names[d] || `s${d}`} = ${fmt(fr.state[d])}`, a.x, y0 + bandH / 2);
    ctx.strokeStyle = c.accent;
    ctx.beginPath();
    for (let i = 0; i <= t; i++) { if (i === 0) ctx.moveTo(sx(i), sy(vals[i])); else ctx.lineTo(sx(i), sy(vals[i])); }
    ctx.stroke();
    ctx.strokeStyle = c.grid;
    ctx.beginPath();
    ctx.moveTo(sx(t), y0 + 2); ctx.lineTo(sx(t), y0 + bandH - 2);
    ctx.stroke();
  }
}

const PAINTERS = {
  grid: paintGrid,
  cartpole: paintCartpole,
  mountain_car: paintMountainCar,
  pendulum: paintPendulum,
  lqr: paintLine,
};
