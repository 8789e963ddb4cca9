import { describe, expect, it } from 'vitest';
import { availableParallelism } from 'node:os';
import { chooseSurfacePath, computeSurfaceParallel, computeSurfaceSingle, type SurfaceJob } from '../../src/cli/parallel.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';
import { makeSamples } from '../../src/core/shared/samples.ts';
import { createRandom } from '../../src/core/shared/random.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';
import type { Grid } from '../../src/core/geometry/grid.ts';

function samplesOf(n: number, seed: number, positive = false) {
  const rng = createRandom(seed);
  const x: number[] = [];
  const y: number[] = [];
  const v: number[] = [];
  for (let i = 0; i < n; i++) {
    x.push(600000 + rng.uniform() * 2000);
    y.push(5200000 + rng.uniform() * 1500);
    const z = Math.sin(x[i] / 300) + Math.cos(y[i] / 200) + 0.3 * rng.normal();
    v.push(positive ? Math.exp(z) : z);
  }
  return makeSamples(x, y, v);
}

const model: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 150, nu: 1.5 }],
  trend: 'constant', transform: 'none',
};

function grid(nx: number, ny: number, masked = false): Grid {
  const g: Grid = { x0: 600000, y0: 5201500, cell: 2000 / nx, nx, ny };
  if (masked) {
    g.mask = new Uint8Array(nx * ny);
    for (let j = 0; j < ny; j++) for (let i = 0; i < nx; i++) g.mask[j * nx + i] = (i - nx / 2) ** 2 + (j - ny / 2) ** 2 < (ny / 2) ** 2 ? 1 : 0;
  }
  return g;
}

function expectSameBits(a: ArrayLike<number>, b: ArrayLike<number>, what: string) {
  expect(a.length, what).toBe(b.length);
  for (let k = 0; k < a.length; k++) {
    if (!Object.is(a[k], b[k])) expect.fail(`${what}[${k}]: parallel ${a[k]} vs single ${b[k]}`);
  }
}

describe('computeSurfaceParallel', () => {
  it('computeSurfaceParallel on the local path equals the single-thread surface bit for bit (default worker count)', async () => {
    const job: SurfaceJob = {
      samples: samplesOf(1500, 1), model, grid: grid(48, 30, true), path: 'local',
      local: { neighbours: 32, globalMean: true }, surface: { threshold: 0.5 },
    };
    const single = computeSurfaceSingle(job);
    let lastDone = 0;
    const parallel = await computeSurfaceParallel(job, { bandRows: 4, onProgress: (done) => { lastDone = done; } });
    expectSameBits(parallel.mean, single.mean, 'mean');
    expectSameBits(parallel.sd, single.sd, 'sd');
    expectSameBits(parallel.pExceed!, single.pExceed!, 'pExceed');
    expect(parallel.mean).toBeInstanceOf(Float32Array);
    expect(parallel.cells).toBe(single.cells);
    expect(lastDone).toBe(single.cells);
    expect(Number.isNaN(parallel.mean[0])).toBe(true); // masked corner
    expect(availableParallelism()).toBeGreaterThanOrEqual(1);
  }, 60000);

  it('computeSurfaceParallel on the exact path with a log transform equals the single-thread surface with 3 workers', async () => {
    const job: SurfaceJob = {
      samples: samplesOf(120, 2, true), model: { ...model, transform: 'log', trend: 'linear' }, grid: grid(20, 13), path: 'exact',
      surface: { threshold: 2, precision: 'float64' },
    };
    const single = computeSurfaceSingle(job);
    const parallel = await computeSurfaceParallel(job, { workers: 3, bandRows: 2 });
    expectSameBits(parallel.mean, single.mean, 'mean');
    expectSameBits(parallel.sd, single.sd, 'sd');
    expectSameBits(parallel.median!, single.median!, 'median');
    expectSameBits(parallel.pExceed!, single.pExceed!, 'pExceed');
    expect(parallel.mean).toBeInstanceOf(Float64Array);
  }, 60000);

  it('computeSurfaceParallel rejects with the worker\'s GapwiseError', async () => {
    const job: SurfaceJob = { samples: samplesOf(50, 3), model: { ...model, structures: [] }, grid: grid(8, 8), path: 'local' };
    await expect(computeSurfaceParallel(job, { workers: 2 })).rejects.toSatisfy((e: unknown) => e instanceof GapwiseError && e.code === 'bad-model');
  }, 60000);
});

describe('chooseSurfacePath', () => {
  it('chooseSurfacePath keeps the exact path while n³/3 + cells·n² ≤ 2·10⁹ flops', () => {
    expect(chooseSurfacePath(200, 40000)).toBe('exact'); // 2.7e6 + 1.6e9
    expect(chooseSurfacePath(2000, 40000)).toBe('local');
    expect(chooseSurfacePath(1000, 100)).toBe('exact');
    expect(chooseSurfacePath(100000, 250000)).toBe('local');
  });
});
