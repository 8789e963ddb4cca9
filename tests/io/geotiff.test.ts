// surfaceGeoTiff checked against GDAL: tests/reference/gdal.json records what GDAL 3.6 (Debian
// gdal-bin, `gdalinfo -json`, osgeo ReadAsArray) reads from the seeded files of gdal-case.ts.
import { describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { execFileSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fromArrayBuffer } from 'geotiff';
import { loadFixture } from '../helpers/fixtures.ts';
import { expectClose } from '../helpers/tolerance.ts';
import { gdalCases, type GdalCase } from '../reference/gdal-case.ts';
import { bandDescriptions, gdalMetadataXml, NO_DATA, readAsciiTag, surfaceGeoTiff } from '../../src/io/geotiff.ts';
import { createPredictor } from '../../src/core/kriging.ts';
import { cellCentres } from '../../src/core/grid.ts';
import { exceedanceProbability } from '../../src/core/normal.ts';
import { GapwiseError } from '../../src/core/errors.ts';
import { CAUTION } from '../../src/core/caution.ts';

interface GdalRecord {
  name: string;
  sha256: string;
  epsg: number;
  geoTransform: number[];
  size: [number, number];
  areaOrPoint: string;
  description: string;
  bandCount: number;
  bands: Array<{ description: string; noData: number; type: string; values: Array<number | null> }>;
}

const fixture = loadFixture<GdalRecord>('gdal.json');
const cases = gdalCases();
const byName = (name: string): GdalCase => cases.find((c) => c.name === name)!;

/** Kriging predictions (mean, sd, P(exceed)) at the active cell centres, in grid order (NaN outside). */
function expectedBands(c: GdalCase): Float64Array[] {
  const { x, y, index } = cellCentres(c.grid);
  const p = createPredictor(c.samples, c.model).predict(x, y);
  const n = c.grid.nx * c.grid.ny;
  const bands = [new Float64Array(n).fill(NaN), new Float64Array(n).fill(NaN)];
  if (c.threshold !== undefined) bands.push(new Float64Array(n).fill(NaN));
  for (let m = 0; m < index.length; m++) {
    bands[0][index[m]] = p.mean[m];
    bands[1][index[m]] = p.sd[m];
    if (c.threshold !== undefined) bands[2][index[m]] = exceedanceProbability(p.mean[m], p.sd[m], c.threshold);
  }
  return bands;
}

describe('surfaceGeoTiff', () => {
  it('surfaceGeoTiff writes the very bytes GDAL read for the fixture (seeded cases)', () => {
    for (const rec of fixture.cases) {
      const sha = createHash('sha256').update(new Uint8Array(byName(rec.name).tiff)).digest('hex');
      expect(sha, rec.name).toBe(rec.sha256);
    }
  });

  it('surfaceGeoTiff georeferencing as GDAL reads it: EPSG code, north-up geotransform of the cell size, PixelIsArea, bands', () => {
    for (const rec of fixture.cases) {
      const c = byName(rec.name);
      // Source: GDAL gdalinfo -json (gdal.json).
      expect(rec.epsg).toBe(32633);
      expect(rec.geoTransform).toEqual([c.grid.x0, c.grid.cell, 0, c.grid.y0, 0, -c.grid.cell]);
      expect(rec.size).toEqual([c.grid.nx, c.grid.ny]);
      expect(rec.areaOrPoint).toBe('Area');
      expect(rec.bandCount).toBe(c.threshold === undefined ? 2 : 3);
      expect(rec.description).toBe(`Gapwise surfaces. ${CAUTION}`);
      expect(rec.bands.map((b) => b.description)).toEqual(
        c.threshold === undefined ? ['mean nitrate (mg/L)', 'sd nitrate (mg/L)'] : ['mean nitrate (mg/L)', 'sd nitrate (mg/L)', 'P(nitrate > 60 mg/L)']);
      for (const b of rec.bands) {
        expect(b.noData).toBe(NO_DATA);
        expect(b.type).toBe('Float32');
      }
    }
  });

  it('surfaceGeoTiff pixel values as GDAL reads them equal kriging predictions at the cell centres (float32 precision), no-data outside the boundary', () => {
    for (const rec of fixture.cases) {
      const c = byName(rec.name);
      const expected = expectedBands(c);
      let active = 0;
      rec.bands.forEach((b, i) => {
        expect(b.values.length).toBe(c.grid.nx * c.grid.ny);
        for (let k = 0; k < b.values.length; k++) {
          const inside = !c.grid.mask || c.grid.mask[k] === 1;
          const v = b.values[k];
          if (!inside) {
            expect(v, `${rec.name} band ${i + 1} cell ${k}`).toBeNull();
            continue;
          }
          if (i === 0) active++;
          expectClose(v as number, expected[i][k], fixture.tolerance, `${rec.name} band ${i + 1} cell ${k}`);
        }
      });
      expect(active).toBeGreaterThan(100);
      if (c.grid.mask) expect(rec.bands[0].values.some((v) => v === null)).toBe(true);
    }
  });

  it.runIf(existsSync('/usr/bin/gdalinfo'))('surfaceGeoTiff: gdalinfo -json on a freshly written file agrees with the fixture (runs where gdal-bin is installed)', () => {
    const dir = mkdtempSync(join(tmpdir(), 'gapwise-gdal-'));
    try {
      for (const rec of fixture.cases) {
        const path = join(dir, `${rec.name}.tif`);
        writeFileSync(path, new Uint8Array(byName(rec.name).tiff));
        const info = JSON.parse(execFileSync('/usr/bin/gdalinfo', ['-json', path], { encoding: 'utf8' })) as {
          geoTransform: number[]; size: number[]; coordinateSystem: { wkt: string }; bands: Array<{ description: string; noDataValue: number }>;
        };
        expect(info.geoTransform).toEqual(rec.geoTransform);
        expect(info.size).toEqual(rec.size);
        expect([...info.coordinateSystem.wkt.matchAll(/ID\["EPSG",(\d+)\]/g)].pop()?.[1]).toBe(String(rec.epsg));
        expect(info.bands.map((b) => b.description)).toEqual(rec.bands.map((b) => b.description));
        expect(info.bands.every((b) => b.noDataValue === NO_DATA)).toBe(true);
      }
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('surfaceGeoTiff GeoKeys as geotiff.js reads them back: projected, PixelIsArea, the EPSG code, no whole-globe default', async () => {
    const c = byName('boundary-threshold');
    const tiff = await fromArrayBuffer(c.tiff);
    const image = await tiff.getImage();
    const keys = image.getGeoKeys() as Record<string, unknown>;
    expect(keys.GTModelTypeGeoKey).toBe(1);
    expect(keys.GTRasterTypeGeoKey).toBe(1);
    expect(keys.ProjectedCSTypeGeoKey).toBe(32633);
    expect(keys.GeographicTypeGeoKey).toBeUndefined();
    expect(image.getOrigin()).toEqual([c.grid.x0, c.grid.y0, 0]);
    expect(image.getResolution()).toEqual([c.grid.cell, -c.grid.cell, 0]);
    expect(image.getSamplesPerPixel()).toBe(3);
  });

  it('surfaceGeoTiff names bands with the unit and threshold and keeps long or non-ASCII units whole in UTF-8', () => {
    expect(bandDescriptions({ mean: [], sd: [] }, 'mg/kg', 'Pb')).toEqual(['mean Pb (mg/kg)', 'sd Pb (mg/kg)']);
    expect(bandDescriptions({ mean: [], sd: [], pExceed: [], threshold: 0.5 }, 'µg/L', '')).toEqual(['mean (µg/L)', 'sd (µg/L)', 'P(value > 0.5 µg/L)']);
    expect(gdalMetadataXml(['a<b'])).toBe('<GDALMetadata><Item name="DESCRIPTION" sample="0" role="description">a&lt;b</Item></GDALMetadata>');
    const grid = { x0: 0, y0: 100, cell: 10, nx: 3, ny: 2 };
    const surface = { mean: [1, 2, 3, 4, 5, NaN], sd: [1, 1, 1, 1, 1, 1], pExceed: [0, 0.5, 1, 0, 0, 0], threshold: 2 };
    const out = surfaceGeoTiff({ grid, surface, workCrs: 'EPSG:32633', unit: 'µg/L of a very long unit name indeed', valueName: 'nitrate as nitrogen (dissolved)' });
    const xml = readAsciiTag(out.buffer, 42112)!;
    expect(xml).toContain('µg/L of a very');
    expect(xml).toContain('sample="2"');
    expect(out.bands.every((b) => b.length <= 60)).toBe(true);
  });

  it('surfaceGeoTiff writes no-data for a non-finite value inside the area', async () => {
    const grid = { x0: 0, y0: 100, cell: 10, nx: 3, ny: 2 };
    const out = surfaceGeoTiff({ grid, surface: { mean: [1, 2, 3, 4, 5, NaN], sd: [1, 1, 1, 1, 1, 1] }, workCrs: 'EPSG:32633' });
    const image = await (await fromArrayBuffer(out.buffer)).getImage();
    const [mean] = (await image.readRasters()) as unknown as Float32Array[];
    expect(Array.from(mean)).toEqual([1, 2, 3, 4, 5, NO_DATA]);
  });

  it('surfaceGeoTiff marks a CRS without an EPSG code as user-defined, with a warning', () => {
    const grid = { x0: 0, y0: 20, cell: 10, nx: 2, ny: 2 };
    const out = surfaceGeoTiff({ grid, surface: { mean: [1, 2, 3, 4], sd: [1, 1, 1, 1] }, workCrs: 'local' });
    expect(out.epsg).toBe(32767);
    expect(out.warnings.map((w) => w.code)).toEqual(['crs-not-epsg']);
  });

  it('surfaceGeoTiff rejects a band of the wrong size with a GapwiseError naming both sizes', () => {
    const grid = { x0: 0, y0: 20, cell: 10, nx: 2, ny: 2 };
    expect(() => surfaceGeoTiff({ grid, surface: { mean: [1, 2, 3], sd: [1, 1, 1, 1] }, workCrs: 'EPSG:32633' }))
      .toThrow(new GapwiseError('bad-option', 'Expected band 1 to have 4 cells (2 × 2), got 3.'));
  });
});
