import { describe, expect, it } from 'vitest';
import {
  lognormalMean, lognormalMedian, lognormalSd, logPredictionToDataScale,
} from '../../../src/core/shared/lognormal.ts';
import { createPredictor, type Predictor } from '../../../src/core/prediction/kriging.ts';
import { sampleCovarianceMatrix } from '../../../src/core/covariance/covariance.ts';
import { cholesky } from '../../../src/core/linalg/linalg.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import { makeSamples } from '../../../src/core/shared/samples.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import { designRow } from '../../../src/core/covariance/trend.ts';
import { expectClose } from '../../helpers/tolerance.ts';

/** Mean and standard error of a sample. */
function meanAndError(values: Float64Array): { mean: number; se: number } {
  let s = 0;
  for (const v of values) s += v;
  const mean = s / values.length;
  let ss = 0;
  for (const v of values) ss += (v - mean) ** 2;
  return { mean, se: Math.sqrt(ss / (values.length - 1) / values.length) };
}

/**
 * The alternative estimator the app does NOT use, kept here to show why: the mean unbiased over
 * repeated fields with an unknown trend, exp(Ŷ + σ²/2 + x₀ᵀμ), μ the kriging Lagrange multipliers.
 */
function lognormalUnbiasedMean(logMean: number, logSd: number, lagrange: number): number {
  return Math.exp(logMean + 0.5 * logSd * logSd + lagrange);
}

/** x₀ᵀμ at one target: the Lagrange multipliers times the target's trend columns. */
function lagrangeTerm(predictor: Predictor, tx: number, ty: number): number {
  const w = predictor.weights(tx, ty);
  const p = w.lagrange.length;
  if (p === 0) return 0;
  const x0 = new Float64Array(p);
  designRow(predictor.model.trend, tx, ty, predictor.frame, x0);
  let sum = 0;
  for (let a = 0; a < p; a++) sum += x0[a] * w.lagrange[a];
  return sum;
}

describe('lognormalMean', () => {
  it('lognormalMean equals a seeded Monte Carlo average of exp(Y), Y ~ N(Ŷ, σ²) (4 standard errors)', () => {
    // Source: Monte Carlo from the log-scale posterior itself (200,000 seeded draws); tolerance 4 standard errors.
    const r = createRandom(11);
    for (const [m, s] of [[2.1, 0.6], [0, 1.2], [-1, 0.1]]) {
      const draws = new Float64Array(200_000);
      for (let k = 0; k < draws.length; k++) draws[k] = Math.exp(m + s * r.normal());
      const { mean, se } = meanAndError(draws);
      expect(Math.abs(mean - lognormalMean(m, s)), `Ŷ=${m}, σ=${s}: MC ${mean} ± ${se}`).toBeLessThan(4 * se);
    }
  });

  it('lognormalMean, lognormalSd and lognormalMedian have their exact values', () => {
    // Source: lognormal moments exp(μ + σ²/2) and √(e^{σ²} − 1)·mean (Aitchison & Brown 1957, from memory).
    const m = 2.1, s = 0.6;
    expectClose(lognormalMean(m, s), Math.exp(2.1 + 0.18), { rel: 1e-15 });
    expectClose(lognormalSd(m, s), Math.exp(2.28) * Math.sqrt(Math.exp(0.36) - 1), { rel: 1e-14 });
    expect(lognormalMedian(m)).toBe(Math.exp(2.1));
  });

  it('logPredictionToDataScale gives the moments per target, the nugget only in sdObserved, and is what kriging.ts returns', () => {
    const d = logPredictionToDataScale([2.1, 0, NaN], [0.6, 0, 1], 0.09);
    expectClose(d.mean[0], lognormalMean(2.1, 0.6), { rel: 1e-15 });
    expectClose(d.sd[0], lognormalSd(2.1, 0.6), { rel: 1e-14 });
    expectClose(d.sdObserved[0], lognormalSd(2.1, Math.sqrt(0.36 + 0.09)), { rel: 1e-14 });
    expect(d.median[0]).toBe(Math.exp(2.1));
    expect([d.mean[1], d.sd[1], d.median[1]]).toEqual([1, 0, 1]);
    expectClose(d.sdObserved[1], Math.sqrt(Math.expm1(0.09)) * Math.exp(0.045), { rel: 1e-14 });
    expect(Number.isNaN(d.mean[2]) && Number.isNaN(d.sd[2])).toBe(true);
    const model: CovarianceModel = {
      structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 0.5, scale: 120 }], trend: 'constant', transform: 'log',
    };
    const samples = makeSamples([0, 80, 150, 30, 200], [0, 40, -20, 160, 120], [12, 30, 8, 55, 21]);
    const p = createPredictor(samples, model).predict([50, 400], [50, 0]);
    const b = logPredictionToDataScale(p.logMean!, p.logSd!, 0.05);
    expect(b.mean).toEqual(p.mean);
    expect(b.sd).toEqual(p.sd);
    expect(b.sdObserved).toEqual(p.sdObserved);
    expect(b.median).toEqual(p.median);
  });
});

describe('lognormalUnbiasedMean', () => {
  it('lognormalUnbiasedMean is unbiased over repeated fields with an unknown constant mean; the posterior mean is off by exp(−μ)', () => {
    // Source: Monte Carlo over 40,000 seeded unconditional log fields (Cholesky of the model covariance),
    // target E[Z(s₀)] = exp(m + c₀/2) from the lognormal moment; tolerance 4 standard errors.
    const model: CovarianceModel = {
      structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 0.5, scale: 100 }], trend: 'constant', transform: 'log',
    };
    const sx = [0, 30, 60, 10, 45];
    const sy = [0, 20, -10, 50, 40];
    const tx = 350, ty = 0; // extrapolation: a sizeable Lagrange multiplier
    const m = 1;
    const predictor = createPredictor(makeSamples(sx, sy, [1, 1, 1, 1, 1]), model);
    const w = predictor.weights(tx, ty);
    const mu = lagrangeTerm(predictor, tx, ty);
    expectClose(mu, w.lagrange[0], { rel: 1e-15 }); // x₀ = 1 for ordinary kriging
    const sigma = Math.sqrt(w.variance);
    const L = cholesky(sampleCovarianceMatrix(model, sx, sy), 5).L;
    const r = createRandom(2024);
    const n = 40_000;
    const unbiased = new Float64Array(n);
    const posterior = new Float64Array(n);
    const eps = new Float64Array(5);
    for (let k = 0; k < n; k++) {
      for (let i = 0; i < 5; i++) eps[i] = r.normal();
      let yhat = 0;
      for (let i = 0; i < 5; i++) {
        let y = m;
        for (let j = 0; j <= i; j++) y += L[i * 5 + j] * eps[j];
        yhat += w.weights[i] * y;
      }
      unbiased[k] = lognormalUnbiasedMean(yhat, sigma, mu);
      posterior[k] = lognormalMean(yhat, sigma);
    }
    const target = Math.exp(m + 0.5 * 0.5);
    const a = meanAndError(unbiased);
    const b = meanAndError(posterior);
    expect(Math.abs(a.mean - target), `unbiased: ${a.mean} ± ${a.se} vs ${target}`).toBeLessThan(4 * a.se);
    expect(Math.abs(b.mean - target * Math.exp(-mu)), `posterior: ${b.mean} ± ${b.se}`).toBeLessThan(4 * b.se);
    // The two differ by more than the Monte Carlo error here, so the check can tell them apart.
    expect(Math.abs(target * Math.exp(-mu) - target)).toBeGreaterThan(8 * b.se);
  });
});
