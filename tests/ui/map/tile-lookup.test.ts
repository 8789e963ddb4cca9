import { describe, expect, it } from 'vitest';
import proj4 from 'proj4';
import { buildTileLattice, latticePosition, paintTile, readCell, type TileLattice } from '../../../src/ui/map/tile-lookup.ts';
import { buildLut, colourAt } from '../../../src/ui/map/colour-scales.ts';
import type { Grid } from '../../../src/core/geometry/grid.ts';

// Web Mercator as Leaflet's default CRS (EPSG:3857, 256-pixel tiles) unprojects a global pixel
// (spherical Mercator, the EPSG:3857 definition; written here from the formula, not from Leaflet).
function mercatorPixelToLngLat(zoom: number) {
  const world = 256 * 2 ** zoom;
  return (px: number, py: number): [number, number] => [
    (px / world) * 360 - 180,
    (Math.atan(Math.sinh(Math.PI * (1 - (2 * py) / world))) * 180) / Math.PI,
  ];
}
function mercatorLngLatToPixel(zoom: number, lon: number, lat: number): [number, number] {
  const world = 256 * 2 ** zoom;
  const s = Math.sin((lat * Math.PI) / 180);
  return [((lon + 180) / 360) * world, (0.5 - Math.log((1 + s) / (1 - s)) / (4 * Math.PI)) * world];
}

// UTM zone 33N: central meridian 15° E. The grid sits at 17.6° E, 45° N: 2.6° off the meridian.
const UTM33 = '+proj=utm +zone=33 +datum=WGS84 +units=m +no_defs';
const toUtm = proj4('EPSG:4326', UTM33);
const toWork = (lon: number, lat: number) => toUtm.forward([lon, lat]) as [number, number];
const fromWork = (x: number, y: number) => toUtm.inverse([x, y]) as [number, number];
const [cx, cy] = toWork(17.6, 45);
const CELL = 50;
// A 5 km × 5 km grid of 50 m cells centred there, corners on multiples of the cell.
const grid: Grid = { x0: Math.floor((cx - 2500) / CELL) * CELL, y0: Math.ceil((cy + 2500) / CELL) * CELL, cell: CELL, nx: 100, ny: 100 };

function tilesOverGrid(zoom: number): [number, number][] {
  const corners = [[grid.x0, grid.y0], [grid.x0 + 5000, grid.y0], [grid.x0, grid.y0 - 5000], [grid.x0 + 5000, grid.y0 - 5000]]
    .map(([x, y]) => mercatorLngLatToPixel(zoom, ...fromWork(x, y)));
  const tx = corners.map((c) => Math.floor(c[0] / 256)), ty = corners.map((c) => Math.floor(c[1] / 256));
  const out: [number, number][] = [];
  for (let x = Math.min(...tx); x <= Math.max(...tx); x++) for (let y = Math.min(...ty); y <= Math.max(...ty); y++) out.push([x, y]);
  return out;
}

