import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  MAX_CELLS, MAX_GRID_SIDE, MAX_PADDING, cellCentre, extentOf, extentOfAll, cellCentres, cellCount, cellIndexAt, estimateSurfaceCost, fractionalIndex, planSurfaceGrid,
  gridBounds, gridForPolygons, gridFromExtent, type Polygon,
} from '../../../src/core/geometry/grid.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';

interface MaskCase { name: string; polygons: Polygon[]; cell: number; x0: number; y0: number; nx: number; ny: number; mask: number[] }

// Distance from (x, y) to the nearest edge, to skip cells whose centre sits on a boundary (where
// the answer depends on rounding).
function edgeDistance(poly: Polygon, x: number, y: number): number {
  let d = Infinity;
  for (const ring of poly) {
    for (let k = 0, l = ring.length - 1; k < ring.length; l = k++) {
      const [xa, ya] = ring[l], [xb, yb] = ring[k];
      const vx = xb - xa, vy = yb - ya;
      const t = Math.max(0, Math.min(1, ((x - xa) * vx + (y - ya) * vy) / (vx * vx + vy * vy || 1)));
      d = Math.min(d, Math.hypot(x - xa - t * vx, y - ya - t * vy));
    }
  }
  return d;
}

// Brute-force even–odd ray cast, the textbook point-in-polygon test, for property checks.
function inside(poly: Polygon, x: number, y: number): boolean {
  let c = false;
  for (const ring of poly) {
    for (let k = 0, l = ring.length - 1; k < ring.length; l = k++) {
      const [xa, ya] = ring[l], [xb, yb] = ring[k];
      if ((ya <= y) !== (yb <= y) && x < xa + ((y - ya) / (yb - ya)) * (xb - xa)) c = !c;
    }
  }
  return c;
}

describe('extentOfAll', () => {
  it('extentOfAll bounds every set together, extentOf one set, and no point gives empty bounds', () => {
    const a = extentOfAll([[0, 4], new Float64Array([-2])], [[1, 3], new Float64Array([7])]);
    expect(a).toEqual({ xmin: -2, ymin: 1, xmax: 4, ymax: 7 });
    expect(extentOf([5, -1, 2], [0, 9, 3])).toEqual({ xmin: -1, ymin: 0, xmax: 5, ymax: 9 });
    expect(extentOfAll([], [])).toEqual({ xmin: Infinity, ymin: Infinity, xmax: -Infinity, ymax: -Infinity });
  });
});

describe('gridFromExtent', () => {
  it('gridFromExtent snaps corners outward to multiples of the cell and covers the padded extent', () => {
    const g = gridFromExtent(500013, 4980021, 500402, 4980397.3, 25, 30);
    expect(g).toEqual({ x0: 499975, y0: 4980450, cell: 25, nx: 19, ny: 19 });
    const b = gridBounds(g);
    expect(b.xmin).toBeLessThanOrEqual(500013 - 30);
    expect(b.xmax).toBeGreaterThanOrEqual(500402 + 30);
    expect(b.ymin).toBeLessThanOrEqual(4980021 - 30);
    expect(b.ymax).toBeGreaterThanOrEqual(4980397.3 + 30);
  });

  it('gridFromExtent of an exact multiple adds no extra row or column', () => {
    expect(gridFromExtent(0, 0, 100, 50, 10)).toEqual({ x0: 0, y0: 50, cell: 10, nx: 10, ny: 5 });
    expect(gridFromExtent(5, 5, 5, 5, 10)).toMatchObject({ nx: 1, ny: 1 });
  });

  it('gridFromExtent rejects bad cells, reversed extents and too many cells with GapwiseError', () => {
    expect(() => gridFromExtent(0, 0, 1, 1, 0)).toThrow(GapwiseError);
    expect(() => gridFromExtent(0, 0, 1, 1, NaN)).toThrow(/positive number of metres, got NaN/);
    expect(() => gridFromExtent(2, 0, 1, 1, 1)).toThrow(/xmin ≤ xmax/);
    const side = Math.ceil(Math.sqrt(MAX_CELLS)) + 1;
    expect(() => gridFromExtent(0, 0, side, side, 1)).toThrow(/the most is 4,000,000: choose a cell of at least 2 m/);
  });
});

