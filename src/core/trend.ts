/**
 * Trend (drift) design matrices for kriging and likelihood fitting.
 *
 * The mean of the surface is m(s) = f(s)ᵀβ with f = () for a known mean (simple kriging), f = (1) for
 * an unknown constant (ordinary kriging) and f = (1, x̃, ỹ) for a linear drift (universal kriging),
 * where x̃ = (x − cx)/scale, ỹ = (y − cy)/scale are coordinates centred on the sample centroid and
 * divided by their root-mean-square distance from it. Centring and scaling change β but not the column
 * space of X, so kriging means and variances are unchanged (an invertible change of trend basis only
 * reparameterises β), while XᵀK⁻¹X stays well conditioned even for UTM northings near 6·10⁶ m.
 * Units: cx, cy, scale in working-CRS metres; columns dimensionless. Cost O(n·p).
 */
import type { Trend } from './model.ts';
import { GapwiseError } from './errors.ts';

/** Centre and length used to turn working-CRS coordinates into trend columns. */
export interface CoordinateFrame {
  /** Centroid of the samples, metres. */
  cx: number;
  cy: number;
  /** Root-mean-square distance of the samples from the centroid, metres (1 when all coincide). */
  scale: number;
}

/** Number of trend columns p: 0 for a known mean, 1 for 'constant', 3 for 'linear'. */
export function trendColumnCount(trend: Trend): number {
  if (trend === 'constant') return 1;
  if (trend === 'linear') return 3;
  if (typeof trend === 'object' && trend !== null && typeof trend.known === 'number') return 0;
  throw new GapwiseError('bad-model', `Expected the trend to be "constant", "linear" or {"known": number}, got ${JSON.stringify(trend)}.`);
}

/** The known mean of a simple-kriging trend, or null when the mean is estimated. */
export function knownMean(trend: Trend): number | null {
  return typeof trend === 'object' && trend !== null ? trend.known : null;
}

/**
 * Centroid and root-mean-square radius of the sample coordinates. The centroid is computed in two
 * passes (mean, then mean of the deviations) so that coordinates near 6·10⁶ m keep their digits.
 */
export function coordinateFrame(x: ArrayLike<number>, y: ArrayLike<number>): CoordinateFrame {
  const n = x.length;
  if (n === 0) return { cx: 0, cy: 0, scale: 1 };
  let sx = 0;
  let sy = 0;
  for (let i = 0; i < n; i++) {
    sx += x[i];
    sy += y[i];
  }
  let cx = sx / n;
  let cy = sy / n;
  // Second pass corrects the rounding of the first sum.
  let dx = 0;
  let dy = 0;
  for (let i = 0; i < n; i++) {
    dx += x[i] - cx;
    dy += y[i] - cy;
  }
  cx += dx / n;
  cy += dy / n;
  let ss = 0;
  for (let i = 0; i < n; i++) {
    const a = x[i] - cx;
    const b = y[i] - cy;
    ss += a * a + b * b;
  }
  const scale = Math.sqrt(ss / n);
  return { cx, cy, scale: scale > 0 && Number.isFinite(scale) ? scale : 1 };
}

/** Coordinates minus the frame's centre (not scaled): what covariance matrices are built from. */
export function centreCoordinates(
  x: ArrayLike<number>, y: ArrayLike<number>, frame: CoordinateFrame,
): { u: Float64Array; v: Float64Array } {
  const n = x.length;
  const u = new Float64Array(n);
  const v = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    u[i] = x[i] - frame.cx;
    v[i] = y[i] - frame.cy;
  }
  return { u, v };
}

/**
 * Writes the p trend columns of one location into out[offset .. offset+p).
 * (x, y) are working-CRS coordinates; the frame centres and scales them.
 */
export function designRow(
  trend: Trend, x: number, y: number, frame: CoordinateFrame, out: Float64Array, offset = 0,
): void {
  const p = trendColumnCount(trend);
  if (p === 0) return;
  out[offset] = 1;
  if (p === 3) {
    out[offset + 1] = (x - frame.cx) / frame.scale;
    out[offset + 2] = (y - frame.cy) / frame.scale;
  }
}

/**
 * Design matrix X (n×p, row-major) of the trend at n locations. With p = 0 (known mean) the result
 * is empty.
 */
export function designMatrix(
  trend: Trend, x: ArrayLike<number>, y: ArrayLike<number>, frame: CoordinateFrame,
): Float64Array {
  const n = x.length;
  const p = trendColumnCount(trend);
  const X = new Float64Array(n * p);
  for (let i = 0; i < n; i++) designRow(trend, x[i], y[i], frame, X, i * p);
  return X;
}
