// Covariates in the mean: encoding, kriging with external drift, GLS coefficients and REML, against
// an independent numpy/scipy implementation (tests/reference/make_covariates.py).
import { describe, expect, it } from 'vitest';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';
import { thrown } from '../../helpers/thrown.ts';
import { encodeCovariates, resolveCovariateTrend, type CovariateColumn } from '../../../src/core/covariance/covariates.ts';
import { createPredictor, systemTrendCoefficients } from '../../../src/core/prediction/kriging.ts';
import { createLikelihood } from '../../../src/core/fitting/likelihood.ts';
import { fitModel } from '../../../src/core/fitting/fit.ts';
import { parseModel, type CovarianceModel, type CovariateTrend } from '../../../src/core/covariance/model.ts';
import { trendCoefficients, trendColumnCount, trendColumnNames } from '../../../src/core/covariance/trend.ts';
import { createVecchiaLikelihood, vecchiaTrend } from '../../../src/core/fitting/vecchia.ts';
import { pickSamples, type Samples } from '../../../src/core/shared/samples.ts';
import { createLocalPredictor } from '../../../src/core/prediction/local-kriging.ts';
import { leaveOneOut } from '../../../src/core/validation/cross-validation.ts';

interface CovariateCase {
  name: string;
  model: CovarianceModel;
  logMean: number[];
  logVariance: number[];
  coefficients: number[];
  standardErrors: number[];
}

interface Table { x: number[]; y: number[]; sqrt_dist: number[]; soil: string[]; value?: number[]; valueLog?: number[] }

const fixture = loadFixture<CovariateCase>('covariates.json');
const S = fixture.samples as Table;
const T = fixture.targets as Table;
const reml = fixture.reml as { logLikelihood: number; sill: number; scale: number; nugget: number; covariates: string[] };

function textColumn(values: string[]): CovariateColumn {
  const levels: string[] = [];
  const index = new Map<string, number>();
  const codes = new Uint32Array(values.length);
  values.forEach((v, i) => {
    if (!index.has(v)) { index.set(v, levels.length); levels.push(v); }
    codes[i] = index.get(v)!;
  });
  return { kind: 'text', codes, levels };
}

function columnsOf(t: Table): Record<string, CovariateColumn> {
  return { sqrt_dist: { kind: 'numeric', values: Float64Array.from(t.sqrt_dist) }, soil: textColumn(t.soil) };
}

function samplesFor(trend: CovariateTrend, log: boolean): Samples {
  return {
    x: Float64Array.from(S.x), y: Float64Array.from(S.y), value: Float64Array.from(log ? S.valueLog! : S.value!),
    covariates: encodeCovariates(trend, columnsOf(S), S.x.length),
  };
}

describe('kriging with covariates against numpy (make_covariates.py)', () => {
  it('the fixture covers numeric and categorical covariates, with and without coordinates, log models', () => {
    const names = fixture.cases.map((c) => c.name);
    expect(names).toContain('exponential-none');
    expect(names).toContain('exponential-xy-soil-log');
    expect(names).toContain('matern-soil-none');
    expect(fixture.cases.length).toBe(16);
  });
  for (const c of fixture.cases) {
    it(`createPredictor ${c.name}: mean and variance of the bordered system to 1e-8`, () => {
      const model = parseModel(c.model);
      const trend = model.trend as CovariateTrend;
      const log = model.transform === 'log';
      const samples = samplesFor(trend, log);
      const predictor = createPredictor(samples, model);
      const targets = encodeCovariates(trend, columnsOf(T), T.x.length);
      const p = predictor.predict(T.x, T.y, { covariates: targets });
      const mean = log ? p.logMean! : p.mean;
      const sd = log ? p.logSd! : p.sd;
      expectClose(mean, c.logMean, { rel: 1e-8, abs: 1e-8 }, 'mean');
      expectClose(Array.from(sd, (s) => s * s), c.logVariance, { rel: 1e-8, abs: 1e-10 }, 'variance');
    });
    it(`systemTrendCoefficients ${c.name}: GLS coefficients and standard errors to 1e-8`, () => {
      const model = parseModel(c.model);
      const trend = model.trend as CovariateTrend;
      const samples = samplesFor(trend, model.transform === 'log');
      const k = systemTrendCoefficients(createPredictor(samples, model).system);
      expect(k.map((x) => x.name)).toEqual(trendColumnNames(trend));
      expectClose(k.map((x) => x.estimate), c.coefficients, { rel: 1e-8, abs: 1e-10 }, 'coefficients');
      expectClose(k.map((x) => x.standardError), c.standardErrors, { rel: 1e-8 }, 'standard errors');
    });
  }
});

