// Number formatting used for every figure on the page.
import { num } from './dom.js';

/** Significant-figure formatting ('—' for a missing value). */
export function fmt(value, digits = 4) {
  const x = num(value);
  if (x === null) return '—';
  if (x === 0) return '0';
  return String(Number(x.toPrecision(digits)));
}

const PREFIXES = [[1e9, 'G'], [1e6, 'M'], [1e3, 'k'], [1, ''], [1e-3, 'm'], [1e-6, 'µ'], [1e-9, 'n'], [1e-12, 'p']];

/** A value with an SI prefix and a unit: eng(0.0012, 'V') is '1.2 mV'. */
export function eng(value, unit, digits = 4) {
  const x = num(value);
  if (x === null) return '—';
  if (x === 0) return `0 ${unit}`;
  const magnitude = Math.abs(x);
  for (const [scale, prefix] of PREFIXES) {
    if (magnitude >= scale * 0.9995) return `${fmt(x / scale, digits)} ${prefix}${unit}`;
  }
  return `${fmt(x, digits)} ${unit}`;
}
