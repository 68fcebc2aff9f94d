// critbox's colours for data: the series colours of curves and bars (one set
// for the light theme, one for the dark) and the diverging ramp of the value
// maps, both built from the page's own palette (paper, sand, teal, ink),
// plus the two marks drawn on maps and episodes (audit marks, spills).
// tests/node/palette.test.mjs checks the series and the ramp: even CIELAB
// lightness steps along each arm of the ramp, and a least CIEDE2000
// difference between any two series colours under normal vision and
// simulated protanopia, deuteranopia and tritanopia. Curves also differ by
// dash pattern (plot.js), a second cue.

/** Series colours on the light theme's paper: teal, plum, ochre, slate, rust, sage. */
export const SERIES_LIGHT = Object.freeze(['#136a58', '#7a4682', '#b07a2e', '#323f4a', '#8c4022', '#6b8a6c']);

/** The same six on the dark theme's ink. */
export const SERIES_DARK = Object.freeze(['#4dbfa3', '#cd8ac8', '#dcbe63', '#788691', '#c07248', '#b8e3b0']);

/**
 * The diverging ramp, from the most negative value to the most positive:
 * umber and sand below zero, paper at zero, teal above. Lightness rises
 * evenly from each end to the centre, so the size of a value reads in grey
 * too, and the two arms differ in hue for every kind of colour vision.
 */
export const RAMP = Object.freeze([
  '#533020', '#8b5734', '#b88756', '#dcbc92', // below zero, darkest first
  '#f9f3ea', // zero
  '#92ccc5', '#3e9f99', '#1d6f66', '#0d403b', // above zero, darkest last
]);

/** Marks on a value map: cells where the shaping audit finds a changed best action. */
export const AUDIT_MARK = '#d7263d';
/** Spills on the rover's floor in an episode picture. */
export const SPILL = '#3f88c5';

/** Index of the zero stop in RAMP. */
export const RAMP_ZERO = (RAMP.length - 1) / 2;

/** Share of an arm left unused next to zero when a range stays on one side
 * of it, so the value nearest zero does not look like zero itself. */
const ONE_SIDED_START = 0.15;

const rgbOf = (h) => [1, 3, 5].map((i) => parseInt(h.slice(i, i + 2), 16));
const STOPS = RAMP.map(rgbOf);

/** The ramp at position p in [-1, 1] (-1 the most negative end, 0 zero), as [r, g, b]. */
export function rampRgb(p) {
  const x = (Math.max(-1, Math.min(1, Number.isFinite(p) ? p : 0)) + 1) * RAMP_ZERO;
  const i = Math.min(RAMP.length - 2, Math.floor(x));
  const f = x - i;
  return STOPS[i].map((v, k) => Math.round(v + (STOPS[i + 1][k] - v) * f));
}

/**
 * Where value v sits on the ramp for values spanning [lo, hi]: split at zero
 * when the range holds both signs (both signs on one scale, the larger
 * extreme at the end of its arm, so a small value looks small whatever its
 * sign); on one arm only when it does not (the value nearest zero lightest).
 */
export function rampPosition(v, lo, hi) {
  if (!Number.isFinite(v)) return 0;
  if (lo < 0 && hi > 0) return Math.max(-1, Math.min(1, v / Math.max(-lo, hi)));
  const span = hi - lo || 1;
  const away = hi <= 0 ? (hi - v) / span : (v - lo) / span; // 0 nearest zero, 1 farthest
  const p = ONE_SIDED_START + (1 - ONE_SIDED_START) * Math.max(0, Math.min(1, away));
  return hi <= 0 ? -p : p;
}

/** CSS colour of value v on the ramp for the range [lo, hi]. */
export function rampColour(v, lo, hi) {
  const [r, g, b] = rampRgb(rampPosition(v, lo, hi));
  return `rgb(${r},${g},${b})`;
}

/** Ink that reads on the ramp at position p: dark on the light middle, white on the dark ends. */
export function inkOnRamp(p) {
  return Math.abs(p) < 0.6 ? '#1b1b1b' : '#ffffff';
}

/** The series colours for a colour scheme. */
export function seriesColours(dark) {
  return dark ? SERIES_DARK : SERIES_LIGHT;
}
