/**
 * Trend (drift) design matrices for kriging and likelihood fitting.
 *
 * The mean of the surface is m(s) = f(s)ᵀβ with f = () for a known mean (simple kriging), f = (1) for
 * an unknown constant (ordinary kriging) and f = (1, x̃, ỹ) for a linear drift (universal kriging),
 * where x̃ = (x − cx)/scale, ỹ = (y − cy)/scale are coordinates centred on the sample centroid and
 * divided by their root-mean-square distance from it. Centring and scaling change β but not the column
 * space of X, so kriging means and variances are unchanged (an invertible change of trend basis only
 * reparameterises β), while XᵀK⁻¹X stays well conditioned even for UTM northings near 6·10⁶ m.
 * A covariate trend (kriging with external drift) has f = (1, [x̃, ỹ], c̃₁ … c̃_q): the encoded covariate
 * columns of ./covariates.ts, each centred on its sample mean and divided by its root-mean-square
 * deviation (again only a change of basis). `trendCoefficients` turns β̂ and its covariance (XᵀK⁻¹X)⁻¹
 * back into the columns' own units: the constant at covariates 0 and the sample centroid, x, y per
 * metre, each covariate per unit of the covariate.
 * Units: cx, cy, scale in working-CRS metres; columns dimensionless. Cost O(n·p).
 */
import type { CovariateTrend, Trend } from './model.ts';
import { isCovariateTrend, isKnownTrend } from './model.ts';
import { GapwiseError } from '../shared/errors.ts';

/** Centre and length used to turn working-CRS coordinates into trend columns. */
export interface CoordinateFrame {
  /** Centroid of the samples, metres. */
  cx: number;
  cy: number;
  /** Root-mean-square distance of the samples from the centroid, metres (1 when all coincide). */
  scale: number;
  /** Covariate trend only: sample mean of each encoded covariate column. */
  covariateCentre?: Float64Array;
  /** Covariate trend only: root-mean-square deviation of each column from its mean (1 when constant). */
  covariateScale?: Float64Array;
}

/**
 * Number of encoded covariate columns q of a trend: one per numeric covariate, levels − 1 per
 * categorical one; 0 for the other trends. Throws 'bad-model' for a categorical covariate whose levels
 * are not recorded yet (./covariates.ts `resolveCovariateTrend` records them from the samples).
 */
export function covariateColumnCount(trend: Trend): number {
  if (!isCovariateTrend(trend)) return 0;
  let q = 0;
  for (const name of trend.covariates) {
    const levels = trend.levels?.[name];
    if (levels) q += levels.length - 1;
    else if (trend.categorical?.includes(name)) {
      throw new GapwiseError('bad-model', `The levels of the categorical covariate "${name}" are not recorded; expected them from the samples before the trend is used.`);
    } else q += 1;
  }
  return q;
}

/** Number of trend columns p: 0 for a known mean, 1 for 'constant', 3 for 'linear', 1 (+2) + q for covariates. */
export function trendColumnCount(trend: Trend): number {
  if (trend === 'constant') return 1;
  if (trend === 'linear') return 3;
  if (isKnownTrend(trend)) return 0;
  if (isCovariateTrend(trend)) return 1 + (trend.coordinates ? 2 : 0) + covariateColumnCount(trend);
  throw new GapwiseError('bad-model', `Expected the trend to be "constant", "linear", {"known": number} or {"covariates": [names]}, got ${JSON.stringify(trend)}.`);
}

/** True when the trend has x, y drift columns (after the constant). */
export function hasCoordinateDrift(trend: Trend): boolean {
  return trend === 'linear' || (isCovariateTrend(trend) && trend.coordinates === true);
}

/** The known mean of a simple-kriging trend, or null when the mean is estimated. */
export function knownMean(trend: Trend): number | null {
  return isKnownTrend(trend) ? trend.known : null;
}

/**
 * Names of the trend columns in order: "constant", then "x", "y" for a drift, then each numeric
 * covariate by name and each level after the first of a categorical one as "name=level".
 */
export function trendColumnNames(trend: Trend): string[] {
  const p = trendColumnCount(trend);
  if (p === 0) return [];
  const names = ['constant'];
  if (hasCoordinateDrift(trend)) names.push('x', 'y');
  if (isCovariateTrend(trend)) {
    for (const name of trend.covariates) {
      const levels = trend.levels?.[name];
      if (levels) for (const level of levels.slice(1)) names.push(`${name}=${level}`);
      else names.push(name);
    }
  }
  return names;
}

/**
 * The frame of a trend over the samples: the coordinate frame and, for a covariate trend, the mean and
 * root-mean-square deviation of each encoded covariate column (`covariates`, n×q row-major).
 */
export function trendFrame(
  trend: Trend, x: ArrayLike<number>, y: ArrayLike<number>, covariates?: ArrayLike<number>,
): CoordinateFrame {
  const frame = coordinateFrame(x, y);
  const q = covariateColumnCount(trend);
  if (q === 0) return frame;
  const n = x.length;
  checkCovariateRows(trend, n, covariates, 'sample');
  const c = covariates!;
  const centre = new Float64Array(q);
  const scale = new Float64Array(q);
  for (let k = 0; k < q; k++) {
    let s = 0;
    for (let i = 0; i < n; i++) s += c[i * q + k];
    const mean = n > 0 ? s / n : 0;
    let ss = 0;
    for (let i = 0; i < n; i++) ss += (c[i * q + k] - mean) ** 2;
    const rms = n > 0 ? Math.sqrt(ss / n) : 0;
    centre[k] = mean;
    scale[k] = rms > 0 && Number.isFinite(rms) ? rms : 1;
  }
  return { ...frame, covariateCentre: centre, covariateScale: scale };
}

