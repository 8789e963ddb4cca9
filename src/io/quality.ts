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
  const xs = x instanceof Float64Array ? x : Float64Array.from(x);
  const order = orderOf(xs);
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
  // Only roots with company get a list: no array per sample for the (usual) sample with none.
  // The order is no longer needed: its array counts each root's points.
  const size = order.fill(0);
  for (let i = 0; i < n; i++) size[find(i)]++;
  const groups = new Map<number, number[]>();
  for (let i = 0; i < n; i++) {
    const r = find(i);
    if (size[r] < 2) continue;
    const g = groups.get(r);
    if (g) g.push(i);
    else groups.set(r, [i]);
  }
  return [...groups.values()].sort((a, b) => a[0] - b[0]);
}

const LITTLE_ENDIAN = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

/**
 * Indices of `x` in ascending order of its values: a least-significant-digit radix sort on the doubles'
 * bits (four passes of 16 bits; a double's bits, with the sign bit flipped for positives and all bits
 * inverted for negatives, order like the numbers), several times faster than a comparison sort of
 * millions of indices.
 */
export function orderOf(x: Float64Array): Uint32Array {
  const n = x.length;
  let order = new Uint32Array(n);
  for (let i = 0; i < n; i++) order[i] = i;
  if (n < 1024 || !LITTLE_ENDIAN) return order.sort((a, b) => x[a] - x[b]);
  const words = new Uint32Array(x.buffer, x.byteOffset, 2 * n);
  let next = new Uint32Array(n);
  const count = new Uint32Array(65536);
  for (let pass = 0; pass < 4; pass++) {
    const high = pass >= 2;
    const shift = (pass & 1) * 16;
    const digit = (j: number) => {
      const h = words[2 * j + 1];
      const w = high ? h : words[2 * j];
      const key = h >>> 31 ? ~w : high ? (w | 0x80000000) : w;
      return (key >>> shift) & 0xffff;
    };
    count.fill(0);
    for (let j = 0; j < n; j++) count[digit(j)]++;
    let sum = 0;
    for (let d = 0; d < 65536; d++) {
      const c = count[d];
      count[d] = sum;
      sum += c;
    }
    for (let i = 0; i < n; i++) {
      const j = order[i];
      next[count[digit(j)]++] = j;
    }
    const t = order;
    order = next;
    next = t;
  }
  return order;
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

/** The values in ascending order, in a new array (callers that need both may share it: `outlierIndices`, `summarise`). */
export function sortedCopy(values: ArrayLike<number>): Float64Array {
  return (values instanceof Float64Array ? values.slice() : Float64Array.from(values)).sort();
}

/**
 * Indices of values beyond 3 interquartile ranges below the first or above the third quartile
 * (Tukey's "far out" fence; common practice). Flagged only, never removed.
 */
export function outlierIndices(values: ArrayLike<number>, fence = 3, sortedValues?: Float64Array): number[] {
  const n = values.length;
  if (n < 4) return [];
  const sorted = sortedValues ?? sortedCopy(values);
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
export function summarise(values: ArrayLike<number>, sortedValues?: Float64Array): Summary {
  const n = values.length;
  if (n === 0) return { n: 0, min: 0, max: 0, mean: 0, median: 0, sd: 0, skewness: 0 };
  const sorted = sortedValues ?? sortedCopy(values);
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
const SKEWNESS_FOR_LOG = 1;

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
  return `The values are strongly right-skewed (skewness ${g} > ${SKEWNESS_FOR_LOG}) and all positive: consider modelling their logarithm (the log transform), which usually gives a clearer variogram and better-calibrated uncertainty.`;
}
