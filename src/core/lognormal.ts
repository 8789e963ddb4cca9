/**
 * Back-transforms for a log model: from the kriging estimate Ŷ and kriging sd σ of ln(value) to
 * statements on the data scale.
 *
 * If ln Z ~ N(Ŷ, σ²) (the posterior of the log surface at a point or for a block of the log surface):
 *   mean      E[Z] = exp(Ŷ + σ²/2)                 sd  = E[Z]·√(exp(σ²) − 1)
 *   median    exp(Ŷ)                               quantile q_p = exp(Ŷ + z_p·σ), z_p = Φ⁻¹(p)
 *   P(Z > T)  = 1 − Φ((ln T − Ŷ)/σ)   (a monotone transform: no correction)
 * (Aitchison & Brown 1957, The Lognormal Distribution, ch. 2 — from memory.)
 * Which mean we report: kriging.ts uses exp(Ŷ + σ²/2) for every trend. With a flat prior on the trend
 * coefficients the posterior of ln Z(s₀) is exactly N(Ŷ, σ²) with σ² the ordinary / universal
 * kriging variance (it includes the uncertainty of the trend), so exp(Ŷ + σ²/2) is the posterior
 * mean for simple, ordinary and universal kriging alike. The classical lognormal ordinary kriging
 * estimator (Journel 1980, Math. Geol. 12:285 — from memory) asks instead for unbiasedness over
 * repeated fields with a fixed unknown mean; deriving it here: with Kλ + Xμ = k₀ (the bordered
 * system of kriging.ts, nugget on K's diagonal), Var(Ŷ) = λᵀKλ = c₀ − σ² − 2·x₀ᵀμ, so
 *   E[exp(Ŷ + σ²/2 + x₀ᵀμ)] = exp(m(s₀) + c₀/2) = E[Z(s₀)],
 * i.e. the Lagrange term x₀ᵀμ (μ for ordinary kriging, where x₀ = 1) enters the exponent.
 * `lognormalUnbiasedMean` gives that form; the app shows the posterior mean.
 * Φ⁻¹: Acklam's rational approximation (relative error below 1.2e-9; P. J. Acklam 2003, "An algorithm
 * for computing the inverse normal cumulative distribution function", from memory) refined by one
 * Halley step on Φ from ./normal.ts, which brings it to about 1e-15.
 * Units: Ŷ in ln(data unit); σ dimensionless; results in the data unit. Cost: O(1) per value.
 */
import { GapwiseError } from './errors.ts';
import { normalCdf, exceedanceProbability } from './normal.ts';
import type { Predictor } from './kriging.ts';
import { designRow } from './trend.ts';

/** Bias-corrected (posterior) mean exp(Ŷ + σ²/2). */
export function lognormalMean(logMean: number, logSd: number): number {
  return Math.exp(logMean + 0.5 * logSd * logSd);
}

/** Median exp(Ŷ). */
export function lognormalMedian(logMean: number): number {
  return Math.exp(logMean);
}

/** Standard deviation on the data scale: exp(Ŷ + σ²/2)·√(exp(σ²) − 1). */
export function lognormalSd(logMean: number, logSd: number): number {
  const s2 = logSd * logSd;
  return Math.exp(logMean + 0.5 * s2) * Math.sqrt(Math.expm1(s2));
}

/**
 * The mean that is unbiased over repeated fields with an unknown trend (lognormal ordinary /
 * universal kriging): exp(Ŷ + σ²/2 + x₀ᵀμ), with `lagrangeTerm` = x₀ᵀμ from the bordered system
 * Kλ + Xμ = k₀ (see lagrangeTerm in KrigingWeights: for ordinary kriging it is μ itself).
 */
export function lognormalUnbiasedMean(logMean: number, logSd: number, lagrangeTerm: number): number {
  return Math.exp(logMean + 0.5 * logSd * logSd + lagrangeTerm);
}

/**
 * x₀ᵀμ at one target: the kriging Lagrange multipliers (Predictor.weights) times the trend columns
 * of the target in the predictor's frame. 0 for simple kriging.
 */
export function lagrangeTerm(predictor: Predictor, tx: number, ty: number, covariates?: ArrayLike<number>): number {
  const w = predictor.weights(tx, ty, covariates);
  const p = w.lagrange.length;
  if (p === 0) return 0;
  const x0 = new Float64Array(p);
  designRow(predictor.model.trend, tx, ty, predictor.frame, x0, 0, covariates);
  let s = 0;
  for (let a = 0; a < p; a++) s += x0[a] * w.lagrange[a];
  return s;
}

/** P(Z > T) for ln Z ~ N(Ŷ, σ²): 1 − Φ((ln T − Ŷ)/σ); 0 for T = +∞, 1 for T ≤ 0. */
export function lognormalExceedance(logMean: number, logSd: number, threshold: number): number {
  if (Number.isNaN(threshold)) return NaN;
  if (threshold <= 0) return 1;
  return exceedanceProbability(logMean, logSd, Math.log(threshold));
}

