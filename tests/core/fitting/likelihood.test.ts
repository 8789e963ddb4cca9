import { describe, expect, it } from 'vitest';
import { createLikelihood, logLikelihood, type CorrelationParameters, type LikelihoodSetup } from '../../../src/core/fitting/likelihood.ts';
import { makeSamples } from '../../../src/core/shared/samples.ts';
import type { Anisotropy, Family, Trend } from '../../../src/core/covariance/model.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';

interface LikelihoodCase {
  family: Family;
  nu?: number;
  trend: Trend;
  method: 'reml' | 'ml';
  anisotropy?: Anisotropy;
  theta: CorrelationParameters;
  tolerance?: { rel: number };
  expected: {
    logLikelihood: number; sigma2: number; beta: number[]; logDetR: number; logDetInformation: number;
    quadraticForm: number; fullAtSigma2Hat: number; sigma2Other: number; fullAtSigma2Other: number;
  };
}

// Source: numpy/scipy direct evaluation (tests/reference/make_likelihood.py).
const fixture = loadFixture<LikelihoodCase>('likelihood.json');
const data = fixture.data as { x: number[]; y: number[]; value: number[] };
const samples = makeSamples(data.x, data.y, data.value);

function label(c: LikelihoodCase): string {
  const trend = typeof c.trend === 'object' && 'known' in c.trend ? `known ${c.trend.known}` : c.trend;
  return `${c.method} ${c.family}${c.nu !== undefined ? ` ν=${c.nu}` : ''} ${trend}${c.anisotropy ? ' anisotropic' : ''} scale ${c.theta.scale} η ${c.theta.nuggetRatio}`;
}

describe('createLikelihood against numpy/scipy (make_likelihood.py)', () => {
  it('createLikelihood fixture covers ML and REML, constant, linear and known trends', () => {
    expect(fixture.cases.length).toBeGreaterThanOrEqual(40);
    expect(new Set(fixture.cases.map((c) => c.method))).toEqual(new Set(['ml', 'reml']));
  });
  for (const c of fixture.cases) {
    it(`createLikelihood(${label(c)}).evaluate matches the direct evaluation`, () => {
      const tol = c.tolerance ?? fixture.tolerance;
      const setup: LikelihoodSetup = { family: c.family, nu: c.nu, trend: c.trend, method: c.method, anisotropy: c.anisotropy };
      const lik = createLikelihood(samples, setup);
      const v = lik.evaluate(c.theta);
      const e = c.expected;
      expectClose(v.logLikelihood, e.logLikelihood, tol, 'profiled ℓ (numpy)');
      expectClose(v.sigma2, e.sigma2, tol, 'σ̂² (numpy)');
      expectClose(v.logDetR, e.logDetR, tol, 'ln|R| (numpy slogdet)');
      expectClose(v.logDetInformation, e.logDetInformation, { ...tol, abs: 1e-9 }, 'ln|XᵀR⁻¹X| (numpy slogdet)');
      expectClose(v.quadraticForm, e.quadraticForm, tol, 'Q (numpy solve)');
      expectClose(v.beta, e.beta, { ...tol, abs: 1e-12 }, 'β (numpy solve)');
      // Identity: the full likelihood at σ̂² equals the profiled one; the full value comes from
      // scipy.stats.multivariate_normal.logpdf (plus the REML contrast term) in the fixture.
      const full = lik.evaluate(c.theta, { sigma2: v.sigma2 });
      expectClose(full.logLikelihood, e.fullAtSigma2Hat, tol, 'full ℓ at σ̂² (scipy logpdf)');
      expectClose(full.logLikelihood, v.logLikelihood, { rel: 1e-12 }, 'full ℓ at σ̂² = profiled ℓ');
      const other = lik.evaluate(c.theta, { sigma2: e.sigma2Other });
      expectClose(other.logLikelihood, e.fullAtSigma2Other, tol, 'full ℓ at 1.7·σ̂² (scipy logpdf)');
    });
  }
});

