import { describe, expect, it } from 'vitest';
import {
  chooseSimulationPath, krigedNodes, planSimulationPath, simulationExactCost, simulationLocalCost,
} from '../../../src/core/simulation/simulation-path.ts';
import { simulateConditional } from '../../../src/core/simulation/conditional-simulation.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { createLocalPredictor } from '../../../src/core/prediction/local-kriging.ts';
import { chooseCheckTargets } from '../../../src/core/prediction/local-accuracy.ts';
import { EXACT_SAMPLE_LIMIT } from '../../../src/core/prediction/path-choice.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { waveSamples } from '../../../bench/common.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import type { Grid } from '../../../src/core/geometry/grid.ts';

const model: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 150, nu: 1.5 }], trend: 'constant', transform: 'none',
};

describe('chooseSimulationPath', () => {
  it('chooseSimulationPath takes exact conditioning for a small problem and local for a large one', () => {
    const small = chooseSimulationPath({ samples: 150, nodes: 40_000, realisations: 100 });
    expect(small.path).toBe('exact');
    expect(small.automatic).toBe(true);
    expect(small.exactCost).toBeLessThan(small.localCost);
    const large = chooseSimulationPath({ samples: 5000, nodes: 40_000, realisations: 100 });
    expect(large.path).toBe('local');
    expect(large.reason).toMatch(/^local neighbourhoods are cheaper here \(about [\d.]+ billion operations local, [\d.]+ exact\)$/);
  });

  it('chooseSimulationPath switches exactly where the estimated costs cross (40,000 nodes, 100 realisations, 1 and 2 threads)', () => {
    for (const threads of [1, 2]) {
      let boundary = 0;
      for (let n = 65; n <= EXACT_SAMPLE_LIMIT; n++) {
        if (chooseSimulationPath({ samples: n, nodes: 40_000, realisations: 100, threads }).path === 'local') { boundary = n; break; }
      }
      expect(boundary).toBeGreaterThan(65);
      const below = boundary - 1;
      expect(chooseSimulationPath({ samples: below, nodes: 40_000, realisations: 100, threads }).path).toBe('exact');
      expect(simulationExactCost(below, 40_000, 100, threads)).toBeLessThanOrEqual(simulationLocalCost(below, 40_000, 100, 64, threads));
      expect(simulationLocalCost(boundary, 40_000, 100, 64, threads)).toBeLessThan(simulationExactCost(boundary, 40_000, 100, threads));
    }
  });

  it('chooseSimulationPath: exact for a tolerance of 0 or a neighbourhood holding every sample, local above the sample limit, as asked otherwise', () => {
    expect(chooseSimulationPath({ samples: 5000, nodes: 40_000, realisations: 100, tolerance: { mean: 0, sd: 2 } }).path).toBe('exact');
    expect(chooseSimulationPath({ samples: 60, nodes: 40_000, realisations: 100 }).reason).toBe('a neighbourhood of 64 would hold all 60 samples');
    const many = chooseSimulationPath({ samples: EXACT_SAMPLE_LIMIT + 1, nodes: 100, realisations: 1 });
    expect(many.path).toBe('local');
    expect(many.exactCost).toBe(Infinity);
    expect(chooseSimulationPath({ samples: 100, nodes: 100, realisations: 1, force: 'local' })).toMatchObject({ path: 'local', automatic: false, reason: 'as asked (--local)' });
    expect(() => chooseSimulationPath({ samples: EXACT_SAMPLE_LIMIT + 1, nodes: 100, realisations: 1, force: 'exact' })).toThrow(GapwiseError);
  });

  it('chooseSimulationPath: a covariate trend adds the dense system to the local path', () => {
    expect(simulationLocalCost(5000, 40_000, 100, 64, 1, true) - simulationLocalCost(5000, 40_000, 100, 64, 1, false)).toBeCloseTo(5000 ** 3 / 6 + 20 * 5000 ** 2 / 2, -3);
  });

  it('krigedNodes counts k² nodes per active cell', () => {
    const mask = new Uint8Array(12).fill(1);
    mask[0] = 0;
    expect(krigedNodes({ x0: 0, y0: 0, cell: 1, nx: 4, ny: 3, mask }, 2)).toBe(44);
  });
});

const samples = waveSamples(300, { side: 600, amplitude: 5, lengthX: 200, lengthY: 260, seed: 7 });
const grid: Grid = { x0: 500000, y0: 6000600, cell: 20, nx: 30, ny: 30 };

