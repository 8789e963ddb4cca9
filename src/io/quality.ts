/**
 * Data-quality checks on samples already in the working CRS: duplicate locations (grouped within a
 * tolerance in metres), outliers by the interquartile-range fence, summary statistics with the
 * sample skewness, and advice on a log transform for strongly skewed positive data.
 */

/**
 * Groups of indices whose locations lie within `tolerance` of each other (single linkage: a chain of
 * close points is one group). Sweep over the points sorted by x, so O(n log n) for spread-out data.
 */
export function duplicateGroups(x: ArrayLike<number>, y: ArrayLike<number>, tolerance: number): number[][] {
  const n = x.length;
  const tol = Math.max(tolerance, 0);
  const parent = new Int32Array(n);
  for (let i = 0; i < n; i++) parent[i] = i;
  const find = (i: number): number => {
    while (parent[i] !== i) {
      parent[i] = parent[parent[i]];
      i = parent[i];
    }
    return i;
  };
  const order = new Uint32Array(n);
  for (let i = 0; i < n; i++) order[i] = i;
  const xs = Float64Array.from(x);
  order.sort((a, b) => xs[a] - xs[b]);
  for (let a = 0; a < n; a++) {
    const i = order[a];
    for (let b = a + 1; b < n; b++) {
      const j = order[b];
      if (xs[j] - xs[i] > tol) break;
      const dy = y[j] - y[i];
      if (dy > tol || dy < -tol) continue;
      if (Math.hypot(xs[j] - xs[i], dy) <= tol) {
        const ri = find(i);
        const rj = find(j);
        if (ri !== rj) parent[Math.max(ri, rj)] = Math.min(ri, rj);
      }
    }
  }
  const groups = new Map<number, number[]>();
  for (let i = 0; i < n; i++) {
    const r = find(i);
    const g = groups.get(r);
    if (g) g.push(i);
    else groups.set(r, [i]);
  }
  return [...groups.values()].filter((g) => g.length > 1).sort((a, b) => a[0] - b[0]);
}

/** Quantile with linear interpolation between order statistics (type 7, the common default). */
export function quantile(sorted: ArrayLike<number>, p: number): number {
  const n = sorted.length;
  if (n === 0) return NaN;
  const h = (n - 1) * p;
  const lo = Math.floor(h);
  const hi = Math.min(lo + 1, n - 1);
  return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo]);
}

/**
 * Indices of values beyond 3 interquartile ranges below the first or above the third quartile
 * (Tukey's "far out" fence; common practice). Flagged only, never removed.
 */
export function outlierIndices(values: ArrayLike<number>, fence = 3): number[] {
  const n = values.length;
  if (n < 4) return [];
  const sorted = Float64Array.from(values).sort();
  const q1 = quantile(sorted, 0.25);
  const q3 = quantile(sorted, 0.75);
  const iqr = q3 - q1;
  const lo = q1 - fence * iqr;
  const hi = q3 + fence * iqr;
  const out: number[] = [];
  for (let i = 0; i < n; i++) if (values[i] < lo || values[i] > hi) out.push(i);
  return out;
}

export interface Summary {
  n: number;
  min: number;
  max: number;
  mean: number;
  median: number;
  /** Sample standard deviation (n − 1 divisor); 0 for one value. */
  sd: number;
  /** Moment skewness g1 = m3 / m2^1.5 (population moments); 0 when all values are equal. */
  skewness: number;
}

/** Summary statistics; for no values every field is 0 except n. */
export function summarise(values: ArrayLike<number>): Summary {
  const n = values.length;
  if (n === 0) return { n: 0, min: 0, max: 0, mean: 0, median: 0, sd: 0, skewness: 0 };
  const sorted = Float64Array.from(values).sort();
  let sum = 0;
  for (let i = 0; i < n; i++) sum += values[i];
  const mean = sum / n;
  let m2 = 0;
  let m3 = 0;
  for (let i = 0; i < n; i++) {
    const d = values[i] - mean;
    m2 += d * d;
    m3 += d * d * d;
  }
  const sd = n > 1 ? Math.sqrt(m2 / (n - 1)) : 0;
  m2 /= n;
  m3 /= n;
  // Relative threshold: a spread at rounding level is no spread.
  const skewness = m2 > 1e-24 * Math.max(1, mean * mean) ? m3 / Math.pow(m2, 1.5) : 0;
  return { n, min: sorted[0], max: sorted[n - 1], mean, median: quantile(sorted, 0.5), sd, skewness };
}

/** Skewness above which a log transform is suggested (common practice: g1 > 1). */
export const SKEWNESS_FOR_LOG = 1;

/**
 * Advice on a log transform: suggested for strongly right-skewed positive data; when values ≤ 0
 * forbid it, the advice says so. '' when no advice is needed.
 */
export function transformAdvice(summary: Summary): string {
  if (summary.n < 3 || summary.skewness <= SKEWNESS_FOR_LOG) return '';
  const g = summary.skewness.toFixed(2);
  if (summary.min <= 0) {
    return `The values are strongly right-skewed (skewness ${g}), but a log transform is not possible because some values are zero or negative (minimum ${summary.min}); consider a model without a transform or check those values.`;
  }
  return `The values are strongly right-skewed (skewness ${g} > ${SKEWNESS_FOR_LOG}) and all positive: consider the log transform (modelling the logarithm of the values), which usually gives a clearer variogram and better-calibrated uncertainty.`;
}
