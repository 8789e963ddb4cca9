import { describe, expect, it } from 'vitest';
import { mergeSimulationParts, posteriorCovariance, simulateConditional, simulationPart } from '../../../src/core/simulation/conditional-simulation.ts';
import { buildKrigingSystem, createPredictor } from '../../../src/core/prediction/kriging.ts';
import { createBlockPredictor } from '../../../src/core/prediction/block-kriging.ts';
import { createLocalPredictor } from '../../../src/core/prediction/local-kriging.ts';
import { computeSurface } from '../../../src/core/prediction/surface.ts';
import { cellCentres, type Grid } from '../../../src/core/geometry/grid.ts';
import { makeSamples, type Samples } from '../../../src/core/shared/samples.ts';
import type { CovarianceModel, CovariateTrend } from '../../../src/core/covariance/model.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { expectClose } from '../../helpers/tolerance.ts';

const matern: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.05 }, { type: 'matern', sill: 1, scale: 30, nu: 1.5 }], trend: 'constant', transform: 'none',
};
const grid: Grid = { x0: 0, y0: 0, cell: 10, nx: 8, ny: 8 };
// Samples between lattice nodes (cell centres sit at 5, 15, ... m), one outside the grid.
const offNode: Samples = makeSamples([13, 47, 71, 22, 60, 35, 96], [-12, -25, -66, -70, -44, -50, -30], [1, 2, 0.5, 1.5, 2.5, 1.2, 1.8]);

/** Empirical covariance of cells a and b across realisations. */
function empiricalCovariance(r: Float32Array[], a: number, b: number): number {
  let ma = 0, mb = 0;
  for (const f of r) { ma += f[a]; mb += f[b]; }
  ma /= r.length; mb /= r.length;
  let s = 0;
  for (const f of r) s += (f[a] - ma) * (f[b] - mb);
  return s / (r.length - 1);
}