describe('planSimulationPath', () => {
  it('planSimulationPath reports the largest difference that recomputing local and exact kriging at the same seeded nodes gives', () => {
    const plan = planSimulationPath(samples, model, grid, { realisations: 10, force: 'local', neighbours: 12 });
    expect(plan.choice.path).toBe('local');
    expect(plan.neighbours).toBe(12);
    const a = plan.accuracy!;
    expect(a.checked).toBe(200);
    expect(a.targets).toBe(900);
    // Independently: the same seeded cells, local kriging with 12 neighbours (mean re-estimated) against exact kriging.
    const idx = chooseCheckTargets(900, 200, 1);
    const x = Float64Array.from(idx, (c) => grid.x0 + ((c % 30) + 0.5) * 20);
    const y = Float64Array.from(idx, (c) => grid.y0 - (Math.floor(c / 30) + 0.5) * 20);
    const exact = createPredictor(samples, model).predict(x, y);
    const local = createLocalPredictor(samples, model, { neighbours: 12 }).predict(x, y);
    let meanMax = 0, sdMax = 0;
    for (let t = 0; t < x.length; t++) {
      meanMax = Math.max(meanMax, Math.abs(local.mean[t] - exact.mean[t]));
      sdMax = Math.max(sdMax, Math.abs(local.sd[t] - exact.sd[t]));
    }
    // The prior sd is 1 (sill 1 without the nugget): figures are 100 × the differences.
    expect(a.mean.max).toBeCloseTo(100 * meanMax, 10);
    expect(a.sd.max).toBeCloseTo(100 * sdMax, 10);
    expect(a.within).toBe(false);
    expect(plan.warnings.map((w) => w.code)).toEqual(['tolerance-missed']);
  });

  it('planSimulationPath grows a neighbourhood that misses the tolerance until it meets it', () => {
    const plan = planSimulationPath(samples, model, grid, { realisations: 10, force: 'local' });
    expect(plan.choice.path).toBe('local');
    expect(plan.accuracy!.within).toBe(true);
    expect(plan.neighbours).toBeGreaterThan(64);
    expect(plan.choice.reason).toMatch(/grown to \d+ neighbours to meet the tolerance/);
  });
});

describe('simulateConditional local against exact', () => {
  it('simulateConditional on the local path has the local kriging mean and sd per cell (4 standard errors, 2,000 realisations)', () => {
    // Source: the argument of simulation-path.ts (a local run's realisations have the local kriging
    // mean and variance of the same neighbourhood), checked by Monte Carlo; standard errors sd/√N and sd/√(2N).
    const few = waveSamples(60, { side: 200, amplitude: 2, lengthX: 80, lengthY: 100, seed: 2 });
    const m: CovarianceModel = { ...model, structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 40, nu: 1.5 }] };
    const g: Grid = { x0: 500000, y0: 6000200, cell: 20, nx: 10, ny: 10 };
    const N = 2000;
    const sim = simulateConditional(few, m, g, { count: N, seed: 3, path: 'local', neighbours: 10, keepRealisations: false });
    expect(sim.neighbours).toBe(10);
    const x = Float64Array.from({ length: 100 }, (_, c) => g.x0 + ((c % 10) + 0.5) * 20);
    const y = Float64Array.from({ length: 100 }, (_, c) => g.y0 - (Math.floor(c / 10) + 0.5) * 20);
    const local = createLocalPredictor(few, m, { neighbours: 10 }).predict(x, y);
    for (let c = 0; c < 100; c++) {
      expect(Math.abs(sim.mean[c] - local.mean[c]), `mean cell ${c}`).toBeLessThan(4 * local.sd[c] / Math.sqrt(N));
      expect(Math.abs(sim.sd[c] - local.sd[c]), `sd cell ${c}`).toBeLessThan(4 * local.sd[c] / Math.sqrt(2 * N));
    }
  });

  it('simulateConditional on the path planSimulationPath grew agrees with exact kriging within the tolerance plus 4 standard errors (2,000 realisations)', () => {
    // Tolerance: the default 1 % (mean) and 2 % (sd) of the prior sd that the plan met at its checked
    // nodes, plus the Monte Carlo error of 2,000 realisations (4·sd/√N for the mean, 4·sd/√(2N) for the sd).
    const g: Grid = { x0: 500000, y0: 6000600, cell: 60, nx: 10, ny: 10 };
    const plan = planSimulationPath(samples, model, g, { realisations: 2000, force: 'local' });
    expect(plan.accuracy!.within).toBe(true);
    const N = 2000;
    const sim = simulateConditional(samples, model, g, { count: N, seed: 8, path: 'local', neighbours: plan.neighbours, keepRealisations: false });
    const x = Float64Array.from({ length: 100 }, (_, c) => g.x0 + ((c % 10) + 0.5) * 60);
    const y = Float64Array.from({ length: 100 }, (_, c) => g.y0 - (Math.floor(c / 10) + 0.5) * 60);
    const exact = createPredictor(samples, model).predict(x, y);
    for (let c = 0; c < 100; c++) {
      expect(Math.abs(sim.mean[c] - exact.mean[c]), `mean cell ${c}`).toBeLessThan(0.01 + 4 * exact.sd[c] / Math.sqrt(N));
      expect(Math.abs(sim.sd[c] - exact.sd[c]), `sd cell ${c}`).toBeLessThan(0.02 + 4 * exact.sd[c] / Math.sqrt(2 * N));
    }
  });
});
