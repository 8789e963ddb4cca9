import { beforeAll, describe, expect, it } from 'vitest';
import { fitCandidates, fitModel, fitToEmpiricalLags, type LagPoint } from '../../../src/core/fitting/fit.ts';
import { createLikelihood } from '../../../src/core/fitting/likelihood.ts';
import { simulateSamples } from '../../../src/core/simulation/simulate.ts';
import { correlation } from '../../../src/core/covariance/covariance.ts';
import { makeSamples, type Samples } from '../../../src/core/shared/samples.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import type { CorrelatedStructure, CovarianceModel, Family } from '../../../src/core/covariance/model.ts';
import { expectClose } from '../../helpers/tolerance.ts';

const truth: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 150, nu: 1.5 }],
  trend: 'constant',
  transform: 'none',
};
const square = { xmin: 0, ymin: 0, xmax: 1000, ymax: 1000 };

function parts(m: CovarianceModel): { nugget: number; sill: number; scale: number; nu?: number } {
  const nugget = m.structures.filter((s) => s.type === 'nugget').reduce((a, s) => a + s.sill, 0);
  const c = m.structures.find((s) => s.type !== 'nugget') as CorrelatedStructure;
  return { nugget, sill: c.sill, scale: c.scale, nu: c.nu };
}

function expectThrowsCode(f: () => unknown, code: string, message: RegExp): void {
  try {
    f();
  } catch (e) {
    expect(e).toBeInstanceOf(GapwiseError);
    expect((e as GapwiseError).code).toBe(code);
    expect((e as GapwiseError).message).toMatch(message);
    return;
  }
  expect.fail(`expected GapwiseError ${code}`);
}

describe('fitModel (REML) on simulated fields', () => {
  // n = 400 in a 1 km square, Matérn ν = 3/2, scale 150 m, sill 1, nugget 0.1 (simulate.ts), seeds 1–3.
  const seeds = [1, 2, 3];
  let fields: Samples[] = [];
  let fits: CovarianceModel[] = [];
  beforeAll(() => {
    fields = seeds.map((seed) => simulateSamples(truth, { count: 400, extent: square, seed }));
    fits = fields.map((s) => fitModel(s, { family: 'matern', nu: 1.5 }));
  });

  it('fitModel recovers scale, sill and nugget on average over 3 seeds', () => {
    // Tolerances: the domain spans only about 3.6 practical ranges (2.74 × 150 m = 411 m), so one
    // realisation's sill and scale vary by 20–30 % and trade off against each other (only about
    // sill/scale^(2ν) is well determined under infill sampling, Zhang 2004, JASA 99:250 — from
    // memory); the nugget rests on the few close pairs. Averaged over 3 seeds: scale and sill within
    // 35 %, nugget within 50 %, wide enough for that spread and narrow enough to catch a
    // misparameterised scale (a factor √3 or 2), a sill/nugget swap or a collapsed nugget.
    const mean = (f: (p: ReturnType<typeof parts>) => number) => fits.reduce((a, m) => a + f(parts(m)), 0) / fits.length;
    expectClose(mean((p) => p.scale), 150, { rel: 0.35 }, 'mean scale');
    expectClose(mean((p) => p.sill), 1, { rel: 0.35 }, 'mean sill');
    expectClose(mean((p) => p.nugget), 0.1, { rel: 0.5 }, 'mean nugget');
  });

  it('fitModel reports method, likelihood, AIC = 2k − 2ℓ, convergence and n', () => {
    for (const m of fits) {
      const f = m.fit!;
      expect(f.method).toBe('reml');
      expect(f.converged).toBe(true);
      expect(f.n).toBe(400);
      expect(f.warnings).toEqual([]);
      // k = sill + scale + nugget + 1 trend coefficient.
      expectClose(f.aic!, 2 * 4 - 2 * f.logLikelihood!, { rel: 1e-15 }, 'AIC');
      expect(m.trend).toBe('constant');
      // Practical range of Matérn 3/2 (correlation 5 %) is 2.74 × scale in this parameterisation
      // (methods.md "Fitting", two decimals; the root of (1 + a)e^(−a) = 0.05 over √3).
      expectClose(m.practicalRange! / parts(m).scale, 2.74, { abs: 0.005 }, 'practical range / scale');
    }
  });

  it('fitModel REML optimum is at least the likelihood at perturbed parameters', () => {
    const lik = createLikelihood(fields[0], { family: 'matern', nu: 1.5, trend: 'constant', method: 'reml' });
    const p = parts(fits[0]);
    const at = (scale: number, eta: number) => lik.evaluate({ scale, nuggetRatio: eta }).logLikelihood;
    const best = at(p.scale, p.nugget / p.sill);
    expectClose(best, fits[0].fit!.logLikelihood!, { rel: 1e-12 }, 'ℓ at the reported parameters');
    for (const [fs, fe] of [[1.05, 1], [0.95, 1], [1, 1.2], [1, 0.8], [1.05, 1.2], [0.95, 0.8], [1.05, 0.8], [0.95, 1.2]]) {
      expect(at(p.scale * fs, (p.nugget / p.sill) * fe), `scale × ${fs}, η × ${fe}`).toBeLessThanOrEqual(best + 1e-6);
    }
  });
});

