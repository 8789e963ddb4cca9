// contourFeatures / surfaceContours: geometry checked by construction (linear fields whose isolines
// are known straight lines, bands that tile the hull of the cell centres), GeoJSON validity by
// geojson-validation, orientation by the right-hand rule of RFC 7946 §3.1.6.
import { describe, expect, it } from 'vitest';
import * as gjv from 'geojson-validation';
import type { MultiLineString, Position } from 'geojson';
import { contourFeatures, contourLevels, surfaceContours, PROBABILITY_LEVELS } from '../../src/io/contours.ts';
import { createTransform } from '../../src/io/crs.ts';
import { CAUTION } from '../../src/core/shared/caution.ts';
import type { Grid } from '../../src/core/geometry/grid.ts';

const WORK = 'EPSG:32633';
const toWork = createTransform('EPSG:4326', WORK);

function linearField(grid: Grid, f: (i: number, j: number) => number): Float64Array {
  const v = new Float64Array(grid.nx * grid.ny);
  for (let j = 0; j < grid.ny; j++) for (let i = 0; i < grid.nx; i++) v[j * grid.nx + i] = f(i, j);
  return v;
}

function signedArea(ring: Position[]): number {
  let s = 0;
  for (let i = 0, j = ring.length - 1; i < ring.length; j = i++) s += ring[j][0] * ring[i][1] - ring[i][0] * ring[j][1];
  return s / 2;
}

const grid: Grid = { x0: 500000, y0: 5400100, cell: 10, nx: 20, ny: 10 };

describe('contourFeatures', () => {
  it('contourFeatures puts the isoline of v = column index at level 10.5 on the straight line x = x0 + 11·cell, from the first to the last row centre', () => {
    const values = linearField(grid, (i) => i);
    const f = contourFeatures({ grid, values, surface: 'mean', workCrs: WORK, unit: 'mg/kg', levels: [10.5] });
    const lines = f.filter((x) => x.properties.kind === 'isoline');
    expect(lines).toHaveLength(1);
    expect(lines[0].properties).toMatchObject({ level: 10.5, unit: 'mg/kg', surface: 'mean', caution: CAUTION, label: 'mean = 10.5 mg/kg' });
    const coords = (lines[0].geometry.coordinates as Position[][]);
    expect(coords).toHaveLength(1);
    const ys: number[] = [];
    for (const p of coords[0]) {
      const [x, y] = toWork.forward(p[0], p[1]);
      // 1e-7° rounding of lon/lat is about 1 cm.
      expect(Math.abs(x - (grid.x0 + 11 * grid.cell))).toBeLessThan(0.02);
      ys.push(y);
    }
    expect(Math.max(...ys)).toBeCloseTo(grid.y0 - 0.5 * grid.cell, 1);
    expect(Math.min(...ys)).toBeCloseTo(grid.y0 - (grid.ny - 0.5) * grid.cell, 1);
  });

  it('contourFeatures bands tile the hull of the cell centres: their areas add up to (nx − 1)(ny − 1)·cell², exteriors counter-clockwise, holes clockwise', () => {
    // Smooth, and steep (bands about a cell wide: the field is refined before contouring).
    for (const [values, tolerance] of [
      [linearField(grid, (i, j) => Math.sin(i / 6) * 10 + Math.cos(j / 4) * 6), 1e-3],
      [linearField(grid, (i, j) => Math.sin(i / 3) * 10 + Math.cos(j / 2) * 6), 1e-2],
    ] as const) {
    const f = contourFeatures({ grid, values, surface: 'mean', workCrs: WORK, unit: 'mg/kg', levels: [-8, -3, 0, 4, 9] });
    let total = 0;
    for (const band of f.filter((x) => x.properties.kind === 'band')) {
      for (const polygon of band.geometry.coordinates as Position[][][]) {
        polygon.forEach((ring, r) => {
          expect(signedArea(ring) > 0, `ring ${r}`).toBe(r === 0);
          const work = ring.map((p) => toWork.forward(p[0], p[1]));
          total += (r === 0 ? 1 : -1) * Math.abs(signedArea(work));
        });
      }
    }
    const hull = (grid.nx - 1) * (grid.ny - 1) * grid.cell * grid.cell;
    expect(Math.abs(total - hull) / hull).toBeLessThan(tolerance);
    }
  });

  it('contourFeatures leaves out the stretches that only follow the edge of a masked area (isolines end on the edge)', () => {
    const mask = new Uint8Array(grid.nx * grid.ny);
    for (let j = 0; j < grid.ny; j++) for (let i = 0; i < grid.nx; i++) mask[j * grid.nx + i] = (i - 9.5) ** 2 / 64 + (j - 4.5) ** 2 / 16 < 1 ? 1 : 0;
    const values = linearField(grid, (i) => i);
    const f = contourFeatures({ grid: { ...grid, mask }, values, surface: 'mean', workCrs: WORK, levels: [10.5] });
    const line = f.find((x) => x.properties.kind === 'isoline')!;
    for (const part of line.geometry.coordinates as Position[][]) {
      for (const p of part) {
        const [x] = toWork.forward(p[0], p[1]);
        // On the line x0 + 11 cells: the part along the edge is left out.
        expect(Math.abs(x - (grid.x0 + 11 * grid.cell))).toBeLessThan(0.02);
      }
    }
  });

  it('contourFeatures of P(exceed) uses the default probability levels and labels with the threshold', () => {
    const values = linearField(grid, (i) => i / (grid.nx - 1));
    const f = contourFeatures({ grid, values, surface: 'pExceed', workCrs: WORK, threshold: 200 });
    expect(f.filter((x) => x.properties.kind === 'isoline').map((x) => x.properties.level)).toEqual([...PROBABILITY_LEVELS]);
    expect(f.every((x) => x.properties.unit === 'probability' && x.properties.threshold === 200)).toBe(true);
    const bands = f.filter((x) => x.properties.kind === 'band');
    expect(bands.map((b) => [b.properties.min, b.properties.max])).toEqual([[null, 0.1], [0.1, 0.25], [0.25, 0.5], [0.5, 0.75], [0.75, 0.9], [0.9, null]]);
  });

  it('contourFeatures keeps local x, y for a grid in local coordinates, and surfaceContours says they are local', () => {
    const values = linearField(grid, (i) => i);
    const f = contourFeatures({ grid, values, surface: 'mean', workCrs: 'local', levels: [4.5] });
    const line = f.find((x) => x.properties.kind === 'isoline')!.geometry as MultiLineString;
    // Level 4.5 lies halfway between the centres of columns 4 and 5: x = x0 + 5·cell (invariant: linear field).
    for (const part of line.coordinates) for (const [x, y] of part) {
      expect(x).toBeCloseTo(grid.x0 + 5 * grid.cell, 6);
      expect(y).toBeLessThanOrEqual(grid.y0);
      expect(y).toBeGreaterThanOrEqual(grid.y0 - grid.ny * grid.cell);
    }
    const fc = surfaceContours({ grid, surface: { mean: values }, workCrs: 'local' }) as unknown as Record<string, unknown>;
    expect(fc.coordinates).toBe('local');
    expect(String(fc.coordinatesNote)).toMatch(/not longitude\/latitude/);
  });
});