describe('createLikelihood invariants', () => {
  const theta = { scale: 150, nuggetRatio: 0.2 };

  it('createLikelihood is unchanged by shifting all coordinates (it centres them)', () => {
    const shifted = makeSamples(data.x.map((v) => v - 500000), data.y.map((v) => v + 1e6), data.value);
    for (const trend of ['constant', 'linear'] as const) {
      const a = logLikelihood(samples, { family: 'matern', nu: 1.5, trend }, theta);
      const b = logLikelihood(shifted, { family: 'matern', nu: 1.5, trend }, theta);
      expectClose(b.logLikelihood, a.logLikelihood, { rel: 1e-10 }, `ℓ ${trend}`);
    }
  });

  it('createLikelihood with a known mean gives REML = ML (p = 0)', () => {
    const trend = { known: 10 };
    const r = logLikelihood(samples, { family: 'exponential', trend, method: 'reml' }, theta);
    const m = logLikelihood(samples, { family: 'exponential', trend, method: 'ml' }, theta);
    expectClose(r.logLikelihood, m.logLikelihood, { rel: 1e-14 }, 'ℓ');
    expect(r.beta).toEqual([]);
  });

  it('createLikelihood profiled value is the maximum over σ² (σ̂² maximises ℓ(σ², θ))', () => {
    const lik = createLikelihood(samples, { family: 'matern', nu: 2.5, trend: 'linear' });
    const v = lik.evaluate(theta);
    for (const f of [0.5, 0.9, 0.99, 1.01, 1.1, 2]) {
      expect(lik.evaluate(theta, { sigma2: f * v.sigma2 }).logLikelihood).toBeLessThan(v.logLikelihood);
    }
  });

  it('createLikelihood scales with the data: multiplying values by c leaves ℓ + n ln c unchanged under ML', () => {
    const c = 3.5;
    const scaled = makeSamples(data.x, data.y, data.value.map((v) => v * c));
    const a = logLikelihood(samples, { family: 'matern', nu: 1.5, trend: 'constant', method: 'ml' }, theta);
    const b = logLikelihood(scaled, { family: 'matern', nu: 1.5, trend: 'constant', method: 'ml' }, theta);
    expectClose(b.logLikelihood + samples.value.length * Math.log(c), a.logLikelihood, { rel: 1e-12 }, 'ℓ');
    expectClose(b.sigma2, a.sigma2 * c * c, { rel: 1e-12 }, 'σ̂²');
  });

  it('createLikelihood returns −∞ for a singular R and factorises it with reported jitter when allowed', () => {
    // Two samples at the same place and no nugget: R is singular.
    const dup = makeSamples([0, 0, 100, 250], [0, 0, 50, 10], [1, 1.2, 0.4, 2]);
    const lik = createLikelihood(dup, { family: 'gaussian', trend: 'constant' });
    expect(lik.evaluate({ scale: 80, nuggetRatio: 0 }).logLikelihood).toBe(-Infinity);
    const j = lik.evaluate({ scale: 80, nuggetRatio: 0 }, { allowJitter: true });
    expect(j.jitter).toBeGreaterThan(0);
    expect(Number.isFinite(j.logLikelihood)).toBe(true);
  });

  it('createLikelihood reports the largest sample distance under the anisotropy', () => {
    const s = makeSamples([0, 300, 0], [0, 0, 400], [1, 2, 3]);
    expectClose(createLikelihood(s, { family: 'exponential', trend: 'constant' }).maxDistance, 500, { rel: 1e-15 }, 'isotropic');
    // Long axis north (azimuth 0), ratio 0.5: the east–west 300 m counts as 600 m; (300, −400) → hypot(400, 600).
    const aniso = createLikelihood(s, { family: 'exponential', trend: 'constant', anisotropy: { azimuth: 0, ratio: 0.5 } });
    expectClose(aniso.maxDistance, Math.hypot(400, 600), { rel: 1e-12 }, 'anisotropic');
  });
  it('createLikelihood with a correlation model and a fixed general ν (tabulated Matérn) agrees with one K_ν per pair', () => {
    // The table's accuracy (core/covariance/matern.ts): about 1e-13 absolute in ρ.
    const nu = 1.3;
    const correlationAt = (t: CorrelationParameters) => ({
      structures: [{ type: 'nugget' as const, sill: t.nuggetRatio }, { type: 'matern' as const, sill: 1, scale: t.scale, nu: t.nu ?? nu }],
      trend: 'constant' as const, transform: 'none' as const,
    });
    const setup: LikelihoodSetup = { family: 'matern', nu, trend: 'constant' };
    const direct = createLikelihood(samples, setup).evaluate(theta);
    const tabulated = createLikelihood(samples, setup, correlationAt).evaluate(theta);
    const perPair = createLikelihood(samples, setup, correlationAt).evaluate({ ...theta, nu });
    expectClose(tabulated.logLikelihood, direct.logLikelihood, { rel: 1e-10 }, 'ℓ tabulated against one K_ν per pair');
    expectClose(perPair.logLikelihood, direct.logLikelihood, { rel: 1e-12 }, 'ℓ of the model fill against the inlined fill');
    expect(tabulated.logLikelihood).not.toBe(perPair.logLikelihood);
  });
});
