import { describe, expect, it } from 'vitest';
import { leaveOneOut, summariseErrors } from '../../../src/core/validation/cross-validation.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import { makeSamples, type Samples } from '../../../src/core/shared/samples.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { sampleCovarianceMatrix } from '../../../src/core/covariance/covariance.ts';
import { cholesky } from '../../../src/core/linalg/linalg.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';

interface KrigingCase {
  name: string;
  model: CovarianceModel;
  samples: { x: number[]; y: number[]; value: number[] };
  loo: { prediction: number[]; sdObserved: number[] };
  looScale: 'data' | 'log';
  absFloor: number;
}

// Outside reference: numpy brute-force leave-one-out, one bordered solve per sample
// (tests/reference/make_kriging.py).
const fixture = loadFixture<KrigingCase>('kriging.json');

function randomSamples(n: number, seed: number): Samples {
  const r = createRandom(seed);
  const x: number[] = [];
  const y: number[] = [];
  const v: number[] = [];
  for (let i = 0; i < n; i++) {
    const a = r.uniform() * 1000;
    const b = r.uniform() * 1000;
    x.push(a);
    y.push(b);
    v.push(5 + Math.sin(a / 150) + 0.002 * b + 0.2 * r.normal());
  }
  return makeSamples(x, y, v);
}

function model(trend: CovarianceModel['trend'], nugget: number): CovarianceModel {
  return {
    structures: [
      ...(nugget > 0 ? [{ type: 'nugget' as const, sill: nugget }] : []),
      { type: 'exponential', sill: 1.5, scale: 200 },
      { type: 'matern', sill: 0.5, scale: 90, nu: 2.5 },
    ],
    trend,
    anisotropy: { azimuth: 40, ratio: 0.7 },
    transform: 'none',
  };
}

describe('leaveOneOut against brute-force refits', () => {
  const samples = randomSamples(35, 17);
  const trends: [string, CovarianceModel['trend']][] = [['SK', { known: 5.5 }], ['OK', 'constant'], ['UK', 'linear']];
  for (const [label, trend] of trends) {
    for (const nugget of [0, 0.2]) {
      it(`leaveOneOut (${label}, nugget ${nugget}) equals n predictors built on n − 1 samples`, () => {
        const m = model(trend, nugget);
        const cv = leaveOneOut(samples, m);
        const n = samples.x.length;
        for (let i = 0; i < n; i++) {
          const keep = (_: number, k: number) => k !== i;
          const rest = { x: samples.x.filter(keep), y: samples.y.filter(keep), value: samples.value.filter(keep) };
          const out = createPredictor(rest, m).predict([samples.x[i]], [samples.y[i]]);
          expectClose(cv.prediction[i], out.mean[0], { rel: 1e-8 }, `prediction[${i}]`);
          expectClose(cv.sdObserved[i], out.sdObserved[0], { rel: 1e-8 }, `sdObserved[${i}]`);
          expectClose(cv.error[i], out.mean[0] - samples.value[i], { rel: 1e-8, abs: 1e-10 }, `error[${i}]`);
          expectClose(cv.standardisedError[i], cv.error[i] / cv.sdObserved[i], { rel: 1e-14 }, `standardisedError[${i}]`);
        }
      });
    }
  }
});

describe('leaveOneOut against the numpy reference', () => {
  for (const c of fixture.cases) {
    it(`leaveOneOut matches numpy brute force for ${c.name}`, () => {
      const cv = leaveOneOut(makeSamples(c.samples.x, c.samples.y, c.samples.value), c.model);
      expect(cv.scale).toBe(c.looScale);
      const tol = { rel: fixture.tolerance.rel ?? 1e-10, abs: c.absFloor };
      expectClose(cv.prediction, c.loo.prediction, tol, `${c.name} prediction`);
      expectClose(cv.sdObserved, c.loo.sdObserved, tol, `${c.name} sdObserved`);
    });
  }
});

