import { describe, expect, it } from 'vitest';
import {
  blockOffsets, blockPriorVariance, computeBlockSurface, createBlockPredictor, predictBlocksWithSystem,
} from '../../../src/core/prediction/block-kriging.ts';
import { buildKrigingSystem, createPredictor } from '../../../src/core/prediction/kriging.ts';
import { erf, exceedanceProbability } from '../../../src/core/shared/normal.ts';
import { gridFromExtent } from '../../../src/core/geometry/grid.ts';
import { parseModel, type CovarianceModel, type CovariateTrend } from '../../../src/core/covariance/model.ts';
import { encodeCovariates, resolveCovariateTrend, type CovariateColumn } from '../../../src/core/covariance/covariates.ts';
import { makeSamples, type Samples } from '../../../src/core/shared/samples.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';

interface BlockCase {
  name: string;
  model: CovarianceModel;
  samples: { x: number[]; y: number[]; value: number[] };
  blocks: { x: number[]; y: number[] };
  width: number;
  height: number;
  points: number;
  threshold: number;
  expected: { mean: number[]; sd: number[]; pExceed: number[]; blockVariance: number };
}

// Outside reference: numpy linalg.solve of the bordered block-kriging system (tests/reference/make_block.py).
const fixture = loadFixture<BlockCase>('block.json');

function randomSamples(n: number, seed: number): Samples {
  const r = createRandom(seed);
  const x: number[] = [], y: number[] = [], v: number[] = [];
  for (let i = 0; i < n; i++) {
    x.push(r.uniform() * 300);
    y.push(r.uniform() * 300);
    v.push(5 + Math.sin(x[i] / 60) + 0.5 * Math.cos(y[i] / 40) + 0.2 * r.normal());
  }
  return makeSamples(x, y, v);
}

const matern: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.05 }, { type: 'matern', sill: 1, scale: 60, nu: 1.5 }], trend: 'constant', transform: 'none',
};

describe('predictBlocksWithSystem', () => {
  for (const c of fixture.cases) {
    it(`predictBlocksWithSystem matches the numpy block-kriging reference: ${c.name}`, () => {
      const sys = buildKrigingSystem(makeSamples(c.samples.x, c.samples.y, c.samples.value), c.model);
      const shape = { width: c.width, height: c.height, points: c.points };
      const got = predictBlocksWithSystem(sys, c.blocks.x, c.blocks.y, shape, { threshold: c.threshold });
      expectClose(got.blockVariance, c.expected.blockVariance, fixture.tolerance, 'blockVariance');
      expectClose(got.mean, c.expected.mean, fixture.tolerance, 'mean');
      expectClose(got.sd, c.expected.sd, fixture.tolerance, 'sd');
      expectClose(got.pExceed!, c.expected.pExceed, { rel: 1e-7, abs: 1e-12 }, 'pExceed');
    });
  }

  it('predictBlocksWithSystem with one point per block is point kriging at the centre', () => {
    const samples = randomSamples(30, 3);
    const sys = buildKrigingSystem(samples, matern);
    const tx = [10, 150, 290, samples.x[0]];
    const ty = [20, 150, 100, samples.y[0]];
    const point = createPredictor(samples, matern).predict(tx, ty);
    const block = predictBlocksWithSystem(sys, tx, ty, { width: 40, points: 1 });
    expectClose(block.mean, point.mean, { rel: 1e-13 }, 'mean');
    expectClose(block.sd, point.sd, { rel: 1e-10, abs: 1e-12 }, 'sd');
  });

  it('predictBlocksWithSystem for a block shrunk towards a point reproduces point kriging', () => {
    const samples = randomSamples(30, 4);
    for (const trend of ['constant', 'linear', { known: 5 }] as const) {
      const model: CovarianceModel = { ...matern, trend };
      const tx = [10, 150, 290];
      const ty = [20, 150, 100];
      const point = createPredictor(samples, model).predict(tx, ty);
      const block = createBlockPredictor(samples, model).predict(tx, ty, { width: 1e-3, points: 4 });
      expectClose(block.mean, point.mean, { rel: 1e-8 }, `mean ${JSON.stringify(trend)}`);
      expectClose(block.sd, point.sd, { rel: 1e-6 }, `sd ${JSON.stringify(trend)}`);
    }
  });

  it('predictBlocksWithSystem converges as the discretisation grows (differences to k = 48 shrink)', () => {
    const samples = randomSamples(25, 5);
    const sys = buildKrigingSystem(samples, matern);
    const tx = [75, 200];
    const ty = [80, 260];
    const ref = predictBlocksWithSystem(sys, tx, ty, { width: 50, points: 48 });
    let previous = Infinity;
    for (const k of [2, 4, 8, 16]) {
      const b = predictBlocksWithSystem(sys, tx, ty, { width: 50, points: k });
      const diff = Math.max(...[0, 1].map((j) => Math.abs(b.sd[j] - ref.sd[j]) + Math.abs(b.mean[j] - ref.mean[j])));
      expect(diff, `k = ${k}`).toBeLessThan(previous / 2.5);
      previous = diff;
    }
    expect(previous).toBeLessThan(2e-3);
  });

  it('predictBlocksWithSystem: block sd below point sd away from samples, block prior variance below the sill', () => {
    const samples = randomSamples(30, 6);
    const model: CovarianceModel = { structures: [{ type: 'exponential', sill: 1, scale: 50 }], trend: 'constant', transform: 'none' };
    // Targets beyond the sampled square, at least 100 m from every sample.
    const tx = [450, 150, -100];
    const ty = [150, 450, -100];
    const point = createPredictor(samples, model).predict(tx, ty);
    const block = createBlockPredictor(samples, model).predict(tx, ty, { width: 30 });
    expect(block.blockVariance).toBeLessThan(1);
    for (let j = 0; j < 3; j++) expect(block.sd[j]).toBeLessThan(point.sd[j]);
    // At a sample with no nugget the point is known exactly, the block around it is not.
    const at = createBlockPredictor(samples, model).predict([samples.x[0]], [samples.y[0]], { width: 30 });
    expect(at.sd[0]).toBeGreaterThan(0.05);
    expect(createPredictor(samples, model).predict([samples.x[0]], [samples.y[0]]).sd[0]).toBeLessThan(1e-6);
  });

  it('createBlockPredictor refuses a log model and names simulation', () => {
    const samples = randomSamples(10, 7);
    expect(() => createBlockPredictor(samples, { ...matern, transform: 'log' })).toThrow(/conditional simulations/);
    expect(() => createBlockPredictor(samples, matern).predict([1], [1], { width: 0 })).toThrow(GapwiseError);
    expect(() => createBlockPredictor(samples, matern).predict([1], [1], { width: 10, points: 0 })).toThrow(/discretisation/);
  });
});

