import { describe, expect, it } from 'vitest';
import {
  trendColumnCount, knownMean, coordinateFrame, centreCoordinates, designMatrix, designRow,
} from '../../../src/core/covariance/trend.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import type { Trend } from '../../../src/core/covariance/model.ts';
import { expectClose } from '../../helpers/tolerance.ts';

describe('trendColumnCount', () => {
  it('trendColumnCount: 0 known, 1 constant, 3 linear; rejects anything else', () => {
    expect(trendColumnCount({ known: 2.5 })).toBe(0);
    expect(trendColumnCount('constant')).toBe(1);
    expect(trendColumnCount('linear')).toBe(3);
    expect(() => trendColumnCount('quadratic' as unknown as Trend)).toThrow(GapwiseError);
  });
});

describe('knownMean', () => {
  it('knownMean returns m for {known: m} and null otherwise', () => {
    expect(knownMean({ known: -3 })).toBe(-3);
    expect(knownMean('constant')).toBeNull();
    expect(knownMean('linear')).toBeNull();
  });
});

describe('coordinateFrame', () => {
  it('coordinateFrame: centroid and root-mean-square radius (hand values)', () => {
    // Square of side 2 centred on (1, 1): every corner at distance √2.
    const f = coordinateFrame([0, 2, 2, 0], [0, 0, 2, 2]);
    expectClose(f.cx, 1, { abs: 1e-15 }, 'cx');
    expectClose(f.cy, 1, { abs: 1e-15 }, 'cy');
    expectClose(f.scale, Math.SQRT2, { rel: 1e-15 }, 'scale');
  });
  it('coordinateFrame keeps the digits of UTM-sized coordinates', () => {
    const x = [500000.125, 500000.375, 500001.5];
    const y = [6000000.25, 6000000.75, 6000002];
    const f = coordinateFrame(x, y);
    expectClose(f.cx, 500000.666666666667, { abs: 1e-9 }, 'cx');
    expectClose(f.cy, 6000001, { abs: 1e-9 }, 'cy');
  });
  it('coordinateFrame gives scale 1 for coincident or no samples', () => {
    expect(coordinateFrame([5, 5], [7, 7]).scale).toBe(1);
    expect(coordinateFrame([], [])).toEqual({ cx: 0, cy: 0, scale: 1 });
  });
});

describe('centreCoordinates', () => {
  it('centreCoordinates subtracts the frame centre', () => {
    const { u, v } = centreCoordinates([10, 20], [100, 300], { cx: 15, cy: 200, scale: 3 });
    expect(Array.from(u)).toEqual([-5, 5]);
    expect(Array.from(v)).toEqual([-100, 100]);
  });
});

describe('designMatrix', () => {
  const frame = { cx: 100, cy: 200, scale: 50 };
  it('designMatrix (linear): rows (1, (x − cx)/scale, (y − cy)/scale)', () => {
    const X = designMatrix('linear', [100, 150, 0], [200, 100, 300], frame);
    expect(Array.from(X)).toEqual([1, 0, 0, 1, 1, -2, 1, -2, 2]);
  });
  it('designMatrix (constant) is a column of ones; (known) is empty', () => {
    expect(Array.from(designMatrix('constant', [1, 2, 3], [4, 5, 6], frame))).toEqual([1, 1, 1]);
    expect(designMatrix({ known: 1 }, [1, 2, 3], [4, 5, 6], frame).length).toBe(0);
  });
  it('designRow writes at an offset and leaves the rest alone', () => {
    const out = new Float64Array(5).fill(9);
    designRow('linear', 125, 150, frame, out, 1);
    expect(Array.from(out)).toEqual([9, 1, 0.5, -1, 9]);
  });
});
