import { describe, expect, it } from 'vitest';
import {
  backTransform, lagrangeTerm, lognormalExceedance, lognormalMean, lognormalMedian, lognormalQuantile, lognormalSd,
  lognormalUnbiasedMean, normalQuantile,
} from '../../src/core/lognormal.ts';
import { createPredictor } from '../../src/core/kriging.ts';
import { sampleCovarianceMatrix } from '../../src/core/covariance.ts';
import { cholesky } from '../../src/core/linalg.ts';
import { normalCdf } from '../../src/core/normal.ts';
import { createRandom } from '../../src/core/random.ts';
import { makeSamples } from '../../src/core/samples.ts';
import type { CovarianceModel } from '../../src/core/model.ts';
import { GapwiseError } from '../../src/core/errors.ts';
import { expectClose } from '../helpers/tolerance.ts';

/** Mean and standard error of a sample. */
function meanAndError(values: Float64Array): { mean: number; se: number } {
  let s = 0;
  for (const v of values) s += v;
  const mean = s / values.length;
  let ss = 0;
  for (const v of values) ss += (v - mean) ** 2;
  return { mean, se: Math.sqrt(ss / (values.length - 1) / values.length) };
}

describe('normalQuantile', () => {
  it('normalQuantile inverts Φ to 1e-13 relative (1e-11 at p = 1e-300, where the rounding of Φ dominates)', () => {
    // Source: Φ of ./normal.ts (checked against scipy in tests/core/normal.test.ts); Φ(Φ⁻¹(p)) = p.
    for (const p of [1e-300, 1e-12, 1e-6, 0.001, 0.02425, 0.05, 0.2, 0.5, 0.7, 0.95, 0.97575, 0.999]) {
      const z = normalQuantile(p);
      expectClose(normalCdf(z), p, { rel: p < 1e-100 ? 1e-11 : 1e-13 }, `Φ(Φ⁻¹(${p}))`);
    }
    expect(normalQuantile(0.5)).toBe(0);
  });

  it('normalQuantile gives the tabulated percentage points', () => {
    // Source: Abramowitz & Stegun 1964, Table 26.5 (from memory): z(0.95) = 1.644853627, z(0.975) = 1.959963985.
    expectClose(normalQuantile(0.95), 1.644853627, { abs: 1e-9 });
    expectClose(normalQuantile(0.05), -1.644853627, { abs: 1e-9 });
    expectClose(normalQuantile(0.975), 1.959963985, { abs: 1e-9 });
  });

  it('normalQuantile rejects a probability outside [0, 1]', () => {
    expect(() => normalQuantile(1.5)).toThrow(GapwiseError);
    expect(normalQuantile(0)).toBe(-Infinity);
  });
});

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

  it('lognormalMean, lognormalSd, lognormalMedian and quantiles have their exact values', () => {
    // Source: lognormal moments exp(μ + σ²/2), √(e^{σ²} − 1)·mean and quantiles exp(μ + z_p σ)
    // (Aitchison & Brown 1957, from memory); quantiles checked through Φ: P(Z ≤ q_p) = p exactly.
    const m = 2.1, s = 0.6;
    expectClose(lognormalMean(m, s), Math.exp(2.1 + 0.18), { rel: 1e-15 });
    expectClose(lognormalSd(m, s), Math.exp(2.28) * Math.sqrt(Math.exp(0.36) - 1), { rel: 1e-14 });
    expect(lognormalMedian(m)).toBe(Math.exp(2.1));
    for (const p of [0.05, 0.5, 0.95]) {
      const q = lognormalQuantile(m, s, p);
      expectClose(normalCdf((Math.log(q) - m) / s), p, { rel: 1e-13 }, `P(Z ≤ q_${p})`);
    }
    expectClose(lognormalQuantile(m, s, 0.5), Math.exp(m), { rel: 1e-15 });
    expectClose(lognormalExceedance(m, s, Math.exp(m)), 0.5, { abs: 1e-15 });
    expect(lognormalExceedance(m, s, 0)).toBe(1);
  });

  it('backTransform agrees with the log-model predictions of kriging.ts and adds quantiles and P(exceed)', () => {
    const model: CovarianceModel = {
      structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 0.5, scale: 120 }], trend: 'constant', transform: 'log',
    };
    const samples = makeSamples([0, 80, 150, 30, 200], [0, 40, -20, 160, 120], [12, 30, 8, 55, 21]);
    const p = createPredictor(samples, model).predict([50, 400], [50, 0]);
    const b = backTransform(p.logMean!, p.logSd!, { threshold: 25 });
    expectClose(b.mean, p.mean, { rel: 1e-14 }, 'mean');
    expectClose(b.median, p.median!, { rel: 1e-14 }, 'median');
    expectClose(b.sd, p.sd, { rel: 1e-13 }, 'sd');
    for (let k = 0; k < 2; k++) {
      expect(b.p05[k]).toBeLessThan(b.median[k]);
      expect(b.p95[k]).toBeGreaterThan(b.mean[k]);
      expectClose(b.pExceed![k], 1 - normalCdf((Math.log(25) - p.logMean![k]) / p.logSd![k]), { abs: 1e-15 });
    }
    expect(() => backTransform([1], [1], { threshold: 0 })).toThrow(/above 0/);
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
