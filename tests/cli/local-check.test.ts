import { describe, expect, it } from 'vitest';
import { checkLocalSurface, threadedTargetRunner } from '../../src/cli/local-check.ts';
import { chooseCheckTargets, freshSeed } from '../../src/core/prediction/local-accuracy.ts';
import { createPredictor } from '../../src/core/prediction/kriging.ts';
import { createLocalPredictor, type LocalKrigingOptions } from '../../src/core/prediction/local-kriging.ts';
import { computeSurfaceWith, type SurfaceResult } from '../../src/core/prediction/surface.ts';
import { cellCentres, type Grid } from '../../src/core/geometry/grid.ts';
import { makeSamples } from '../../src/core/shared/samples.ts';
import { createRandom } from '../../src/core/shared/random.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';
import { expectClose } from '../helpers/tolerance.ts';

/** Invented samples in the south-west corner of a larger grid: cells far from them barely move with the neighbourhood's size. */
function cornerProblem() {
  const r = createRandom(4);
  const x: number[] = [];
  const y: number[] = [];
  const v: number[] = [];
  for (let i = 0; i < 300; i++) {
    const u = 200 * r.uniform();
    const w = 200 * r.uniform();
    x.push(300000 + u);
    y.push(5000000 + w);
    v.push(10 + Math.sin(u / 120) + Math.cos(w / 170) + 0.3 * r.normal());
  }
  const model: CovarianceModel = {
    structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 100, nu: 1.5 }], trend: { known: 10 }, transform: 'none',
  };
  const grid: Grid = { x0: 300000, y0: 5001000, cell: 20, nx: 50, ny: 50 };
  return { samples: makeSamples(x, y, v), model, grid };
}

describe('checkLocalSurface', () => {
  it('checkLocalSurface reruns only the cells still moving with the neighbourhood size: the others are kept bit for bit, the rerun ones are the grown surface\'s and meet the tolerance', async () => {
    const { samples, model, grid } = cornerProblem();
    const surfaceAt = (s: LocalKrigingOptions): SurfaceResult =>
      computeSurfaceWith(createLocalPredictor(samples, model, { ...s, targetSpacing: grid.cell }), grid, { precision: 'float64' });
    const start = { neighbours: 16, globalMean: false };
    const first = surfaceAt(start);
    const reruns: string[] = [];
    const res = await checkLocalSurface({
      samples, model, grid, surface: first, settings: start, tolerance: { mean: 1, sd: 2 }, grow: true, exactFallback: true,
      rerun: async (s) => {
        reruns.push(s === 'exact' ? 'exact' : String(s.neighbours));
        if (s === 'exact') throw new Error('exact kriging was not expected here');
        return surfaceAt(s);
      },
    });
    expect(res.path).toBe('local');
    expect(res.settings.neighbours).toBeGreaterThan(16);
    // Only the signal's half-size surface was computed whole, never the grown one.
    expect(reruns).toEqual(['8']);
    expect(res.notes.join(' ')).toMatch(/rerun: [\d,]+ of 2,500 cells/);
    const grown = surfaceAt(res.settings);
    let kept = 0;
    let rerun = 0;
    for (let k = 0; k < first.mean.length; k++) {
      const same = res.surface.mean[k] === first.mean[k] && res.surface.sd[k] === first.sd[k];
      if (same && !(grown.mean[k] === first.mean[k] && grown.sd[k] === first.sd[k])) kept++;
      if (!same) {
        rerun++;
        // A rerun cell holds exactly what a whole grown surface holds there.
        expect(res.surface.mean[k]).toBe(grown.mean[k]);
        expect(res.surface.sd[k]).toBe(grown.sd[k]);
      }
    }
    expect(kept).toBeGreaterThan(500);
    expect(rerun).toBeGreaterThan(100);
    // The figure reported is measured at a fresh subset against exact kriging, recomputed here.
    expect(res.accuracy.within).toBe(true);
    expect(res.accuracy.seed).toBe(freshSeed(1));
    const centres = cellCentres(grid);
    const idx = chooseCheckTargets(centres.x.length, 200, freshSeed(1));
    const exact = createPredictor(samples, model).predict(Float64Array.from(idx, (i) => centres.x[i]), Float64Array.from(idx, (i) => centres.y[i]));
    let max = 0;
    idx.forEach((i, k) => { max = Math.max(max, Math.abs(res.surface.mean[centres.index[i]] - exact.mean[k])); });
    expectClose(res.accuracy.mean.max, 100 * max, { rel: 1e-9 }, 'largest mean difference at the fresh subset');
    expect(res.accuracy.mean.max).toBeLessThanOrEqual(1);
  });
});

describe('threadedTargetRunner', () => {
  it('threadedTargetRunner gives the values of a one-thread local run, bit for bit', async () => {
    const { samples, model } = cornerProblem();
    const r = createRandom(8);
    const tx = Float64Array.from({ length: 700 }, () => 300000 + 250 * r.uniform());
    const ty = Float64Array.from({ length: 700 }, () => 5000000 + 250 * r.uniform());
    const local = { neighbours: 24 };
    const runner = threadedTargetRunner(samples, model, 2);
    try {
      const p = await runner.run(local, tx, ty, undefined);
      const one = createLocalPredictor(samples, model, local).predict(tx, ty);
      expect(Array.from(p.mean)).toEqual(Array.from(one.mean));
      expect(Array.from(p.sd)).toEqual(Array.from(one.sd));
      expect(Array.from(p.sdObserved)).toEqual(Array.from(one.sdObserved));
    } finally {
      await runner.dispose();
    }
  }, 60_000);
});