/**
 * Checks that `covariates` holds m rows of the trend's q encoded columns, every one finite; throws
 * GapwiseError 'bad-value' naming the first bad row (`what` 1, e.g. "sample 3", "target 7").
 */
export function checkCovariateRows(trend: Trend, m: number, covariates: ArrayLike<number> | undefined, what: string): void {
  const q = covariateColumnCount(trend);
  if (q === 0) return;
  const names = trendColumnNames(trend).slice(1 + (hasCoordinateDrift(trend) ? 2 : 0));
  if (!covariates) {
    throw new GapwiseError('bad-value', `Expected covariate values (${names.join(', ')}) at each ${what}, got none.`);
  }
  if (covariates.length !== m * q) {
    throw new GapwiseError('bad-value', `Expected ${m * q} covariate values (${m} ${what}s × ${q} columns), got ${covariates.length}.`);
  }
  for (let i = 0; i < m * q; i++) {
    if (!Number.isFinite(covariates[i])) {
      throw new GapwiseError('bad-value', `${what[0].toUpperCase()}${what.slice(1)} ${Math.floor(i / q) + 1} has the covariate ${names[i % q]} = ${covariates[i]}; expected a finite number.`);
    }
  }
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
 * (x, y) are working-CRS coordinates; the frame centres and scales them. A covariate trend reads the
 * location's q encoded covariate values from covariates[covariateOffset .. +q) and throws 'bad-value'
 * when none are given.
 */
export function designRow(
  trend: Trend, x: number, y: number, frame: CoordinateFrame, out: Float64Array, offset = 0,
  covariates?: ArrayLike<number>, covariateOffset = 0,
): void {
  if (trend === 'constant') {
    out[offset] = 1;
    return;
  }
  const p = trendColumnCount(trend);
  if (p === 0) return;
  out[offset] = 1;
  let k = offset + 1;
  if (hasCoordinateDrift(trend)) {
    out[k++] = (x - frame.cx) / frame.scale;
    out[k++] = (y - frame.cy) / frame.scale;
  }
  const q = covariateColumnCount(trend);
  if (q === 0) return;
  if (!covariates) {
    throw new GapwiseError('bad-value', `Expected covariate values (${(trend as CovariateTrend).covariates.join(', ')}) at the location (${x}, ${y}), got none.`);
  }
  const centre = frame.covariateCentre;
  const scale = frame.covariateScale;
  for (let a = 0; a < q; a++) {
    const c = covariates[covariateOffset + a];
    out[k++] = centre && scale ? (c - centre[a]) / scale[a] : c;
  }
}

/**
 * Design matrix X (n×p, row-major) of the trend at n locations (covariates n×q row-major for a
 * covariate trend). With p = 0 (known mean) the result is empty.
 */
export function designMatrix(
  trend: Trend, x: ArrayLike<number>, y: ArrayLike<number>, frame: CoordinateFrame, covariates?: ArrayLike<number>,
): Float64Array {
  const n = x.length;
  const p = trendColumnCount(trend);
  const q = covariateColumnCount(trend);
  const X = new Float64Array(n * p);
  for (let i = 0; i < n; i++) designRow(trend, x[i], y[i], frame, X, i * p, covariates, i * q);
  return X;
}

/** One trend coefficient in its column's own units, with its GLS standard error. */
export interface TrendCoefficient {
  /** Column name (see `trendColumnNames`). */
  name: string;
  estimate: number;
  /** √ of the diagonal of (XᵀK⁻¹X)⁻¹ in these units. */
  standardError: number;
}

/**
 * β̂ (in the frame's columns) and its covariance (p×p row-major, the inverse of XᵀK⁻¹X in the same
 * columns) in the columns' own units: the constant at covariates 0 and the sample centroid, x and y per
 * metre from the centroid, each covariate column per unit. A linear map T: β = T·β̂, Cov = T·V·Tᵀ.
 */
export function trendCoefficients(
  trend: Trend, frame: CoordinateFrame, beta: ArrayLike<number>, covariance: ArrayLike<number>,
): TrendCoefficient[] {
  const names = trendColumnNames(trend);
  const p = names.length;
  if (p === 0) return [];
  const T = new Float64Array(p * p);
  for (let a = 0; a < p; a++) T[a * p + a] = 1;
  let k = 1;
  if (hasCoordinateDrift(trend)) {
    T[k * p + k] = 1 / frame.scale;
    T[(k + 1) * p + k + 1] = 1 / frame.scale;
    k += 2;
  }
  const centre = frame.covariateCentre;
  const scale = frame.covariateScale;
  if (centre && scale) {
    for (let a = 0; k + a < p; a++) {
      T[(k + a) * p + k + a] = 1 / scale[a];
      T[k + a] = -centre[a] / scale[a];
    }
  }
  const out: TrendCoefficient[] = [];
  for (let a = 0; a < p; a++) {
    let estimate = 0;
    for (let b = 0; b < p; b++) estimate += T[a * p + b] * beta[b];
    let variance = 0;
    for (let b = 0; b < p; b++) {
      let s = 0;
      for (let c = 0; c < p; c++) s += covariance[b * p + c] * T[a * p + c];
      variance += T[a * p + b] * s;
    }
    out.push({ name: names[a], estimate, standardError: Math.sqrt(Math.max(0, variance)) });
  }
  return out;
}
