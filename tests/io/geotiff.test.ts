// surfaceGeoTiff and bandsGeoTiff checked against GDAL: tests/reference/gdal.json records what GDAL
// 3.6 (Debian gdal-bin, `gdalinfo -json`, osgeo ReadAsArray) reads from the seeded files of
// gdal-case.ts, among them a 40-band file.
import { describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { execFileSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fromArrayBuffer } from 'geotiff';
import { loadFixture } from '../helpers/fixtures.ts';
import { expectClose } from '../helpers/tolerance.ts';
import { EXTRA_BANDS, extraBandValue, GDAL_CASE_SOFTWARE, gdalCases, type GdalCase } from '../reference/gdal-case.ts';
import { SOFTWARE } from '../../src/core/shared/version.ts';
import { bandDescriptions, bandsGeoTiff, gdalMetadataXml, NO_DATA, readAsciiTag, surfaceGeoTiff, USER_DEFINED_CRS } from '../../src/io/geotiff.ts';
import { createPredictor } from '../../src/core/prediction/kriging.ts';
import { cellCentres } from '../../src/core/geometry/grid.ts';
import { exceedanceProbability } from '../../src/core/shared/normal.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';
import { CAUTION } from '../../src/core/shared/caution.ts';

interface GdalRecord {
  name: string;
  sha256: string;
  epsg: number;
  geoTransform: number[];
  size: [number, number];
  areaOrPoint: string;
  description: string;
  software: string;
  bandCount: number;
  bands: Array<{ description: string; noData: number; type: string; values: Array<number | null> }>;
}

const fixture = loadFixture<GdalRecord>('gdal.json');
const cases = gdalCases();
const byName = (name: string): GdalCase => cases.find((c) => c.name === name)!;
/** The cases with only the surface bands (mean, sd, P(exceed)). */
const surfaceCases = fixture.cases.filter((rec) => byName(rec.name).extraBands.length === 0);

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
    expect(surfaceCases.length).toBe(2);
    for (const rec of surfaceCases) {
      const c = byName(rec.name);
      // Source: GDAL gdalinfo -json (gdal.json).
      expect(rec.epsg).toBe(32633);
      expect(rec.geoTransform).toEqual([c.grid.x0, c.grid.cell, 0, c.grid.y0, 0, -c.grid.cell]);
      expect(rec.size).toEqual([c.grid.nx, c.grid.ny]);
      expect(rec.areaOrPoint).toBe('Area');
      expect(rec.bandCount).toBe(c.threshold === undefined ? 2 : 3);
      expect(rec.description).toBe(`Gapwise surfaces. ${CAUTION}`);
      expect(rec.software).toBe(GDAL_CASE_SOFTWARE);
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
      rec.bands.slice(0, expected.length).forEach((b, i) => {
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
      expect(active).toBeGreaterThan(c.extraBands.length > 0 ? 50 : 100);
      if (c.grid.mask) expect(rec.bands[0].values.some((v) => v === null)).toBe(true);
    }
  });

  it('surfaceGeoTiff with 37 extra bands: GDAL reads 40 bands, their names, georeferencing and every value written (many-band file)', () => {
    const rec = fixture.cases.find((r) => r.name === 'many-bands')!;
    const c = byName('many-bands');
    // Source: GDAL gdalinfo -json and osgeo ReadAsArray (gdal.json).
    expect(rec.bandCount).toBe(40);
    expect(rec.bands.length).toBe(3 + EXTRA_BANDS);
    expect(rec.epsg).toBe(32633);
    expect(rec.geoTransform).toEqual([c.grid.x0, c.grid.cell, 0, c.grid.y0, 0, -c.grid.cell]);
    expect(rec.size).toEqual([c.grid.nx, c.grid.ny]);
    expect(rec.areaOrPoint).toBe('Area');
    expect(rec.description).toBe(`Gapwise surfaces. ${CAUTION}`);
    expect(rec.bands.map((b) => b.description)).toEqual([
      'mean nitrate (mg/L)', 'sd nitrate (mg/L)', 'P(nitrate > 60 mg/L)',
      ...Array.from({ length: EXTRA_BANDS }, (_, b) => `realisation ${b + 1} (mg/L)`),
    ]);
    for (let b = 0; b < EXTRA_BANDS; b++) {
      const values = rec.bands[3 + b].values;
      expect(rec.bands[3 + b].noData).toBe(NO_DATA);
      expect(rec.bands[3 + b].type).toBe('Float32');
      for (let k = 0; k < values.length; k++) {
        const inside = c.grid.mask![k] === 1;
        expect(values[k], `band ${4 + b} cell ${k}`).toBe(inside ? extraBandValue(b, k) : null);
      }
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

describe('bandsGeoTiff', () => {
  const grid = { x0: 1000, y0: 2030, cell: 10, nx: 3, ny: 3, mask: Uint8Array.from([1, 1, 1, 1, 1, 1, 1, 1, 0]) };

  it('bandsGeoTiff writes each band in order with its name, no-data outside the mask, as geotiff.js reads it back', async () => {
    const bands = Array.from({ length: 5 }, (_, b) => Float32Array.from({ length: 9 }, (_, k) => b * 10 + k));
    const names = bands.map((_, b) => `band ${b + 1} (m)`);
    const out = bandsGeoTiff({ grid, bands, names, workCrs: 'EPSG:32633', title: 'Test bands.' });
    expect(out.epsg).toBe(32633);
    expect(out.bands).toEqual(names);
    expect(out.warnings).toEqual([]);
    expect(out.bytes.buffer).toBe(out.buffer);
    expect(readAsciiTag(out.buffer, 270)).toBe(`Test bands. ${CAUTION}`);
    expect(readAsciiTag(out.buffer, 42113)).toBe(String(NO_DATA));
    expect(readAsciiTag(out.buffer, 42112)).toBe(gdalMetadataXml(names));
    // TIFF 6.0 tag 305 Software: "name and version number of the software package" (TIFF 6.0 specification, from memory).
    expect(readAsciiTag(out.buffer, 305)).toBe(SOFTWARE);
    const image = await (await fromArrayBuffer(out.buffer)).getImage();
    expect(image.getSamplesPerPixel()).toBe(5);
    expect(image.getOrigin()).toEqual([1000, 2030, 0]);
    const rasters = (await image.readRasters()) as unknown as Float32Array[];
    rasters.forEach((r, b) => expect(Array.from(r)).toEqual([...Array.from({ length: 8 }, (_, k) => b * 10 + k), NO_DATA]));
  });

  it('bandsGeoTiff marks a CRS without an EPSG code as user-defined with a citation naming it, and warns', async () => {
    const proj = '+proj=tmerc +lat_0=0 +lon_0=9 +k=1 +x_0=0 +y_0=0 +ellps=GRS80 +units=m';
    const out = bandsGeoTiff({ grid, bands: [new Float32Array(9)], names: ['zero'], workCrs: proj, title: 'Zeros.' });
    expect(out.epsg).toBe(USER_DEFINED_CRS);
    expect(out.warnings.map((w) => w.code)).toEqual(['crs-not-epsg']);
    const keys = (await (await fromArrayBuffer(out.buffer)).getImage()).getGeoKeys() as Record<string, unknown>;
    expect(keys.ProjectedCSTypeGeoKey).toBe(USER_DEFINED_CRS);
    expect(String(keys.GTCitationGeoKey).replace(/\|$/, '')).toBe(proj);
  });

  it('bandsGeoTiff rejects no bands, a name count that differs from the band count and a band of the wrong size', () => {
    expect(() => bandsGeoTiff({ grid, bands: [], names: [], workCrs: 'EPSG:32633', title: '' }))
      .toThrow(new GapwiseError('bad-option', 'Expected at least 1 band to write, got 0.'));
    expect(() => bandsGeoTiff({ grid, bands: [new Float32Array(9)], names: ['a', 'b'], workCrs: 'EPSG:32633', title: '' }))
      .toThrow(new GapwiseError('bad-option', 'Expected one name per band (1), got 2.'));
    expect(() => bandsGeoTiff({ grid, bands: [new Float32Array(9), new Float32Array(8)], names: ['a', 'b'], workCrs: 'EPSG:32633', title: '' }))
      .toThrow(new GapwiseError('bad-option', 'Expected band 2 to have 9 cells (3 × 3), got 8.'));
  });

  it.runIf(existsSync('/usr/bin/gdalinfo'))('bandsGeoTiff: gdalinfo names the user-defined CRS of local coordinates by its citation (runs where gdal-bin is installed)', () => {
    const dir = mkdtempSync(join(tmpdir(), 'gapwise-gdal-'));
    try {
      const path = join(dir, 'local.tif');
      writeFileSync(path, bandsGeoTiff({ grid, bands: [new Float32Array(9)], names: ['zero'], workCrs: 'local', title: 'Zeros.' }).bytes);
      // GDAL notes on stderr that an engineering CRS has no ellipsoid; only stdout is read.
      const info = JSON.parse(execFileSync('/usr/bin/gdalinfo', ['-json', path], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] })) as {
        geoTransform: number[]; coordinateSystem: { wkt: string }; bands: Array<{ description: string }>;
      };
      expect(info.coordinateSystem.wkt).toMatch(/^ENGCRS\["local planar coordinate units"/);
      expect(info.geoTransform).toEqual([1000, 10, 0, 2030, 0, -10]);
      expect(info.bands.map((b) => b.description)).toEqual(['zero']);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
