import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { createPredictor, predictAt, krigingWeights, buildKrigingSystem } from '../../../src/core/prediction/kriging.ts';
import { solveLowerBlock, lowerTriangularInverse } from '../../../src/core/linalg/linalg.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import { makeSamples, type Samples } from '../../../src/core/shared/samples.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { cholesky } from '../../../src/core/linalg/linalg.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';

interface KrigingCase {
  name: string;
  model: CovarianceModel;
  samples: { x: number[]; y: number[]; value: number[] };
  targets: { x: number[]; y: number[] };
  expected: { mean: number[]; sd?: number[]; sdObserved?: number[]; logMean?: number[]; logSd?: number[]; median?: number[] };
  absFloor: number;
}

// Outside reference: numpy linalg.solve of the bordered system, scipy kv (tests/reference/make_kriging.py).
const fixture = loadFixture<KrigingCase>('kriging.json');

function randomSamples(n: number, seed: number, offsetX = 0, offsetY = 0): Samples {
  const r = createRandom(seed);
  const x: number[] = [];
  const y: number[] = [];
  const v: number[] = [];
  for (let i = 0; i < n; i++) {
    const a = r.uniform() * 1000;
    const b = r.uniform() * 1000;
    x.push(a + offsetX);
    y.push(b + offsetY);
    v.push(5 + Math.sin(a / 150) + 0.002 * b + 0.2 * r.normal());
  }
  return makeSamples(x, y, v);
}

const matern = (nugget: number, trend: CovarianceModel['trend']): CovarianceModel => ({
  structures: [
    ...(nugget > 0 ? [{ type: 'nugget' as const, sill: nugget }] : []),
    { type: 'matern', sill: 2, scale: 180, nu: 1.5 },
  ],
  trend,
  transform: 'none',
});

describe('createPredictor against the numpy bordered kriging system', () => {
  it('has fixture cases for SK, OK, UK, every family, nugget, anisotropy, nesting and UTM offsets', () => {
    const names = fixture.cases.map((c) => c.name).join(' ');
    for (const word of ['sk-', 'ok-', 'uk-', 'exponential', 'gaussian', 'spherical', 'matern05', 'matern15',
      'matern25', 'matern12', 'nugget', 'anisotropic', 'nested', 'utm', 'log']) {
      expect(names).toContain(word);
    }
  });
  for (const c of fixture.cases) {
    it(`createPredictor(...).predict matches numpy for ${c.name}`, () => {
      const samples = makeSamples(c.samples.x, c.samples.y, c.samples.value);
      const predictor = createPredictor(samples, c.model);
      expect(predictor.warnings).toEqual([]);
      const out = predictor.predict(Float64Array.from(c.targets.x), Float64Array.from(c.targets.y), { blockSize: 13 });
      const tol = { rel: fixture.tolerance.rel ?? 1e-8, abs: c.absFloor };
      if (c.model.transform === 'log') {
        expectClose(out.logMean!, c.expected.logMean!, tol, `${c.name} logMean`);
        expectClose(out.logSd!, c.expected.logSd!, tol, `${c.name} logSd`);
        expectClose(out.median!, c.expected.median!, tol, `${c.name} median`);
        expectClose(out.mean, c.expected.mean, tol, `${c.name} mean`);
      } else {
        expectClose(out.mean, c.expected.mean, tol, `${c.name} mean`);
        expectClose(out.sd, c.expected.sd!, tol, `${c.name} sd`);
        expectClose(out.sdObserved, c.expected.sdObserved!, tol, `${c.name} sdObserved`);
      }
    });
  }
});

