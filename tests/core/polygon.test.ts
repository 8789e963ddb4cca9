import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { pointInPolygon, pointInPolygons, polygonsArea, polygonsExtent, ringArea } from '../../src/core/polygon.ts';
import { pointInPolygons as ioPointInPolygons } from '../../src/io/boundary.ts';
import type { Polygon } from '../../src/core/grid.ts';

const HOLED: Polygon = [
  [[0, 0], [10, 0], [10, 10], [0, 10], [0, 0]],
  [[3, 3], [3, 6], [6, 6], [6, 3], [3, 3]],
];
const L_SHAPE: Polygon = [[[0, 0], [4, 0], [4, 1], [1, 1], [1, 3], [0, 3], [0, 0]]];

describe('pointInPolygon', () => {
  it('pointInPolygon is true inside the outer ring, false in a hole and outside', () => {
    expect(pointInPolygon(1, 1, HOLED)).toBe(true);
    expect(pointInPolygon(4, 4, HOLED)).toBe(false);
    expect(pointInPolygon(11, 4, HOLED)).toBe(false);
    expect(pointInPolygon(2, 2, L_SHAPE)).toBe(false);
    expect(pointInPolygon(0.5, 2.5, L_SHAPE)).toBe(true);
    expect(pointInPolygons(0.5, 2.5, [HOLED, L_SHAPE])).toBe(true);
    expect(pointInPolygons(4, 4, [HOLED])).toBe(false);
  });

  it('pointInPolygons agrees with the io boundary test off the edges', () => {
    fc.assert(fc.property(fc.double({ min: -1, max: 11, noNaN: true }), fc.double({ min: -1, max: 11, noNaN: true }), (x, y) => {
      const rings = (p: Polygon) => ({ rings: p.map((r) => r.map((v) => [v[0], v[1]] as [number, number])) });
      expect(pointInPolygons(x, y, [HOLED, L_SHAPE])).toBe(ioPointInPolygons(x, y, [rings(HOLED), rings(L_SHAPE)]));
    }), { numRuns: 500, seed: 7 });
  });
});

describe('polygonsArea', () => {
  it('polygonsArea subtracts holes (shoelace): 100 − 9 and the L of 4·1 + 1·2 = 6 m²', () => {
    expect(polygonsArea([HOLED])).toBe(91);
    expect(polygonsArea([L_SHAPE])).toBe(6);
    expect(ringArea(HOLED[0])).toBe(100);
    expect(ringArea(HOLED[1])).toBe(-9);
  });
  it('polygonsExtent bounds the outer rings, null without vertices', () => {
    expect(polygonsExtent([HOLED, L_SHAPE])).toEqual({ xmin: 0, ymin: 0, xmax: 10, ymax: 10 });
    expect(polygonsExtent([])).toBeNull();
  });
});
