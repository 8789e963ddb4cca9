/**
 * The pure part of a planar map's guides (./planar-guides.ts): round grid-line values for a visible
 * range, their labels, and the length of a scale bar. No Leaflet and no DOM, so it is tested in Node.
 */
import { niceTicks } from '../../io/ticks.ts';

/** Grid lines for the visible range: round x and y values, about `count` of each, and their step. */
export function gridLines(min: number, max: number, count: number): { values: number[]; step: number } {
  if (!(max > min)) return { values: [], step: 0 };
  const values = niceTicks(min, max, count);
  const step = values.length > 1 ? values[1] - values[0] : 0;
  return { values, step };
}

/**
 * A coordinate label without scientific notation or float noise: as many decimals as the step
 * needs, thousands separated ("12,500", "0.25").
 */
export function coordinateLabel(v: number, step: number): string {
  const decimals = step > 0 && step < 1 ? Math.min(10, Math.ceil(-Math.log10(step) - 1e-9)) : 0;
  const r = Number(v.toFixed(decimals));
  return (r === 0 ? 0 : r).toLocaleString('en-US', { minimumFractionDigits: decimals, maximumFractionDigits: decimals });
}

/** The longest round length (1, 2 or 5 × 10^k) that fits in `maxPixels` at `unitsPerPixel`, and its width. */
export function scaleLength(unitsPerPixel: number, maxPixels: number): { length: number; pixels: number } {
  if (!(unitsPerPixel > 0) || !(maxPixels > 0)) return { length: 0, pixels: 0 };
  const most = unitsPerPixel * maxPixels;
  const p = 10 ** Math.floor(Math.log10(most));
  const m = most / p;
  const length = (m >= 5 ? 5 : m >= 2 ? 2 : 1) * p;
  return { length: Number(length.toPrecision(6)), pixels: length / unitsPerPixel };
}
