import { describe, expect, it } from 'vitest';
import { EnginePool, bandGrid, emptySurface, mergeBand, splitBands } from '../../src/worker/pool.ts';
import { computeSurface, type SurfaceResult } from '../../src/core/prediction/surface.ts';
import { computeBlockSurface } from '../../src/core/prediction/block-kriging.ts';
import { cellCentres, type Grid } from '../../src/core/geometry/grid.ts';
import { makeSamples } from '../../src/core/shared/samples.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';
import type { EngineOperations } from '../../src/worker/handler.ts';
import { ENGINE_OPERATIONS } from '../../src/worker/operations.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';
import { fakeFactory } from './fake-worker.ts';
import { loadFixture } from '../helpers/fixtures.ts';

const fx = loadFixture<{ values: number[]; model: CovarianceModel; threshold: number }>('surface.json');
const samples = makeSamples(fx.x as number[], fx.y as number[], fx.cases[1].values);
const model = fx.cases[1].model;
const grid: Grid = { ...(fx.grid as Omit<Grid, 'mask'>), mask: Uint8Array.from(fx.mask as number[]) };
const activeInRows = (g: Grid, a: number, b: number) => cellCentres(g, a, b).index.length;

describe('splitBands', () => {
  it('splitBands covers every row once, in order, with about equal active cells per band', () => {
    for (const parts of [1, 2, 3, 5, 8, 11, 40]) {
      const bands = splitBands(grid, parts);
      expect(bands[0][0]).toBe(0);
      expect(bands.at(-1)![1]).toBe(grid.ny);
      for (let k = 1; k < bands.length; k++) expect(bands[k][0]).toBe(bands[k - 1][1]);
      for (const [a, b] of bands) expect(b).toBeGreaterThan(a);
      expect(bands.length).toBeLessThanOrEqual(Math.min(parts, grid.ny));
      if (parts <= 5) {
        const counts = bands.map(([a, b]) => activeInRows(grid, a, b));
        const widest = Math.max(...Array.from({ length: grid.ny }, (_, j) => activeInRows(grid, j, j + 1)));
        // Each band holds its share give or take one row.
        for (const c of counts) expect(Math.abs(c - 114 / bands.length)).toBeLessThanOrEqual(widest);
      }
    }
  });

  it('splitBands of an unmasked grid cuts equal rows', () => {
    expect(splitBands({ x0: 0, y0: 0, cell: 1, nx: 7, ny: 12 }, 4)).toEqual([[0, 3], [3, 6], [6, 9], [9, 12]]);
    expect(splitBands({ x0: 0, y0: 0, cell: 1, nx: 7, ny: 2 }, 4)).toEqual([[0, 1], [1, 2]]);
  });
});

describe('bandGrid', () => {
  it('bandGrid moves the top edge down and slices the mask, so its cells are the band\'s cells', () => {
    const g = bandGrid(grid, 3, 7);
    expect(g).toMatchObject({ x0: grid.x0, y0: grid.y0 - 3 * grid.cell, nx: grid.nx, ny: 4 });
    const inBand = cellCentres(g), inWhole = cellCentres(grid, 3, 7);
    expect(Array.from(inBand.x)).toEqual(Array.from(inWhole.x));
    expect(Array.from(inBand.y)).toEqual(Array.from(inWhole.y));
    expect(g.mask!.buffer).not.toBe(grid.mask!.buffer);
  });
});

describe('mergeBand', () => {
  it('mergeBand places bands at their rows, widens ranges and keeps each warning once', () => {
    const whole = emptySurface(grid, { threshold: 38 }, false);
    const a = computeSurface(samples, model, grid, { threshold: 38, rows: [0, 5] });
    const b = computeSurface(samples, model, grid, { threshold: 38, rows: [5, 11] });
    a.warnings.push({ code: 'w', message: 'same' });
    b.warnings.push({ code: 'w', message: 'same' });
    mergeBand(whole, b);
    mergeBand(whole, a);
    const ref = computeSurface(samples, model, grid, { threshold: 38 });
    expect(Array.from(whole.mean)).toEqual(Array.from(ref.mean));
    expect(Array.from(whole.pExceed!)).toEqual(Array.from(ref.pExceed!));
    expect(whole.range).toEqual(ref.range);
    expect(whole.cells).toBe(114);
    expect(whole.warnings).toEqual([{ code: 'w', message: 'same' }]);
  });
});

