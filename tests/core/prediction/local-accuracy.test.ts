import { describe, expect, it } from 'vitest';
import {
  affectedTargets, chooseCheckTargets, freshSeed, growthSteps, maxGrownNeighbours, nextNeighbours, predictLocalChecked, priorSdOf,
} from '../../../src/core/prediction/local-accuracy.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { createLocalPredictor } from '../../../src/core/prediction/local-kriging.ts';
import { denseTargetSpacing } from '../../../src/core/prediction/target-spacing.ts';
import { makeSamples } from '../../../src/core/shared/samples.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import { expectClose } from '../../helpers/tolerance.ts';

/** Invented samples on a square with a smooth signal plus noise, and scattered targets over it. */
function problem(n: number, targets: number, seed: number, side = 1000) {
  const r = createRandom(seed);
  const x: number[] = [];
  const y: number[] = [];
  const v: number[] = [];
  for (let i = 0; i < n; i++) {
    x.push(300000 + side * r.uniform());
    y.push(5000000 + side * r.uniform());
    v.push(10 + Math.sin(x[i] / 120) + Math.cos(y[i] / 170) + 0.3 * r.normal());
  }
  const tx = new Float64Array(targets);
  const ty = new Float64Array(targets);
  for (let j = 0; j < targets; j++) {
    tx[j] = 300000 + side * r.uniform();
    ty[j] = 5000000 + side * r.uniform();
  }
  return { samples: makeSamples(x, y, v), tx, ty };
}

const MODEL: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.05 }, { type: 'matern', sill: 1, scale: 100, nu: 1.5 }],
  trend: 'constant', transform: 'none',
};

describe('chooseCheckTargets', () => {
  it('chooseCheckTargets gives count distinct indices in increasing order, the same for the same seed', () => {
    const a = chooseCheckTargets(10_000, 200, 7);
    expect(a.length).toBe(200);
    for (let i = 1; i < a.length; i++) expect(a[i]).toBeGreaterThan(a[i - 1]);
    expect(a[a.length - 1]).toBeLessThan(10_000);
    expect(Array.from(chooseCheckTargets(10_000, 200, 7))).toEqual(Array.from(a));
    expect(Array.from(chooseCheckTargets(10_000, 200, 8))).not.toEqual(Array.from(a));
    expect(Array.from(chooseCheckTargets(5, 200, 7))).toEqual([0, 1, 2, 3, 4]);
  });
});