describe('fitModel with covariates against scipy REML (make_covariates.py)', () => {
  const trend = resolveCovariateTrend({ covariates: reml.covariates }, columnsOf(S));
  const samples = samplesFor(trend, false);
  it('createLikelihood at the scipy optimum equals its restricted log-likelihood (1e-8)', () => {
    const lik = createLikelihood(samples, { family: 'exponential', trend, method: 'reml' });
    const v = lik.evaluate({ scale: reml.scale, nuggetRatio: reml.nugget / reml.sill }, { sigma2: reml.sill });
    expectClose(v.logLikelihood, reml.logLikelihood, { rel: 1e-8 }, 'logLikelihood');
  });
  it('fitModel REML (tolerance 1e-8): log-likelihood at the optimum within 1e-6, sill, scale and nugget within 1 %', () => {
    const model = fitModel(samples, { family: 'exponential', method: 'reml', trend, tolerance: 1e-8 });
    expectClose(model.fit!.logLikelihood!, reml.logLikelihood, { abs: 1e-6 }, 'logLikelihood');
    const nugget = model.structures.find((s) => s.type === 'nugget')!;
    const main = model.structures.find((s) => s.type === 'exponential')! as { sill: number; scale: number };
    expectClose(main.sill, reml.sill, { rel: 0.01 }, 'sill');
    expectClose(main.scale, reml.scale, { rel: 0.01 }, 'scale');
    expectClose(nugget.sill, reml.nugget, { rel: 0.01 }, 'nugget');
    const coefficients = model.fit!.coefficients as Array<{ name: string; estimate: number; standardError: number }>;
    expect(coefficients.map((c) => c.name)).toEqual(['constant', 'sqrt_dist', 'soil=loam', 'soil=sand']);
    expect(coefficients.every((c) => c.standardError > 0)).toBe(true);
    const share = model.fit!.trendVarianceExplained as number;
    expect(share).toBeGreaterThan(0);
    expect(share).toBeLessThan(1);
  });
  it('fitModel WLS with covariates fits the variogram of least-squares residuals and carries coefficients', () => {
    const model = fitModel(samples, { family: 'exponential', method: 'wls', trend });
    expect(model.trend).toEqual(trend);
    expect((model.fit!.coefficients as unknown[]).length).toBe(4);
  });
});

