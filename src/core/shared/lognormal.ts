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
 * tests/core/shared/lognormal.test.ts checks that form by Monte Carlo; the app shows the posterior mean.
 * Units: Ŷ in ln(data unit); σ dimensionless; results in the data unit. Cost: O(1) per value.
 */

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

/** Log-scale predictions on the data scale, one entry per target (the shape kriging results use). */
export interface DataScalePrediction {
  /** exp(Ŷ + σ²/2). */
  mean: Float64Array;
  /** exp(Ŷ + σ²/2)·√(exp(σ²) − 1): the sd of the noise-free surface. */
  sd: Float64Array;
  /** The same moments with the nugget added to σ²: the sd of a new measurement. */
  sdObserved: Float64Array;
  /** exp(Ŷ). */
  median: Float64Array;
}

/**
 * Back-transforms log-scale kriging estimates Ŷ and sds σ (of the surface, nugget excluded) to the
 * data scale; `nugget` (ln units²) enters only `sdObserved`. NaN inputs give NaN outputs.
 */
export function logPredictionToDataScale(
  logMean: ArrayLike<number>, logSd: ArrayLike<number>, nugget: number,
): DataScalePrediction {
  const n = logMean.length;
  const out: DataScalePrediction = {
    mean: new Float64Array(n), sd: new Float64Array(n), sdObserved: new Float64Array(n), median: new Float64Array(n),
  };
  for (let j = 0; j < n; j++) {
    const m = logMean[j];
    const s2 = logSd[j] * logSd[j];
    const o2 = s2 + nugget;
    out.median[j] = Math.exp(m);
    out.mean[j] = Math.exp(m + s2 / 2);
    out.sd[j] = out.mean[j] * Math.sqrt(Math.expm1(s2));
    out.sdObserved[j] = Math.exp(m + o2 / 2) * Math.sqrt(Math.expm1(o2));
  }
  return out;
}
