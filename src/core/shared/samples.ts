/**
 * Samples in the working (metric) coordinate system: the shape every core function takes.
 * Coordinates in metres of the working CRS; values in the data unit (after any non-detect rule).
 */

export interface Samples {
  x: Float64Array;
  y: Float64Array;
  value: Float64Array;
  /**
   * Covariate columns of a covariate trend, already encoded (./covariates.ts `encodeCovariates`):
   * n×q row-major, q = `covariateColumnCount(trend)` (a numeric covariate is one column, a categorical
   * one an indicator column per level after the first). Absent when the trend uses no covariates.
   */
  covariates?: Float64Array;
}

/** The samples at the given indices, in that order (covariate rows carried along). */
export function pickSamples(samples: Samples, indices: ArrayLike<number>): Samples {
  const m = indices.length;
  const out: Samples = { x: new Float64Array(m), y: new Float64Array(m), value: new Float64Array(m) };
  const n = samples.value.length;
  const c = samples.covariates;
  const q = c && n > 0 ? c.length / n : 0;
  if (c) out.covariates = new Float64Array(m * q);
  for (let k = 0; k < m; k++) {
    const i = indices[k];
    out.x[k] = samples.x[i];
    out.y[k] = samples.y[i];
    out.value[k] = samples.value[i];
    if (c) out.covariates!.set(c.subarray(i * q, i * q + q), k * q);
  }
  return out;
}

/** Builds Samples from plain arrays (tests, fixtures). */
export function makeSamples(x: ArrayLike<number>, y: ArrayLike<number>, value: ArrayLike<number>): Samples {
  if (x.length !== y.length || x.length !== value.length) {
    throw new Error(`Expected x, y and value of equal length, got ${x.length}, ${y.length}, ${value.length}.`);
  }
  return { x: Float64Array.from(x), y: Float64Array.from(y), value: Float64Array.from(value) };
}

/** Centroid of the sample coordinates; core code subtracts it before building matrices. */
export function centroid(x: ArrayLike<number>, y: ArrayLike<number>): { cx: number; cy: number } {
  let sx = 0;
  let sy = 0;
  for (let i = 0; i < x.length; i++) {
    sx += x[i];
    sy += y[i];
  }
  return { cx: sx / x.length, cy: sy / y.length };
}
