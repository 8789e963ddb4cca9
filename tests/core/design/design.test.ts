import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { suggestSites, defaultCell, niceCell, type DesignOptions } from '../../../src/core/design/design.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { makeSamples, type Samples } from '../../../src/core/shared/samples.ts';
import { cellCentres, gridForPolygons, gridFromExtent, type Polygon } from '../../../src/core/geometry/grid.ts';
import { pointInPolygons } from '../../../src/core/geometry/polygon.ts';
import { expectedMisclassification } from '../../../src/core/design/design-misclassification.ts';
import { coverageObjective } from '../../../src/core/design/design-coverage.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import { normalCdf } from '../../../src/core/shared/normal.ts';
import type { CovarianceModel, CovariateTrend } from '../../../src/core/covariance/model.ts';
import { buildKrigingSystem } from '../../../src/core/prediction/kriging.ts';
import { posteriorCovariance } from '../../../src/core/simulation/conditional-simulation.ts';
import { CAUTION } from '../../../src/core/shared/caution.ts';
import { expectClose } from '../../helpers/tolerance.ts';

const SQUARE: Polygon = [[[0, 0], [100, 0], [100, 100], [0, 100], [0, 0]]];

function fieldSamples(n: number, seed: number, size = 100): Samples {
  const rnd = createRandom(seed);
  const x: number[] = [], y: number[] = [], v: number[] = [];
  for (let i = 0; i < n; i++) {
    x.push(rnd.uniform() * size);
    y.push(rnd.uniform() * size);
    v.push(10 + 3 * Math.sin(x[i] / 30) + 2 * Math.cos(y[i] / 25) + rnd.normal() * 0.5);
  }
  return makeSamples(x, y, v);
}

const MODELS: Record<string, CovarianceModel> = {
  ordinary: { structures: [{ type: 'nugget', sill: 0.2 }, { type: 'exponential', sill: 1.5, scale: 35 }], trend: 'constant', transform: 'none' },
  universal: { structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 2, scale: 25, nu: 1.5 }], trend: 'linear', transform: 'none' },
  simple: { structures: [{ type: 'nugget', sill: 0.3 }, { type: 'gaussian', sill: 1, scale: 20 }], trend: { known: 10 }, transform: 'none' },
};

/** Average posterior variance over the points, from a predictor built from scratch. */
function averageVariance(s: Samples, model: CovarianceModel, ex: Float64Array, ey: Float64Array): { v: Float64Array; mean: Float64Array } {
  const p = createPredictor(s, model).predict(ex, ey);
  return { v: Float64Array.from(p.sd, (d) => d * d), mean: p.mean };
}

function withSites(s: Samples, xs: number[], ys: number[]): Samples {
  return makeSamples([...s.x, ...xs], [...s.y, ...ys], [...s.value, ...xs.map(() => 0)]);
}

/**
 * Exhaustive greedy: for every candidate, refit the posterior from scratch with the samples, the
 * earlier picks and that candidate (the nugget is then its noise) and take the best.
 */
function bruteForceGreedy(
  s: Samples, model: CovarianceModel, ex: Float64Array, ey: Float64Array, cx: Float64Array, cy: Float64Array,
  count: number, criterion: (before: { v: Float64Array; mean: Float64Array }, after: Float64Array) => number,
): Array<{ index: number; benefit: number }> {
  const picks: Array<{ index: number; benefit: number }> = [];
  const px: number[] = [], py: number[] = [];
  const base = averageVariance(s, model, ex, ey);
  for (let j = 0; j < count; j++) {
    const current = averageVariance(withSites(s, px, py), model, ex, ey).v;
    let best = -1, bestBenefit = -Infinity;
    for (let c = 0; c < cx.length; c++) {
      if (picks.some((p) => p.index === c)) continue;
      const after = averageVariance(withSites(s, [...px, cx[c]], [...py, cy[c]]), model, ex, ey).v;
      const b = criterion({ v: current, mean: base.mean }, after) - 0;
      if (b > bestBenefit) { bestBenefit = b; best = c; }
    }
    picks.push({ index: best, benefit: bestBenefit });
    px.push(cx[best]);
    py.push(cy[best]);
  }
  return picks;
}

