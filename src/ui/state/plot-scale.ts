/**
 * Small helpers for the SVG charts: linear scales and histogram bins (ticks: io/ticks.ts). Pure
 * functions, no DOM; number formats are in io/format.ts.
 */

export interface LinearScale {
  (v: number): number;
  domain: [number, number];
  range: [number, number];
}

/** Maps [d0, d1] linearly onto [r0, r1]; a zero-width domain maps everything to the middle. */
export function linearScale(domain: [number, number], range: [number, number]): LinearScale {
  const [d0, d1] = domain;
  const [r0, r1] = range;
  const span = d1 - d0;
  const f = ((v: number) => (span === 0 ? (r0 + r1) / 2 : r0 + ((v - d0) / span) * (r1 - r0))) as LinearScale;
  f.domain = [d0, d1];
  f.range = [r0, r1];
  return f;
}

export interface HistogramBin {
  from: number;
  to: number;
  count: number;
}

/**
 * Equal-width histogram of the finite values. Bin count by Sturges' rule (⌈log₂ n⌉ + 1), at most 40,
 * unless given. The last bin is closed on the right so the maximum is counted.
 */
export function histogram(values: ArrayLike<number>, binCount?: number): HistogramBin[] {
  const v: number[] = [];
  for (let i = 0; i < values.length; i++) if (Number.isFinite(values[i])) v.push(values[i]);
  if (v.length === 0) return [];
  let min = Infinity;
  let max = -Infinity;
  for (const x of v) {
    if (x < min) min = x;
    if (x > max) max = x;
  }
  const k = Math.max(1, Math.min(40, binCount ?? Math.ceil(Math.log2(v.length)) + 1));
  if (min === max) return [{ from: min, to: max, count: v.length }];
  const width = (max - min) / k;
  const bins: HistogramBin[] = Array.from({ length: k }, (_, i) => ({
    from: min + i * width,
    to: i === k - 1 ? max : min + (i + 1) * width,
    count: 0,
  }));
  for (const x of v) bins[Math.min(k - 1, Math.floor((x - min) / width))].count++;
  return bins;
}

// Number formats live in io/format.ts (one function per meaning).