describe('krigingWeights', () => {
  const samples = randomSamples(30, 11);
  it('krigingWeights: ordinary-kriging weights sum to one', () => {
    for (const [tx, ty] of [[500, 500], [-300, 1200], [samples.x[3], samples.y[3]]]) {
      const w = krigingWeights(samples, matern(0.1, 'constant'), tx, ty);
      expectClose(w.weights.reduce((s, a) => s + a, 0), 1, { abs: 1e-12 }, 'Σλ');
    }
  });
  it('krigingWeights (property): OK weights sum to 1 and UK weights reproduce x, y for any layout', () => {
    const point = fc.tuple(fc.integer({ min: -500, max: 1500 }), fc.integer({ min: -500, max: 1500 }));
    fc.assert(fc.property(
      fc.uniqueArray(point, { minLength: 5, maxLength: 15, selector: ([a, b]) => `${a},${b}` }),
      point,
      fc.double({ min: 0.01, max: 1, noNaN: true }),
      (pts, [tx, ty], nugget) => {
        const vals = pts.map(([a, b]) => Math.sin(a / 100) + b / 1000);
        const s = makeSamples(pts.map((q) => q[0]), pts.map((q) => q[1]), vals);
        const ok = krigingWeights(s, matern(nugget, 'constant'), tx, ty);
        expect(Math.abs(ok.weights.reduce((a, b) => a + b, 0) - 1)).toBeLessThan(1e-9);
        // Collinear layouts cannot carry a linear trend; skip those.
        let area = 0;
        for (let i = 2; i < pts.length; i++) {
          area = Math.max(area, Math.abs((pts[1][0] - pts[0][0]) * (pts[i][1] - pts[0][1]) - (pts[i][0] - pts[0][0]) * (pts[1][1] - pts[0][1])));
        }
        if (area < 1000) return;
        const uk = krigingWeights(s, matern(nugget, 'linear'), tx, ty);
        let sx = 0;
        for (let i = 0; i < pts.length; i++) sx += uk.weights[i] * pts[i][0];
        expect(Math.abs(sx - tx)).toBeLessThan(1e-6 * (1 + Math.abs(tx)));
      },
    ), { numRuns: 60, seed: 42 });
  });
  it('krigingWeights: universal-kriging weights reproduce 1, x and y at the target', () => {
    const tx = 321;
    const ty = 777;
    const w = krigingWeights(samples, matern(0.1, 'linear'), tx, ty);
    let s1 = 0;
    let sx = 0;
    let sy = 0;
    for (let i = 0; i < samples.x.length; i++) {
      s1 += w.weights[i];
      sx += w.weights[i] * samples.x[i];
      sy += w.weights[i] * samples.y[i];
    }
    expectClose(s1, 1, { abs: 1e-12 }, 'Σλ');
    expectClose(sx, tx, { abs: 1e-9 }, 'Σλx');
    expectClose(sy, ty, { abs: 1e-9 }, 'Σλy');
  });
  it('krigingWeights: weights give the predicted mean and variance c0 − λᵀk0 − μᵀx0', () => {
    const model = matern(0.2, 'linear');
    const p = createPredictor(samples, model);
    const w = p.weights(600, 250);
    const pred = p.predict([600], [250]);
    let m = 0;
    for (let i = 0; i < samples.x.length; i++) m += w.weights[i] * samples.value[i];
    expectClose(m, pred.mean[0], { rel: 1e-12 }, 'λᵀy');
    expectClose(w.mean, pred.mean[0], { rel: 1e-12 }, 'weights().mean');
    expectClose(Math.sqrt(w.variance), pred.sd[0], { rel: 1e-10 }, 'weights().variance');
    expect(w.lagrange.length).toBe(3);
  });
  it('krigingWeights: simple kriging has no Lagrange multipliers and mean = m + λᵀ(y − m)', () => {
    const w = krigingWeights(samples, matern(0, { known: 4 }), 450, 520);
    expect(w.lagrange.length).toBe(0);
    let m = 4;
    for (let i = 0; i < samples.x.length; i++) m += w.weights[i] * (samples.value[i] - 4);
    expectClose(m, w.mean, { rel: 1e-12 }, 'SK mean');
  });
});