describe('suggestSites (variance)', () => {
  const samples = fieldSamples(12, 5);
  const grid = gridForPolygons([SQUARE], 12.5);
  const cells = cellCentres(grid);

  for (const [name, model] of Object.entries(MODELS)) {
    it(`suggestSites picks exactly the sites and benefits of a brute-force greedy that refits the posterior (${name} kriging)`, () => {
      const result = suggestSites(samples, model, { count: 3, boundary: [SQUARE], cell: 12.5, mode: 'variance' });
      expect(result.evaluationPoints).toBe(64);
      expect(result.candidatePoints).toBe(64);
      const brute = bruteForceGreedy(samples, model, cells.x, cells.y, cells.x, cells.y, 3, (now, after) => {
        let s = 0;
        for (let e = 0; e < after.length; e++) s += now.v[e] - after[e];
        return s / after.length;
      });
      expect(result.suggestions.map((s) => [s.x, s.y])).toEqual(brute.map((b) => [cells.x[b.index], cells.y[b.index]]));
      expectClose(result.suggestions.map((s) => s.benefit), brute.map((b) => b.benefit), { rel: 1e-9, abs: 1e-12 }, 'benefit');
      // The average variance falls by the summed benefits (same scale, same points).
      const before = averageVariance(samples, model, cells.x, cells.y).v;
      const after = averageVariance(withSites(samples, result.suggestions.map((s) => s.x), result.suggestions.map((s) => s.y)), model, cells.x, cells.y).v;
      expectClose(result.averageSdBefore!, before.reduce((a, v) => a + Math.sqrt(v), 0) / 64, { rel: 1e-9 }, 'average sd before');
      expectClose(result.averageSdAfter!, after.reduce((a, v) => a + Math.sqrt(v), 0) / 64, { rel: 1e-9 }, 'average sd after');
    });
  }

  it('suggestSites (decision) picks the sites and benefits of a brute-force greedy on the expected misclassified area', () => {
    const model = MODELS.ordinary;
    const T = 11;
    const result = suggestSites(samples, model, { count: 3, boundary: [SQUARE], cell: 12.5, threshold: T });
    expect(result.mode).toBe('decision');
    const cellArea = 12.5 * 12.5;
    const base = averageVariance(samples, model, cells.x, cells.y);
    const brute = bruteForceGreedy(samples, model, cells.x, cells.y, cells.x, cells.y, 3, (now, after) => {
      let s = 0;
      for (let e = 0; e < after.length; e++) {
        const sd0 = Math.sqrt(base.v[e]);
        s += expectedMisclassification(base.mean[e], sd0, Math.sqrt(now.v[e]), T) - expectedMisclassification(base.mean[e], sd0, Math.sqrt(after[e]), T);
      }
      return s * cellArea;
    });
    expect(result.suggestions.map((s) => [s.x, s.y])).toEqual(brute.map((b) => [cells.x[b.index], cells.y[b.index]]));
    // Points with a misclassification chance below 1e-12 are left out of the sums: at most 64·1e-12·area.
    expectClose(result.suggestions.map((s) => s.benefit), brute.map((b) => b.benefit), { rel: 1e-9, abs: 64 * 1e-12 * cellArea }, 'benefit');
    expectClose(result.areaDecided!, brute.reduce((a, b) => a + b.benefit, 0), { rel: 1e-9, abs: 1e-6 }, 'area decided');
    expect(result.misclassifiedAreaBefore! - result.misclassifiedAreaAfter!).toBeCloseTo(result.areaDecided!, 9);
    expect(result.areaDecided!).toBeGreaterThan(0);
    // Current mean, sd and P(exceed) at the sites are the predictor's.
    const p = createPredictor(samples, model).predict(result.suggestions.map((s) => s.x), result.suggestions.map((s) => s.y));
    result.suggestions.forEach((s, k) => {
      expectClose(s.mean!, p.mean[k], { rel: 1e-12 }, 'mean');
      expectClose(s.sd!, p.sd[k], { rel: 1e-12 }, 'sd');
      expect(s.pExceed).toBeGreaterThanOrEqual(0);
    });
    expect(result.caution).toBe(CAUTION);
  });

  it('suggestSites with screening reports each pick\'s exact benefit given the earlier picks', () => {
    const model = MODELS.ordinary;
    const result = suggestSites(samples, model, { count: 3, boundary: [SQUARE], cell: 5, maxScreenCandidates: 60, maxEvaluationPoints: 100 });
    expect(result.candidatePoints).toBe(400);
    expect(result.screenedCandidates).toBeLessThanOrEqual(60);
    expect(result.warnings.map((w) => w.code)).toContain('screened');
    const ev = cellCentres(gridForPolygons([SQUARE], 5));
    // The evaluation lattice: every 2nd cell in both directions.
    const ex = Float64Array.from(ev.x.filter((_, k) => ev.index[k] % 20 % 2 === 1 && Math.floor(ev.index[k] / 20) % 2 === 1));
    const ey = Float64Array.from(ev.y.filter((_, k) => ev.index[k] % 20 % 2 === 1 && Math.floor(ev.index[k] / 20) % 2 === 1));
    expect(result.evaluationPoints).toBe(ex.length);
    const xs: number[] = [], ys: number[] = [];
    for (const s of result.suggestions) {
      const before = averageVariance(withSites(samples, xs, ys), model, ex, ey).v;
      xs.push(s.x);
      ys.push(s.y);
      const after = averageVariance(withSites(samples, xs, ys), model, ex, ey).v;
      let drop = 0;
      for (let e = 0; e < ex.length; e++) drop += before[e] - after[e];
      expectClose(s.benefit, drop / ex.length, { rel: 1e-9, abs: 1e-12 }, `benefit of site ${s.rank}`);
    }
  });

  it('suggestSites on a log model works on the log scale and reports P(exceed) there', () => {
    const s = makeSamples(samples.x, samples.y, Array.from(samples.value, (v) => Math.exp(v / 5)));
    const model: CovarianceModel = { ...MODELS.ordinary, structures: [{ type: 'nugget', sill: 0.01 }, { type: 'exponential', sill: 0.05, scale: 35 }], transform: 'log' };
    const result = suggestSites(s, model, { count: 2, boundary: [SQUARE], cell: 12.5, threshold: 8 });
    expect(result.scale).toBe('log');
    const p = createPredictor(s, model).predict([result.suggestions[0].x], [result.suggestions[0].y]);
    // P(Z > T) = P(ln Z > ln T) = 1 − Φ((ln T − Ŷ)/σ) on the log scale.
    expectClose(result.suggestions[0].pExceed!, 1 - normalCdf((Math.log(8) - p.logMean![0]) / p.logSd![0]), { abs: 1e-12 }, 'pExceed');
    expect(() => suggestSites(s, model, { count: 2, boundary: [SQUARE], cell: 12.5, threshold: 0 })).toThrow(/greater than 0/);
  });

  it('suggestSites rejects bad options with a message naming the value', () => {
    expect(() => suggestSites(samples, MODELS.ordinary, { count: 0 })).toThrow(/count of new sites .* got 0/);
    expect(() => suggestSites(samples, MODELS.ordinary, { count: 2.5 })).toThrow(/whole number/);
    expect(() => suggestSites(samples, null, { count: 2, mode: 'variance' })).toThrow(/needs a fitted model/);
    expect(() => suggestSites(samples, MODELS.ordinary, { count: 2, mode: 'decision' })).toThrow(/action level/);
    expect(() => suggestSites(samples, MODELS.ordinary, { count: 2, minSpacing: -1 })).toThrow(/minimum spacing/);
    expect(() => suggestSites(samples, MODELS.ordinary, { count: 2, boundary: [SQUARE], cell: 10, exclusions: [SQUARE] })).toThrow(/No candidate site is left/);
  });

  it('suggestSites returns fewer sites with a warning when the spacing leaves no room', () => {
    const result = suggestSites(samples, MODELS.ordinary, { count: 10, boundary: [SQUARE], cell: 10, minSpacing: 30 });
    expect(result.suggestions.length).toBeLessThan(10);
    expect(result.suggestions.length).toBeGreaterThan(0);
    expect(result.warnings.map((w) => w.code)).toContain('too-few-sites');
  });
});