describe('encodeCovariates and resolveCovariateTrend', () => {
  const columns: Record<string, CovariateColumn> = {
    d: { kind: 'numeric', values: Float64Array.from([1, 2, 3, 4]) },
    code: { kind: 'numeric', values: Float64Array.from([3, 1, 3, 10]) },
    soil: textColumn(['sand', 'clay', 'loam', 'clay']),
  };
  it('resolveCovariateTrend records sorted levels of text and marked integer-code columns; the first is the reference', () => {
    const t = resolveCovariateTrend({ covariates: ['d', 'code', 'soil'], categorical: ['code'] }, columns);
    expect(t.levels).toEqual({ code: ['1', '3', '10'], soil: ['clay', 'loam', 'sand'] });
    expect(trendColumnCount(t)).toBe(1 + 1 + 2 + 2);
    expect(trendColumnNames({ ...t, coordinates: true })).toEqual(['constant', 'x', 'y', 'd', 'code=3', 'code=10', 'soil=loam', 'soil=sand']);
    const X = encodeCovariates(t, columns, 4);
    expect(Array.from(X)).toEqual([
      1, 1, 0, 0, 1,
      2, 0, 0, 0, 0,
      3, 1, 0, 1, 0,
      4, 0, 1, 0, 0,
    ]);
  });
  it('encodeCovariates names the level, column and line of a level the samples did not have', () => {
    const t = resolveCovariateTrend({ covariates: ['soil'] }, columns);
    const e = thrown(() => encodeCovariates(t, { soil: textColumn(['clay', 'peat']) }, 2, { file: 'targets.csv' }));
    expect(e.code).toBe('bad-value');
    expect(e.place).toEqual({ file: 'targets.csv', row: 3, column: 'soil' });
    expect(e.message).toContain('"peat"');
    expect(e.message).toContain('clay, loam, sand');
  });
  it('encodeCovariates refuses an empty numeric cell and a missing column, naming them', () => {
    const t = { covariates: ['d'] };
    const e = thrown(() => encodeCovariates(t, { d: { kind: 'numeric', values: Float64Array.from([1, NaN]) } }, 2));
    expect(e.place).toEqual({ file: undefined, row: 3, column: 'd' });
    const m = thrown(() => encodeCovariates(t, {}, 2));
    expect(m.code).toBe('missing-column');
    expect(m.message).toContain('"d"');
  });
  it('createPredictor with a covariate trend refuses targets without covariate values', () => {
    const t = resolveCovariateTrend({ covariates: ['sqrt_dist'] }, columnsOf(S));
    const model = parseModel({ structures: [{ type: 'exponential', sill: 1, scale: 100 }], trend: t });
    const predictor = createPredictor(samplesFor(t, false), model);
    const e = thrown(() => predictor.predict([5500], [6200500]));
    expect(e.code).toBe('bad-value');
    expect(e.message).toContain('sqrt_dist');
  });
  it('a constant covariate makes the trend impossible to estimate, and the message says why', () => {
    const t = { covariates: ['c'] };
    const n = S.x.length;
    const samples: Samples = { x: Float64Array.from(S.x), y: Float64Array.from(S.y), value: Float64Array.from(S.value!), covariates: new Float64Array(n).fill(2) };
    const model = parseModel({ structures: [{ type: 'exponential', sill: 1, scale: 100 }], trend: t });
    const e = thrown(() => createPredictor(samples, model));
    expect(e.code).toBe('not-positive-definite');
    expect(e.message).toContain('constant over the samples');
  });
  it('parseModel keeps the existing trends valid and checks the covariate form', () => {
    expect(parseModel({ structures: [{ type: 'nugget', sill: 1 }], trend: 'linear' }).trend).toBe('linear');
    expect(parseModel({ structures: [{ type: 'nugget', sill: 1 }], trend: { known: 3 } }).trend).toEqual({ known: 3 });
    expect(parseModel({ structures: [{ type: 'nugget', sill: 1 }], trend: { covariates: ['a', 'b'], coordinates: true, levels: { b: ['x', 'y'] } } }).trend)
      .toEqual({ covariates: ['a', 'b'], coordinates: true, levels: { b: ['x', 'y'] } });
    expect(thrown(() => parseModel({ structures: [{ type: 'nugget', sill: 1 }], trend: { covariates: ['a', 'a'] } })).message).toContain('twice');
    expect(thrown(() => parseModel({ structures: [{ type: 'nugget', sill: 1 }], trend: { covariates: ['a'], levels: { z: ['1'] } } })).code).toBe('bad-model');
  });
});