describe('buildTileLattice / latticePosition', () => {
  it('latticePosition with a 16 px lattice stays within 0.5 cell of exact per-pixel projection (UTM 33N at 17.6° E, 45° N; source: proj4)', () => {
    let worst = 0;
    let checked = 0;
    for (const zoom of [11, 13, 15]) {
      const unproject = mercatorPixelToLngLat(zoom);
      const tiles = tilesOverGrid(zoom);
      for (const [tx, ty] of tiles.slice(0, 6)) {
        const lattice = buildTileLattice(tx * 256, ty * 256, 256, 256, 16, unproject, toWork);
        for (let py = 0; py < 256; py += 5) {
          for (let px = 0; px < 256; px += 5) {
            const [ex, ey] = toWork(...unproject(tx * 256 + px + 0.5, ty * 256 + py + 0.5));
            const [lx, ly] = latticePosition(lattice, px + 0.5, py + 0.5);
            worst = Math.max(worst, Math.abs(lx - ex) / CELL, Math.abs(ly - ey) / CELL);
            checked++;
          }
        }
      }
    }
    expect(checked).toBeGreaterThan(10_000);
    expect(worst, `worst error in cells: ${worst}`).toBeLessThanOrEqual(0.5);
    // In fact far below: the projection is nearly affine across 16 pixels.
    expect(worst).toBeLessThan(0.01);
  });

  it('placing the grid as an axis-aligned image by its lat/lng box would be off by more than 2 cells (why the lattice exists)', () => {
    // The naive overlay: the grid's lat/lng bounding box stretched linearly in Mercator pixels.
    const zoom = 15;
    const ll = [[grid.x0, grid.y0], [grid.x0 + 5000, grid.y0], [grid.x0, grid.y0 - 5000], [grid.x0 + 5000, grid.y0 - 5000]].map(([x, y]) => fromWork(x, y));
    const west = Math.min(...ll.map((p) => p[0])), east = Math.max(...ll.map((p) => p[0]));
    const south = Math.min(...ll.map((p) => p[1])), north = Math.max(...ll.map((p) => p[1]));
    const [pw, pn] = mercatorLngLatToPixel(zoom, west, north);
    const [pe, ps] = mercatorLngLatToPixel(zoom, east, south);
    let worst = 0;
    for (let j = 0; j <= 100; j += 10) for (let i = 0; i <= 100; i += 10) {
      const [lon, lat] = fromWork(grid.x0 + i * CELL, grid.y0 - j * CELL);
      const [px, py] = mercatorLngLatToPixel(zoom, lon, lat);
      const naiveI = ((px - pw) / (pe - pw)) * 100, naiveJ = ((py - pn) / (ps - pn)) * 100;
      worst = Math.max(worst, Math.hypot(naiveI - i, naiveJ - j) * CELL);
    }
    // Grid convergence at 2.6° from the meridian at 45° N is about 1.8°: ~160 m over 5 km.
    expect(worst).toBeGreaterThan(100);
    expect(worst).toBeLessThan(250);
  });

  it('buildTileLattice puts nodes on the tile edges even when the step does not divide the tile', () => {
    const l = buildTileLattice(0, 0, 100, 40, 16, (px, py) => [px, py], (lon, lat) => [lon * 2, -lat]);
    expect(Array.from(l.nodeX)).toEqual([0, 16, 32, 48, 64, 80, 96, 100]);
    expect(Array.from(l.nodeY)).toEqual([0, 16, 32, 40]);
    expect(latticePosition(l, 98.5, 37)).toEqual([197, -37]);
  });

  it('buildTileLattice marks nodes the projection cannot reach as NaN', () => {
    const l = buildTileLattice(0, 0, 32, 32, 16, (px, py) => [px, py], (lon) => {
      if (lon > 20) throw new Error('outside the projection');
      return [lon, 0];
    });
    expect(Number.isNaN(l.x[2])).toBe(true);
    expect(l.x[1]).toBe(16);
  });
});

