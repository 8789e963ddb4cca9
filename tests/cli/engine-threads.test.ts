// The command line's three parallel jobs (surfaces in row bands, realisations in parts, the
// nearest-neighbour likelihood split over threads) run through the engine's one runner over worker
// threads. Each is checked against this thread's answer and, bit for bit, against digests pinned
// from the outputs of the same calls computed before the runner was shared (SHA-256 of the arrays'
// bytes; the likelihood's value as the exact double).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { Worker } from 'node:worker_threads';
import { startEngineThreads, threadTransport } from '../../src/cli/engine-threads.ts';
import { EngineClient } from '../../src/worker/client.ts';
import { EngineError } from '../../src/worker/protocol.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';
import { computeSurfaceParallel, computeSurfaceSingle, type SurfaceJob } from '../../src/cli/parallel.ts';
import { simulateParallel } from '../../src/cli/simulation-pool.ts';
import { startVecchiaPool, type VecchiaPool } from '../../src/cli/vecchia-pool.ts';
import { simulateConditional } from '../../src/core/simulation/conditional-simulation.ts';
import { createVecchiaLikelihood } from '../../src/core/fitting/vecchia.ts';
import { makeSamples } from '../../src/core/shared/samples.ts';
import { createRandom } from '../../src/core/shared/random.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';
import type { Grid } from '../../src/core/geometry/grid.ts';

// Invented samples: a smooth wave plus noise, seeded.
function samplesOf(n: number, seed: number, width: number, height: number) {
  const rng = createRandom(seed);
  const x: number[] = [];
  const y: number[] = [];
  const v: number[] = [];
  for (let i = 0; i < n; i++) {
    x.push(600000 + rng.uniform() * width);
    y.push(5200000 + rng.uniform() * height);
    v.push(10 + 2 * Math.sin(x[i] / 90) + 1.5 * Math.cos(y[i] / 70) + 0.3 * rng.normal());
  }
  return makeSamples(x, y, v);
}

const model: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 2, scale: 80, nu: 1.5 }],
  trend: 'constant', transform: 'none',
};

/** An nx × ny grid over the samples' 600 m × 450 m with a round mask. */
function maskedGrid(nx: number, ny: number): Grid {
  const g: Grid = { x0: 600000, y0: 5200450, cell: 600 / nx, nx, ny, mask: new Uint8Array(nx * ny) };
  for (let j = 0; j < ny; j++) for (let i = 0; i < nx; i++) g.mask![j * nx + i] = (i - nx / 2) ** 2 + (j - ny / 2) ** 2 < (ny / 2) ** 2 ? 1 : 0;
  return g;
}

/** SHA-256 of the bytes of typed arrays, in order. */
function digest(...arrays: (Float32Array | Float64Array)[]): string {
  const h = createHash('sha256');
  for (const a of arrays) h.update(new Uint8Array(a.buffer, a.byteOffset, a.byteLength));
  return h.digest('hex');
}

function expectSameBits(a: ArrayLike<number>, b: ArrayLike<number>, what: string) {
  expect(a.length, what).toBe(b.length);
  for (let k = 0; k < a.length; k++) {
    if (!Object.is(a[k], b[k])) expect.fail(`${what}[${k}]: threads ${a[k]} vs this thread ${b[k]}`);
  }
}

// Pinned digests and values (see the header).
const PINNED = {
  exactSurface: 'dc30ba7996a10cda471a8f9a9aac1be6e8dd2260b1c3fc6792bd55792da48ff6',
  localSurface: '36579942d39d09869ae96a6b82de211b7411a3588d1166a9f110d114007dd331',
  realisations: '5ec8d96496a408e472f548bd1721b7733a9b02bf83dc24d34010e7d6c0fea937',
  simulationPExceed: 'e8f1f5be40398d141006b15ce871b71f807c7cd2455ec63d1ebbdc32c02d930b',
  simulationMeanSd: 'adf717eda0e54b99a1a759db2ede266015597e769cab8a894f75d4f863636549',
  logLikelihood: -1583.9221582465495,
  sigma2: 3.6390601569075463,
};

