// Progress callbacks of the fits and the leave-one-out: counts that grow and end at the total, and
// results bit for bit the same as without a callback.
import { describe, expect, it } from 'vitest';
import { fitCandidates, fitModel, CANDIDATES } from '../../../src/core/fitting/fit.ts';
import { leaveOneOut, LEAVE_ONE_OUT_STAGES } from '../../../src/core/validation/cross-validation.ts';
import { vecchiaFit } from '../../../src/core/fitting/vecchia.ts';
import { simulateSamples } from '../../../src/core/simulation/simulate.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';

const truth: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 150, nu: 1.5 }],
  trend: 'constant',
  transform: 'none',
};
const square = { xmin: 0, ymin: 0, xmax: 1000, ymax: 1000 };

/** A callback that records its calls. */
function recorder(): { calls: Array<[number, number]>; onProgress: (done: number, total: number) => void } {
  const calls: Array<[number, number]> = [];
  return { calls, onProgress: (done, total) => { calls.push([done, total]); } };
}

/** done grows strictly, done/total never falls, total never grows, and the last call has done = total. */
function expectGrowingToTotal(calls: Array<[number, number]>): void {
  expect(calls.length).toBeGreaterThan(1);
  for (let i = 1; i < calls.length; i++) {
    expect(calls[i][0]).toBeGreaterThan(calls[i - 1][0]);
    expect(calls[i][0] / calls[i][1]).toBeGreaterThanOrEqual(calls[i - 1][0] / calls[i - 1][1]);
    expect(calls[i][0]).toBeLessThanOrEqual(calls[i][1]);
  }
  const [done, total] = calls[calls.length - 1];
  expect(done).toBe(total);
}

describe('fit progress', () => {
  const small = simulateSamples(truth, { count: 80, extent: square, seed: 21 });

  it('fitModel (REML) reports each likelihood evaluation against a shrinking budget, ending at done = total', () => {
    const { calls, onProgress } = recorder();
    const withProgress = fitModel(small, { family: 'matern', nu: 1.5 }, onProgress);
    const without = fitModel(small, { family: 'matern', nu: 1.5 });
    expect(withProgress).toStrictEqual(without);
    expectGrowingToTotal(calls);
    // One call per evaluation: the counted ones and the final evaluation at the optimum.
    expect(calls.map((c) => c[0])).toEqual(calls.map((_, i) => i + 1));
    expect(calls.length).toBe(Number(without.fit!.evaluations) + 1);
    // The totals never grow: each is the work done plus the budget still ahead.
    for (let i = 1; i < calls.length; i++) expect(calls[i][1]).toBeLessThanOrEqual(calls[i - 1][1]);
  });

  it('fitModel with a screening subsample (300 samples) counts the screening evaluations too, bit for bit the same model', () => {
    const field = simulateSamples(truth, { count: 300, extent: square, seed: 5 });
    const { calls, onProgress } = recorder();
    const withProgress = fitModel(field, { family: 'exponential', method: 'ml' }, onProgress);
    const without = fitModel(field, { family: 'exponential', method: 'ml' });
    expect(withProgress).toStrictEqual(without);
    expectGrowingToTotal(calls);
    expect(calls.length).toBe(Number(without.fit!.evaluations) + Number(without.fit!.screenEvaluations) + 1);
  });

  it('fitModel (WLS) reports its three stages', () => {
    const { calls, onProgress } = recorder();
    const withProgress = fitModel(small, { family: 'spherical', method: 'wls' }, onProgress);
    expect(withProgress).toStrictEqual(fitModel(small, { family: 'spherical', method: 'wls' }));
    expect(calls).toEqual([[1, 3], [2, 3], [3, 3]]);
  });

  it('fitCandidates counts candidates, fractional while one is fitted, ending at the number of candidates', () => {
    const field = simulateSamples(truth, { count: 40, extent: square, seed: 3 });
    const { calls, onProgress } = recorder();
    const withProgress = fitCandidates(field, {}, onProgress);
    expect(withProgress).toStrictEqual(fitCandidates(field));
    expectGrowingToTotal(calls);
    expect(calls.every((c) => c[1] === CANDIDATES.length)).toBe(true);
    // Every whole candidate is passed on the way.
    for (let k = 1; k <= CANDIDATES.length; k++) expect(calls.some((c) => c[0] === k)).toBe(true);
  });

  it('vecchiaFit calls onPass once per likelihood pass over all samples, with the same model', () => {
    const field = simulateSamples(truth, { count: 200, extent: square, seed: 9 });
    let passes = 0;
    const withPasses = vecchiaFit(field, { family: 'exponential', neighbours: 10 }, { onPass: () => { passes++; } });
    expect(withPasses).toStrictEqual(vecchiaFit(field, { family: 'exponential', neighbours: 10 }));
    // 200 samples are not subsampled, so every evaluation of the search is a pass over all samples.
    expect(passes).toBeGreaterThan(10);
  });
});

describe('leave-one-out progress', () => {
  it('leaveOneOut reports its stages 1, 2, 3 of 3 and gives the same numbers', () => {
    const field = simulateSamples(truth, { count: 60, extent: square, seed: 4 });
    const model: CovarianceModel = { ...truth, structures: [{ type: 'nugget', sill: 0.1 }, { type: 'exponential', sill: 1, scale: 150 }] };
    const { calls, onProgress } = recorder();
    const withProgress = leaveOneOut(field, model, {}, onProgress);
    expect(withProgress).toStrictEqual(leaveOneOut(field, model));
    expect(LEAVE_ONE_OUT_STAGES).toBe(3);
    expect(calls).toEqual([[1, 3], [2, 3], [3, 3]]);
  });
});