describe('EnginePool', () => {
  it('EnginePool.surface computes bands in parallel and merges them into the whole-grid surface', async () => {
    const { factory, made } = fakeFactory();
    const pool = new EnginePool({ size: 3, factory, bandsPerWorker: 2 });
    const bands: [number, number][] = [];
    const progress: number[] = [];
    const result = await pool.surface(samples, model, grid, { threshold: 38 }, {
      onBand: (band, merged) => {
        bands.push(band.rows);
        // The band's own rows are already in the merged arrays.
        const o = band.rows[0] * grid.nx;
        expect(Array.from(merged.mean.subarray(o, o + band.mean.length))).toEqual(Array.from(band.mean));
      },
      onProgress: (p) => progress.push(p.done),
    });
    const ref = computeSurface(samples, model, grid, { threshold: 38 });
    expect(Array.from(result.mean)).toEqual(Array.from(ref.mean));
    expect(Array.from(result.sd)).toEqual(Array.from(ref.sd));
    expect(Array.from(result.pExceed!)).toEqual(Array.from(ref.pExceed!));
    expect(result.range).toEqual(ref.range);
    expect(result.cells).toBe(114);
    expect(bands.sort((p, q) => p[0] - q[0])).toEqual(splitBands(grid, 6));
    expect(made).toHaveLength(3);
    // Every worker got work.
    for (const w of made) expect(w.received.length).toBeGreaterThan(0);
    for (let k = 1; k < progress.length; k++) expect(progress[k]).toBeGreaterThanOrEqual(progress[k - 1]);
    expect(progress[0]).toBe(0);
    expect(progress.at(-1)).toBe(114);
  });

  it('EnginePool.surface factorises once per worker, not once per band', async () => {
    let built = 0;
    const ops: EngineOperations = { ...ENGINE_OPERATIONS, createPredictor: (s, m, o) => { built++; return ENGINE_OPERATIONS.createPredictor(s, m, o); } };
    const { factory } = fakeFactory(ops);
    const pool = new EnginePool({ size: 2, factory, bandsPerWorker: 4 });
    await pool.surface(samples, model, grid);
    expect(built).toBe(2);
  });

  it('EnginePool.surface rejects with cancelled on abort and terminates the busy workers', async () => {
    const { factory, made } = fakeFactory(undefined, 2);
    const pool = new EnginePool({ size: 2, factory, bandsPerWorker: 4 });
    const ctl = new AbortController();
    let seen = 0;
    const p = pool.surface(samples, model, grid, {}, { signal: ctl.signal, onBand: () => { seen++; ctl.abort(); } });
    const err = await p.catch((e) => e);
    expect(err).toBeInstanceOf(GapwiseError);
    expect(err.code).toBe('cancelled');
    expect(seen).toBe(1);
    // The other worker was busy with a band: it was terminated (and nothing is waiting, so not restarted).
    expect(made.filter((w) => w.terminated).length).toBe(1);
    expect(pool.startedWorkers).toBe(2);
  });

  it('EnginePool.surface rejects with the first band error and stops the others', async () => {
    const ops = { ...ENGINE_OPERATIONS, computeSurfaceWith: () => { throw new GapwiseError('not-positive-definite', 'The covariance matrix could not be factorised.'); } } as unknown as EngineOperations;
    const { factory } = fakeFactory(ops);
    const pool = new EnginePool({ size: 2, factory });
    await expect(pool.surface(samples, model, grid)).rejects.toMatchObject({ code: 'not-positive-definite' });
  });

  it('EnginePool.request runs plain requests on the least busy worker', async () => {
    const { factory, made } = fakeFactory(undefined, 1);
    const pool = new EnginePool({ size: 2, factory });
    const [a, b] = await Promise.all([pool.request('variogram', { samples }), pool.request('crossValidate', { samples, model })]);
    expect(a.n).toBe(30);
    expect(b.summary.n).toBe(30);
    expect(made.map((w) => w.received.length)).toEqual([1, 1]);
    pool.dispose();
    expect(made.every((w) => w.terminated)).toBe(true);
  });

  it('EnginePool.surface of a surface result type carries the threshold and a median for a log model', async () => {
    const { factory } = fakeFactory();
    const pool = new EnginePool({ size: 2, factory });
    const c = fx.cases[2];
    const pos = makeSamples(fx.x as number[], fx.y as number[], c.values);
    const r: SurfaceResult = await pool.surface(pos, c.model, grid, { threshold: c.threshold, precision: 'float64' });
    expect(r.threshold).toBe(c.threshold);
    expect(r.median).toBeInstanceOf(Float64Array);
    expect(Array.from(r.median!)).toEqual(Array.from(computeSurface(pos, c.model, grid, { threshold: c.threshold, precision: 'float64' }).median!));
  });
});

