import { describe, expect, it } from 'vitest';
import { chooseFitMethod, createVecchiaLikelihood, vecchiaFit, vecchiaTrend } from '../../../src/core/fitting/vecchia.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { makeSamples } from '../../../src/core/shared/samples.ts';
import type { Anisotropy, CovarianceModel, Family, Trend } from '../../../src/core/covariance/model.ts';
import type { CorrelationParameters } from '../../../src/core/fitting/likelihood.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';

interface LikelihoodCase {
  family: Family; nu?: number; trend: Trend; method: 'reml' | 'ml'; anisotropy?: Anisotropy;
  theta: CorrelationParameters;
  expected: { logLikelihood: number; sigma2: number; beta: number[]; logDetR: number; logDetInformation: number; quadraticForm: number; fullAtSigma2Other: number; sigma2Other: number };
}
interface FitCase {
  family: Family; nu: number; trend: Trend; method: 'reml';
  expected: { scale: number; nuggetRatio: number; sill: number; nugget: number; logLikelihood: number; beta: number };
}

// Source: numpy/scipy dense ML/REML values (tests/reference/make_likelihood.py), 40 samples.
const likFixture = loadFixture<LikelihoodCase>('likelihood.json');
const likData = likFixture.data as { x: number[]; y: number[]; value: number[] };
const small = makeSamples(likData.x, likData.y, likData.value);
// Source: dense REML maximised by scipy (tests/reference/make_vecchia.py), 2,000 samples.
const fitFixture = loadFixture<FitCase>('vecchia.json');
const fitData = fitFixture.data as { x: number[]; y: number[]; value: number[] };
const big = makeSamples(fitData.x, fitData.y, fitData.value);

describe('createVecchiaLikelihood', () => {
  it('createVecchiaLikelihood with m ≥ n − 1 equals the dense likelihood of numpy in every fixture case (1e-8)', () => {
    expect(likFixture.cases.length).toBeGreaterThanOrEqual(40);
    for (const c of likFixture.cases) {
      const lik = createVecchiaLikelihood(small, { family: c.family, nu: c.nu, trend: c.trend, method: c.method, anisotropy: c.anisotropy, neighbours: small.value.length - 1 });
      const v = lik.evaluate(c.theta);
      const what = `${c.method} ${c.family} ${JSON.stringify(c.trend)}${c.anisotropy ? ' anisotropic' : ''}`;
      expectClose(v.logLikelihood, c.expected.logLikelihood, { rel: 1e-8 }, `${what}: ℓ (numpy)`);
      expectClose(v.sigma2, c.expected.sigma2, { rel: 1e-8 }, `${what}: σ̂² (numpy)`);
      expectClose(v.logDetR, c.expected.logDetR, { rel: 1e-8, abs: 1e-8 }, `${what}: ln|R| (numpy)`);
      expectClose(v.beta, c.expected.beta, { rel: 1e-8, abs: 1e-10 }, `${what}: β̂ (numpy)`);
      const other = lik.evaluate(c.theta, { sigma2: c.expected.sigma2Other });
      expectClose(other.logLikelihood, c.expected.fullAtSigma2Other, { rel: 1e-8 }, `${what}: full ℓ at another σ² (scipy logpdf)`);
    }
  });

  it('createVecchiaLikelihood with 30 neighbours is close to the dense REML value at its optimum and improves with m', () => {
    const e = fitFixture.cases[0].expected;
    const lik = createVecchiaLikelihood(big, { family: 'matern', nu: 1.5, trend: 'constant', neighbours: 30 });
    const at = (m: number) => lik.evaluate({ scale: e.scale, nuggetRatio: e.nuggetRatio }, { neighbours: m }).logLikelihood;
    const gaps = [5, 10, 30].map((m) => Math.abs(at(m) - e.logLikelihood));
    expect(gaps[2]).toBeLessThan(gaps[1]);
    expect(gaps[1]).toBeLessThan(gaps[0]);
    // Within 0.2 % of |ℓ| at m = 30 (Datta et al. 2016 and Guinness 2018 report m ≈ 30 near-exact).
    expect(gaps[2]).toBeLessThan(0.002 * Math.abs(e.logLikelihood));
  });
});

describe('vecchiaFit', () => {
  it('vecchiaFit estimates scale, sill and nugget within 10 % of the dense REML fit (scipy) on 2,000 samples', () => {
    const c = fitFixture.cases[0];
    const model = vecchiaFit(big, { family: 'matern', nu: 1.5, trend: 'constant', method: 'reml' });
    const nugget = model.structures.find((s) => s.type === 'nugget')!;
    const main = model.structures.find((s) => s.type === 'matern')!;
    const tol = fitFixture.tolerance;
    expectClose(main.type === 'matern' ? main.scale : NaN, c.expected.scale, tol, 'scale (scipy REML)');
    expectClose(main.sill, c.expected.sill, tol, 'sill (scipy REML)');
    expectClose(nugget.sill, c.expected.nugget, tol, 'nugget (scipy REML)');
    expect(model.fit.method).toBe('nnl');
    expect(model.fit.note).toBe('fitted with a nearest-neighbour likelihood on 2,000 samples (30 neighbours)');
    expect(model.fit.neighbours).toBe(30);
    expect(model.practicalRange).toBeGreaterThan(2.7 * (main.type === 'matern' ? main.scale : 0));
    // AIC = 2k − 2ℓ with k = sill, scale, nugget, mean.
    expectClose(model.fit.aic!, 8 - 2 * model.fit.logLikelihood!, { rel: 1e-12 }, 'AIC');
  });

  it('vecchiaFit rejects a variogram method, constant values and too few samples', () => {
    expect(() => vecchiaFit(small, { family: 'matern', method: 'wls' as 'reml' })).toThrow(/reml or ml/);
    expect(() => vecchiaFit(makeSamples([0, 1, 2, 3], [0, 1, 0, 1], [2, 2, 2, 2]), { family: 'exponential' })).toThrow(/All 4 values equal 2/);
    expect(() => vecchiaFit(makeSamples([0, 1], [0, 1], [1, 2]), { family: 'exponential' })).toThrow(/at least 3 samples/);
  });
});

describe('vecchiaTrend', () => {
  it('vecchiaTrend with every earlier sample as neighbour equals the dense GLS β̂ of kriging.ts', () => {
    const model: CovarianceModel = {
      structures: [{ type: 'nugget', sill: 0.2 }, { type: 'spherical', sill: 1, scale: 250 }, { type: 'gaussian', sill: 0.4, scale: 90 }],
      trend: 'linear', transform: 'none', anisotropy: { azimuth: 60, ratio: 0.5 },
    };
    const t = vecchiaTrend(small, model, { neighbours: small.value.length - 1 });
    expectClose(t.beta, createPredictor(small, model).beta, { rel: 1e-9, abs: 1e-12 }, 'β̂');
  });
});

describe('chooseFitMethod', () => {
  it('chooseFitMethod picks exact below 3,000 samples and the nearest-neighbour likelihood from 3,000, unless overridden', () => {
    expect(chooseFitMethod(2999)).toBe('exact');
    expect(chooseFitMethod(3000)).toBe('nnl');
    expect(chooseFitMethod(100000)).toBe('nnl');
    expect(chooseFitMethod(100000, 'exact')).toBe('exact');
    expect(chooseFitMethod(50, 'nnl')).toBe('nnl');
  });
});
