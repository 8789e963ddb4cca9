/**
 * Leave-one-out cross-validation of a covariance model in closed form: one factorisation, no refits.
 *
 * With B = [[K, X], [Xᵀ, 0]]⁻¹ the top-left block is P = K⁻¹ − K⁻¹X·G⁻¹·XᵀK⁻¹ (G = XᵀK⁻¹X), and
 * the residual of sample i predicted from the others is eᵢ = [P·y]ᵢ / Pᵢᵢ with variance σᵢ² = 1/Pᵢᵢ
 * (Dubrule 1983, Math. Geol. 15; without a trend P = K⁻¹, Rasmussen & Williams 2006 §5.4.2).
 * P·y = K⁻¹(y − Xβ̂) comes from the kriging system (./kriging.ts); diag(P) from Z = L⁻¹:
 * (K⁻¹)ᵢᵢ = Σₖ Zₖᵢ² and the trend correction ‖Lg⁻¹·(ZᵀW)ᵢ‖² with W = L⁻¹X. σᵢ² is the variance of a
 * measurement at sample i (it includes the nugget), hence `sdObserved`.
 * A log transform cross-validates ln(value): every figure is then on the log scale (`scale: 'log'`).
 * Diagnostics: mean error ≈ 0, RMSE, mean squared standardised error ≈ 1, about 95 % of
 * |error/sdObserved| ≤ 1.96 (common practice).
 * Units: data units (log units for a log transform). Cost: n³/3 flops for K's factor plus n³/3 for
 * L⁻¹, n²·p for the trend terms; memory 2·8n² bytes.
 */
import { nonFiniteResult, type CovarianceModel } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import { GapwiseError, type Warning } from '../shared/errors.ts';
import { solveLowerInPlace } from '../linalg/linalg.ts';
import { buildKrigingSystem, type PredictorOptions } from '../prediction/kriging.ts';
import { lowerTriangularInverse } from '../linalg/linalg.ts';
import { trendColumnCount } from '../covariance/trend.ts';

/** Figures of merit of a leave-one-out run. */
export interface LeaveOneOutSummary {
  /** Mean error (prediction − observation); about 0 when unbiased. */
  me: number;
  /** Root mean squared error, in data units. */
  rmse: number;
  /** Mean squared standardised error; about 1 when the sds are right. */
  msse: number;
  /** Fraction of samples with |standardised error| ≤ 1.96; about 0.95 when the sds are right. */
  coverage95: number;
  n: number;
}

export interface LeaveOneOutResult {
  /** Prediction at each sample from all the others. */
  prediction: Float64Array;
  /** Sd of the observation at each sample given the others (includes the nugget). */
  sdObserved: Float64Array;
  /** prediction − observation. */
  error: Float64Array;
  /** error / sdObserved. */
  standardisedError: Float64Array;
  summary: LeaveOneOutSummary;
  /** 'log' when the model has a log transform: every array above is then in ln units. */
  scale: 'data' | 'log';
  warnings: Warning[];
}

/** Summary figures from errors and their sds (hand-checkable; used by leaveOneOut). */
export function summariseErrors(error: ArrayLike<number>, sdObserved: ArrayLike<number>): LeaveOneOutSummary {
  const n = error.length;
  if (sdObserved.length !== n) {
    throw new GapwiseError('bad-value', `Expected as many sds as errors, got ${sdObserved.length} and ${n}.`);
  }
  if (n === 0) return { me: NaN, rmse: NaN, msse: NaN, coverage95: NaN, n: 0 };
  let se = 0;
  let sse = 0;
  let sz = 0;
  let inside = 0;
  for (let i = 0; i < n; i++) {
    const e = error[i];
    const z = e / sdObserved[i];
    se += e;
    sse += e * e;
    sz += z * z;
    if (Math.abs(z) <= 1.96) inside++;
  }
  return { me: se / n, rmse: Math.sqrt(sse / n), msse: sz / n, coverage95: inside / n, n };
}

/** Stages leaveOneOut reports progress in: factorisation, inverse of the factor, per-sample terms. */
export const LEAVE_ONE_OUT_STAGES = 3;