describe('surfaceContours', () => {
  it('surfaceContours is valid GeoJSON (geojson-validation) in WGS 84 inside the grid\'s area, with the caution', () => {
    const mean = linearField(grid, (i, j) => 100 + 40 * Math.sin(i / 4) + 25 * Math.cos(j / 3));
    const pExceed = Float64Array.from(mean, (m) => 1 / (1 + Math.exp(-(m - 110) / 8)));
    const fc = surfaceContours({ grid, surface: { mean, pExceed, threshold: 110 }, workCrs: WORK, unit: 'mg/kg' });
    expect(gjv.valid(fc, true)).toEqual([]);
    expect(fc.caution).toBe(CAUTION);
    expect(fc.features.some((f) => f.properties!.surface === 'pExceed')).toBe(true);
    const back = createTransform(WORK, 'EPSG:4326');
    const [west, south] = back.forward(grid.x0 - 1, grid.y0 - grid.ny * grid.cell - 1);
    const [east, north] = back.forward(grid.x0 + grid.nx * grid.cell + 1, grid.y0 + 1);
    const visit = (c: unknown): void => {
      if (typeof (c as number[])[0] === 'number') {
        const [lon, lat] = c as number[];
        expect(lon).toBeGreaterThan(west - 1e-4);
        expect(lon).toBeLessThan(east + 1e-4);
        expect(lat).toBeGreaterThan(south - 1e-4);
        expect(lat).toBeLessThan(north + 1e-4);
      } else (c as unknown[]).forEach(visit);
    };
    for (const f of fc.features) visit((f.geometry as { coordinates: unknown }).coordinates);
  });
});

describe('contourLevels', () => {
  it('contourLevels gives round levels strictly inside the range', () => {
    expect(contourLevels(3, 97, 8)).toEqual([10, 20, 30, 40, 50, 60, 70, 80, 90]);
    expect(contourLevels(0.12, 0.5, 4)).toEqual([0.2, 0.3, 0.4]);
    expect(contourLevels(5, 5)).toEqual([]);
  });
});