describe('suggestSites (coverage)', () => {
  it('suggestSites coverage has a lower mean squared distance than every one of 30 random designs of the same size', () => {
    const samples = fieldSamples(6, 11);
    const result = suggestSites(samples, null, { count: 8, boundary: [SQUARE], cell: 4, seed: 3 });
    expect(result.mode).toBe('coverage');
    expect(result.suggestions.length).toBe(8);
    const grid = cellCentres(gridForPolygons([SQUARE], 4));
    const pts = { x: grid.x, y: grid.y };
    const fixed = { x: samples.x, y: samples.y };
    const ours = coverageObjective(pts, fixed, result.suggestions.map((s) => s.x), result.suggestions.map((s) => s.y));
    expectClose(result.coverageDistanceAfter!, Math.sqrt(ours), { rel: 1e-12 }, 'rms distance after');
    expectClose(result.coverageDistanceBefore!, Math.sqrt(coverageObjective(pts, fixed, [], [])), { rel: 1e-12 }, 'rms distance before');
    const rnd = createRandom(77);
    for (let r = 0; r < 30; r++) {
      const xs: number[] = [], ys: number[] = [];
      for (let k = 0; k < 8; k++) {
        const c = Math.floor(rnd.uniform() * grid.x.length);
        xs.push(grid.x[c]);
        ys.push(grid.y[c]);
      }
      expect(ours).toBeLessThan(coverageObjective(pts, fixed, xs, ys));
    }
    // Benefits: dropping a site raises the objective by its benefit, and they come ranked.
    for (let k = 1; k < result.suggestions.length; k++) expect(result.suggestions[k].benefit).toBeLessThanOrEqual(result.suggestions[k - 1].benefit);
    const s0 = result.suggestions;
    const without = coverageObjective(pts, fixed, s0.slice(1).map((s) => s.x), s0.slice(1).map((s) => s.y));
    expectClose(s0[0].benefit, without - ours, { rel: 1e-9 }, 'benefit of site 1');
  });

  it('suggestSites coverage is reproducible with a seed', () => {
    const samples = fieldSamples(5, 2);
    const a = suggestSites(samples, null, { count: 4, boundary: [SQUARE], cell: 5, seed: 9 });
    const b = suggestSites(samples, null, { count: 4, boundary: [SQUARE], cell: 5, seed: 9 });
    expect(a.suggestions).toEqual(b.suggestions);
  });
});

