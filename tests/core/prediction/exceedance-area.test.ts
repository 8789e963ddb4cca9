import { describe, expect, it } from 'vitest';
import {
  MAX_DEPTH, countAbove, exceedanceArea, exceedanceFrequency, expectedExceedanceArea, quantileSorted, summarise, summariseExceedanceCounts,
} from '../../../src/core/prediction/exceedance-area.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { expectClose } from '../../helpers/tolerance.ts';

describe('quantileSorted', () => {
  it('quantileSorted interpolates order statistics (Hyndman & Fan definition 7)', () => {
    // Source: definition 7 of Hyndman & Fan (1996), x_(⌊h⌋) + (h − ⌊h⌋)(x_(⌊h⌋+1) − x_(⌊h⌋)), h = (n − 1)p;
    // for 0, 1, ..., 19: p = 0.05 → h = 0.95, p = 0.5 → 9.5, p = 0.95 → 18.05.
    const v = Float64Array.from({ length: 20 }, (_, i) => i);
    expectClose(quantileSorted(v, 0.05), 0.95, { rel: 1e-15 });
    expectClose(quantileSorted(v, 0.5), 9.5, { rel: 1e-15 });
    expectClose(quantileSorted(v, 0.95), 18.05, { rel: 1e-15 });
    expect(quantileSorted([7], 0.95)).toBe(7);
    expect(Number.isNaN(quantileSorted([], 0.5))).toBe(true);
    expect(() => quantileSorted(v, 1.2)).toThrow(GapwiseError);
  });

  it('summarise sorts its input first', () => {
    const s = summarise([5, 1, 3, 2, 4]);
    expect(s).toEqual({ median: 3, p05: 1.2, p95: 4.8, mean: 3 });
  });
});

describe('exceedanceArea', () => {
  it('exceedanceArea counts cells above T per realisation and scales by cell area and depth', () => {
    // Four realisations of a 2 × 3 grid, one cell outside the area (NaN): 1, 2, 3 and 5 cells above 10.
    const r = [
      [11, 1, 1, 1, 1, NaN],
      [11, 12, 1, 1, 1, NaN],
      [11, 12, 13, 1, 1, NaN],
      [11, 12, 13, 14, 15, NaN],
    ];
    const s = exceedanceArea(r, { threshold: 10, cell: 5, depth: 0.3 });
    expect(s.activeCells).toBe(5);
    expect(s.cellArea).toBe(25);
    // Counts 1, 2, 3, 5: median 2.5, p05 = 1 + 0.15·1 = 1.15, p95 = 3 + 0.85·2 = 4.7, mean 2.75.
    expectClose(s.cells.median, 2.5, { rel: 1e-15 });
    expectClose(s.cells.p05, 1.15, { rel: 1e-15 });
    expectClose(s.cells.p95, 4.7, { rel: 1e-15 });
    expectClose(s.area.median, 62.5, { rel: 1e-15 });
    expect(s.area.unit).toBe('m²');
    expectClose(s.volume!.p95, 4.7 * 25 * 0.3, { rel: 1e-15 });
    expect(s.volume!.unit).toBe('m³');
    expectClose(s.fraction.mean, 2.75 / 5, { rel: 1e-15 });
    expect(s.realisations).toBe(4);
  });

  it('exceedanceArea rejects a bad depth, an empty list and ragged realisations', () => {
    expect(() => exceedanceArea([[1]], { threshold: 0, cell: 1, depth: -1 })).toThrow(/depth/);
    expect(() => exceedanceArea([], { threshold: 0, cell: 1 })).toThrow(/at least 1/);
    expect(() => exceedanceArea([[1, 2], [1]], { threshold: 0, cell: 1 })).toThrow(/realisation 2/);
    expect(() => summariseExceedanceCounts([1], { threshold: NaN, cell: 1, activeCells: 1 })).toThrow(/finite/);
  });
});

describe('exceedanceFrequency', () => {
  it('exceedanceFrequency is the share of realisations above T per cell, NaN outside', () => {
    const f = exceedanceFrequency([[1, 5, NaN], [6, 5, NaN], [7, 4, NaN], [8, 6, NaN]], 5);
    expect(Array.from(f.slice(0, 2))).toEqual([0.75, 0.25]);
    expect(Number.isNaN(f[2])).toBe(true);
    expect(countAbove([1, 6, NaN, 7], 5)).toBe(2);
  });

  it('expectedExceedanceArea sums probabilities times the cell area', () => {
    expectClose(expectedExceedanceArea([0.5, 0.25, NaN, 1], 10), 175, { rel: 1e-15 });
  });
});

describe('summariseExceedanceCounts depth limit', () => {
  it('summariseExceedanceCounts refuses a depth beyond MAX_DEPTH instead of an infinite volume', () => {
    let message = '';
    try { summariseExceedanceCounts([1, 2, 3], { threshold: 5, cell: 10, activeCells: 10, depth: 1e308 }); } catch (e) { message = (e as GapwiseError).message; }
    expect(message).toBe(`Expected the depth to be a positive number of metres up to ${MAX_DEPTH.toLocaleString('en')}, got 1e+308.`);
    expect(summariseExceedanceCounts([1, 2, 3], { threshold: 5, cell: 10, activeCells: 10, depth: MAX_DEPTH }).volume?.depth).toBe(MAX_DEPTH);
  });
});