describe('createPredictor invariants', () => {
  const samples = randomSamples(40, 5);
  for (const trend of ['constant', 'linear', { known: 5 }] as const) {
    const label = typeof trend === 'string' ? trend : 'known';
    it(`createPredictor (${label}): zero nugget interpolates exactly, sd ≈ 0 at data`, () => {
      const out = createPredictor(samples, matern(0, trend)).predict(samples.x, samples.y);
      expectClose(out.mean, samples.value, { rel: 1e-9, abs: 1e-9 }, 'mean at data');
      for (let i = 0; i < out.sd.length; i++) expect(out.sd[i]).toBeLessThan(1e-5 * Math.sqrt(2));
    });
    it(`createPredictor (${label}): with a nugget, sd > 0 at data and sdObserved² − sd² = nugget`, () => {
      const out = createPredictor(samples, matern(0.3, trend)).predict(samples.x, samples.y);
      for (let i = 0; i < out.sd.length; i++) {
        expect(out.sd[i]).toBeGreaterThan(0.05);
        expectClose(out.sdObserved[i] ** 2 - out.sd[i] ** 2, 0.3, { rel: 1e-12 }, 'sdObserved² − sd²');
      }
      // Smoothing: the mean no longer equals the data.
      let maxDiff = 0;
      for (let i = 0; i < out.mean.length; i++) maxDiff = Math.max(maxDiff, Math.abs(out.mean[i] - samples.value[i]));
      expect(maxDiff).toBeGreaterThan(1e-3);
    });
  }
  it('createPredictor (linear): universal kriging reproduces a linear field exactly', () => {
    const base = randomSamples(25, 9, 500000, 6000000);
    const value = Float64Array.from(base.x, (x, i) => 3 + 0.002 * (x - 500000) - 0.0005 * (base.y[i] - 6000000));
    const s = { x: base.x, y: base.y, value };
    const tx = [500100, 499000, 502500, 500777.5];
    const ty = [6000900, 5999500, 6001800, 6000123.25];
    for (const model of [matern(0, 'linear'), matern(0.4, 'linear')]) {
      const out = createPredictor(s, model).predict(tx, ty);
      for (let j = 0; j < tx.length; j++) {
        expectClose(out.mean[j], 3 + 0.002 * (tx[j] - 500000) - 0.0005 * (ty[j] - 6000000), { abs: 1e-9 }, 'linear field');
      }
    }
  });
  it('createPredictor ({known}): far from the data the mean → m and sd → √c0', () => {
    const out = createPredictor(samples, matern(0.2, { known: 5 })).predict([1e6], [-1e6]);
    expectClose(out.mean[0], 5, { abs: 1e-12 }, 'mean far away');
    expectClose(out.sd[0], Math.sqrt(2), { rel: 1e-12 }, 'sd far away');
    expectClose(out.sdObserved[0], Math.sqrt(2.2), { rel: 1e-12 }, 'sdObserved far away');
  });
  it('createPredictor: results do not depend on a shift of the coordinates to UTM magnitudes', () => {
    const local = randomSamples(30, 21);
    const far = { x: local.x.map((x) => x + 500000), y: local.y.map((y) => y + 6000000), value: local.value };
    const tx = [100, 480.5, 950, -200];
    const ty = [50, 333.25, 1200, 700];
    for (const trend of ['constant', 'linear'] as const) {
      const a = createPredictor(local, matern(0.05, trend)).predict(tx, ty);
      const b = createPredictor(far, matern(0.05, trend)).predict(tx.map((x) => x + 500000), ty.map((y) => y + 6000000));
      expectClose(b.mean, a.mean, { rel: 1e-10 }, `${trend} mean`);
      expectClose(b.sd, a.sd, { rel: 1e-9 }, `${trend} sd`);
    }
  });
  it('createPredictor(...).predict: block size does not change the results; sd:false skips the sd', () => {
    const p = createPredictor(samples, matern(0.1, 'linear'));
    const r = createRandom(3);
    const tx = Array.from({ length: 150 }, () => r.uniform() * 1200 - 100);
    const ty = Array.from({ length: 150 }, () => r.uniform() * 1200 - 100);
    const a = p.predict(tx, ty, { blockSize: 1 });
    const b = p.predict(tx, ty, { blockSize: 512 });
    const c = p.predict(tx, ty, { blockSize: 67, sd: false });
    expectClose(b.mean, a.mean, { rel: 1e-13, abs: 1e-13 }, 'mean');
    expectClose(b.sd, a.sd, { rel: 1e-12, abs: 1e-13 }, 'sd');
    expectClose(c.mean, a.mean, { rel: 1e-13, abs: 1e-13 }, 'mean without sd');
    expect(Number.isNaN(c.sd[0])).toBe(true);
  });
  it('createPredictor(...).predict reports progress and stops when cancelled', () => {
    const p = createPredictor(samples, matern(0.1, 'constant'));
    const seen: number[] = [];
    p.predict(new Float64Array(25), new Float64Array(25), { blockSize: 10, onProgress: (d) => seen.push(d) });
    expect(seen).toEqual([10, 20, 25]);
    let calls = 0;
    try {
      p.predict(new Float64Array(25), new Float64Array(25), { blockSize: 10, isCancelled: () => ++calls >= 2 });
      expect.fail('expected cancellation');
    } catch (e) {
      expect((e as GapwiseError).code).toBe('cancelled');
    }
  });
  it('createPredictor warns about jitter when coincident samples make K singular', () => {
    const s = makeSamples([0, 100, 100, 300], [0, 0, 0, 50], [1, 2, 2.5, 3]);
    const p = createPredictor(s, matern(0, 'constant'));
    const codes = p.warnings.map((w) => w.code);
    expect(codes).toContain('coincident-samples');
    expect(codes).toContain('jitter');
    const out = p.predict([100], [0]);
    expect(Number.isFinite(out.mean[0])).toBe(true);
  });
  it('createPredictor with a log transform: median = exp(Ŷ), mean = exp(Ŷ + σ²/2)', () => {
    const s = { x: samples.x, y: samples.y, value: samples.value.map((v) => Math.exp(v / 5)) };
    const model: CovarianceModel = { ...matern(0.05, 'constant'), transform: 'log' };
    const out = createPredictor(s, model).predict([250, 777], [640, 10]);
    for (let j = 0; j < 2; j++) {
      expectClose(out.median![j], Math.exp(out.logMean![j]), { rel: 1e-14 }, 'median');
      expectClose(out.mean[j], Math.exp(out.logMean![j] + out.logSd![j] ** 2 / 2), { rel: 1e-14 }, 'mean');
      expect(out.mean[j]).toBeGreaterThan(out.median![j]);
      // Lognormal sd on the data scale; a measurement adds the nugget on the log scale.
      expectClose(out.sd[j], out.mean[j] * Math.sqrt(Math.expm1(out.logSd![j] ** 2)), { rel: 1e-14 }, 'sd');
      const o2 = out.logSd![j] ** 2 + 0.05;
      expectClose(out.sdObserved[j], Math.exp(out.logMean![j] + o2 / 2) * Math.sqrt(Math.expm1(o2)), { rel: 1e-14 }, 'sdObserved');
    }
    // The log-scale results are plain kriging of ln(value).
    const logS = { x: s.x, y: s.y, value: s.value.map(Math.log) };
    const plain = createPredictor(logS, matern(0.05, 'constant')).predict([250, 777], [640, 10]);
    expectClose(out.logMean!, plain.mean, { rel: 1e-13 }, 'logMean');
    expectClose(out.logSd!, plain.sd, { rel: 1e-13 }, 'logSd');
  });
});