describe('fitModel above 1,000 samples (nearest-neighbour stage, Newton polish)', () => {
  it('fitModel on 1,200 samples ends at a maximum of the exact REML likelihood and says how it got there', () => {
    // Stationarity check on the exact likelihood itself (likelihood.ts, checked against numpy/scipy):
    // moving scale or nugget ratio by ±5 % from the fit never raises ℓ by more than 0.01 (the
    // optimiser's tolerance is about 1e-3; Newton steps stop within 2 % in each ln-parameter).
    const field = simulateSamples(truth, { count: 1200, extent: { xmin: 0, ymin: 0, xmax: 2000, ymax: 2000 }, seed: 7 });
    const m = fitModel(field, { family: 'matern', nu: 1.5 });
    const p = parts(m);
    const lik = createLikelihood(field, { family: 'matern', nu: 1.5, trend: 'constant', method: 'reml' });
    const at = (scale: number, eta: number) => lik.evaluate({ scale, nuggetRatio: eta }).logLikelihood;
    const l0 = at(p.scale, p.nugget / p.sill);
    expectClose(l0, m.fit!.logLikelihood!, { rel: 1e-12 }, 'ℓ at the reported parameters');
    for (const [fs, fe] of [[1.05, 1], [0.95, 1], [1, 1.05], [1, 0.95]]) {
      expect(at(p.scale * fs, (p.nugget / p.sill) * fe)).toBeLessThan(l0 + 0.01);
    }
    expect(m.fit!.converged).toBe(true);
    // Few exact evaluations: the nearest-neighbour stage does the searching.
    expect(m.fit!.evaluations).toBeLessThanOrEqual(20);
    expect(m.fit!.screenEvaluations).toBeGreaterThan(20);
    // The estimates are those of the simulated field within its sampling spread (see above).
    expectClose(p.scale, 150, { rel: 0.35 }, 'scale');
    expectClose(p.nugget, 0.1, { rel: 0.5 }, 'nugget');
  }, 60_000);
});