describe('simulateConditional', () => {
  it('simulateConditional: per-cell means, variances and cell-pair covariances match the kriging posterior (4 standard errors)', () => {
    // Source: the kriging mean and posterior covariance (kriging.ts, posteriorCovariance; kriging.ts is
    // itself checked against numpy); Monte Carlo over 3,000 seeded realisations, standard errors
    // sd/√N for means, sd²√(2/N) for variances and √((s_a²s_b² + c²)/N) for covariances (Gaussian).
    for (const trend of ['constant', 'linear', { known: 1.4 }] as const) {
      const model: CovarianceModel = { ...matern, trend };
      const N = 3000;
      const sim = simulateConditional(offNode, model, grid, { count: N, seed: 3 });
      expect(sim.neighbours).toBe('all');
      expect(sim.placementError).toBeLessThan(0.01);
      const c = cellCentres(grid);
      const p = createPredictor(offNode, model).predict(c.x, c.y);
      for (let k = 0; k < 64; k++) {
        expect(Math.abs(sim.mean[k] - p.mean[k]), `${JSON.stringify(trend)} mean cell ${k}`).toBeLessThan(4 * p.sd[k] / Math.sqrt(N));
        expect(Math.abs(sim.sd[k] ** 2 - p.sd[k] ** 2), `${JSON.stringify(trend)} variance cell ${k}`).toBeLessThan(4 * p.sd[k] ** 2 * Math.sqrt(2 / N));
      }
      const sys = buildKrigingSystem(offNode, model);
      for (const [a, b] of [[0, 1], [9, 27], [36, 63], [5, 40], [18, 19]]) {
        const want = posteriorCovariance(sys, c.x[a], c.y[a], c.x[b], c.y[b]);
        const se = Math.sqrt((p.sd[a] ** 2 * p.sd[b] ** 2 + want * want) / N);
        const got = empiricalCovariance(sim.realisations!, a, b);
        expect(Math.abs(got - want), `${JSON.stringify(trend)} cov ${a},${b}: ${got} vs ${want}`).toBeLessThan(4 * se);
      }
    }
  });

  it('posteriorCovariance on the diagonal is the kriging variance', () => {
    const sys = buildKrigingSystem(offNode, { ...matern, trend: 'linear' });
    const p = createPredictor(offNode, { ...matern, trend: 'linear' }).predict([33], [-41]);
    expectClose(posteriorCovariance(sys, 33, -41, 33, -41), p.sd[0] ** 2, { rel: 1e-12 });
  });

  it('simulateConditional honours the data exactly at samples on cell centres when the nugget is zero', () => {
    const model: CovarianceModel = { structures: [{ type: 'exponential', sill: 1, scale: 25 }], trend: 'constant', transform: 'none' };
    const s = makeSamples([15, 45, 75, 25], [-5, -35, -75, -55], [3, -1, 2, 0.5]);
    const sim = simulateConditional(s, model, grid, { count: 20, seed: 9 });
    const cells = [0 * 8 + 1, 3 * 8 + 4, 7 * 8 + 7, 5 * 8 + 2];
    for (const r of sim.realisations!) cells.forEach((c, i) => expectClose(r[c], s.value[i], { abs: 1e-6 }, `cell ${c}`));
    expect(sim.placementError).toBe(0);
    // Elsewhere the realisations differ from each other.
    expect(sim.sd[2 * 8 + 6]).toBeGreaterThan(0.1);
  });

  it('simulateConditional P(exceed) agrees with the closed form for points within Monte Carlo error', () => {
    // Source: P = 1 − Φ((T − mean)/sd) from computeSurface (surface.ts); binomial standard error √(p(1 − p)/N).
    const N = 3000;
    const sim = simulateConditional(offNode, matern, grid, { count: N, seed: 21, threshold: 1.6 });
    const closed = computeSurface(offNode, matern, grid, { threshold: 1.6, precision: 'float64' });
    for (let k = 0; k < 64; k++) {
      const p = closed.pExceed![k];
      expect(Math.abs(sim.pExceed![k] - p), `cell ${k}`).toBeLessThan(4 * Math.sqrt(p * (1 - p) / N) + 2 / N);
    }
    // Expected area = Σ P·cell²: the mean of the simulated areas agrees.
    let expected = 0;
    for (let k = 0; k < 64; k++) expected += closed.pExceed![k] * 100;
    expect(Math.abs(sim.area!.area.mean - expected)).toBeLessThan(0.03 * expected);
    expect(sim.area!.area.p05).toBeLessThanOrEqual(sim.area!.area.median);
    expect(sim.area!.area.median).toBeLessThanOrEqual(sim.area!.area.p95);
  });

  it('simulateConditional with a log model back-transforms cell by cell: means are lognormal means, P(exceed) on the log scale', () => {
    const model: CovarianceModel = { ...matern, transform: 'log' };
    const s = makeSamples(offNode.x, offNode.y, Array.from(offNode.value, (v) => Math.exp(v)));
    const N = 3000;
    const sim = simulateConditional(s, model, grid, { count: N, seed: 5, threshold: 4 });
    const closed = computeSurface(s, model, grid, { threshold: 4, precision: 'float64' });
    for (let k = 0; k < 64; k += 3) {
      // Lognormal sd as the Monte Carlo scale of the mean.
      expect(Math.abs(sim.mean[k] - closed.mean[k]), `mean ${k}`).toBeLessThan(4 * closed.sd[k] / Math.sqrt(N) * 1.5);
      const p = closed.pExceed![k];
      expect(Math.abs(sim.pExceed![k] - p), `pExceed ${k}`).toBeLessThan(4 * Math.sqrt(p * (1 - p) / N) + 2 / N);
    }
    for (const r of sim.realisations!.slice(0, 5)) for (let k = 0; k < 64; k++) expect(r[k]).toBeGreaterThan(0);
  });

  it('simulateConditional with block support matches block kriging of the 4 × 4 cell average (4 standard errors)', () => {
    // Source: block kriging (block-kriging.ts, checked against numpy), same 4 × 4 discretisation.
    // A shorter range keeps the embedding of the 2.5 m lattice small (no padding).
    const model: CovarianceModel = { ...matern, structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 1, scale: 12 }] };
    const N = 1500;
    const sim = simulateConditional(offNode, model, grid, { count: N, seed: 8, support: 'block', blockPoints: 4 });
    expect(sim.points).toBe(4);
    expect(sim.lattice.spacing).toBe(2.5);
    const c = cellCentres(grid);
    const b = createBlockPredictor(offNode, model).predict(c.x, c.y, { width: 10, points: 4 });
    for (let k = 0; k < 64; k += 2) {
      expect(Math.abs(sim.mean[k] - b.mean[k]), `mean ${k}`).toBeLessThan(4 * b.sd[k] / Math.sqrt(N));
      expect(Math.abs(sim.sd[k] ** 2 - b.sd[k] ** 2), `variance ${k}`).toBeLessThan(4 * b.sd[k] ** 2 * Math.sqrt(2 / N));
    }
  });

  it('simulateConditional with local neighbourhoods: all samples reproduce the dense result; fewer still honour data', () => {
    const dense = simulateConditional(offNode, matern, grid, { count: 4, seed: 2 });
    const local = simulateConditional(offNode, matern, grid, { count: 4, seed: 2, neighbours: 7 });
    for (let r = 0; r < 4; r++) expectClose(local.realisations![r], dense.realisations![r], { abs: 1e-5 }, `realisation ${r}`);
    const model: CovarianceModel = { structures: [{ type: 'exponential', sill: 1, scale: 25 }], trend: 'constant', transform: 'none' };
    const s = makeSamples([15, 45, 75, 25, 5, 65], [-5, -35, -75, -55, -75, -15], [3, -1, 2, 0.5, 1, 1]);
    const few = simulateConditional(s, model, grid, { count: 3, seed: 1, neighbours: 3 });
    expect(few.neighbours).toBe(3);
    for (const r of few.realisations!) expectClose(r[3 * 8 + 4], -1, { abs: 1e-6 });
  });

  it('simulateConditional is deterministic for a seed, different between seeds, and masks cells', () => {
    const mask = new Uint8Array(64).fill(1);
    mask[0] = 0;
    const a = simulateConditional(offNode, matern, { ...grid, mask }, { count: 3, seed: 4, threshold: 1, depth: 0.3 });
    const b = simulateConditional(offNode, matern, { ...grid, mask }, { count: 3, seed: 4 });
    const c = simulateConditional(offNode, matern, { ...grid, mask }, { count: 3, seed: 5 });
    expect(Array.from(a.realisations![2])).toEqual(Array.from(b.realisations![2]));
    expect(Array.from(a.realisations![2])).not.toEqual(Array.from(c.realisations![2]));
    expect(Number.isNaN(a.realisations![0][0])).toBe(true);
    expect(a.area!.activeCells).toBe(63);
    expectClose(a.area!.volume!.median, a.area!.area.median * 0.3, { rel: 1e-12 });
  });

  it('simulateConditional rejects bad options with a message naming the value', () => {
    expect(() => simulateConditional(offNode, matern, grid, { count: 0 })).toThrow(/whole number from 1/);
    expect(() => simulateConditional(offNode, matern, grid, { count: 2, depth: 1 })).toThrow(/threshold/);
    expect(() => simulateConditional(offNode, { ...matern, transform: 'log' }, grid, { count: 2, threshold: -1 })).toThrow(GapwiseError);
    expect(() => simulateConditional(offNode, matern, grid, { count: 2, support: 'area' as 'point' })).toThrow(/support/);
  });
});