describe('createPredictor input checks', () => {
  const code = (f: () => unknown): string => {
    try {
      f();
    } catch (e) {
      expect(e).toBeInstanceOf(GapwiseError);
      return (e as GapwiseError).code;
    }
    return 'no error';
  };
  it('createPredictor rejects no samples, too few for the trend, non-finite and non-positive (log) values', () => {
    expect(code(() => createPredictor(makeSamples([], [], []), matern(0, { known: 0 })))).toBe('too-few-samples');
    expect(code(() => createPredictor(makeSamples([0], [0], [1]), matern(0, 'constant')))).toBe('too-few-samples');
    expect(code(() => createPredictor(makeSamples([0, 1, 2], [0, 5, 1], [1, 2, 3]), matern(0, 'linear')))).toBe('too-few-samples');
    expect(code(() => createPredictor(makeSamples([0, 1], [0, 5], [1, NaN]), matern(0, 'constant')))).toBe('bad-value');
    expect(code(() => createPredictor(makeSamples([0, Infinity], [0, 5], [1, 2]), matern(0, 'constant')))).toBe('bad-value');
    const logModel: CovarianceModel = { ...matern(0.1, 'constant'), transform: 'log' };
    expect(code(() => createPredictor(makeSamples([0, 10], [0, 5], [1, 0]), logModel))).toBe('bad-value');
    expect(code(() => createPredictor(makeSamples([0, 10], [0, 5], [1, 2]), { structures: [], trend: 'constant', transform: 'none' }))).toBe('bad-model');
    // A single sample is enough for simple kriging.
    expect(code(() => createPredictor(makeSamples([0], [0], [1]), matern(0, { known: 0 })))).toBe('no error');
  });
  it('createPredictor rejects a linear trend on collinear samples', () => {
    expect(code(() => createPredictor(makeSamples([0, 100, 200, 300, 400], [0, 100, 200, 300, 400], [1, 2, 3, 2, 1]), matern(0.1, 'linear'))))
      .toBe('not-positive-definite');
  });
  it('createPredictor(...).predict rejects non-finite or mismatched targets', () => {
    const p = createPredictor(randomSamples(5, 1), matern(0.1, 'constant'));
    expect(code(() => p.predict([1, 2], [1]))).toBe('bad-value');
    expect(code(() => p.predict([1, NaN], [1, 2]))).toBe('bad-value');
  });
});

