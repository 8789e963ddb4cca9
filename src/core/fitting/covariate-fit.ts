/**
 * Fitting with covariates in the mean: the checks of a fit's trend, the least-squares residuals the
 * WLS variogram is computed from, and the GLS trend coefficients with standard errors a fitted model
 * carries.
 *
 * Residuals: ordinary least squares of the values on the trend columns (./trend.ts), solved through the
 * Cholesky factor of XᵀX in the standardised columns. Coefficients: β̂ = (XᵀK⁻¹X)⁻¹XᵀK⁻¹y with
 * Cov(β̂) = (XᵀK⁻¹X)⁻¹ under the fitted covariance (taken as known; Cressie 1993 §3.4, from memory),
 * computed exactly (one n×n Cholesky factor) up to MAX_EXACT_SAMPLES samples and through the
 * nearest-neighbour factor (./vecchia.ts `vecchiaTrend`) above. Values as given: a log model's caller
 * passes ln(value), so the coefficients are on the ln scale. Cost: O(n·p²) residuals, n³/3 flops
 * coefficients (O(n·m³) above the limit).
 */
import type { CovarianceModel, Trend } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import { isCovariateTrend, isKnownTrend } from '../covariance/model.ts';
import { GapwiseError } from '../shared/errors.ts';
import {
  checkCovariateRows, designMatrix, trendColumnCount, trendCoefficients, trendFrame,
} from '../covariance/trend.ts';
import { buildKrigingSystem, systemTrendCoefficients } from '../prediction/kriging.ts';
import { vecchiaTrend } from './vecchia.ts';
import { choleskyInPlace, solveLowerInPlace, solveUpperTransposeInPlace } from '../linalg/linalg.ts';

import { MAX_EXACT_SAMPLES } from '../shared/sizes.ts';

/**
 * The trend of a fit checked against the samples: 'constant', 'linear', {known: m} or a covariate
 * trend whose categorical levels are recorded and whose covariate rows the samples carry.
 * Throws 'bad-option' for another trend, 'bad-model' / 'bad-value' for an unusable covariate trend.
 */
export function resolveFitTrend(samples: Samples, trend: Trend | undefined): { trend: Trend; known: boolean; p: number } {
  const t = trend ?? 'constant';
  const known = isKnownTrend(t) && Number.isFinite(t.known);
  if (t !== 'constant' && t !== 'linear' && !known && !isCovariateTrend(t)) {
    throw new GapwiseError('bad-option', `Expected the trend to be "constant", "linear", {"known": number} or {"covariates": [names]}, got ${JSON.stringify(t)}.`);
  }
  if (isCovariateTrend(t)) checkCovariateRows(t, samples.value.length, samples.covariates, 'sample');
  return { trend: t, known, p: trendColumnCount(t) };
}

/** Ordinary least-squares residuals of the values on the trend columns (for the WLS variogram). */
export function leastSquaresResiduals(samples: Samples, trend: Trend): Float64Array {
  const n = samples.value.length;
  const p = trendColumnCount(trend);
  const res = Float64Array.from(samples.value);
  if (p === 0) return res;
  const frame = trendFrame(trend, samples.x, samples.y, samples.covariates);
  const X = designMatrix(trend, samples.x, samples.y, frame, samples.covariates);
  const A = new Float64Array(p * p);
  const b = new Float64Array(p);
  for (let i = 0; i < n; i++) {
    for (let r = 0; r < p; r++) {
      b[r] += X[i * p + r] * samples.value[i];
      for (let c = 0; c <= r; c++) A[r * p + c] += X[i * p + r] * X[i * p + c];
    }
  }
  if (!choleskyInPlace(A, p)) {
    throw new GapwiseError('not-positive-definite', `The ${p} trend columns cannot be fitted by least squares: a covariate is constant over the samples, a level has no sample, or a covariate is a combination of the others; drop that covariate or add samples.`);
  }
  solveLowerInPlace(A, p, b);
  solveUpperTransposeInPlace(A, p, b);
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let a = 0; a < p; a++) s += X[i * p + a] * b[a];
    res[i] -= s;
  }
  return res;
}

/**
 * The model with `fit.coefficients` (name, estimate, standardError per trend column, in the columns'
 * own units; see ./trend.ts `trendCoefficients`) and `fit.trendVarianceExplained` (the share of the
 * values' variance the fitted trend's covariate and drift columns account for: 1 − var(y − Xβ̂) /
 * var(y − β̂₀-only fit), from 0 to 1). Values as given (ln values for a log model).
 */
export function attachTrendCoefficients(samples: Samples, model: CovarianceModel): CovarianceModel {
  if (!isCovariateTrend(model.trend)) return model;
  const n = samples.value.length;
  let coefficients;
  const plain: CovarianceModel = { ...model, transform: 'none' };
  if (n <= MAX_EXACT_SAMPLES) {
    const sys = buildKrigingSystem(samples, plain, { checkScale: false });
    coefficients = systemTrendCoefficients(sys);
  } else {
    const t = vecchiaTrend(samples, plain);
    coefficients = trendCoefficients(model.trend, t.frame, t.beta, t.betaCovariance);
  }
  const explained = varianceExplained(samples, model.trend, coefficients.map((c) => c.estimate));
  return { ...model, fit: { ...(model.fit ?? { method: 'manual', converged: true }), coefficients, trendVarianceExplained: explained } };
}

/** 1 − Σ(y − Xβ)² / Σ(y − ȳ)² with β in the columns' own units (constant at covariates 0, centroid). */
function varianceExplained(samples: Samples, trend: Trend, estimates: number[]): number {
  const n = samples.value.length;
  const p = estimates.length;
  const frame = trendFrame(trend, samples.x, samples.y, samples.covariates);
  // Columns in own units: no covariate standardisation, coordinates from the centroid in metres.
  const raw = { cx: frame.cx, cy: frame.cy, scale: 1 };
  const X = designMatrix(trend, samples.x, samples.y, raw, samples.covariates);
  let mean = 0;
  for (let i = 0; i < n; i++) mean += samples.value[i];
  mean /= n;
  let total = 0;
  let rest = 0;
  for (let i = 0; i < n; i++) {
    let fitted = 0;
    for (let a = 0; a < p; a++) fitted += X[i * p + a] * estimates[a];
    total += (samples.value[i] - mean) ** 2;
    rest += (samples.value[i] - fitted) ** 2;
  }
  if (!(total > 0)) return 0;
  return Math.min(1, Math.max(0, 1 - rest / total));
}