describe('simulateConditional progress and cancelling', () => {
  // A 64 × 64 grid: 4,096 cells in one batch of 20 realisations, kriged in chunks of 4,096 nodes;
  // block support (4 × 4 points per cell, log model) makes 16 chunks within the one batch.
  const big: Grid = { x0: 0, y0: 0, cell: 2, nx: 64, ny: 64 };
  const pts = makeSamples([13, 47, 71, 22, 60, 35, 96, 110], [-12, -25, -66, -70, -44, -50, -30, -100], [1, 2, 0.5, 1.5, 2.5, 1.2, 1.8, 0.9]);
  const logModel: CovarianceModel = { ...matern, transform: 'log' };

  it('simulateConditional reports progress within a batch, never backwards, ending at the count', () => {
    const seen: number[] = [];
    simulateConditional(pts, logModel, big, { count: 20, seed: 2, support: 'block', keepRealisations: false, onProgress: (done, total) => { expect(total).toBe(20); seen.push(done); } });
    expect(seen.length).toBeGreaterThan(5);
    for (let k = 1; k < seen.length; k++) expect(seen[k]).toBeGreaterThan(seen[k - 1]);
    expect(seen[seen.length - 1]).toBe(20);
    expect(seen[0]).toBeLessThan(20);
  });

  it('simulateConditional stops with a cancelled error inside a batch', () => {
    let calls = 0;
    expect(() => simulateConditional(pts, logModel, big, {
      count: 20, seed: 2, support: 'block', keepRealisations: false, isCancelled: () => ++calls > 3,
    })).toThrow(GapwiseError);
    expect(calls).toBe(4);
  });
});

