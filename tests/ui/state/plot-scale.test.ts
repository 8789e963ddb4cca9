import { describe, expect, it } from 'vitest';
import {
  histogram, linearScale,
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
