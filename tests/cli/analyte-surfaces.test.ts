// computeSurfacesShared: several jobs through one worker pool give each job's computeSurfaceParallel
// result bit for bit (exact and local paths, a log model with a threshold, a mask), progress per job,
// and a worker's error names its job.
import { describe, expect, it } from 'vitest';
import { computeSurfaceParallel, type SurfaceJob } from '../../src/cli/parallel.ts';
import { computeSurfacesShared } from '../../src/cli/analyte-surfaces.ts';
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

const matern: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 150, nu: 1.5 }],
  trend: 'constant', transform: 'none',
};
const exponentialLog: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 0.8, scale: 300 }],
  trend: 'constant', transform: 'log',
};

const grid: Grid = { x0: 600000, y0: 5201500, cell: 2000 / 40, nx: 40, ny: 30 };
const masked: Grid = { ...grid, mask: Uint8Array.from({ length: 40 * 30 }, (_, k) => ((k % 40) + Math.floor(k / 40)) % 5 === 0 ? 0 : 1) };

function expectSameBits(a: ArrayLike<number> | undefined, b: ArrayLike<number> | undefined, what: string) {
  expect(a === undefined, what).toBe(b === undefined);
  if (!a || !b) return;
  expect(a.length, what).toBe(b.length);
  for (let k = 0; k < a.length; k++) {
    if (!Object.is(a[k], b[k])) expect.fail(`${what}[${k}]: shared ${a[k]} vs alone ${b[k]}`);
  }
}

describe('computeSurfacesShared', () => {
  it('computeSurfacesShared gives each job the result of computeSurfaceParallel bit for bit, progress per job', async () => {
    const jobs: SurfaceJob[] = [
      { samples: samplesOf(120, 1), model: matern, grid, path: 'exact', surface: { threshold: 0.5 } },
      { samples: samplesOf(120, 2, true), model: exponentialLog, grid: masked, path: 'exact', surface: { threshold: 1.5, precision: 'float64' } },
      { samples: samplesOf(400, 3), model: matern, grid, path: 'local', local: { neighbours: 24, globalMean: true } },
    ];
    const last = new Map<number, [number, number]>();
    const shared = await computeSurfacesShared(jobs, { workers: 2, onProgress: (j, done, total) => last.set(j, [done, total]) });
    expect(shared.length).toBe(3);
    for (let j = 0; j < jobs.length; j++) {
      const alone = await computeSurfaceParallel(jobs[j], { workers: 2 });
      expectSameBits(shared[j].mean, alone.mean, `job ${j} mean`);
      expectSameBits(shared[j].sd, alone.sd, `job ${j} sd`);
      expectSameBits(shared[j].pExceed, alone.pExceed, `job ${j} pExceed`);
      expectSameBits(shared[j].median, alone.median, `job ${j} median`);
      expect(shared[j].range).toEqual(alone.range);
      expect(shared[j].cells).toBe(alone.cells);
      expect(shared[j].threshold).toBe(alone.threshold);
      expect(last.get(j)).toEqual([alone.cells, alone.cells]);
    }
    expect(shared[1].mean).toBeInstanceOf(Float64Array);
    expect(shared[0].mean).toBeInstanceOf(Float32Array);
    expect(shared[1].cells).toBe(masked.mask!.reduce((t, v) => t + v, 0));
  }, 120_000);

  it('computeSurfacesShared rejects with the failing job named, as a GapwiseError', async () => {
    const bad: CovarianceModel = { ...exponentialLog };
    const jobs: SurfaceJob[] = [
      { samples: samplesOf(60, 4), model: matern, grid, path: 'exact' },
      // A log model on values at or below 0 cannot be kriged.
      { samples: samplesOf(60, 5), model: bad, grid, path: 'exact' },
    ];
    const error = await computeSurfacesShared(jobs, { workers: 2 }).then(() => null, (e: unknown) => e);
    expect(error).toBeInstanceOf(GapwiseError);
    expect((error as { job?: number }).job).toBe(1);
  }, 120_000);

  it('computeSurfacesShared with no job resolves with none', async () => {
    expect(await computeSurfacesShared([])).toEqual([]);
  });
});