describe('predictLocalChecked', () => {
  it('predictLocalChecked reports the largest and RMS differences over the checked subset, recomputed independently', async () => {
    const { samples, tx, ty } = problem(600, 1500, 3);
    const res = await predictLocalChecked(samples, MODEL, tx, ty, { local: { neighbours: 16 }, seed: 5, grow: false });
    expect(res.path).toBe('local');
    const idx = chooseCheckTargets(1500, 200, 5);
    // Independently: exact kriging at the subset, against the values returned for every target.
    const exact = createPredictor(samples, MODEL).predict(Float64Array.from(idx, (i) => tx[i]), Float64Array.from(idx, (i) => ty[i]));
    let maxMean = 0;
    let maxSd = 0;
    let ssMean = 0;
    idx.forEach((i, k) => {
      const dm = Math.abs(res.prediction.mean[i] - exact.mean[k]);
      maxMean = Math.max(maxMean, dm);
      maxSd = Math.max(maxSd, Math.abs(res.prediction.sd[i] - exact.sd[k]));
      ssMean += dm * dm;
    });
    const prior = Math.sqrt(1); // the Matérn sill; the nugget is measurement error
    expect(res.accuracy.checked).toBe(200);
    expect(res.accuracy.reference).toBe('exact');
    expectClose(res.accuracy.mean.max, (100 * maxMean) / prior, { rel: 1e-9 }, 'largest mean difference');
    expectClose(res.accuracy.sd.max, (100 * maxSd) / prior, { rel: 1e-9 }, 'largest sd difference');
    expectClose(res.accuracy.mean.rms, (100 * Math.sqrt(ssMean / 200)) / prior, { rel: 1e-9 }, 'RMS mean difference');
    expect(res.accuracy.mean.max).toBeGreaterThan(0);
    // The subset's values equal a full local run's: the figures describe what was returned.
    const full = createLocalPredictor(samples, MODEL, { neighbours: 16 }).predict(tx, ty);
    expect(Array.from(res.prediction.mean)).toEqual(Array.from(full.mean));
  });

  it('predictLocalChecked grows a neighbourhood that misses the tolerance and ends within it', async () => {
    // Few neighbours and a locally re-estimated mean: far from exact kriging on this problem.
    const { samples, tx, ty } = problem(800, 1200, 9);
    const res = await predictLocalChecked(samples, MODEL, tx, ty, { local: { neighbours: 8 }, seed: 2 });
    expect(res.attempts.length).toBeGreaterThan(0);
    expect(res.attempts[res.attempts.length - 1].within).toBe(true);
    expect(res.notes.join(' ')).toMatch(/missed the tolerance.*grown to the \d+ nearest/);
    expect(res.path).toBe('local');
    expect(res.settings.neighbours > 8 || res.settings.globalMean).toBe(true);
    expect(res.accuracy.within).toBe(true);
    expect(res.accuracy.mean.max).toBeLessThanOrEqual(1);
    expect(res.accuracy.sd.max).toBeLessThanOrEqual(2);
    // The figures are those of the values returned, measured at a fresh subset (not the one that chose the growth).
    expect(res.accuracy.seed).toBe(freshSeed(2));
    const fresh = chooseCheckTargets(1200, 200, freshSeed(2));
    expect(Array.from(fresh)).not.toEqual(Array.from(chooseCheckTargets(1200, 200, 2)));
    const exact = createPredictor(samples, MODEL).predict(Float64Array.from(fresh, (i) => tx[i]), Float64Array.from(fresh, (i) => ty[i]));
    let maxMean = 0;
    let maxSd = 0;
    fresh.forEach((i, k) => {
      maxMean = Math.max(maxMean, Math.abs(res.prediction.mean[i] - exact.mean[k]));
      maxSd = Math.max(maxSd, Math.abs(res.prediction.sd[i] - exact.sd[k]));
    });
    expectClose(res.accuracy.mean.max, 100 * maxMean, { rel: 1e-9 }, 'largest mean difference at the fresh subset');
    expectClose(res.accuracy.sd.max, 100 * maxSd, { rel: 1e-9 }, 'largest sd difference at the fresh subset');
  });

  it('predictLocalChecked grows step by step at the targets still moving when few checked targets miss, and at every target at once when most do', async () => {
    // Samples in one corner of the targets' square: targets far from them do not move with the neighbourhood's size.
    const r = createRandom(4);
    const x: number[] = [];
    const y: number[] = [];
    const v: number[] = [];
    for (let i = 0; i < 300; i++) {
      x.push(300000 + 200 * r.uniform());
      y.push(5000000 + 200 * r.uniform());
      v.push(10 + Math.sin(x[i] / 120) + Math.cos(y[i] / 170) + 0.3 * r.normal());
    }
    const tx = Float64Array.from({ length: 1500 }, () => 300000 + 1000 * r.uniform());
    const ty = Float64Array.from({ length: 1500 }, () => 5000000 + 1000 * r.uniform());
    const known: CovarianceModel = { ...MODEL, trend: { known: 10 } };
    const few = await predictLocalChecked(makeSamples(x, y, v), known, tx, ty, { local: { neighbours: 16 } });
    expect(few.notes.join(' ')).toMatch(/where the values still moved with the neighbourhood's size \(rerun: [\d,]+ with the \d+ nearest/);
    expect(few.accuracy.within).toBe(true);
    const { samples, tx: wx, ty: wy } = problem(800, 1200, 9);
    const most = await predictLocalChecked(samples, MODEL, wx, wy, { local: { neighbours: 8 }, seed: 2 });
    expect(most.notes.join(' ')).toMatch(/at \d+ of 200 checked targets; grown to the \d+ nearest.* at every target/);
    // The values are those of one run with the grown setting.
    const grown = createLocalPredictor(samples, MODEL, { ...most.settings, globalBeta: undefined }).predict(wx, wy);
    expect(Array.from(most.prediction.mean)).toEqual(Array.from(grown.mean));
  });

  it('predictLocalChecked stops a growth that would cost more than its budget and reports the first measurement', async () => {
    const { samples, tx, ty } = problem(800, 1200, 9);
    const res = await predictLocalChecked(samples, MODEL, tx, ty, { local: { neighbours: 8 }, seed: 2, growthBudget: 2 });
    expect(res.path).toBe('local');
    expect(res.settings).toEqual({ neighbours: 8, globalMean: false });
    expect(res.notes.join(' ')).toMatch(/would cost about \d+ billion operations, more than 2 times the first run, so it was not done unasked \(--neighbours \d+ does it\)/);
    expect(res.accuracy.seed).toBe(2);
    expect(res.accuracy.within).toBe(false);
    expect(res.warnings.some((w) => w.code === 'tolerance-missed')).toBe(true);
    // The values are the first run's, unchanged.
    const plain = createLocalPredictor(samples, MODEL, { neighbours: 8 }).predict(tx, ty);
    expect(Array.from(res.prediction.mean)).toEqual(Array.from(plain.mean));
  });

  it('predictLocalChecked takes exact kriging when no neighbourhood meets the tolerance, and says so', async () => {
    const { samples, tx, ty } = problem(300, 600, 4);
    const res = await predictLocalChecked(samples, MODEL, tx, ty, { local: { neighbours: 8 }, tolerance: { mean: 1e-9, sd: 1e-9 } });
    expect(res.path).toBe('exact');
    expect(res.notes.join(' ')).toMatch(/took exact kriging from all 300 samples/);
    const exact = createPredictor(samples, MODEL).predict(tx, ty);
    expect(Array.from(res.prediction.mean)).toEqual(Array.from(exact.mean));
  });

  it('predictLocalChecked compares a log model on the log scale', async () => {
    const { samples, tx, ty } = problem(400, 500, 6);
    const model: CovarianceModel = { ...MODEL, transform: 'log' };
    const res = await predictLocalChecked(samples, model, tx, ty, { local: { neighbours: 32, globalMean: true }, grow: false });
    expect(res.accuracy.scale).toBe('log');
    expect(res.accuracy.priorSd).toBe(priorSdOf(model));
    const idx = chooseCheckTargets(500, 200, 1);
    const exact = createPredictor(samples, model).predict(Float64Array.from(idx, (i) => tx[i]), Float64Array.from(idx, (i) => ty[i]));
    let max = 0;
    idx.forEach((i, k) => { max = Math.max(max, Math.abs(res.prediction.logMean![i] - exact.logMean![k])); });
    expectClose(res.accuracy.mean.max, 100 * max, { rel: 1e-9 });
  });
});

describe('affectedTargets', () => {
  it('affectedTargets reruns every target whose signal reaches half the smallest signal of a missed check (or half the tighter tolerance)', () => {
    const signal = [0.1, 3, 0.6, 5, 0.2, 1.4];
    // Checked targets 1 (signal 3, missed) and 4 (0.2, within): threshold min(3, 1, 2) / 2 = 0.5.
    const a = affectedTargets(signal, [1, 4], [true, false], { mean: 1, sd: 2 });
    expect(a.threshold).toBe(0.5);
    expect(Array.from(a.rerun)).toEqual([1, 2, 3, 5]);
    // A missed check with a small signal lowers the threshold: more is rerun.
    const b = affectedTargets(signal, [1, 4], [true, true], { mean: 1, sd: 2 });
    expect(b.threshold).toBe(0.1);
    expect(Array.from(b.rerun)).toEqual([0, 1, 2, 3, 4, 5]);
    // No check missed: nothing to rerun.
    expect(affectedTargets(signal, [1, 4], [false, false]).rerun.length).toBe(0);
    // A NaN signal (a value that is not finite) is never taken as settled.
    expect(Array.from(affectedTargets([NaN, 0], [1], [true]).rerun)).toEqual([0, 1]);
  });
});

describe('growthSteps', () => {
  it('growthSteps tries the GLS mean first, then 1.5 and 2 times the neighbours in turn up to maxGrownNeighbours(n)', () => {
    expect(growthSteps({ neighbours: 64, globalMean: false }, 2000, MODEL)).toEqual([
      { neighbours: 64, globalMean: true }, { neighbours: 96, globalMean: true }, { neighbours: 128, globalMean: true },
      { neighbours: 192, globalMean: true }, { neighbours: 256, globalMean: true }, { neighbours: 384, globalMean: true }, { neighbours: 512, globalMean: true },
    ]);
    expect([1, 2, 3, 5, 8, 12, 100, 192].map(nextNeighbours)).toEqual([2, 3, 4, 6, 12, 16, 128, 256]);
    expect(maxGrownNeighbours(100_000)).toBe(256);
    expect(growthSteps({ neighbours: 64, globalMean: true }, 100, MODEL)).toEqual([{ neighbours: 96, globalMean: true }, { neighbours: 100, globalMean: true }]);
    // A known mean has nothing to estimate globally.
    expect(growthSteps({ neighbours: 200, globalMean: false }, 300, { ...MODEL, trend: { known: 10 } })).toEqual([{ neighbours: 256, globalMean: false }, { neighbours: 300, globalMean: false }]);
  });
});

describe('denseTargetSpacing', () => {
  it('denseTargetSpacing is √(area/targets) for targets more and denser than the samples, undefined otherwise', () => {
    const { samples, tx, ty } = problem(100, 2000, 1);
    let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
    for (let j = 0; j < tx.length; j++) { x0 = Math.min(x0, tx[j]); x1 = Math.max(x1, tx[j]); y0 = Math.min(y0, ty[j]); y1 = Math.max(y1, ty[j]); }
    expectClose(denseTargetSpacing(tx, ty, samples.x, samples.y)!, Math.sqrt(((x1 - x0) * (y1 - y0)) / 2000), { rel: 1e-12 });
    expect(denseTargetSpacing(tx.subarray(0, 50), ty.subarray(0, 50), samples.x, samples.y)).toBeUndefined();
    expect(denseTargetSpacing([1, 2, 3], [5, 5, 5], samples.x, samples.y)).toBeUndefined();
    // Fewer targets than samples: no tiles however close together.
    expect(denseTargetSpacing(tx.subarray(0, 99).map((v) => 300000 + (v - 300000) / 100), ty.subarray(0, 99), samples.x, samples.y)).toBeUndefined();
  });
  it('tiles from denseTargetSpacing bring scattered targets closer to exact kriging than one neighbourhood each', async () => {
    const { samples, tx, ty } = problem(600, 8000, 12);
    const spacing = denseTargetSpacing(tx, ty, samples.x, samples.y);
    expect(spacing).toBeDefined();
    const plain = await predictLocalChecked(samples, MODEL, tx, ty, { local: { neighbours: 64 }, grow: false });
    const tiled = await predictLocalChecked(samples, MODEL, tx, ty, { local: { neighbours: 64, targetSpacing: spacing }, grow: false });
    expect(tiled.accuracy.mean.max).toBeLessThan(plain.accuracy.mean.max);
  });
});