describe('leaveOneOut hand cases', () => {
  it('leaveOneOut with two samples and a known mean (hand values)', () => {
    // K = [[2, 2/e], [2/e, 2]] (exponential, sill 2, scale 100, distance 100), m = 1, y = (3, 0).
    // ŷ₁ = 1 + e⁻¹·(0 − 1), ŷ₂ = 1 + e⁻¹·(3 − 1), σ² = 2 − (2/e)²/2 = 2 − 2e⁻² for both.
    const s = makeSamples([0, 100], [0, 0], [3, 0]);
    const cv = leaveOneOut(s, { structures: [{ type: 'exponential', sill: 2, scale: 100 }], trend: { known: 1 }, transform: 'none' });
    const e1 = Math.exp(-1);
    expectClose(Array.from(cv.prediction), [1 - e1, 1 + 2 * e1], { rel: 1e-14 }, 'prediction');
    const sd = Math.sqrt(2 - 2 * Math.exp(-2));
    expectClose(Array.from(cv.sdObserved), [sd, sd], { rel: 1e-14 }, 'sdObserved');
    expectClose(Array.from(cv.error), [1 - e1 - 3, 1 + 2 * e1], { rel: 1e-14 }, 'error');
  });
});

describe('summariseErrors', () => {
  it('summariseErrors on a hand case: me, rmse, msse, coverage95', () => {
    // errors (1, −1, 2, 0), sds (1, 1, 1, 2): standardised (1, −1, 2, 0).
    const s = summariseErrors([1, -1, 2, 0], [1, 1, 1, 2]);
    expectClose(s.me, 0.5, { rel: 1e-15 }, 'me');
    expectClose(s.rmse, Math.sqrt(1.5), { rel: 1e-15 }, 'rmse');
    expectClose(s.msse, 1.5, { rel: 1e-15 }, 'msse');
    expectClose(s.coverage95, 0.75, { rel: 1e-15 }, 'coverage95');
    expect(s.n).toBe(4);
    // |z| = 1.96 exactly counts as inside.
    expect(summariseErrors([1.96, 3], [1, 1]).coverage95).toBe(0.5);
  });
  it('leaveOneOut(...).summary is summariseErrors of its own arrays', () => {
    const cv = leaveOneOut(randomSamples(20, 2), model('constant', 0.1));
    expect(cv.summary).toEqual(summariseErrors(cv.error, cv.sdObserved));
  });
});

describe('leaveOneOut on data drawn from the model', () => {
  it('leaveOneOut: msse ≈ 1 and coverage ≈ 95 % when the model is true (seeded draw)', () => {
    const n = 300;
    const s = randomSamples(n, 99);
    const m: CovarianceModel = { structures: [{ type: 'nugget', sill: 0.2 }, { type: 'matern', sill: 1, scale: 120, nu: 1.5 }], trend: 'constant', transform: 'none' };
    const { L } = cholesky(sampleCovarianceMatrix(m, s.x, s.y), n);
    const r = createRandom(123);
    const e = Float64Array.from({ length: n }, () => r.normal());
    const value = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      let v = 7;
      for (let k = 0; k <= i; k++) v += L[i * n + k] * e[k];
      value[i] = v;
    }
    const cv = leaveOneOut({ x: s.x, y: s.y, value }, m);
    // Sampling spread of msse for n = 300 is about √(2/300) ≈ 0.08 (correlated errors widen it).
    expect(cv.summary.msse).toBeGreaterThan(0.75);
    expect(cv.summary.msse).toBeLessThan(1.3);
    expect(cv.summary.coverage95).toBeGreaterThan(0.9);
    expect(Math.abs(cv.summary.me)).toBeLessThan(0.15);
  });
});

describe('leaveOneOut input checks', () => {
  it('leaveOneOut needs p + 2 samples and reports the log scale', () => {
    const code = (f: () => unknown): string => {
      try {
        f();
      } catch (e) {
        return (e as GapwiseError).code;
      }
      return 'no error';
    };
    expect(code(() => leaveOneOut(makeSamples([0, 1, 2, 3], [0, 5, 1, 4], [1, 2, 3, 4]), model('linear', 0.1)))).toBe('too-few-samples');
    expect(code(() => leaveOneOut(makeSamples([0, 1, 2, 3, 6], [0, 5, 1, 4, 2], [1, 2, 3, 4, 3]), model('linear', 0.1)))).toBe('no error');
    expect(code(() => leaveOneOut(makeSamples([0], [0], [1]), model({ known: 0 }, 0.1)))).toBe('too-few-samples');
    const cv = leaveOneOut(makeSamples([0, 100, 250], [0, 50, 10], [1, 2, 4]), { ...model('constant', 0.1), transform: 'log' });
    expect(cv.scale).toBe('log');
  });
});