describe('suggestSites constraints (property)', () => {
  const samples = fieldSamples(10, 21);
  const model = MODELS.ordinary;
  const rect = (x0: number, y0: number, w: number, h: number): Polygon => [[[x0, y0], [x0 + w, y0], [x0 + w, y0 + h], [x0, y0 + h], [x0, y0]]];

  it('suggestSites keeps every site inside the area, outside exclusions and spaced from samples and each other', () => {
    fc.assert(fc.property(
      fc.record({
        mode: fc.constantFrom<DesignOptions['mode']>('variance', 'decision', 'coverage'),
        // An L-shaped or holed area, an exclusion rectangle and a spacing.
        hole: fc.boolean(),
        ex: fc.tuple(fc.integer({ min: 0, max: 70 }), fc.integer({ min: 0, max: 70 }), fc.integer({ min: 5, max: 40 }), fc.integer({ min: 5, max: 40 })),
        spacing: fc.integer({ min: 0, max: 25 }),
        count: fc.integer({ min: 1, max: 5 }),
        seed: fc.integer({ min: 1, max: 1000 }),
        useFile: fc.boolean(),
      }),
      (c) => {
        const outer: Polygon = c.hole
          ? [SQUARE[0], [[30, 30], [30, 60], [60, 60], [60, 30], [30, 30]]]
          : [[[0, 0], [100, 0], [100, 50], [50, 50], [50, 100], [0, 100], [0, 0]]];
        const exclusion = rect(...c.ex);
        const options: DesignOptions = {
          mode: c.mode, count: c.count, boundary: [outer], exclusions: [exclusion], minSpacing: c.spacing, cell: 6, seed: c.seed,
          threshold: c.mode === 'decision' ? 10.5 : undefined,
        };
        if (c.useFile) {
          const rnd = createRandom(c.seed);
          const x: number[] = [], y: number[] = [];
          for (let k = 0; k < 120; k++) { x.push(rnd.uniform() * 110 - 5); y.push(rnd.uniform() * 110 - 5); }
          options.candidates = { x, y };
        }
        let result;
        try {
          result = suggestSites(samples, c.mode === 'coverage' ? null : model, options);
        } catch (e) {
          // Only "no room" may fail.
          expect(String(e)).toMatch(/No candidate site is left/);
          return;
        }
        const sites = result.suggestions;
        for (const s of sites) {
          expect(pointInPolygons(s.x, s.y, [outer]), `site ${s.x}, ${s.y} inside`).toBe(true);
          expect(pointInPolygons(s.x, s.y, [exclusion]), `site ${s.x}, ${s.y} not excluded`).toBe(false);
          for (let i = 0; i < samples.x.length; i++) expect(Math.hypot(s.x - samples.x[i], s.y - samples.y[i])).toBeGreaterThanOrEqual(c.spacing);
          for (const t of sites) if (t !== s) expect(Math.hypot(s.x - t.x, s.y - t.y)).toBeGreaterThanOrEqual(Math.max(c.spacing, 1e-9));
        }
        expect(sites.map((s) => s.rank)).toEqual(sites.map((_, k) => k + 1));
      },
    ), { numRuns: 25, seed: 4242 });
  });
});