describe('mergeSimulationParts', () => {
  const logModel: CovarianceModel = { ...matern, transform: 'log' };
  const pts = makeSamples([13, 47, 71, 22, 60, 35, 96], [-12, -25, -66, -70, -44, -50, -30], [1, 2, 0.5, 1.5, 2.5, 1.2, 1.8]);
  const opts = { seed: 11, threshold: 1.6, depth: 0.5, support: 'block' as const, blockPoints: 2 };

  it('mergeSimulationParts of parts computed apart equals one run: the same realisations, counts and area, the same summaries', () => {
    const whole = simulateConditional(pts, logModel, grid, { ...opts, count: 10 });
    // Parts that start on an odd realisation split an FFT pair: each part draws the pair again.
    const parts = [[0, 4], [4, 3], [7, 3]].map(([first, count]) => simulateConditional(pts, logModel, grid, { ...opts, count, first, keepTotals: true }));
    const merged = mergeSimulationParts([parts[2], parts[0], parts[1]]);
    expect(merged.count).toBe(10);
    expect(merged.realisations!.length).toBe(10);
    for (let r = 0; r < 10; r++) expect(Array.from(merged.realisations![r])).toEqual(Array.from(whole.realisations![r]));
    expect(merged.area).toEqual(whole.area);
    expect(Array.from(merged.pExceed!)).toEqual(Array.from(whole.pExceed!));
    expectClose(merged.mean, whole.mean, { rel: 1e-12 }, 'per-cell mean');
    expectClose(merged.sd, whole.sd, { rel: 1e-9, abs: 1e-12 }, 'per-cell sd');
  });

  it('mergeSimulationParts refuses parts with a gap, without totals, or from other settings', () => {
    const a = simulateConditional(pts, matern, grid, { count: 2, first: 0, keepTotals: true, threshold: 1.5 });
    const c = simulateConditional(pts, matern, grid, { count: 2, first: 3, keepTotals: true, threshold: 1.5 });
    expect(() => mergeSimulationParts([a, c])).toThrow(/starts at realisation 3, expected 2/);
    expect(() => mergeSimulationParts([simulateConditional(pts, matern, grid, { count: 2 })])).toThrow(/keepTotals/);
    const other = simulateConditional(pts, matern, grid, { count: 2, first: 2, keepTotals: true, threshold: 1.8 });
    expect(() => mergeSimulationParts([a, other])).toThrow(/same grid, support and threshold/);
    expect(() => mergeSimulationParts([])).toThrow(/none/);
    expect(() => simulateConditional(pts, matern, grid, { count: 2, first: -1 })).toThrow(/first realisation/);
  });
});

describe('simulationPart', () => {
  it('simulationPart covers the run in consecutive parts that start on even offsets', () => {
    for (const [count, parts] of [[9, 3], [4, 2], [101, 4], [10, 5]]) {
      let at = 7;
      for (let i = 0; i < parts; i++) {
        const p = simulationPart(7, count, i, parts);
        expect(p.first).toBe(at);
        expect((p.first - 7) % 2).toBe(0);
        expect(p.count).toBeGreaterThanOrEqual(1);
        at += p.count;
      }
      expect(at).toBe(7 + count);
    }
  });
});

