/**
 * Samples in the working (metric) coordinate system: the shape every core function takes.
 * Coordinates in metres of the working CRS; values in the data unit (after any non-detect rule).
 */

export interface Samples {
  x: Float64Array;
  y: Float64Array;
  value: Float64Array;
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
