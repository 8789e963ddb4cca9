import { describe, expect, it } from 'vitest';
import { simulateParallel, simulationThreads } from '../../src/cli/simulation-pool.ts';
import { simulateConditional, type ConditionalSimulationOptions, type ConditionalSimulationResult } from '../../src/core/simulation/conditional-simulation.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';
import { makeSamples } from '../../src/core/shared/samples.ts';
import { createRandom } from '../../src/core/shared/random.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';
import type { Grid } from '../../src/core/geometry/grid.ts';
import { expectClose } from '../helpers/tolerance.ts';

// Invented samples: a smooth wave plus noise on a 600 m × 450 m square, seeded.
function samplesOf(n: number, seed: number) {
  const rng = createRandom(seed);
  const x: number[] = [];
  const y: number[] = [];
  const v: number[] = [];
  for (let i = 0; i < n; i++) {
    x.push(600000 + rng.uniform() * 600);
    y.push(5200000 + rng.uniform() * 450);
    v.push(10 + 2 * Math.sin(x[i] / 90) + 1.5 * Math.cos(y[i] / 70) + 0.3 * rng.normal());
  }
  return makeSamples(x, y, v);
}

const model: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 2, scale: 80, nu: 1.5 }],
  trend: 'constant', transform: 'none',
};

/** A 24 × 18 grid of 25 m cells with a round mask (cells outside are NaN). */
function maskedGrid(): Grid {
  const nx = 24, ny = 18;
  const g: Grid = { x0: 600000, y0: 5200450, cell: 25, nx, ny, mask: new Uint8Array(nx * ny) };
  for (let j = 0; j < ny; j++) for (let i = 0; i < nx; i++) g.mask![j * nx + i] = (i - nx / 2) ** 2 + (j - ny / 2) ** 2 < 100 ? 1 : 0;
  return g;
}

const samples = samplesOf(60, 5);
const grid = maskedGrid();

function expectSameBits(a: ArrayLike<number>, b: ArrayLike<number>, what: string) {
  expect(a.length, what).toBe(b.length);
  for (let k = 0; k < a.length; k++) {
    if (!Object.is(a[k], b[k])) expect.fail(`${what}[${k}]: parallel ${a[k]} vs single ${b[k]}`);
  }
}

/** Per-cell arrays equal up to the order of the sums (NaN where the other is NaN). */
function expectCellsClose(a: Float64Array, b: Float64Array, what: string) {
  expect(a.length, what).toBe(b.length);
  for (let k = 0; k < a.length; k++) {
    if (Number.isNaN(b[k])) expect(Number.isNaN(a[k]), `${what}[${k}] NaN`).toBe(true);
    else expectClose(a[k], b[k], { rel: 1e-12, abs: 1e-13 }, `${what}[${k}]`);
  }
}

/**
 * The sd comes from (Σv² − N·m²)/(N − 1), so the order of the sums moves the variance by a few
 * units in the last place of Σv²/N = m² + sd², not of sd²: compare on that scale, at 1e-12.
 */
function expectVarianceClose(par: ConditionalSimulationResult, one: ConditionalSimulationResult) {
  for (let k = 0; k < one.sd.length; k++) {
    if (Number.isNaN(one.sd[k])) {
      expect(Number.isNaN(par.sd[k]), `sd[${k}] NaN`).toBe(true);
      continue;
    }
    const scale = one.mean[k] ** 2 + one.sd[k] ** 2;
    expectClose(par.sd[k] ** 2, one.sd[k] ** 2, { abs: 1e-12 * scale }, `sd[${k}]²`);
  }
}

