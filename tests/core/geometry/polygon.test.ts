import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { pointInPolygon, pointInPolygons, polygonsArea, polygonsExtent, ringArea, ringSelfCrossing } from '../../../src/core/geometry/polygon.ts';
import { pointInPolygons as ioPointInPolygons } from '../../../src/io/boundary.ts';
import type { Polygon } from '../../../src/core/geometry/grid.ts';

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

describe('ringSelfCrossing', () => {
  it('ringSelfCrossing finds the centre of a bow-tie and nothing in a square, even with a repeated vertex', () => {
    expect(ringSelfCrossing([[0, 0], [10, 10], [10, 0], [0, 10], [0, 0]])).toEqual({ edgeA: 0, edgeB: 2, x: 5, y: 5 });
    expect(ringSelfCrossing([[0, 0], [10, 0], [10, 10], [0, 10], [0, 0]])).toBeNull();
    expect(ringSelfCrossing([[0, 0], [10, 0], [10, 0], [10, 10], [0, 10], [0, 0]])).toBeNull();
  });

  it('ringSelfCrossing counts touching at a vertex and folding back along an edge as crossing', () => {
    // A figure of eight through (5, 5): both loops share that vertex.
    expect(ringSelfCrossing([[0, 0], [5, 5], [10, 0], [10, 10], [5, 5], [0, 10], [0, 0]])).toMatchObject({ x: 5, y: 5 });
    // A spike: out along the bottom edge and back over it.
    expect(ringSelfCrossing([[0, 0], [10, 0], [4, 0], [4, 8], [0, 8], [0, 0]])).not.toBeNull();
  });

  it('ringSelfCrossing finds no crossing in any convex polygon (property)', () => {
    fc.assert(fc.property(fc.integer({ min: 3, max: 60 }), fc.double({ min: 0, max: 6.28, noNaN: true }), fc.double({ min: 1e-3, max: 1e6, noNaN: true }), (n, turn, r) => {
      const ring: number[][] = [];
      for (let k = 0; k < n; k++) ring.push([r * Math.cos(turn + (2 * Math.PI * k) / n), r * Math.sin(turn + (2 * Math.PI * k) / n)]);
      ring.push(ring[0]);
      return ringSelfCrossing(ring) === null;
    }), { seed: 17, numRuns: 200 });
  });
});
