// The page's data colours (web/js/palette.js): the colour science is checked
// against published values first, then the ramp's lightness and the series
// colours' separation under simulated colour-vision deficiencies.
import { test } from 'node:test';
import assert from 'node:assert/strict';
import { lab, labSeen, deltaE2000, MACHADO_2009 } from './colour.mjs';
import { SERIES_LIGHT, SERIES_DARK, RAMP, RAMP_ZERO, rampPosition, rampRgb } from '../../web/js/palette.js';

/** Least CIEDE2000 difference between any two series colours, per kind of vision. */
const MIN_SERIES_DE = 12;
/** Largest departure of one lightness step from the arm's mean step, in L*. */
const MAX_STEP_SPREAD = 1.5;
/** Least CIEDE2000 difference between the two arms' stops at the same distance from zero. */
const MIN_ARM_DE = 8;
const VISIONS = [null, 'protanopia', 'deuteranopia', 'tritanopia'];
const close = (a, b, tol, what) => assert.ok(Math.abs(a - b) <= tol, `${what}: ${a} vs ${b}`);

test('CIEDE2000 matches the published test pairs', () => {
  // Sharma, Wu & Dalal (2005), Color Res. Appl. 30(1), Table 1: pairs 1, 2,
  // 3, 7, 17, 18, 19, 20, 25, to the 4 decimals printed there.
  const pairs = [
    [[50, 2.6772, -79.7751], [50, 0, -82.7485], 2.0425],
    [[50, 3.1571, -77.2803], [50, 0, -82.7485], 2.8615],
    [[50, 2.8361, -74.02], [50, 0, -82.7485], 3.4412],
    [[50, 0, 0], [50, -1, 2], 2.3669],
    [[50, 2.5, 0], [73, 25, -18], 27.1492],
    [[50, 2.5, 0], [61, -5, 29], 22.8977],
    [[50, 2.5, 0], [56, -27, -3], 31.903],
    [[50, 2.5, 0], [58, 24, 15], 19.4535],
    [[60.2574, -34.0099, 36.2677], [60.4626, -34.1751, 39.4387], 1.2644],
  ];
  for (const [a, b, want] of pairs) {
    close(deltaE2000(a, b), want, 5e-5, `ΔE00 of ${a} and ${b}`);
    close(deltaE2000(b, a), want, 5e-5, 'symmetric');
  }
});

test('sRGB to CIELAB matches reference values', () => {
  // IEC 61966-2-1 sRGB with the D65 white of CIE 15:2004: white is L* 100,
  // a* b* 0; pure red is L* 53.24, a* 80.09, b* 67.20 (Lindbloom's
  // calculator, from memory); mid grey #777777 is L* 50.03 (from memory).
  const [L, a, b] = lab('#ffffff');
  close(L, 100, 1e-3, 'white L*'); close(a, 0, 1e-2, 'white a*'); close(b, 0, 1e-2, 'white b*');
  const red = lab('#ff0000');
  close(red[0], 53.24, 0.01, 'red L*'); close(red[1], 80.09, 0.02, 'red a*'); close(red[2], 67.2, 0.02, 'red b*');
  close(lab('#777777')[0], 50.03, 0.02, 'grey L*');
});

test('the deficiency matrices keep white white and flatten the confusion axis', () => {
  // Machado, Oliveira & Fernandes (2009): every row of a dichromacy matrix sums to 1.
  for (const [name, m] of Object.entries(MACHADO_2009)) {
    for (const row of m) close(row[0] + row[1] + row[2], 1, 2e-6, `${name} row sum`);
  }
  // A red and a green of equal lightness are far apart normally and close
  // for a deuteranope (common practice, no source: the red-green confusion).
  const normal = deltaE2000(labSeen('#b4503c', null), labSeen('#5a8c3c', null));
  const deutan = deltaE2000(labSeen('#b4503c', 'deuteranopia'), labSeen('#5a8c3c', 'deuteranopia'));
  assert.ok(normal > 30 && deutan < normal / 2, `normal ${normal}, deuteranopia ${deutan}`);
});

test('the ramp: paper at zero, lightness rising in even steps from each end to the centre', () => {
  assert.equal(RAMP.length % 2, 1);
  const L = RAMP.map((h) => lab(h)[0]);
  const arms = [L.slice(0, RAMP_ZERO + 1), L.slice(RAMP_ZERO).reverse()];
  for (const [side, arm] of [['below zero', arms[0]], ['above zero', arms[1]]]) {
    const steps = arm.slice(1).map((v, i) => v - arm[i]);
    assert.ok(steps.every((s) => s > 0), `${side}: L* ${arm.map((v) => v.toFixed(1))} must rise toward zero`);
    const mean = steps.reduce((a, b) => a + b, 0) / steps.length;
    for (const s of steps) close(s, mean, MAX_STEP_SPREAD, `${side}: a lightness step`);
  }
  close(arms[0][0], arms[1][0], 1.5, 'both ends equally dark');
  assert.ok(L[RAMP_ZERO] > 94, `zero is paper-light (L* ${L[RAMP_ZERO]})`);
  for (const vision of VISIONS) {
    for (let k = 1; k <= RAMP_ZERO; k++) {
      const e = deltaE2000(labSeen(RAMP[RAMP_ZERO - k], vision), labSeen(RAMP[RAMP_ZERO + k], vision));
      assert.ok(e >= MIN_ARM_DE, `${vision || 'normal vision'}: the arms' stops ${k} from zero differ by only ΔE00 ${e.toFixed(1)}`);
    }
  }
});

test('ramp positions: split at zero for mixed signs, one arm otherwise', () => {
  // Common practice, no source.
  assert.equal(rampPosition(0, -10, 5), 0);
  assert.equal(rampPosition(-10, -10, 5), -1);
  assert.equal(rampPosition(5, -10, 5), 0.5);
  assert.equal(rampPosition(-5, -10, 5), -0.5);
  assert.ok(rampPosition(-100, -100, -20) === -1 && rampPosition(-20, -100, -20) > -0.2);
  assert.ok(rampPosition(3, 1, 3) === 1 && rampPosition(1, 1, 3) > 0);
  assert.deepEqual(rampRgb(0), [0xf9, 0xf3, 0xea]);
});

for (const [theme, colours, background] of [['light', SERIES_LIGHT, '#fffdf7'], ['dark', SERIES_DARK, '#1c2027']]) {
  test(`series colours (${theme}): apart for every kind of vision, and visible on the chart`, () => {
    assert.equal(colours.length, 6);
    assert.equal(new Set(colours).size, colours.length);
    for (const vision of VISIONS) {
      for (let i = 0; i < colours.length; i++) {
        for (let j = i + 1; j < colours.length; j++) {
          const e = deltaE2000(labSeen(colours[i], vision), labSeen(colours[j], vision));
          assert.ok(e >= MIN_SERIES_DE, `${vision || 'normal vision'}: ${colours[i]} and ${colours[j]} differ by ΔE00 ${e.toFixed(1)} < ${MIN_SERIES_DE}`);
        }
      }
    }
    // Against the chart background: a clear lightness gap (common practice, no source).
    for (const c of colours) {
      const gap = Math.abs(lab(c)[0] - lab(background)[0]);
      assert.ok(gap >= 14, `${c} is too close in lightness to the ${theme} background (${gap.toFixed(1)})`);
    }
  });
}
