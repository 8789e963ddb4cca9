// Covariate rasters read with geotiff.js against GDAL's own reading and bilinear resampling of rasters
// it wrote in two CRSs (tests/reference/make_covariate_raster.py).
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { loadFixture } from '../helpers/fixtures.ts';
import { expectClose } from '../helpers/tolerance.ts';
import { gridCovariates, rasterLattice, readCovariateRaster, sampleRaster, sampleRasterAt } from '../../src/io/covariate-raster.ts';

interface Point { x: number; y: number; value: number; workX: number; workY: number }
interface RasterCase {
  name: string; file: string; epsg: number; x0: number; y0: number; cell: number; nx: number; ny: number;
  exact: Point[]; bilinear: Point[]; noData: Array<{ x: number; y: number; workX: number; workY: number }>;
}

// Source: GDAL (osgeo) GTiff, ReadAsArray and gdal.Warp bilinear (make_covariate_raster.py).
const fixture = loadFixture<RasterCase>('covariate_raster.json');

async function load(c: RasterCase) {
  const bytes = new Uint8Array(readFileSync(resolve(__dirname, '..', 'reference', c.file)));
  return readCovariateRaster(bytes, c.name, c.file);
}

describe('readCovariateRaster against GDAL (make_covariate_raster.py)', () => {
  it('the fixture has a UTM and a LAEA Europe raster', () => {
    expect(fixture.cases.map((c) => c.epsg)).toEqual([32632, 3035]);
  });
  for (const c of fixture.cases) {
    it(`readCovariateRaster ${c.name}: georeferencing, exact float32 values at cell centres, no-data as NaN`, async () => {
      const r = await load(c);
      expect(r.crs).toBe(`EPSG:${c.epsg}`);
      expect([r.x0, r.y0, r.dx, r.dy, r.nx, r.ny]).toEqual([c.x0, c.y0, c.cell, c.cell, c.nx, c.ny]);
      const got = sampleRasterAt(r, c.exact.map((p) => p.x), c.exact.map((p) => p.y), 'nearest');
      expect(Array.from(got)).toEqual(c.exact.map((p) => p.value));
      const bil = sampleRasterAt(r, c.exact.map((p) => p.x), c.exact.map((p) => p.y), 'bilinear');
      expect(Array.from(bil)).toEqual(c.exact.map((p) => p.value));
      const holes = sampleRasterAt(r, c.noData.map((p) => p.x), c.noData.map((p) => p.y), 'nearest');
      expect(Array.from(holes).every(Number.isNaN)).toBe(true);
      const outside = sampleRasterAt(r, [c.x0 - 1, c.x0 + c.nx * c.cell + 1], [c.y0 - 5, c.y0 + 1], 'bilinear');
      expect(Array.from(outside).every(Number.isNaN)).toBe(true);
    });
    it(`sampleRasterAt ${c.name}: bilinear values as GDAL's bilinear warp gives them (1e-6)`, async () => {
      const r = await load(c);
      const got = sampleRasterAt(r, c.bilinear.map((p) => p.x), c.bilinear.map((p) => p.y), 'bilinear');
      expectClose(got, c.bilinear.map((p) => p.value), { rel: 1e-6 }, 'bilinear');
    });
    it(`sampleRaster ${c.name}: points of EPSG:32632 reprojected to the raster's CRS (PROJ's points, 2e-3)`, async () => {
      const r = await load(c);
      const got = sampleRaster(r, c.bilinear.map((p) => p.workX), c.bilinear.map((p) => p.workY), 'EPSG:32632', 'bilinear');
      expectClose(got, c.bilinear.map((p) => p.value), { abs: 2e-3 }, 'reprojected bilinear');
    });
  }
  it('rasterLattice of a raster in the working CRS is its own lattice; gridCovariates masks and counts no-data cells', async () => {
    const c = fixture.cases[0];
    const r = await load(c);
    const grid = rasterLattice(r, 'EPSG:32632');
    expect(grid).toEqual({ x0: c.x0, y0: c.y0, cell: c.cell, nx: c.nx, ny: c.ny });
    const g = gridCovariates(grid, { covariates: [c.name] }, [r], 'EPSG:32632');
    let masked = 0;
    for (let k = 0; k < g.grid.mask!.length; k++) masked += 1 - g.grid.mask![k];
    expect(masked).toBe(c.noData.length);
    expect(g.warnings[0].message).toContain(`${c.noData.length} of ${c.nx * c.ny} grid cells`);
    // Cell centres hold the raster's own values.
    expect(g.covariates[5 * c.nx + 7]).toBe(r.values[5 * c.nx + 7]);
  });
});