describe('blockPriorVariance', () => {
  it('blockPriorVariance converges to the closed form for a gaussian covariance at rate 1/k²', () => {
    // Source: exact block average of exp(−h²/2ℓ²) over a w×h rectangle, separable in x and y:
    // (1/a²)∫₀^a∫₀^a e^{−(s−t)²/2ℓ²} ds dt = (2/a²)[a·ℓ√(π/2)·erf(a/(ℓ√2)) − ℓ²(1 − e^{−a²/2ℓ²})] (integration by parts).
    const ell = 30, w = 50, h = 20, sill = 2;
    const oneD = (a: number) => (2 / (a * a)) * (a * ell * Math.sqrt(Math.PI / 2) * erf(a / (ell * Math.SQRT2)) - ell * ell * (1 - Math.exp(-(a * a) / (2 * ell * ell))));
    const exact = sill * oneD(w) * oneD(h);
    const model: CovarianceModel = { structures: [{ type: 'nugget', sill: 0.3 }, { type: 'gaussian', sill, scale: ell }], trend: 'constant', transform: 'none' };
    const err = (k: number) => Math.abs(blockPriorVariance(model, { width: w, height: h, points: k }) - exact);
    expect(err(8) / err(32)).toBeGreaterThan(12); // midpoint rule: error ∝ 1/k², ratio ≈ 16
    expect(err(64) / exact).toBeLessThan(2e-4);
    expect(blockPriorVariance(model, { width: w, height: h, points: 1 })).toBe(sill); // no nugget in it
  });

  it('blockOffsets centres the k×k points on the block', () => {
    const { dx, dy } = blockOffsets({ width: 40, height: 20, points: 4 });
    expect(Array.from(dx.slice(0, 4))).toEqual([-15, -5, 5, 15]);
    expect(Array.from(dy.filter((_, i) => i % 4 === 0))).toEqual([7.5, 2.5, -2.5, -7.5]);
  });
});

