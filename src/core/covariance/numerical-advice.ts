/**
 * What to try when the numbers fail (a covariance matrix that cannot be factorised, no finite
 * likelihood): the advice names the cause the data and model point to, in this order —
 * values too large to square in double precision (scale problem), samples at the same place with no
 * nugget, near-duplicate locations (closest pair under NEAR_DUPLICATE of the extent), a scale so long
 * that the covariance is nearly constant over the samples — and general advice otherwise.
 * Units: coordinates and scales in working-CRS metres. Cost: O(n log n) (closest pair by a sweep).
 */
import type { CovarianceModel } from './model.ts';

/** Largest |value − mean| whose square and sums over many samples stay finite (1e150² = 1e300). */
export const LARGEST_SQUARABLE = 1e150;
/** Closest pair distance, as a fraction of the extent's diagonal, below which samples count as near-duplicates. */
const NEAR_DUPLICATE = 1e-7;
/** A scale longer than this many extents makes the covariance nearly constant over the samples. */
const LONG_SCALE = 1e3;

function fmt(v: number): string {
  return Math.abs(v) >= 1e5 || (v !== 0 && Math.abs(v) < 1e-3) ? v.toExponential(2) : String(Number(v.toPrecision(4)));
}

/** Closest distance between two samples at different places and the count of samples at an earlier one's place. */
function closestPair(x: ArrayLike<number>, y: ArrayLike<number>): { distance: number; coincident: number } {
  const n = x.length;
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => x[a] - x[b] || y[a] - y[b]);
  let best = Infinity;
  let coincident = 0;
  for (let k = 1; k < n; k++) {
    if (x[order[k]] === x[order[k - 1]] && y[order[k]] === y[order[k - 1]]) coincident++;
  }
  for (let k = 0; k < n; k++) {
    const a = order[k];
    for (let l = k + 1; l < n; l++) {
      const b = order[l];
      const dx = x[b] - x[a];
      if (dx >= best) break;
      const d = Math.hypot(dx, y[b] - y[a]);
      if (d > 0 && d < best) best = d;
    }
  }
  return { distance: best, coincident };
}

/**
 * numericalFailureAdvice for some of the samples: those at `ids[0 … count)` of x, y and values (a
 * local neighbourhood whose matrix failed). Cost O(count log count).
 */
export function neighbourhoodFailureAdvice(
  ids: ArrayLike<number>, count: number, x: ArrayLike<number>, y: ArrayLike<number>, values: ArrayLike<number>, model?: CovarianceModel,
): string {
  const sx = new Float64Array(count);
  const sy = new Float64Array(count);
  const sv = new Float64Array(count);
  for (let a = 0; a < count; a++) {
    sx[a] = x[ids[a]];
    sy[a] = y[ids[a]];
    sv[a] = values[ids[a]];
  }
  return numericalFailureAdvice(sx, sy, sv, model);
}

/**
 * One sentence of advice (starting with a lower-case verb phrase, no final full stop) for a numerical
 * failure with these samples and, when known, this model.
 */
export function numericalFailureAdvice(
  x: ArrayLike<number>, y: ArrayLike<number>, values: ArrayLike<number>, model?: CovarianceModel,
): string {
  const n = values.length;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += values[i];
  mean /= n;
  let largest = 0;
  for (let i = 0; i < n; i++) largest = Math.max(largest, Math.abs(values[i] - mean), Math.abs(values[i]));
  if (!(largest <= LARGEST_SQUARABLE)) {
    return `the values reach ${fmt(largest)}, too large to square in double precision (the most is about ${fmt(LARGEST_SQUARABLE)}): rescale them (other units) or use a log transform`;
  }
  let sill = 0;
  let nugget = 0;
  let scale = 0;
  for (const s of model?.structures ?? []) {
    sill += s.sill;
    if (s.type === 'nugget') nugget += s.sill;
    else scale = Math.max(scale, s.scale);
  }
  const { distance, coincident } = closestPair(x, y);
  if (coincident > 0 && nugget === 0) {
    return `${coincident} sample${coincident === 1 ? ' shares its' : 's share their'} location with another and the model has no nugget: try merging duplicates or a model with a nugget`;
  }
  let xmin = Infinity, xmax = -Infinity, ymin = Infinity, ymax = -Infinity;
  for (let i = 0; i < n; i++) {
    xmin = Math.min(xmin, x[i]); xmax = Math.max(xmax, x[i]);
    ymin = Math.min(ymin, y[i]); ymax = Math.max(ymax, y[i]);
  }
  const extent = Math.hypot(xmax - xmin, ymax - ymin);
  if (Number.isFinite(distance) && extent > 0 && distance < NEAR_DUPLICATE * extent) {
    return `the closest two samples are ${fmt(distance)} m apart, ${fmt(distance / extent)} of the extent (${fmt(extent)} m): try merging near-duplicate locations or a larger nugget`;
  }
  if (scale > 0 && extent > 0 && scale > LONG_SCALE * extent) {
    return `the model's scale (${fmt(scale)} m) is ${fmt(scale / extent)} times the samples' extent (${fmt(extent)} m), so the covariance is nearly constant between samples: try a shorter scale, a nugget or a linear trend`;
  }
  if (model && sill > 0 && nugget < 1e-12 * sill) {
    return 'the model has (almost) no nugget: try a model with a nugget';
  }
  return 'try another family, a nugget, or a log transform for positive, right-skewed values';
}