describe('EnginePool block support with covariates', () => {
  it('EnginePool.surface with block support gives each band its rows of the block points\' covariates: the one-shot block surface', async () => {
    // Invented covariate: the easting of each block point (per metre), k = 2 points per side.
    const k = 2;
    const trendModel: CovarianceModel = { ...model, structures: model.structures.filter((s) => s.type !== 'nugget' || s.sill > 0), trend: { covariates: ['east'] }, transform: 'none' };
    const withCovariate = { ...samples, covariates: Float64Array.from(samples.x) };
    const covariates = new Float64Array(grid.nx * grid.ny * k * k);
    for (let c = 0; c < grid.nx * grid.ny; c++) {
      for (let s = 0; s < k * k; s++) covariates[c * k * k + s] = grid.x0 + ((c % grid.nx) + ((s % k) + 0.5) / k) * grid.cell;
    }
    const { factory } = fakeFactory();
    const pool = new EnginePool({ size: 2, factory, bandsPerWorker: 2 });
    const result = await pool.surface(withCovariate, trendModel, grid, { covariates }, { support: 'block', blockPoints: k });
    const ref = computeBlockSurface(withCovariate, trendModel, grid, { points: k, covariates });
    expect(Array.from(result.mean)).toEqual(Array.from(ref.mean));
    expect(Array.from(result.sd)).toEqual(Array.from(ref.sd));
  });
});

describe('EnginePool.run', () => {
  it('EnginePool.run feeds a queue to idle workers, gives each worker one task when there are as many, and reports every result', async () => {
    const { factory, made } = fakeFactory(undefined, 1);
    const pool = new EnginePool({ size: 3, factory });
    const results: number[] = [];
    await pool.run(Array.from({ length: 3 }, () => ({ type: 'ready' as const, payload: {} })), { onResult: (i, r) => { expect(r).toBe(true); results.push(i); } });
    expect(results.sort()).toEqual([0, 1, 2]);
    expect(made.map((w) => w.received.length)).toEqual([1, 1, 1]);
    // Seven tasks on two workers: every task once, each worker taking the next when it is free.
    const two = fakeFactory(undefined, 1);
    const queue = new EnginePool({ size: 2, factory: two.factory });
    const seen = new Set<number>();
    await queue.run(Array.from({ length: 7 }, () => ({ type: 'variogram' as const, payload: { samples } })), { onResult: (i, v) => { expect(v.n).toBe(30); seen.add(i); } });
    expect(seen.size).toBe(7);
    expect(two.made.reduce((s, w) => s + w.received.length, 0)).toBe(7);
    await queue.dispose();
    expect(two.made.every((w) => w.terminated)).toBe(true);
  });

  it('EnginePool.run rejects with a GapwiseError given as the abort reason, and with cancelled before it starts', async () => {
    const { factory, made } = fakeFactory(undefined, 2);
    const pool = new EnginePool({ size: 2, factory });
    const ctl = new AbortController();
    const tasks = Array.from({ length: 6 }, () => ({ type: 'variogram' as const, payload: { samples } }));
    const stopped = pool.run(tasks, { signal: ctl.signal, onResult: () => ctl.abort(new GapwiseError('cancelled', 'Stopped after one.')) });
    await expect(stopped).rejects.toMatchObject({ code: 'cancelled', message: 'Stopped after one.' });
    expect(made.filter((w) => w.terminated).length).toBe(1); // the other worker was busy
    await expect(pool.run(tasks, { signal: ctl.signal })).rejects.toMatchObject({ message: 'Stopped after one.' });
    await expect(pool.run(tasks, { signal: AbortSignal.abort(), name: 'job' })).rejects.toMatchObject({ code: 'cancelled', message: 'The job was cancelled before it started.' });
    await expect(pool.run([])).resolves.toBeUndefined();
  });
});