describe('computeBlockSurface', () => {
  it('computeBlockSurface fills active cells with block predictions and leaves masked cells NaN', () => {
    const samples = randomSamples(20, 8);
    const grid = gridFromExtent(0, 0, 300, 300, 50);
    const mask = new Uint8Array(grid.nx * grid.ny).fill(1);
    mask[0] = 0;
    const s = computeBlockSurface(samples, matern, { ...grid, mask }, { threshold: 5, precision: 'float64' });
    expect(s.cells).toBe(grid.nx * grid.ny - 1);
    expect(Number.isNaN(s.mean[0])).toBe(true);
    const cx = grid.x0 + 1.5 * grid.cell, cy = grid.y0 - 0.5 * grid.cell;
    const one = createBlockPredictor(samples, matern).predict([cx], [cy], { width: 50 });
    expectClose(s.mean[1], one.mean[0], { rel: 1e-14 });
    expectClose(s.sd[1], one.sd[0], { rel: 1e-14 });
    expectClose(s.pExceed![1], exceedanceProbability(one.mean[0], one.sd[0], 5), { rel: 1e-14 });
    expect(s.support).toBe('block');
  });
});

// Outside reference: numpy linalg.solve of the bordered block-kriging system with covariate columns
// averaged over the block's discretisation points (tests/reference/make_block_covariates.py).
interface BlockCovariateCase {
  name: string;
  model: CovarianceModel;
  width: number;
  height: number;
  points: number;
  blockPoints: Array<{ x: number[]; y: number[]; sqrt_dist: number[]; soil: string[] }>;
  expected: { mean: number[]; sd: number[]; blockVariance: number; pointAverageMean: number[] };
}
const covariateFixture = loadFixture<BlockCovariateCase>('block_covariates.json');

function textColumn(values: string[], levels?: string[]): CovariateColumn {
  const seen: string[] = levels ? [...levels] : [];
  const codes = Uint32Array.from(values, (v) => {
    if (!seen.includes(v)) seen.push(v);
    return seen.indexOf(v);
  });
  return { kind: 'text', codes, levels: seen };
}

describe('predictBlocksWithSystem with covariates', () => {
  const S = covariateFixture.samples as { x: number[]; y: number[]; value: number[]; sqrt_dist: number[]; soil: string[] };
  const B = covariateFixture.blocks as { x: number[]; y: number[] };
  for (const c of covariateFixture.cases) {
    it(`predictBlocksWithSystem averages the covariate columns over the block as numpy does: ${c.name}`, () => {
      const columns = { sqrt_dist: { kind: 'numeric' as const, values: Float64Array.from(S.sqrt_dist) }, soil: textColumn(S.soil) };
      const trend = resolveCovariateTrend(c.model.trend as CovariateTrend, columns);
      const model = parseModel({ ...c.model, trend });
      const samples: Samples = { ...makeSamples(S.x, S.y, S.value), covariates: encodeCovariates(trend, columns, S.x.length) };
      const sys = buildKrigingSystem(samples, model);
      const pts = c.blockPoints;
      const covariates = encodeCovariates(trend, {
        sqrt_dist: { kind: 'numeric', values: Float64Array.from(pts.flatMap((p) => p.sqrt_dist)) },
        soil: textColumn(pts.flatMap((p) => p.soil), trend.levels?.soil),
      }, pts.length * c.points * c.points);
      const got = predictBlocksWithSystem(sys, B.x, B.y, { width: c.width, height: c.height, points: c.points }, { covariates });
      expectClose(got.blockVariance, c.expected.blockVariance, covariateFixture.tolerance, 'blockVariance');
      expectClose(got.mean, c.expected.mean, covariateFixture.tolerance, 'mean');
      expectClose(got.sd, c.expected.sd, covariateFixture.tolerance, 'sd');
      // The block mean is the average of the point means, each point with its own covariates (numpy).
      expectClose(got.mean, c.expected.pointAverageMean, covariateFixture.tolerance, 'point average');
    });
  }

  it('predictBlocksWithSystem refuses a covariate model without covariates at the block points', () => {
    const S2 = covariateFixture.samples as { x: number[]; y: number[]; value: number[]; sqrt_dist: number[] };
    const model = parseModel({ ...covariateFixture.cases[0].model });
    const samples: Samples = { ...makeSamples(S2.x, S2.y, S2.value), covariates: Float64Array.from(S2.sqrt_dist) };
    const sys = buildKrigingSystem(samples, model);
    expect(() => predictBlocksWithSystem(sys, [10], [10], { width: 5, points: 2 })).toThrow(/covariate values/);
    expect(() => predictBlocksWithSystem(sys, [10], [10], { width: 5, points: 2 }, { covariates: [1, 2, 3] })).toThrow(/Expected 4 covariate values/);
  });
});