describe('fitModel on small sets (no screening subset)', () => {
  let small: Samples;
  beforeAll(() => {
    small = simulateSamples(truth, { count: 120, extent: square, seed: 21 });
  });

  it('fitModel ML maximises the ML likelihood and counts k for each option', () => {
    const m = fitModel(small, { family: 'exponential', method: 'ml' });
    const p = parts(m);
    const lik = createLikelihood(small, { family: 'exponential', trend: 'constant', method: 'ml' });
    const best = lik.evaluate({ scale: p.scale, nuggetRatio: p.nugget / p.sill });
    expectClose(best.logLikelihood, m.fit!.logLikelihood!, { rel: 1e-12 }, 'ℓ');
    expectClose(best.sigma2, p.sill, { rel: 1e-12 }, 'profiled sill');
    for (const [fs, fe] of [[1.05, 1], [0.95, 1], [1, 1.2], [1, 0.8]]) {
      expect(lik.evaluate({ scale: p.scale * fs, nuggetRatio: (p.nugget / p.sill) * fe }).logLikelihood).toBeLessThanOrEqual(best.logLikelihood + 1e-6);
    }
    expect(m.fit!.method).toBe('ml');
    expect(m.fit!.parameters).toBe(4);
  });

  it('fitModel with a linear trend and no nugget: k = 2 + 3, one structure, trend kept', () => {
    const m = fitModel(small, { family: 'matern', nu: 2.5, trend: 'linear', nugget: false });
    expect(m.structures).toHaveLength(1);
    expect(m.structures[0]).toMatchObject({ type: 'matern', nu: 2.5 });
    expect(m.trend).toBe('linear');
    expect(m.fit!.parameters).toBe(5);
    expectClose(m.fit!.aic!, 2 * 5 - 2 * m.fit!.logLikelihood!, { rel: 1e-15 }, 'AIC');
    expect(m.fit!.trendCoefficients as number[]).toHaveLength(3);
  });

  it('fitModel with a known mean fits p = 0 and keeps the mean in the model', () => {
    const m = fitModel(small, { family: 'matern', nu: 1.5, trend: { known: 0 } });
    expect(m.trend).toEqual({ known: 0 });
    expect(m.fit!.parameters).toBe(3);
  });

  it('fitModel with fixed anisotropy returns it in the model', () => {
    const m = fitModel(small, { family: 'exponential', anisotropy: { azimuth: 30, ratio: 0.6 } });
    expect(m.anisotropy).toEqual({ azimuth: 30, ratio: 0.6 });
    const lik = createLikelihood(small, { family: 'exponential', trend: 'constant', anisotropy: { azimuth: 30, ratio: 0.6 } });
    const p = parts(m);
    expectClose(lik.evaluate({ scale: p.scale, nuggetRatio: p.nugget / p.sill }).logLikelihood, m.fit!.logLikelihood!, { rel: 1e-12 }, 'ℓ');
  });

  it('fitModel returns an unconverged fit with a warning, not an error, when the budget runs out', () => {
    const m = fitModel(small, { family: 'matern', nu: 1.5, maxEvaluations: 4 });
    expect(m.fit!.converged).toBe(false);
    expect(m.fit!.warnings!.map((w) => w.code)).toContain('optimiser-stopped');
    expect(m.fit!.warnings!.map((w) => w.message).join(' ')).toMatch(/stopped before meeting its tolerance/);
    expect(Number.isFinite(m.fit!.logLikelihood)).toBe(true);
  });

  it('fitModel (WLS) reports the REML likelihood at its parameters so fits compare', () => {
    const m = fitModel(small, { family: 'matern', nu: 1.5, method: 'wls' });
    const p = parts(m);
    expect(m.fit!.method).toBe('wls');
    expect(m.fit!.likelihoodMethod).toBe('reml');
    const lik = createLikelihood(small, { family: 'matern', nu: 1.5, trend: 'constant', method: 'reml' });
    const v = lik.evaluate({ scale: p.scale, nuggetRatio: p.nugget / p.sill }, { sigma2: p.sill });
    expectClose(m.fit!.logLikelihood!, v.logLikelihood, { rel: 1e-12 }, 'REML ℓ at WLS parameters');
    // The REML fit maximises that same likelihood, so it cannot be lower.
    const reml = fitModel(small, { family: 'matern', nu: 1.5 });
    expect(reml.fit!.logLikelihood!).toBeGreaterThanOrEqual(m.fit!.logLikelihood! - 1e-6);
    // 120 samples: the variogram warns that about 100 is the usual minimum only below it.
    expect(m.fit!.warnings!.some((w) => w.code === 'few-samples')).toBe(false);
  });
});