describe('paintTile', () => {
  // A 4 × 3 grid drawn on an 8 × 6 pixel "tile" whose pixels map 1:1 onto half cells.
  const g: Grid = { x0: 0, y0: 30, cell: 10, nx: 4, ny: 3, mask: Uint8Array.from([1, 1, 1, 1, 1, 0, 1, 1, 1, 1, 1, 1]) };
  const lattice: TileLattice = buildTileLattice(0, 0, 10, 6, 4, (px, py) => [px, py], (lon, lat) => [lon * 5, 30 - lat * 5]);
  const values = Float32Array.from([0, 1, 2, 3, 4, 5, NaN, 7, 8, 9, 10, 11]);
  const sd = Float32Array.from([1, 1, 1, 1, 1, 1, 1, 9, 1, 1, 1, 1]);
  const lut = buildLut('loam');
  // The table's entry nearest to t (256 entries).
  const lutColour = (t: number) => [...colourAt('loam', Math.round(t * 255) / 255), 255];
  const at = (out: Uint8ClampedArray, px: number, py: number) => Array.from(out.subarray(4 * (py * 10 + px), 4 * (py * 10 + px) + 4));

  it('paintTile colours each pixel by the nearest cell through the table; transparent for NaN, mask, high sd and outside', () => {
    const out = new Uint8ClampedArray(10 * 6 * 4).fill(77);
    const painted = paintTile(lattice, { grid: g, values, lut, domain: [0, 11], sd, hideAboveSd: 5 }, out);
    expect(at(out, 0, 0)).toEqual([...colourAt('loam', 0), 255]); // cell 0
    expect(at(out, 7, 1)).toEqual(lutColour(3 / 11)); // cell 3
    expect(at(out, 3, 5)).toEqual(lutColour(9 / 11)); // cell 9
    expect(at(out, 2, 2)).toEqual([0, 0, 0, 0]); // cell 5: masked out
    expect(at(out, 4, 3)).toEqual([0, 0, 0, 0]); // cell 6: NaN
    expect(at(out, 6, 3)).toEqual([0, 0, 0, 0]); // cell 7: sd 9 > 5
    expect(at(out, 8, 0)).toEqual([0, 0, 0, 0]); // east of the grid
    // 60 pixels: 12 east of the grid, 4 each for cells 5, 6, 7.
    expect(painted).toBe(60 - 12 - 12);
  });

  it('paintTile without hideAboveSd draws high-sd cells, and clamps values outside the domain', () => {
    const out = new Uint8ClampedArray(10 * 6 * 4);
    paintTile(lattice, { grid: g, values, lut, domain: [2, 4], sd, hideAboveSd: null }, out);
    expect(at(out, 6, 3)).toEqual([...colourAt('loam', 1), 255]);
    expect(at(out, 0, 0)).toEqual([...colourAt('loam', 0), 255]);
  });

  it('paintTile by bands of lattice rows gives the same pixels and count as one call', () => {
    const whole = new Uint8ClampedArray(10 * 6 * 4);
    const source = { grid: g, values, lut, domain: [0, 11] as [number, number], sd, hideAboveSd: 5 };
    const total = paintTile(lattice, source, whole);
    const banded = new Uint8ClampedArray(10 * 6 * 4).fill(77);
    let count = 0;
    for (let r = 0; r < lattice.rows - 1; r++) count += paintTile(lattice, source, banded, r, r + 1);
    expect(lattice.rows - 1).toBeGreaterThan(1);
    expect(count).toBe(total);
    expect(Array.from(banded)).toEqual(Array.from(whole));
    // One band leaves the other rows untouched.
    const first = new Uint8ClampedArray(10 * 6 * 4).fill(77);
    paintTile(lattice, source, first, 0, 1);
    expect(at(first, 0, 5)).toEqual([77, 77, 77, 77]);
    expect(at(first, 0, 0)).toEqual(at(whole, 0, 0));
  });

  it('paintTile with log spaces colours by ln(value): 3 halfway in ln between 1 and 9; 0 takes the first colour', () => {
    const out = new Uint8ClampedArray(10 * 6 * 4);
    paintTile(lattice, { grid: g, values, lut, domain: [1, 9], log: true }, out);
    // ln 3 = (ln 1 + ln 9) / 2 exactly; linear colours would put 3 at t = 0.25.
    // Entry 127.5 of 0…255: either neighbour (rounding of ln 3 / ln 9 · 255).
    expect([lutColour(127 / 255), lutColour(128 / 255)]).toContainEqual(at(out, 7, 1)); // cell 3, value 3
    expect(at(out, 7, 1)).not.toEqual(lutColour(2 / 8)); // not where linear colours put it
    expect(at(out, 0, 0)).toEqual([...colourAt('loam', 0), 255]); // cell 0, value 0
    expect(at(out, 1, 5)).toEqual(lutColour(Math.log(8) / Math.log(9))); // cell 8, value 8
  });
});

describe('readCell', () => {
  const g: Grid = { x0: 0, y0: 30, cell: 10, nx: 4, ny: 3, mask: Uint8Array.from([1, 1, 1, 1, 1, 0, 1, 1, 1, 1, 1, 1]) };
  const id = (lon: number, lat: number): [number, number] => [lon, lat];
  const values = Float64Array.from([0, 1, 2, 3, 4, 5, NaN, 7, 8, 9, 10, 11]);

  it('readCell returns the value and sd of the cell under the point, null outside, masked or NaN', () => {
    expect(readCell(g, values, values, id, 35, 15)).toEqual({ index: 7, i: 3, j: 1, value: 7, sd: 7, x: 35, y: 15 });
    expect(readCell(g, values, null, id, 1, 29)).toMatchObject({ index: 0, value: 0, sd: null });
    expect(readCell(g, values, null, id, 15, 15)).toBeNull(); // masked
    expect(readCell(g, values, null, id, 25, 15)).toBeNull(); // NaN
    expect(readCell(g, values, null, id, 41, 15)).toBeNull(); // outside
    expect(readCell(g, null, null, id, 1, 29)).toBeNull();
  });
});