function expectSameRun(par: ConditionalSimulationResult, one: ConditionalSimulationResult) {
  expect(par.count).toBe(one.count);
  expect(par.first).toBe(one.first);
  expect(par.area).toEqual(one.area); // counts are integers: the summary is exact
  expectCellsClose(par.mean, one.mean, 'mean');
  expectVarianceClose(par, one);
  if (one.pExceed) expectSameBits(par.pExceed!, one.pExceed, 'pExceed'); // counts / N: exact
  expect(par.lattice).toEqual(one.lattice);
  expect(par.placementError).toBe(one.placementError);
  expect(par.warnings).toEqual(one.warnings);
  expect(par.totals).toBeUndefined();
}

describe('simulationThreads', () => {
  it('simulationThreads runs fewer than 4 realisations on one thread and gives each thread at least a pair', () => {
    expect(simulationThreads(3, 8)).toBe(1);
    expect(simulationThreads(4, 8)).toBe(2);
    expect(simulationThreads(5, 8)).toBe(2);
    expect(simulationThreads(9, 3)).toBe(3);
    expect(simulationThreads(100, 1)).toBe(1);
    expect(simulationThreads(0.5, 4)).toBe(1); // left to the core call to refuse
  });
});

describe('simulateParallel', () => {
  it('simulateParallel with 3 threads and an odd count gives the single-thread realisations bit for bit and the same area', async () => {
    const options: ConditionalSimulationOptions = { count: 9, seed: 4, threshold: 10.5, depth: 0.3 };
    const one = simulateConditional(samples, model, grid, options);
    const seen: number[] = [];
    const par = await simulateParallel(samples, model, grid, options, { workers: 3, onProgress: (done, total) => { expect(total).toBe(9); seen.push(done); } });
    expect(par.realisations).toHaveLength(9);
    for (let r = 0; r < 9; r++) expectSameBits(par.realisations![r], one.realisations![r], `realisation ${r}`);
    expectSameRun(par, one);
    expect(par.area!.volume!.depth).toBe(0.3);
    expect(par.grid).toBe(grid);
    expect(seen.at(-1)).toBe(9);
    for (let k = 1; k < seen.length; k++) expect(seen[k]).toBeGreaterThanOrEqual(seen[k - 1]);
  }, 60000);

  it('simulateParallel with fewer realisations than threads, keepRealisations false and block support of a log model equals one run', async () => {
    const logModel: CovarianceModel = { ...model, structures: [{ type: 'nugget', sill: 0.002 }, { type: 'matern', sill: 0.03, scale: 80, nu: 1.5 }], transform: 'log' };
    const options: ConditionalSimulationOptions = { count: 5, seed: 2, first: 3, threshold: 10, support: 'block', blockPoints: 2, keepRealisations: false };
    const one = simulateConditional(samples, logModel, grid, options);
    const par = await simulateParallel(samples, logModel, grid, options, { workers: 8 });
    expect(par.realisations).toBeUndefined();
    expect(one.area!.cells.median).toBeGreaterThan(0);
    expectSameRun(par, one);
    expect(par.first).toBe(3);
  }, 60000);

  it('simulateParallel runs below 4 realisations on this thread, with the core call\'s progress', async () => {
    const options: ConditionalSimulationOptions = { count: 3, seed: 8, threshold: 10 };
    const one = simulateConditional(samples, model, grid, options);
    let last = 0;
    const par = await simulateParallel(samples, model, grid, { ...options, onProgress: (done) => { last = done; } }, { workers: 3 });
    for (let r = 0; r < 3; r++) expectSameBits(par.realisations![r], one.realisations![r], `realisation ${r}`);
    expectSameBits(par.mean, one.mean, 'mean'); // same thread, same sums
    expect(last).toBe(3);
  });

  it('simulateParallel rejects with the GapwiseError a worker threw (a bad option) after stopping the workers', async () => {
    const bad = simulateParallel(samples, model, grid, { count: 6, seed: 1, support: 'block', blockPoints: 99 }, { workers: 3 });
    await expect(bad).rejects.toSatisfy((e: unknown) => e instanceof GapwiseError && e.code === 'bad-option' && /block discretisation/.test(e.message));
  }, 60000);
});