// Acklam's coefficients.
const A = [-3.969683028665376e1, 2.209460984245205e2, -2.759285104469687e2, 1.38357751867269e2, -3.066479806614716e1, 2.506628277459239];
const B = [-5.447609879822406e1, 1.615858368580409e2, -1.556989798598866e2, 6.680131188771972e1, -1.328068155288572e1];
const C = [-7.784894002430293e-3, -3.223964580411365e-1, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783];
const D = [7.784695709041462e-3, 3.224671290700398e-1, 2.445134137142996, 3.754408661907416];
const P_LOW = 0.02425;

/**
 * Φ⁻¹(p): the standard normal quantile, p in (0, 1) (−∞ at 0, +∞ at 1).
 * Throws GapwiseError('bad-option') for p outside [0, 1].
 */
export function normalQuantile(p: number): number {
  if (!(p >= 0 && p <= 1)) throw new GapwiseError('bad-option', `Expected a probability between 0 and 1, got ${p}.`);
  if (p === 0) return -Infinity;
  if (p === 1) return Infinity;
  let x: number;
  if (p < P_LOW) {
    const q = Math.sqrt(-2 * Math.log(p));
    x = (((((C[0] * q + C[1]) * q + C[2]) * q + C[3]) * q + C[4]) * q + C[5]) / ((((D[0] * q + D[1]) * q + D[2]) * q + D[3]) * q + 1);
  } else if (p <= 1 - P_LOW) {
    const q = p - 0.5;
    const r = q * q;
    x = ((((((A[0] * r + A[1]) * r + A[2]) * r + A[3]) * r + A[4]) * r + A[5]) * q)
      / (((((B[0] * r + B[1]) * r + B[2]) * r + B[3]) * r + B[4]) * r + 1);
  } else {
    const q = Math.sqrt(-2 * Math.log(1 - p));
    x = -(((((C[0] * q + C[1]) * q + C[2]) * q + C[3]) * q + C[4]) * q + C[5]) / ((((D[0] * q + D[1]) * q + D[2]) * q + D[3]) * q + 1);
  }
  // One Halley step on Φ(x) − p (the upper tail through the lower one, where Φ is accurate relatively).
  const e = p <= 0.5 ? normalCdf(x) - p : (1 - p) - normalCdf(-x);
  const u = e * Math.sqrt(2 * Math.PI) * Math.exp(0.5 * x * x);
  return x - u / (1 + 0.5 * x * u);
}

/** Quantile p of Z with ln Z ~ N(Ŷ, σ²): exp(Ŷ + Φ⁻¹(p)·σ). */
export function lognormalQuantile(logMean: number, logSd: number, p: number): number {
  const z = normalQuantile(p);
  if (logSd === 0) return Math.exp(logMean);
  return Math.exp(logMean + z * logSd);
}

/** Data-scale summaries of log-scale predictions; each array has one entry per target. */
export interface LognormalSummary {
  /** exp(Ŷ + σ²/2). */
  mean: Float64Array;
  /** exp(Ŷ). */
  median: Float64Array;
  /** exp(Ŷ + σ²/2)·√(exp(σ²) − 1). */
  sd: Float64Array;
  /** exp(Ŷ + z₀.₀₅·σ): 5 % quantile. */
  p05: Float64Array;
  /** exp(Ŷ + z₀.₉₅·σ): 95 % quantile. */
  p95: Float64Array;
  /** P(Z > T), with a threshold. */
  pExceed?: Float64Array;
}

/**
 * Back-transforms arrays of log-scale kriging estimates and sds (e.g. Prediction.logMean / logSd
 * from kriging.ts) to the data scale, with the 5 % and 95 % quantiles and, given a threshold T > 0
 * in data units, P(Z > T). Throws GapwiseError('bad-option') for unequal lengths or T ≤ 0.
 */
export function backTransform(
  logMean: ArrayLike<number>, logSd: ArrayLike<number>, options: { threshold?: number } = {},
): LognormalSummary {
  const n = logMean.length;
  if (logSd.length !== n) throw new GapwiseError('bad-option', `Expected as many log-scale sds as means, got ${logSd.length} and ${n}.`);
  const t = options.threshold;
  if (t !== undefined && !(t > 0 && Number.isFinite(t))) {
    throw new GapwiseError('bad-option', `Expected a threshold above 0 with a log transform, got ${t}.`);
  }
  const z95 = normalQuantile(0.95);
  const out: LognormalSummary = {
    mean: new Float64Array(n), median: new Float64Array(n), sd: new Float64Array(n),
    p05: new Float64Array(n), p95: new Float64Array(n),
  };
  if (t !== undefined) out.pExceed = new Float64Array(n);
  const logT = t !== undefined ? Math.log(t) : NaN;
  for (let k = 0; k < n; k++) {
    const m = logMean[k];
    const s = logSd[k];
    out.mean[k] = lognormalMean(m, s);
    out.median[k] = Math.exp(m);
    out.sd[k] = lognormalSd(m, s);
    out.p05[k] = Math.exp(m - z95 * s);
    out.p95[k] = Math.exp(m + z95 * s);
    if (out.pExceed) out.pExceed[k] = exceedanceProbability(m, s, logT);
  }
  return out;
}