describe('gridForPolygons', () => {
  const fixture = loadFixture<MaskCase>('grid.json');
  for (const c of fixture.cases) {
    it(`gridForPolygons matches GDAL RasterizeLayer's centre-inside mask: ${c.name}, ${c.cell} m (source: GDAL, tests/reference/grid.json)`, () => {
      const g = gridForPolygons(c.polygons, c.cell);
      expect([g.x0, g.y0, g.nx, g.ny]).toEqual([c.x0, c.y0, c.nx, c.ny]);
      const diff: number[] = [];
      let onEdge = 0;
      for (let k = 0; k < c.mask.length; k++) {
        const [x, y] = cellCentre(g, k % g.nx, Math.floor(k / g.nx));
        // A centre exactly on an edge is a tie each rasterizer breaks its own way (ours below).
        if (Math.min(...c.polygons.map((p) => edgeDistance(p, x, y))) < 1e-9) { onEdge++; continue; }
        if (g.mask![k] !== c.mask[k]) diff.push(k);
      }
      expect(diff, `cells differing from GDAL`).toEqual([]);
      expect(c.mask.length - onEdge, "cells compared").toBeGreaterThan(15);
    });
  }

  it('gridForPolygons breaks ties on edges as (left, right] in x and [bottom, top) in y', () => {
    // Square 105..155 on a 10 m grid: its edges run through cell centres 105 and 155.
    const g = gridForPolygons([[[[105, 105], [155, 105], [155, 155], [105, 155]]]], 10);
    expect([g.x0, g.y0, g.nx, g.ny]).toEqual([100, 160, 6, 6]);
    const inCentres: string[] = [];
    for (let k = 0; k < 36; k++) if (g.mask![k]) inCentres.push(cellCentre(g, k % 6, Math.floor(k / 6)).join(','));
    expect(inCentres.length).toBe(25);
    expect(inCentres).toContain('155,105');
    expect(inCentres).not.toContain('105,105');
    expect(inCentres).not.toContain('155,155');
    expect(cellCount(g)).toBe(25);
  });

  it('gridForPolygons agrees with a brute-force ray cast on random polygons (property)', () => {
    const vertex = fc.tuple(fc.double({ min: 0, max: 300, noNaN: true }), fc.double({ min: 0, max: 300, noNaN: true }));
    fc.assert(fc.property(fc.array(vertex, { minLength: 3, maxLength: 9 }), fc.double({ min: 7, max: 40, noNaN: true }), (ring, cell) => {
      const poly: Polygon = [ring];
      let g;
      try { g = gridForPolygons([poly], cell); } catch (e) {
        // Only "no cell centre inside" may fail, and then the ray cast must agree.
        expect((e as GapwiseError).code).toBe('bad-geometry');
        return;
      }
      for (let j = 0; j < g.ny; j++) for (let i = 0; i < g.nx; i++) {
        const [x, y] = cellCentre(g, i, j);
        if (edgeDistance(poly, x, y) < 1e-6) continue;
        expect(g.mask![j * g.nx + i], `cell ${i},${j}`).toBe(inside(poly, x, y) ? 1 : 0);
      }
    }), { numRuns: 150, seed: 7 });
  });

  it('gridForPolygons reports a boundary too small for the cell, and malformed rings', () => {
    expect(() => gridForPolygons([[[[1, 1], [2, 1], [2, 2]]]], 100)).toThrow(/no cell centre at a cell size of 100 m/);
    expect(() => gridForPolygons([[[[1, 1], [2, 1]]]], 1)).toThrow(/at least 3 vertices, got 2/);
    expect(() => gridForPolygons([], 1)).toThrow(/at least one boundary polygon/);
    expect(() => gridForPolygons([[[[1, 1], [2, NaN], [2, 2]]]], 1)).toThrow(GapwiseError);
  });
});