describe('niceCell / defaultCell', () => {
  it('niceCell rounds to 1, 2, 2.5, 5 times a power of ten', () => {
    expect(niceCell(1.2)).toBe(1);
    expect(niceCell(2.1)).toBe(2);
    expect(niceCell(3)).toBe(2.5);
    expect(niceCell(4.4)).toBe(5);
    expect(niceCell(80)).toBe(100);
    expect(niceCell(0.031)).toBeCloseTo(0.025, 12);
  });
  it('defaultCell gives about 10,000 cells: 1 km² → 10 m', () => {
    expect(defaultCell(1e6)).toBe(10);
    expect(defaultCell(4e4)).toBe(2);
  });
});

describe('suggestSites with covariates in the mean', () => {
  // Invented covariates as functions of position: √(distance to an old building at (30, 70)) and a
  // two-level zone (x < 50 m is the reference level). Encoded: [√d, zone=b].
  const covariatesAt = (x: number, y: number): number[] => [Math.sqrt(Math.hypot(x - 30, y - 70)), x < 50 ? 0 : 1];
  const trend: CovariateTrend = { covariates: ['sqrt_dist', 'zone'], levels: { zone: ['a', 'b'] } };
  const model: CovarianceModel = {
    structures: [{ type: 'nugget', sill: 0.1 }, { type: 'exponential', sill: 1, scale: 40 }], trend, transform: 'none',
  };
  const base = fieldSamples(12, 21);
  const samples: Samples = { ...base, covariates: Float64Array.from(Array.from(base.x, (x, i) => covariatesAt(x, base.y[i])).flat()) };
  const grid = gridFromExtent(0, 0, 100, 80, 10);
  const centres = cellCentres(grid);
  const covariates = Float64Array.from(Array.from(centres.x, (x, i) => covariatesAt(x, centres.y[i])).flat());

  it('suggestSites picks the cell that most reduces the average universal-kriging variance with covariates (brute force over the posterior covariance)', () => {
    // Source: the posterior covariance written apart from the design's features
    // (conditional-simulation.ts posteriorCovariance, with each point's covariates); benefit
    // (1/m)·Σ_e k(e, c)²/(k(c, c) + τ²) over every cell, and the kriging mean and sd at the pick.
    const result = suggestSites(samples, model, { count: 1, mode: 'variance', grid, covariates });
    const sys = buildKrigingSystem(samples, model);
    const m = centres.x.length;
    const cov = (i: number) => covariates.subarray(2 * i, 2 * i + 2);
    const k = (a: number, b: number) => posteriorCovariance(sys, centres.x[a], centres.y[a], centres.x[b], centres.y[b], cov(a), cov(b));
    let best = -1, bestBenefit = -Infinity, sdSum = 0;
    for (let c = 0; c < m; c++) {
      let s = 0;
      for (let e = 0; e < m; e++) s += k(e, c) ** 2;
      const benefit = s / (k(c, c) + 0.1) / m;
      if (benefit > bestBenefit) { bestBenefit = benefit; best = c; }
      sdSum += Math.sqrt(k(c, c));
    }
    const site = result.suggestions[0];
    expect([site.x, site.y]).toEqual([centres.x[best], centres.y[best]]);
    expectClose(site.benefit, bestBenefit, { rel: 1e-9 }, 'benefit');
    expectClose(result.averageSdBefore!, sdSum / m, { rel: 1e-9 }, 'average sd');
    const p = createPredictor(samples, model).predict([site.x], [site.y], { covariates: cov(best) });
    expectClose(site.mean!, p.mean[0], { rel: 1e-12 }, 'mean');
    expectClose(site.sd!, p.sd[0], { rel: 1e-12 }, 'sd');
    // Without the covariate columns the posterior is another one: the check can tell them apart.
    const plain = suggestSites(makeSamples(base.x, base.y, base.value), { ...model, trend: 'constant' }, { count: 1, mode: 'variance', grid });
    expect(Math.abs(plain.averageSdBefore! - result.averageSdBefore!)).toBeGreaterThan(1e-3);
  });

  it('suggestSites with given candidates uses their own covariates; a covariate model without them is refused', () => {
    const cx = [15, 55, 85], cy = [25, 45, 65];
    const own = Float64Array.from(cx.flatMap((x, i) => covariatesAt(x, cy[i])));
    const result = suggestSites(samples, model, { count: 2, mode: 'variance', grid, covariates, candidates: { x: cx, y: cy, covariates: own } });
    for (const s of result.suggestions) {
      const i = cx.indexOf(s.x);
      const p = createPredictor(samples, model).predict([s.x], [s.y], { covariates: own.subarray(2 * i, 2 * i + 2) });
      expectClose(s.mean!, p.mean[0], { rel: 1e-12 }, 'mean');
    }
    expect(() => suggestSites(samples, model, { count: 1 })).toThrow(/covariates of its cells/);
    expect(() => suggestSites(samples, model, { count: 1, grid })).toThrow(/covariate values/);
    expect(() => suggestSites(samples, model, { count: 1, grid, covariates, candidates: { x: cx, y: cy } })).toThrow(/covariate values/);
  });
});