describe('fitToEmpiricalLags (Cressie WLS)', () => {
  // A noiseless theoretical variogram γ(h) = nugget + sill·(1 − ρ(h)) at 15 lags with uneven pair counts.
  function theoretical(family: Family, sill: number, scale: number, nugget: number, nu?: number): LagPoint[] {
    const s = { type: family, sill: 1, scale, nu };
    return Array.from({ length: 15 }, (_, j) => {
      const h = 20 + 40 * j;
      return { distance: h, semivariance: nugget + sill * (1 - correlation(s, h)), pairs: 40 + ((j * 37) % 90) };
    });
  }
  const cases: [Family, number, number, number, number | undefined][] = [
    ['matern', 1, 150, 0.1, 1.5],
    ['spherical', 2, 300, 0.5, undefined],
    ['gaussian', 3, 120, 0.2, undefined],
    ['exponential', 0.7, 90, 0, undefined],
  ];
  for (const [family, sill, scale, nugget, nu] of cases) {
    it(`fitToEmpiricalLags fits a noiseless ${family} variogram exactly (sill ${sill}, scale ${scale}, nugget ${nugget})`, () => {
      const f = fitToEmpiricalLags(theoretical(family, sill, scale, nugget, nu), { family, nu, maxDistance: 1200 });
      expectClose(f.sill, sill, { rel: 1e-5 }, 'sill');
      expectClose(f.scale, scale, { rel: 1e-5 }, 'scale');
      expectClose(f.nugget, nugget, { rel: 1e-5, abs: 1e-8 }, 'nugget');
      expect(f.criterion).toBeLessThan(1e-12);
    });
  }

  it('fitToEmpiricalLags recovers a free Matérn smoothness from a noiseless variogram', () => {
    const f = fitToEmpiricalLags(theoretical('matern', 1, 100, 0.05, 1.2), { family: 'matern', nu: 'free', maxDistance: 1200 });
    expectClose(f.nu!, 1.2, { rel: 1e-4 }, 'ν');
    expectClose(f.scale, 100, { rel: 1e-4 }, 'scale');
  });

  it('fitToEmpiricalLags without a nugget keeps it at 0', () => {
    const f = fitToEmpiricalLags(theoretical('gaussian', 1, 100, 0), { family: 'gaussian', nugget: false });
    expect(f.nugget).toBe(0);
    expectClose(f.scale, 100, { rel: 1e-5 }, 'scale');
  });

  it('fitToEmpiricalLags weights lags by N/γ² (Cressie 1985): a lag with many pairs pulls harder', () => {
    const lags = theoretical('exponential', 1, 100, 0);
    const bumped = lags.map((l, j) => (j === 3 ? { ...l, semivariance: l.semivariance * 1.3 } : l));
    const few = fitToEmpiricalLags(bumped.map((l, j) => (j === 3 ? { ...l, pairs: 5 } : l)), { family: 'exponential' });
    const many = fitToEmpiricalLags(bumped.map((l, j) => (j === 3 ? { ...l, pairs: 5000 } : l)), { family: 'exponential' });
    const at = (f: typeof few) => f.nugget + f.sill * (1 - Math.exp(-lags[3].distance / f.scale));
    expect(Math.abs(at(many) - bumped[3].semivariance)).toBeLessThan(Math.abs(at(few) - bumped[3].semivariance));
  });
});

describe('fitModel refuses what it cannot fit', () => {
  it('fitModel throws too-few-samples for n < 3', () => {
    expectThrowsCode(() => fitModel(makeSamples([0, 1], [0, 1], [1, 2]), { family: 'matern' }), 'too-few-samples', /at least 3 samples.*got 2/);
  });
  it('fitModel throws too-few-samples for a linear trend with n < 5', () => {
    expectThrowsCode(() => fitModel(makeSamples([0, 1, 2, 3], [0, 1, 0, 2], [1, 2, 3, 1]), { family: 'matern', trend: 'linear' }), 'too-few-samples', /at least 5 samples.*linear trend.*got 4/);
  });
  it('fitModel throws constant-values when all values are identical', () => {
    const s = makeSamples([0, 10, 20, 30], [0, 5, 0, 5], [2.5, 2.5, 2.5, 2.5]);
    for (const method of ['reml', 'wls'] as const) {
      expectThrowsCode(() => fitModel(s, { family: 'exponential', method }), 'constant-values', /All 4 values equal 2.5/);
    }
  });
  it('fitModel throws bad-option for an unknown family, method or smoothness', () => {
    const s = makeSamples([0, 10, 20], [0, 5, 0], [1, 2, 3]);
    expectThrowsCode(() => fitModel(s, { family: 'cubic' as Family }), 'bad-option', /family/);
    expectThrowsCode(() => fitModel(s, { family: 'matern', method: 'ols' as 'ml' }), 'bad-option', /method/);
    expectThrowsCode(() => fitModel(s, { family: 'matern', nu: -1 }), 'bad-option', /nu/);
  });
  it('fitModel throws too-few-samples when every sample is at one place', () => {
    expectThrowsCode(() => fitModel(makeSamples([5, 5, 5], [1, 1, 1], [1, 2, 3]), { family: 'exponential' }), 'too-few-samples', /one place/);
  });
});

