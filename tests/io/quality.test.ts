// Data-quality helpers. Expected values worked by hand: for [1, 2, 3, 4, 10] the mean is 4, the
// population moments m2 = 50/5 = 10 and m3 = 180/5 = 36, so g1 = 36 / 10^1.5 = 1.1384199576606167;
// the sample sd is √(50/4); quartiles by linear interpolation (type 7, numpy's default) are 2 and 4.
import { describe, expect, it } from 'vitest';
import { duplicateGroups, orderOf, outlierIndices, quantile, summarise, transformAdvice } from '../../src/io/quality.ts';
import { createRandom } from '../../src/core/shared/random.ts';
import { expectClose } from '../helpers/tolerance.ts';

describe('summarise', () => {
  it('summarise: mean, median, sd and moment skewness of a small set', () => {
    const s = summarise([1, 2, 3, 4, 10]);
    expect(s.n).toBe(5);
    expect(s.min).toBe(1);
    expect(s.max).toBe(10);
    expect(s.mean).toBe(4);
    expect(s.median).toBe(3);
    expectClose(s.sd, Math.sqrt(12.5), { rel: 1e-15 }, 'sd');
    expectClose(s.skewness, 1.1384199576606167, { rel: 1e-14 }, 'skewness');
  });

  it('summarise: symmetric data have zero skewness; one value has sd 0', () => {
    expectClose(summarise([1, 2, 3, 4, 5]).skewness, 0, { abs: 1e-15 }, 'skewness');
    expect(summarise([5])).toEqual({ n: 1, min: 5, max: 5, mean: 5, median: 5, sd: 0, skewness: 0 });
    expect(summarise([3, 3, 3]).skewness).toBe(0);
  });
});

describe('quantile', () => {
  it('quantile: linear interpolation between order statistics', () => {
    const v = Float64Array.from([1, 2, 3, 4, 10]);
    expect(quantile(v, 0.25)).toBe(2);
    expect(quantile(v, 0.75)).toBe(4);
    expect(quantile(Float64Array.from([1, 2, 3, 4]), 0.5)).toBe(2.5);
    expect(quantile(Float64Array.from([1, 2, 3, 4]), 0.1)).toBeCloseTo(1.3, 14);
  });
});

describe('outlierIndices', () => {
  it('outlierIndices: flags beyond 3 IQR from the quartiles, both sides', () => {
    // Quartiles of [10, 11, 12, 13, 14, 100, -80]: sorted -80,10,11,12,13,14,100 → Q1 10.5, Q3 13.5, IQR 3.
    expect(outlierIndices([10, 11, 12, 13, 14, 100, -80])).toEqual([5, 6]);
    // Sorted 10, 10.5, 11, 12, 13, 14, 19.5: Q1 10.75, Q3 13.5, so 19.5 is inside Q3 + 3·IQR = 21.75.
    expect(outlierIndices([10, 11, 12, 13, 14, 19.5, 10.5])).toEqual([]);
    expect(outlierIndices([1, 2, 100])).toEqual([]);
  });
});

describe('duplicateGroups', () => {
  it('duplicateGroups: groups points within the tolerance, chaining neighbours', () => {
    const x = [0, 0.005, 100, 0.012, 50, 100];
    const y = [0, 0, 0, 0, 50, 0];
    expect(duplicateGroups(x, y, 0.01)).toEqual([[0, 1, 3], [2, 5]]);
    expect(duplicateGroups(x, y, 0)).toEqual([[2, 5]]);
    // (0,0)–(3,4) is exactly 5 apart; (0,−5.0001) is just beyond 5 from the first and far from the second.
    expect(duplicateGroups([0, 3, 0], [0, 4, -5.0001], 5)).toEqual([[0, 1]]);
  });

  it('duplicateGroups: no groups among distinct points', () => {
    expect(duplicateGroups([0, 1, 2], [0, 1, 2], 0.5)).toEqual([]);
  });

  it('duplicateGroups: 5,000 points with planted pairs and a chain give the groups a pairwise search gives', () => {
    const rnd = createRandom(11);
    const n = 5000;
    const x = new Float64Array(n);
    const y = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      x[i] = -500 + 1000 * rnd.uniform();
      y[i] = 1000 * rnd.uniform();
    }
    for (let k = 0; k < 40; k++) {
      x[k * 100 + 1] = x[k * 100] + 0.003;
      y[k * 100 + 1] = y[k * 100] - 0.004;
    }
    x[4001] = x[4000] + 0.009;
    y[4001] = y[4000];
    x[4002] = x[4001] + 0.009;
    y[4002] = y[4001];
    const parent = Array.from({ length: n }, (_, i) => i);
    const find = (i: number): number => (parent[i] === i ? i : (parent[i] = find(parent[i])));
    for (let i = 0; i < n; i++) {
      for (let j = i + 1; j < n; j++) if (Math.hypot(x[i] - x[j], y[i] - y[j]) <= 0.01) parent[Math.max(find(i), find(j))] = Math.min(find(i), find(j));
    }
    const byRoot = new Map<number, number[]>();
    for (let i = 0; i < n; i++) byRoot.set(find(i), [...(byRoot.get(find(i)) ?? []), i]);
    const want = [...byRoot.values()].filter((g) => g.length > 1).sort((a, b) => a[0] - b[0]);
    expect(want.length).toBeGreaterThanOrEqual(40);
    expect(duplicateGroups(x, y, 0.01)).toEqual(want);
  });
});

describe('orderOf', () => {
  it('orderOf: orders indices by value for negatives, zeros, ties, tiny and huge values', () => {
    const rnd = createRandom(5);
    const v = new Float64Array(3000);
    for (let i = 0; i < v.length; i++) {
      const k = i % 6;
      v[i] = k === 0 ? -1e300 * rnd.uniform() : k === 1 ? 1e-300 * rnd.normal() : k === 2 ? Math.round(10 * rnd.normal()) : k === 3 ? (i % 2 ? -0 : 0) : k === 4 ? 1e6 * rnd.normal() : 5e-324;
    }
    const order = orderOf(v);
    expect(new Set(order).size).toBe(v.length);
    const sorted = Array.from(order, (i) => v[i]);
    const zeroless = (a: number[]) => a.map((q) => (q === 0 ? 0 : q));
    expect(zeroless(sorted)).toEqual(zeroless(Array.from(v).sort((a, b) => a - b)));
    for (let i = 1; i < sorted.length; i++) expect(sorted[i] >= sorted[i - 1]).toBe(true);
  });
});

describe('transformAdvice', () => {
  it('transformAdvice: suggests the log for skewed positive data, explains when values ≤ 0 forbid it', () => {
    expect(transformAdvice(summarise([1, 1, 1, 2, 2, 3, 50]))).toContain('log transform');
    expect(transformAdvice(summarise([0, 1, 1, 2, 2, 3, 50]))).toContain('not possible');
    expect(transformAdvice(summarise([1, 2, 3, 4, 5]))).toBe('');
  });
});
