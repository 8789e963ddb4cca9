import { describe, expect, it } from 'vitest';
import { logContourLevels, mapContourLevels, mapContours } from '../../../src/ui/map/contour-lines.ts';
import { createTransform, LOCAL_CRS } from '../../../src/io/crs.ts';
import type { Grid } from '../../../src/core/geometry/grid.ts';

/** A grid whose values rise linearly with x: v = a + b·x at each cell centre. */
function ramp(grid: Grid, a: number, b: number): Float64Array {
  const v = new Float64Array(grid.nx * grid.ny);
  for (let j = 0; j < grid.ny; j++) for (let i = 0; i < grid.nx; i++) v[j * grid.nx + i] = a + b * (grid.x0 + (i + 0.5) * grid.cell);
  return v;
}

describe('contour-lines', () => {
  it('mapContourLevels gives round levels with the action level added and its near twins left out', () => {
    expect(mapContourLevels(0, 100, null, 5).map((l) => l.level)).toEqual([20, 40, 60, 80]);
    const withAction = mapContourLevels(0, 100, 43, 5);
    // 40 is within a third of the step (20) of 43: left out.
    expect(withAction).toEqual([{ level: 20, action: false }, { level: 43, action: true }, { level: 60, action: false }, { level: 80, action: false }]);
    // An action level outside the values draws no line of its own.
    expect(mapContourLevels(0, 100, 150, 5).some((l) => l.action)).toBe(false);
    expect(mapContourLevels(5, 5, 5)).toEqual([]);
  });

  it('logContourLevels steps 1, 2, 5 per decade, coarser for wide ranges, even steps for values not all positive', () => {
    expect(logContourLevels(3, 1700, 8)).toEqual([5, 10, 20, 50, 100, 200, 500, 1000]);
    // 1, 3 per decade would give 11 levels: one per decade instead.
    expect(logContourLevels(0.01, 1e4, 8)).toEqual([0.1, 1, 10, 100, 1000]);
    expect(logContourLevels(0.02, 900, 8)).toEqual([0.03, 0.1, 0.3, 1, 3, 10, 30, 100, 300]);
    expect(logContourLevels(1e-6, 1e6, 8)).toEqual([1e-5, 1e-4, 1e-3, 0.01, 0.1, 1, 10, 100, 1000, 1e4, 1e5]);
    expect(logContourLevels(-1, 9, 5)).toEqual([0, 2, 4, 6, 8]);
    // With log steps the action level replaces a round level within a third of a step's log ratio.
    expect(mapContourLevels(3, 1700, 220, 8, true).map((l) => l.level)).toEqual([5, 10, 20, 50, 100, 220, 500, 1000]);
    expect(mapContourLevels(3, 1700, 300, 8, true).map((l) => l.level)).toEqual([5, 10, 20, 50, 100, 200, 300, 500, 1000]);
  });

  it('mapContours on local coordinates puts each line at the x where the linear surface equals its level (lat = y, lng = x)', () => {
    const grid: Grid = { x0: 0, y0: 120, cell: 2, nx: 100, ny: 60 };
    const values = ramp(grid, 10, 0.5); // 10.5 at the first centre, 109.5 at the last
    const lines = mapContours(grid, values, LOCAL_CRS, 47.3);
    const action = lines.filter((c) => c.action);
    expect(action).toHaveLength(1);
    expect(action[0].level).toBe(47.3);
    expect(lines.map((c) => c.level)).toEqual([20, 30, 40, 47.3, 60, 70, 80, 90, 100]);
    for (const c of lines) {
      const x = (c.level - 10) / 0.5;
      for (const line of c.lines) {
        for (const [lat, lng] of line) {
          // Linear along x, so marching squares' linear interpolation is exact (to the 1e-6 rounding).
          expect(Math.abs(lng - x)).toBeLessThan(1e-5);
          expect(lat).toBeGreaterThanOrEqual(0);
          expect(lat).toBeLessThanOrEqual(120);
        }
      }
      // One straight line from the top row's centres to the bottom row's.
      const ys = c.lines.flat().map(([lat]) => lat);
      expect(Math.min(...ys)).toBeCloseTo(1, 6);
      expect(Math.max(...ys)).toBeCloseTo(119, 6);
    }
  });

  it('mapContours on a projected grid gives latitude/longitude whose working-CRS x is the level\'s', () => {
    const work = 'EPSG:32633';
    const grid: Grid = { x0: 500000, y0: 5300000, cell: 50, nx: 40, ny: 30 };
    const values = ramp(grid, -5000, 0.01); // 0.25 at the first centre, 19.75 at the last
    const lines = mapContours(grid, values, work, 12.5);
    const toWork = createTransform('EPSG:4326', work);
    const action = lines.find((c) => c.action)!;
    expect(action.level).toBe(12.5);
    for (const [lat, lng] of action.lines.flat()) {
      expect(lat).toBeGreaterThan(47);
      expect(lat).toBeLessThan(48);
      const [x] = toWork.forward(lng, lat);
      // Positions are rounded to 1e-7 degrees (about 1 cm).
      expect(Math.abs(x - 501250)).toBeLessThan(0.05);
    }
  });

  it('mapContours leaves out masked cells and draws nothing for a flat surface', () => {
    const grid: Grid = { x0: 0, y0: 10, cell: 1, nx: 10, ny: 10, mask: new Uint8Array(100).fill(1) };
    const values = ramp(grid, 0, 1);
    // Mask out the right half: the levels come from the left half's range (0.5 to 4.5).
    for (let j = 0; j < 10; j++) for (let i = 5; i < 10; i++) grid.mask![j * 10 + i] = 0;
    const lines = mapContours(grid, values, LOCAL_CRS, null, 4);
    expect(lines.length).toBeGreaterThan(0);
    for (const c of lines) {
      expect(c.level).toBeLessThan(4.5);
      for (const [, lng] of c.lines.flat()) expect(lng).toBeLessThanOrEqual(4.5);
    }
    expect(mapContours({ x0: 0, y0: 5, cell: 1, nx: 5, ny: 5 }, new Float64Array(25).fill(3), LOCAL_CRS, 3)).toEqual([]);
  });
});