describe('cell geometry', () => {
  const g = { x0: 1000, y0: 2000, cell: 10, nx: 4, ny: 3, mask: Uint8Array.from([0, 1, 1, 0, 1, 1, 1, 1, 0, 0, 1, 0]) };

  it('cellCentre puts row 0 at the top and column 0 at the west edge', () => {
    expect(cellCentre(g, 0, 0)).toEqual([1005, 1995]);
    expect(cellCentre(g, 3, 2)).toEqual([1035, 1975]);
  });

  it('cellCentres lists only active cells of the row range, row-major, with their indices', () => {
    const c = cellCentres(g, 1, 3);
    expect(Array.from(c.index)).toEqual([4, 5, 6, 7, 10]);
    expect(Array.from(c.x)).toEqual([1005, 1015, 1025, 1035, 1025]);
    expect(Array.from(c.y)).toEqual([1985, 1985, 1985, 1985, 1975]);
    expect(cellCentres({ ...g, mask: undefined }).x.length).toBe(12);
  });

  it('cellIndexAt inverts cellCentre and respects the mask; fractionalIndex is half-integer at centres', () => {
    expect(cellIndexAt(g, 1015, 1995)).toBe(1);
    expect(cellIndexAt(g, 1005, 1995)).toBe(-1); // masked out
    expect(cellIndexAt(g, 999.9, 1995)).toBe(-1); // west of the grid
    expect(cellIndexAt(g, 1035, 1970.01)).toBe(-1); // masked
    expect(cellIndexAt(g, 1025, 1970.01)).toBe(10);
    expect(fractionalIndex(g, 1025, 1975)).toEqual([2.5, 2.5]);
  });

  it('cellCount counts masked-in cells', () => {
    expect(cellCount(g)).toBe(7);
    expect(cellCount({ x0: 0, y0: 0, cell: 1, nx: 5, ny: 7 })).toBe(35);
  });
});

describe('estimateSurfaceCost', () => {
  it('estimateSurfaceCost follows n³/3 + cells·(n² + 29n) flops at 1.2 GFLOP/s (documented model)', () => {
    const e = estimateSurfaceCost(1000, 10_000);
    expectClose(e.flops, 1e9 / 3 + 1e4 * (1e6 + 29e3), { rel: 1e-12 });
    expectClose(e.seconds, e.flops / 1.2e9, { rel: 1e-12 });
    const two = estimateSurfaceCost(1000, 10_000, { workers: 2 });
    expectClose(two.seconds, (1e9 / 3 + (1e4 * 1.029e6) / 2) / 1.2e9, { rel: 1e-12 });
  });
});

describe('grid size limits', () => {
  const refusal = (f: () => unknown) => { try { f(); } catch (e) { return (e as GapwiseError).message; } return null; };

  it('planSurfaceGrid refuses a padding of 1e6 times the extent instead of computing a 750,000 km grid', () => {
    const o = { x: [500_000, 500_375], y: [5_400_000, 5_400_300], cellSize: 0 };
    expect(refusal(() => planSurfaceGrid({ ...o, padding: 1e6 }))).toBe(`Expected a padding from 0 to ${MAX_PADDING} times the larger side of the samples' extent, got 1000000.`);
    expect(refusal(() => planSurfaceGrid({ ...o, padding: NaN }))).toContain('got NaN');
    expect(planSurfaceGrid({ ...o, padding: MAX_PADDING }).grid.nx).toBeGreaterThan(0);
  });

  it('gridFromExtent refuses a grid longer than the largest side, with the grid, the extent and the padding', () => {
    expect(MAX_GRID_SIDE).toBe(10_000_000);
    expect(refusal(() => gridFromExtent(0, 0, 375, 300, 1000, 6_000_000)))
      .toBe('The grid would span 12,000 km × 12,000 km (an extent of 375 m × 300 m with 6,000 km of padding on each side); the most is 10,000 km a side: choose a smaller padding or area.');
    expect(gridFromExtent(0, 0, 9_999_000, 10, 100_000).nx).toBe(100);
    // A tiny cell: the count overflows to Infinity, the advice stays a number.
    expect(refusal(() => gridFromExtent(0, 0, 375, 300, 1e-300))).toBe('The grid would have Infinity cells (3.75e+302 × 3.00e+302) at 1e-300 m; the most is 4,000,000: choose a cell of at least 1 m.');
    // A cell larger than the extent is a grid of one cell that size.
    expect(refusal(() => gridFromExtent(0, 0, 10, 10, 1e300))).toContain('The grid would span 1.00e+297 km × 1.00e+297 km (one cell of 1.00e+297 km) (an extent of 10 m × 10 m)');
  });
});