describe('fitModel by least squares', () => {
  it('fitModel with wls reports the REML likelihood at its parameters, or none when the matrix is near singular', () => {
    const s = simulateSamples(truth, { count: 60, extent: square, seed: 11 });
    const m = fitModel(s, { family: 'matern', nu: 1.5, method: 'wls' });
    expect(m.fit!.likelihoodMethod).toBe('reml');
    // The reported figure is the REML log-likelihood of the model at the fitted parameters: a REML fit
    // maximises it, so it can be no higher than the REML fit's (common practice: the REML maximum bounds it).
    const reml = fitModel(s, { family: 'matern', nu: 1.5, method: 'reml' });
    expect(m.fit!.logLikelihood!).toBeLessThanOrEqual(reml.fit!.logLikelihood! + 1e-6);
    expect(m.fit!.aic).toBeCloseTo(2 * (m.fit!.parameters as number) - 2 * m.fit!.logLikelihood!, 9);
    // A smooth field sampled densely on a fine layout with no nugget: the gaussian model's matrix is
    // numerically singular, so no likelihood is given (never a value from a jittered matrix).
    const xs: number[] = [], ys: number[] = [], vs: number[] = [];
    for (let i = 0; i < 8; i++) for (let j = 0; j < 8; j++) { xs.push(i); ys.push(j); vs.push(Math.sin(i / 9) + Math.cos(j / 11)); }
    const g = fitModel(makeSamples(xs, ys, vs), { family: 'gaussian', method: 'wls', nugget: false });
    expect(g.fit!.logLikelihood).toBeUndefined();
    expect(g.fit!.aic).toBeUndefined();
    expect(g.fit!.warnings!.filter((w) => w.code === 'no-likelihood').map((w) => w.message).join(' ')).toMatch(/No likelihood reported/);
  });
});

describe('fitCandidates', () => {
  it('fitCandidates fits the 6 standard candidates (Matérn ν = ½ once, as the exponential) and sorts them by AIC', () => {
    const s = simulateSamples(truth, { count: 70, extent: square, seed: 5 });
    const models = fitCandidates(s);
    expect(models).toHaveLength(6);
    expect(models.filter((m) => m.structures.some((x) => x.type === 'matern' && x.nu === 0.5))).toHaveLength(0);
    const aics = models.map((m) => m.fit!.aic!);
    expect([...aics].sort((a, b) => a - b)).toEqual(aics);
    const find = (family: string, nu?: number | 'free') => models.find((m) => {
      const c = m.structures.find((x) => x.type !== 'nugget') as CorrelatedStructure;
      return c.type === family && (nu === undefined || (nu === 'free' ? m.fit!.parameters === 5 : c.nu === nu && m.fit!.parameters === 4));
    })!;
    // Matérn ν = ½ is the exponential model: the same maximum, so it is not fitted twice.
    const half = fitModel(s, { family: 'matern', nu: 0.5 });
    expectClose(half.fit!.logLikelihood!, find('exponential').fit!.logLikelihood!, { abs: 2e-3 }, 'ℓ ν=½ vs exponential');
    // Free ν nests the fixed ones: its maximum is at least theirs (ν = ½, 3/2, 5/2 lie in [0.2, 5]).
    const free = find('matern', 'free');
    for (const nu of [1.5, 2.5]) expect(free.fit!.logLikelihood!).toBeGreaterThanOrEqual(find('matern', nu).fit!.logLikelihood! - 2e-3);
    expect(free.fit!.logLikelihood!).toBeGreaterThanOrEqual(find('exponential').fit!.logLikelihood! - 2e-3);
    expect(free.fit!.parameters).toBe(5);
  });
});
