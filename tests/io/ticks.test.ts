import { describe, expect, it } from 'vitest';
import { niceTicks } from '../../src/io/ticks.ts';

// Expected values follow d3-array's documented tick rule (steps of 1, 2 or 5 × 10^k, the step
// nearest span/count, ticks inside the interval); worked by hand from that rule.
describe('niceTicks', () => {
  it('niceTicks picks 1-2-5 steps inside the domain', () => {
    expect(niceTicks(0, 100, 5)).toEqual([0, 20, 40, 60, 80, 100]);
    expect(niceTicks(12.3, 487.9, 5)).toEqual([100, 200, 300, 400]);
    expect(niceTicks(3, 97, 5)).toEqual([20, 40, 60, 80]);
    expect(niceTicks(0, 1, 4)).toEqual([0, 0.2, 0.4, 0.6, 0.8, 1]);
    expect(niceTicks(0.013, 0.061, 4)).toEqual([0.02, 0.03, 0.04, 0.05, 0.06]);
    expect(niceTicks(-3, 3, 6)).toEqual([-3, -2, -1, 0, 1, 2, 3]);
  });
  it('niceTicks gives exact decimals, no rounding residue and no negative zero', () => {
    const t = niceTicks(-0.3, 0.3, 6);
    expect(t).toEqual([-0.3, -0.2, -0.1, 0, 0.1, 0.2, 0.3]);
    expect(Object.is(t[3], 0)).toBe(true);
  });
  it('niceTicks handles reversed, equal and non-finite bounds', () => {
    expect(niceTicks(100, 0, 5)).toEqual([0, 20, 40, 60, 80, 100]);
    expect(niceTicks(5, 5)).toEqual([5]);
    expect(niceTicks(NaN, 5)).toEqual([]);
    expect(niceTicks(0, Infinity)).toEqual([]);
  });
});
