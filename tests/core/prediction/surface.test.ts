import { describe, expect, it } from 'vitest';
import { computeSurface, computeSurfaceWith } from '../../../src/core/prediction/surface.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { makeSamples } from '../../../src/core/shared/samples.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import type { Grid } from '../../../src/core/geometry/grid.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';

interface SurfaceCase {
  name: string; model: CovarianceModel; threshold: number; values: number[];
  mean: number[]; sd?: number[]; median?: number[]; pExceed: number[];
}
const fixture = loadFixture<SurfaceCase>('surface.json');
const grid: Grid = { ...(fixture.grid as Omit<Grid, 'mask'>), mask: Uint8Array.from(fixture.mask as number[]) };
const active = (fixture.mask as number[]).flatMap((m, k) => (m ? [k] : []));
const pick = (a: ArrayLike<number>) => active.map((k) => a[k]);

describe('computeSurface', () => {
  for (const c of fixture.cases) {
    it(`computeSurface matches the reference on every active cell: ${c.name} (source: ${fixture.source})`, () => {
      const samples = makeSamples(fixture.x as number[], fixture.y as number[], c.values);
      const s = computeSurface(samples, c.model, grid, { threshold: c.threshold, precision: 'float64' });
      expect(s.mean).toBeInstanceOf(Float64Array);
      expect(s.rows).toEqual([0, grid.ny]);
      expect(s.cells).toBe(active.length);
      const tol = fixture.tolerance;
      expectClose(pick(s.mean), pick(c.mean), tol, 'mean');
      if (c.sd) expectClose(pick(s.sd), pick(c.sd), tol, 'sd');
      if (c.median) expectClose(pick(s.median!), pick(c.median), tol, 'median');
      expectClose(pick(s.pExceed!), pick(c.pExceed), { abs: 1e-9 }, 'pExceed');
      for (let k = 0; k < grid.nx * grid.ny; k++) {
        if (!grid.mask![k]) {
          expect(s.mean[k]).toBeNaN();
          expect(s.sd[k]).toBeNaN();
          expect(s.pExceed![k]).toBeNaN();
        }
      }
    });
  }

  const c = fixture.cases[1];
  const samples = makeSamples(fixture.x as number[], fixture.y as number[], c.values);

  it('computeSurface of a row band equals the same rows of the whole grid, in Float32 by default', () => {
    const whole = computeSurface(samples, c.model, grid, { threshold: c.threshold });
    expect(whole.mean).toBeInstanceOf(Float32Array);
    const band = computeSurface(samples, c.model, grid, { threshold: c.threshold, rows: [3, 7], blockCells: 20 });
    expect(band.rows).toEqual([3, 7]);
    expect(band.mean.length).toBe(4 * grid.nx);
    const lo = 3 * grid.nx, hi = 7 * grid.nx;
    expect(Array.from(band.mean)).toEqual(Array.from(whole.mean.subarray(lo, hi)));
    expect(Array.from(band.sd)).toEqual(Array.from(whole.sd.subarray(lo, hi)));
    expect(Array.from(band.pExceed!)).toEqual(Array.from(whole.pExceed!.subarray(lo, hi)));
    expect(band.cells).toBe(active.filter((k) => k >= lo && k < hi).length);
  });

  it('computeSurface reports min/max over computed cells and progress up to the active cell count', () => {
    const calls: [number, number][] = [];
    const s = computeSurface(samples, c.model, grid, { threshold: c.threshold, blockCells: 16, precision: 'float64' }, (d, t) => calls.push([d, t]));
    const ref = pick(c.mean);
    expectClose(s.range.mean.min, Math.min(...ref), fixture.tolerance, 'min');
    expectClose(s.range.mean.max, Math.max(...ref), fixture.tolerance, 'max');
    expect(s.range.pExceed!.min).toBeGreaterThanOrEqual(0);
    expect(s.range.pExceed!.max).toBeLessThanOrEqual(1);
    expect(calls[0]).toEqual([0, active.length]);
    expect(calls.at(-1)).toEqual([active.length, active.length]);
    expect(calls.length).toBeGreaterThan(5);
    for (let k = 1; k < calls.length; k++) expect(calls[k][0]).toBeGreaterThan(calls[k - 1][0]);
  });

  it('computeSurface without a threshold leaves pExceed out', () => {
    const s = computeSurface(samples, c.model, grid, { rows: [0, 1] });
    expect(s.pExceed).toBeUndefined();
    expect(s.range.pExceed).toBeUndefined();
  });

  it('computeSurface reproduces the data at a sample with no nugget (sd 0 there, P(exceed) a step)', () => {
    const s3 = makeSamples([5, 25, 45], [-15, -35, -5], [1, 4, 2]);
    const g: Grid = { x0: 0, y0: 0, cell: 10, nx: 5, ny: 4 };
    const model: CovarianceModel = { structures: [{ type: 'exponential', sill: 2, scale: 30 }], trend: 'constant', transform: 'none' };
    const s = computeSurface(s3, model, g, { threshold: 3, precision: 'float64' });
    // Sample (25, −35) is the centre of cell (2, 3); (5, −15) of cell (0, 1).
    expectClose(s.mean[3 * 5 + 2], 4, { abs: 1e-10 });
    expectClose(s.sd[3 * 5 + 2], 0, { abs: 1e-6 });
    expectClose(s.pExceed![3 * 5 + 2], 1, { abs: 1e-12 });
    expectClose(s.mean[1 * 5 + 0], 1, { abs: 1e-10 });
    expectClose(s.pExceed![1 * 5 + 0], 0, { abs: 1e-12 });
  });

  it('computeSurface rejects bad rows, thresholds and masks with GapwiseError', () => {
    expect(() => computeSurface(samples, c.model, grid, { rows: [5, 5] })).toThrow(/0 ≤ start < end ≤ 11, got \[5, 5\]/);
    expect(() => computeSurface(samples, c.model, grid, { rows: [0, 12] })).toThrow(GapwiseError);
    expect(() => computeSurface(samples, c.model, grid, { threshold: NaN })).toThrow(/threshold to be a finite number/);
    expect(() => computeSurface(samples, c.model, { ...grid, mask: new Uint8Array(3) })).toThrow(/mask of 165 cells/);
    const logModel: CovarianceModel = { ...fixture.cases[2].model };
    const pos = makeSamples(fixture.x as number[], fixture.y as number[], fixture.cases[2].values);
    expect(() => computeSurface(pos, logModel, grid, { threshold: 0 })).toThrow(/threshold above 0 with a log transform/);
  });
});

describe('computeSurfaceWith', () => {
  it('computeSurfaceWith reuses one predictor across bands and carries its warnings', () => {
    const c = fixture.cases[0];
    const xs = [...(fixture.x as number[]), (fixture.x as number[])[0]];
    const ys = [...(fixture.y as number[]), (fixture.y as number[])[0]];
    const predictor = createPredictor(makeSamples(xs, ys, [...c.values, c.values[0] + 1]), c.model);
    const a = computeSurfaceWith(predictor, grid, { rows: [0, 5] });
    const b = computeSurfaceWith(predictor, grid, { rows: [5, 11] });
    expect(a.mean.length + b.mean.length).toBe(grid.nx * grid.ny);
    expect(a.warnings.map((w) => w.code)).toContain('coincident-samples');
  });
});