describe('the engine runner over worker threads', () => {
  it('computeSurfaceParallel (exact and local paths) equals this thread and the pinned surfaces bit for bit', async () => {
    const exact: SurfaceJob = { samples: samplesOf(300, 21, 600, 450), model, grid: maskedGrid(30, 22), path: 'exact', surface: { threshold: 10.5 } };
    const a = await computeSurfaceParallel(exact, { workers: 2, bandRows: 3 });
    const one = computeSurfaceSingle(exact);
    expectSameBits(a.mean, one.mean, 'exact mean');
    expectSameBits(a.pExceed!, one.pExceed!, 'exact pExceed');
    const local: SurfaceJob = {
      samples: samplesOf(900, 22, 600, 450), model, grid: maskedGrid(36, 27), path: 'local',
      local: { neighbours: 20, globalMean: true }, surface: { precision: 'float64' },
    };
    const b = await computeSurfaceParallel(local, { workers: 3, bandRows: 4 });
    expectSameBits(b.sd, computeSurfaceSingle(local).sd, 'local sd');
    expect(digest(a.mean, a.sd, a.pExceed!)).toBe(PINNED.exactSurface);
    expect(digest(b.mean, b.sd)).toBe(PINNED.localSurface);
  }, 60_000);

  it('simulateParallel gives this thread\'s realisations and the pinned ones bit for bit', async () => {
    const samples = samplesOf(60, 23, 600, 450);
    const grid = maskedGrid(24, 18);
    const options = { count: 7, seed: 5, threshold: 10.5 };
    const par = await simulateParallel(samples, model, grid, options, { workers: 3 });
    const one = simulateConditional(samples, model, grid, options);
    for (let r = 0; r < 7; r++) expectSameBits(par.realisations![r], one.realisations![r], `realisation ${r}`);
    expect(digest(...par.realisations!)).toBe(PINNED.realisations);
    expect(digest(par.pExceed!)).toBe(PINNED.simulationPExceed);
    expect(digest(par.mean, par.sd)).toBe(PINNED.simulationMeanSd);
  }, 60_000);

  describe('startVecchiaPool', () => {
    let pool: VecchiaPool;
    beforeAll(async () => {
      pool = await startVecchiaPool({ threads: 3 });
    }, 60_000);
    afterAll(async () => {
      await pool?.close();
    });

    it('startVecchiaPool: a likelihood pass over 3 threads gives the pinned value bit for bit', () => {
      const s = samplesOf(1200, 24, 3000, 2000);
      const setup = { family: 'matern' as const, nu: 1.5, trend: 'linear' as const, method: 'reml' as const, neighbours: 12 };
      const split = createVecchiaLikelihood(s, setup, pool.threads).evaluate({ scale: 400, nuggetRatio: 0.15 });
      expect(Object.is(split.logLikelihood, PINNED.logLikelihood)).toBe(true);
      expect(Object.is(split.sigma2, PINNED.sigma2)).toBe(true);
    });
  });
});

describe('threadTransport', () => {
  it('threadTransport reports a worker thread that exits unasked as the engine stopping, to whatever was waiting', async () => {
    const client = new EngineClient(() => threadTransport(new Worker('process.exit(3)', { eval: true })));
    const error = await client.request('ready', {}).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(EngineError);
    expect((error as Error).message).toMatch(/exit code 3/);
    await client.dispose();
  });

  it('startEngineThreads answers engine requests from the one worker entry and returns errors as data', async () => {
    const pool = startEngineThreads(2);
    try {
      await expect(pool.request('ready', {})).resolves.toBe(true);
      const bad = await pool.request('surfaceRows', { samples: samplesOf(20, 25, 600, 450), model: { ...model, structures: [] }, grid: maskedGrid(6, 5) }).catch((e: unknown) => e);
      expect(bad).toBeInstanceOf(GapwiseError);
      expect((bad as GapwiseError).code).toBe('bad-model');
    } finally {
      await pool.dispose();
    }
  }, 60_000);
});