describe('simulateConditional with covariates in the mean', () => {
  // Invented covariates as functions of position: √(distance to an old building at (20, −30)) and a
  // two-level zone (x < 40 m is the reference level). Encoded: [√d, zone=b].
  const covariatesAt = (x: number, y: number): [number, number] => [Math.sqrt(Math.hypot(x - 20, y + 30)), x < 40 ? 0 : 1];
  const trend: CovariateTrend = { covariates: ['sqrt_dist', 'zone'], levels: { zone: ['a', 'b'] } };
  const model: CovarianceModel = { ...matern, trend };
  const withCovariates = (s: Samples): Samples => ({ ...s, covariates: Float64Array.from(Array.from(s.x, (x, i) => covariatesAt(x, s.y[i])).flat()) });
  const samples = withCovariates(makeSamples(
    [13, 47, 71, 22, 60, 35, 96, 8, 55, 77], [-12, -25, -66, -70, -44, -50, -30, -40, -8, -12],
    [2.1, 3.6, 4.4, 3.2, 4.9, 2.8, 5.0, 2.0, 3.9, 4.1]));
  /** Covariates at every lattice node of every cell: k × k nodes per cell, row by row from the north-west. */
  const nodeCovariates = (g: Grid, k: number): Float64Array => {
    const out: number[] = [];
    for (let j = 0; j < g.ny; j++) for (let i = 0; i < g.nx; i++) for (let b = 0; b < k; b++) for (let a = 0; a < k; a++) {
      out.push(...covariatesAt(g.x0 + (i + (a + 0.5) / k) * g.cell, g.y0 - (j + (b + 0.5) / k) * g.cell));
    }
    return Float64Array.from(out);
  };

  it('simulateConditional: the mean and variance of 3,000 realisations are the universal-kriging mean and variance with covariates (4 standard errors)', () => {
    // Source: kriging with covariates (kriging.ts, checked against numpy in make_covariates.py);
    // Monte Carlo standard errors sd/√N for means and sd²√(2/N) for variances (Gaussian).
    const N = 3000;
    const sim = simulateConditional(samples, model, grid, { count: N, seed: 5, covariates: nodeCovariates(grid, 1) });
    const c = cellCentres(grid);
    const p = createPredictor(samples, model).predict(c.x, c.y, { covariates: nodeCovariates(grid, 1) });
    for (let k = 0; k < 64; k++) {
      expect(Math.abs(sim.mean[k] - p.mean[k]), `mean cell ${k}`).toBeLessThan(4 * p.sd[k] / Math.sqrt(N));
      expect(Math.abs(sim.sd[k] ** 2 - p.sd[k] ** 2), `variance cell ${k}`).toBeLessThan(4 * p.sd[k] ** 2 * Math.sqrt(2 / N));
    }
    const sys = buildKrigingSystem(samples, model);
    const cov = nodeCovariates(grid, 1);
    for (const [a, b] of [[0, 1], [9, 27], [36, 63]]) {
      const want = posteriorCovariance(sys, c.x[a], c.y[a], c.x[b], c.y[b], cov.subarray(2 * a, 2 * a + 2), cov.subarray(2 * b, 2 * b + 2));
      const se = Math.sqrt((p.sd[a] ** 2 * p.sd[b] ** 2 + want * want) / N);
      expect(Math.abs(empiricalCovariance(sim.realisations!, a, b) - want), `cov ${a},${b}`).toBeLessThan(4 * se);
    }
  });

  it('simulateConditional with block support and covariates matches block kriging with covariates averaged over the block (4 standard errors)', () => {
    // Source: block kriging with covariates (block-kriging.ts, checked against numpy in make_block_covariates.py).
    const short: CovarianceModel = { ...model, structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 1, scale: 12 }] };
    const N = 1500;
    const cov = nodeCovariates(grid, 4);
    const sim = simulateConditional(samples, short, grid, { count: N, seed: 9, support: 'block', blockPoints: 4, covariates: cov });
    const c = cellCentres(grid);
    const b = createBlockPredictor(samples, short).predict(c.x, c.y, { width: 10, points: 4 }, { covariates: cov });
    for (let k = 0; k < 64; k += 2) {
      expect(Math.abs(sim.mean[k] - b.mean[k]), `mean ${k}`).toBeLessThan(4 * b.sd[k] / Math.sqrt(N));
      expect(Math.abs(sim.sd[k] ** 2 - b.sd[k] ** 2), `variance ${k}`).toBeLessThan(4 * b.sd[k] ** 2 * Math.sqrt(2 / N));
    }
  });

  it('simulateConditional with local neighbourhoods and covariates: the realisations\' mean is the local kriging mean around the global GLS trend (4 standard errors)', () => {
    // Source: createLocalPredictor (local-kriging.ts: the m nearest samples krige the residuals from
    // the GLS trend of all samples); Monte Carlo standard error from the realisations' own sd.
    const N = 3000;
    const cov = nodeCovariates(grid, 1);
    const sim = simulateConditional(samples, model, grid, { count: N, seed: 4, neighbours: 4, covariates: cov });
    expect(sim.neighbours).toBe(4);
    const c = cellCentres(grid);
    const p = createLocalPredictor(samples, model, { neighbours: 4 }).predict(c.x, c.y, { covariates: cov });
    const dense = createPredictor(samples, model).predict(c.x, c.y, { covariates: cov });
    let apart = 0;
    for (let k = 0; k < 64; k++) {
      const tolerance = 4 * sim.sd[k] / Math.sqrt(N);
      expect(Math.abs(sim.mean[k] - p.mean[k]), `mean cell ${k}`).toBeLessThan(tolerance);
      apart = Math.max(apart, Math.abs(dense.mean[k] - p.mean[k]) / tolerance);
    }
    // The check can tell the local mean from the dense one: they differ beyond the tolerance somewhere.
    expect(apart).toBeGreaterThan(1.5);
  });

  it('simulateConditional refuses a covariate model without the nodes\' covariates', () => {
    expect(() => simulateConditional(samples, model, grid, { count: 2 })).toThrow(/covariate values/);
    expect(() => simulateConditional(samples, model, grid, { count: 2, support: 'block', blockPoints: 2, covariates: nodeCovariates(grid, 1) })).toThrow(/covariate values/);
  });
});
