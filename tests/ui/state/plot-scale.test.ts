import { describe, expect, it } from 'vitest';
import {
  histogram, linearScale, niceDomain, niceTicks, tickStep,
} from '../../../src/ui/state/plot-scale.ts';

describe('linearScale', () => {
  it('linearScale maps the ends of the domain onto the ends of the range, inverted ranges too', () => {
    const s = linearScale([10, 20], [300, 0]);
    expect(s(10)).toBe(300);
    expect(s(20)).toBe(0);
    expect(s(15)).toBe(150);
  });
  it('linearScale maps a zero-width domain to the middle of the range', () => {
    expect(linearScale([5, 5], [0, 100])(5)).toBe(50);
  });
});

describe('tickStep / niceTicks / niceDomain', () => {
  it('tickStep picks 1, 2 or 5 times a power of ten', () => {
    expect(tickStep(0, 100, 5)).toBe(20);
    expect(tickStep(0, 1, 4)).toBe(0.2);
    expect(tickStep(0, 0.07, 5)).toBeCloseTo(0.01, 12);
    expect(tickStep(0, 3000, 3)).toBe(1000);
  });
  it('niceTicks stays inside the interval and is evenly spaced', () => {
    const t = niceTicks(3, 97, 5);
    expect(t).toEqual([20, 40, 60, 80]);
    expect(niceTicks(-0.3, 0.3, 6)).toEqual([-0.3, -0.2, -0.1, 0, 0.1, 0.2, 0.3]);
  });
  it('niceDomain widens to the rounded steps around the data', () => {
    expect(niceDomain(3, 97, 5)).toEqual([0, 100]);
    expect(niceDomain(0, 0)).toEqual([0, 1]);
  });
});

describe('histogram', () => {
  it('histogram counts every finite value once, the maximum in the last bin', () => {
    const v = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, NaN];
    const bins = histogram(v, 5);
    expect(bins.map((b) => b.count)).toEqual([2, 2, 2, 2, 3]);
    expect(bins[0].from).toBe(0);
    expect(bins[4].to).toBe(10);
  });
  it('histogram uses Sturges bins by default: 100 values give 8 bins', () => {
    const v = Array.from({ length: 100 }, (_, i) => i);
    const bins = histogram(v);
    expect(bins.length).toBe(8);
    expect(bins.reduce((a, b) => a + b.count, 0)).toBe(100);
  });
  it('histogram of identical values is one bin', () => {
    expect(histogram([2, 2, 2])).toEqual([{ from: 2, to: 2, count: 3 }]);
  });
});