describe('local kriging and leave-one-out with covariates', () => {
  const trend = resolveCovariateTrend({ covariates: ['sqrt_dist', 'soil'] }, columnsOf(S));
  const model = parseModel({ structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 0.6, scale: 150 }], trend });
  const samples = samplesFor(trend, false);
  const targets = encodeCovariates(trend, columnsOf(T), T.x.length);
  it('createLocalPredictor with all samples as the neighbourhood equals simple kriging of the residuals from the global GLS trend', () => {
    const local = createLocalPredictor(samples, model, { neighbours: samples.value.length }).predict(T.x, T.y, { covariates: targets });
    // Independent path: the exact predictor's β̂ and trend, then simple kriging (known mean 0) of the residuals.
    const exact = createPredictor(samples, model);
    const k = systemTrendCoefficients(exact.system).map((c) => c.estimate);
    const trendAt = (x: number, y: number, row: Float64Array) => k[0] + k[1] * row[0] + k[2] * row[1] + k[3] * row[2];
    const n = samples.value.length;
    const resid = Float64Array.from(samples.value, (v, i) => v - trendAt(S.x[i], S.y[i], samples.covariates!.subarray(i * 3, i * 3 + 3)));
    const sk = createPredictor({ x: samples.x, y: samples.y, value: resid }, { ...model, trend: { known: 0 } }).predict(T.x, T.y);
    const expected = Array.from(sk.mean, (m, j) => m + trendAt(T.x[j], T.y[j], targets.subarray(j * 3, j * 3 + 3)));
    expectClose(local.mean, expected, { rel: 1e-9, abs: 1e-9 }, 'mean');
    expectClose(local.sd, sk.sd, { rel: 1e-9 }, 'sd');
    expect(n).toBe(80);
  });
  it('leaveOneOut with a covariate trend equals refitting without each sample (brute force on 3 samples)', () => {
    const cv = leaveOneOut(samples, model);
    for (const i of [0, 17, 63]) {
      const keep = Array.from({ length: samples.value.length }, (_, k) => k).filter((k) => k !== i);
      const p = createPredictor(pickSamples(samples, keep), model).predict([S.x[i]], [S.y[i]], { covariates: samples.covariates!.subarray(i * 3, i * 3 + 3) });
      expectClose(cv.prediction[i], p.mean[0], { rel: 1e-9 }, `prediction ${i}`);
    }
  });
});

describe('nearest-neighbour likelihood with covariates', () => {
  const trend = resolveCovariateTrend({ covariates: ['sqrt_dist', 'soil'], coordinates: true }, columnsOf(S));
  const samples = samplesFor(trend, false);
  it('createVecchiaLikelihood with m ≥ n − 1 equals the exact REML likelihood with covariates and coordinates (1e-8)', () => {
    const setup = { family: 'exponential' as const, trend, method: 'reml' as const };
    const exact = createLikelihood(samples, setup).evaluate({ scale: 120, nuggetRatio: 0.08 });
    const nn = createVecchiaLikelihood(samples, { ...setup, neighbours: samples.value.length - 1 }).evaluate({ scale: 120, nuggetRatio: 0.08 });
    expectClose(nn.logLikelihood, exact.logLikelihood, { rel: 1e-8 }, 'logLikelihood');
    expectClose(nn.sigma2, exact.sigma2, { rel: 1e-8 }, 'sigma2');
    expectClose(nn.beta, exact.beta, { rel: 1e-7, abs: 1e-9 }, 'beta');
  });
  it('vecchiaTrend with all earlier samples as neighbours gives the exact GLS coefficients and standard errors', () => {
    const model = parseModel({ structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 0.6, scale: 150 }], trend });
    const t = vecchiaTrend(samples, model, { neighbours: samples.value.length - 1 });
    const viaNn = trendCoefficients(trend, t.frame, t.beta, t.betaCovariance);
    const exact = systemTrendCoefficients(createPredictor(samples, model).system);
    expectClose(viaNn.map((c) => c.estimate), exact.map((c) => c.estimate), { rel: 1e-7, abs: 1e-10 }, 'estimates');
    expectClose(viaNn.map((c) => c.standardError), exact.map((c) => c.standardError), { rel: 1e-7 }, 'standard errors');
  });
});