/**
 * Closed-form leave-one-out cross-validation of the samples under the model (trend from the model:
 * simple, ordinary or universal kriging). One factorisation; the same numbers as n refits.
 * Throws GapwiseError('too-few-samples') with fewer than p + 2 samples (p trend columns).
 * `onProgress(done, total)`, when given, is called at the end of each of LEAVE_ONE_OUT_STAGES
 * stages (factorising the covariance, inverting its factor, the per-sample terms).
 */
export function leaveOneOut(
  samples: Samples, model: CovarianceModel, options: PredictorOptions = {}, onProgress?: (done: number, total: number) => void,
): LeaveOneOutResult {
  const p = trendColumnCount(model.trend);
  const nIn = samples?.value?.length ?? 0;
  if (nIn < p + 2) {
    const what = p === 0 ? 'with a known mean' : p === 1 ? 'with an unknown constant mean' : 'with a linear trend';
    throw new GapwiseError('too-few-samples', `Expected at least ${p + 2} samples for leave-one-out ${what}, got ${nIn}.`);
  }
  const sys = buildKrigingSystem(samples, model, options);
  onProgress?.(1, LEAVE_ONE_OUT_STAGES);
  const { n, W, Lg, alpha, z } = sys;
  const Z = lowerTriangularInverse(sys.factor.L, n);
  onProgress?.(2, LEAVE_ONE_OUT_STAGES);

  // diag(K⁻¹) = column sums of Z², and H = K⁻¹X = ZᵀW (n×p), both from rows of Z.
  const diag = new Float64Array(n);
  const H = new Float64Array(n * p);
  for (let i = 0; i < n; i++) {
    const zi = i * n;
    for (let j = 0; j <= i; j++) diag[j] += Z[zi + j] * Z[zi + j];
    for (let a = 0; a < p; a++) {
      const wia = W[i * p + a];
      if (wia === 0) continue;
      for (let j = 0; j <= i; j++) H[j * p + a] += Z[zi + j] * wia;
    }
  }

  const prediction = new Float64Array(n);
  const sdObserved = new Float64Array(n);
  const error = new Float64Array(n);
  const standardisedError = new Float64Array(n);
  const t = new Float64Array(p);
  for (let j = 0; j < n; j++) {
    let pjj = diag[j];
    if (p > 0) {
      for (let a = 0; a < p; a++) t[a] = H[j * p + a];
      solveLowerInPlace(Lg, p, t);
      for (let a = 0; a < p; a++) pjj -= t[a] * t[a];
    }
    if (!(pjj > 1e-14 * diag[j])) {
      throw new GapwiseError('not-positive-definite',
        `Leaving out sample ${j + 1} leaves the trend undetermined by the other samples; use a simpler trend or add samples.`);
    }
    const residual = alpha[j] / pjj; // observation − prediction
    prediction[j] = z[j] - residual;
    error[j] = -residual;
    sdObserved[j] = 1 / Math.sqrt(pjj);
    standardisedError[j] = error[j] / sdObserved[j];
  }
  onProgress?.(LEAVE_ONE_OUT_STAGES, LEAVE_ONE_OUT_STAGES);
  return checkLeaveOneOutFinite(model, {
    prediction, sdObserved, error, standardisedError,
    summary: summariseErrors(error, sdObserved),
    scale: sys.log ? 'log' : 'data',
    warnings: sys.warnings,
  });
}

/**
 * Returns the result when every prediction, sd and summary figure is finite, else throws GapwiseError
 * 'non-finite' naming the figure, the sample or summary, and the likely model parameter.
 */
export function checkLeaveOneOutFinite(model: CovarianceModel, r: LeaveOneOutResult): LeaveOneOutResult {
  const perSample: Array<[string, Float64Array]> = [['leave-one-out prediction', r.prediction], ['leave-one-out sd', r.sdObserved]];
  for (const [what, values] of perSample) {
    for (let i = 0; i < values.length; i++) {
      if (!Number.isFinite(values[i])) throw nonFiniteResult(model, what, `sample ${i + 1}`, values[i]);
    }
  }
  if (r.summary.n > 0) {
    for (const key of ['me', 'rmse', 'msse'] as const) {
      if (!Number.isFinite(r.summary[key])) throw nonFiniteResult(model, `cross-validation ${key}`, 'the summary', r.summary[key]);
    }
  }
  return r;
}
