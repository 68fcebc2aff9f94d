// The page's one number formatter. Every number the page prints (table
// cells, axis ticks, step counts, map scales, episode read-outs) goes
// through formatNumber, which is built on Intl.NumberFormat with compact
// notation: 3 significant digits by default, 12.5K and 1.2M for large
// values, scientific notation below 0.001, a real minus sign, and an en dash
// for a missing value. Formatters are made once per set of options.

const cache = new Map();

function formatter(options) {
  const key = JSON.stringify(options);
  let f = cache.get(key);
  if (!f) {
    f = new Intl.NumberFormat('en', options);
    cache.set(key, f);
  }
  return f;
}

/** The text of a missing or non-finite number. */
export const MISSING = '–';

/**
 * A number as text.
 * @param {number} x
 * @param {object} [opts]
 *   digits:   significant digits (default 3)
 *   decimals: a fixed number of decimals instead (axis ticks), no compact notation
 *   compact:  false to write large numbers out in full (12,500 rather than 12.5K)
 */
export function formatNumber(x, { digits = 3, decimals, compact = true } = {}) {
  if (typeof x !== 'number' || !Number.isFinite(x)) return MISSING;
  let text;
  if (decimals !== undefined) {
    text = formatter({ minimumFractionDigits: decimals, maximumFractionDigits: decimals, useGrouping: false }).format(x);
  } else if (x !== 0 && Math.abs(x) < 1e-3) {
    text = formatter({ notation: 'scientific', maximumSignificantDigits: digits }).format(x).replace('E', 'e');
  } else {
    const options = { maximumSignificantDigits: digits };
    if (compact) options.notation = 'compact';
    text = formatter(options).format(x);
  }
  text = text.replace(/-/g, '−');
  return text === '−0' || /^−0(\.0*)?$/.test(text) ? text.slice(1) : text;
}

/** A whole count in full with thousands separators: 1,000,000. */
export function formatCount(x) {
  return formatNumber(x, { digits: 21, compact: false });
}