describe('predictAt', () => {
  it('predictAt equals createPredictor(...).predict and carries the warnings', () => {
    const s = randomSamples(20, 4);
    const a = predictAt(s, matern(0.1, 'constant'), [10, 900], [400, 30]);
    const b = createPredictor(s, matern(0.1, 'constant')).predict([10, 900], [400, 30]);
    expect(Array.from(a.mean)).toEqual(Array.from(b.mean));
    expect(Array.from(a.sd)).toEqual(Array.from(b.sd));
    expect(a.warnings).toEqual([]);
  });
});

describe('solveLowerBlock', () => {
  it('solveLowerBlock solves L·Y = B for many right-hand sides (checked by multiplying back)', () => {
    const n = 70;
    const m = 150; // more than one panel of columns
    const r = createRandom(8);
    const A = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) {
      const v = i === j ? n : r.uniform() - 0.5;
      A[i * n + j] = v;
      A[j * n + i] = v;
    }
    const { L } = cholesky(A, n);
    const B = Float64Array.from({ length: n * m }, () => r.normal());
    const Y = Float64Array.from(B);
    solveLowerBlock(L, n, Y, m);
    for (let i = 0; i < n; i++) for (let j = 0; j < m; j++) {
      let s = 0;
      for (let k = 0; k <= i; k++) s += L[i * n + k] * Y[k * m + j];
      expectClose(s, B[i * m + j], { abs: 1e-12 }, `(LY)[${i},${j}]`);
    }
  });
});

describe('lowerTriangularInverse', () => {
  it('lowerTriangularInverse: L·Z = I and Z is lower triangular (n spanning two column panels)', () => {
    const n = 150;
    const r = createRandom(12);
    const A = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) {
      const v = i === j ? 3 : 2 * Math.exp(-Math.abs(i - j) / 20) + 0.1 * (r.uniform() - 0.5);
      A[i * n + j] = v;
      A[j * n + i] = v;
    }
    const { L } = cholesky(A, n);
    const Z = lowerTriangularInverse(L, n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
      if (j > i) {
        expect(Z[i * n + j]).toBe(0);
        continue;
      }
      let s = 0;
      for (let k = j; k <= i; k++) s += L[i * n + k] * Z[k * n + j];
      expectClose(s, i === j ? 1 : 0, { abs: 1e-12 }, `(LZ)[${i},${j}]`);
    }
  });
});

describe('buildKrigingSystem', () => {
  it('buildKrigingSystem centres coordinates on the sample centroid', () => {
    const s = makeSamples([500000, 500010, 500020], [6000000, 6000030, 6000000], [1, 2, 3]);
    const sys = buildKrigingSystem(s, matern(0.1, 'constant'));
    expectClose(sys.frame.cx, 500010, { abs: 1e-9 }, 'cx');
    expectClose(sys.frame.cy, 6000010, { abs: 1e-9 }, 'cy');
    expectClose(Array.from(sys.u), [-10, 0, 10], { abs: 1e-9 }, 'u');
    expectClose(Array.from(sys.v), [-10, 20, -10], { abs: 1e-9 }, 'v');
  });
});
