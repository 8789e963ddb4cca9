// The GeoTIFFs whose GDAL reading tests/reference/make_gdal.py records in gdal.json, built from a
// fixed seed. tests/io/geotiff.test.ts builds the same files and checks GDAL's reading against
// kriging predictions (and, for the many-band file, against the extra bands written). Run directly
// (`npx tsx tests/reference/gdal-case.ts DIR`) it writes them.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { createRandom } from '../../src/core/shared/random.ts';
import { makeSamples, type Samples } from '../../src/core/shared/samples.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';
import { gridForPolygons, gridFromExtent, type Grid } from '../../src/core/geometry/grid.ts';
import { computeSurface } from '../../src/core/prediction/surface.ts';
import { surfaceGeoTiff } from '../../src/io/geotiff.ts';

export interface GdalCase {
  name: string;
  samples: Samples;
  model: CovarianceModel;
  grid: Grid;
  threshold?: number;
  workCrs: string;
  unit: string;
  valueName: string;
  /** Bands written after mean, sd (and P(exceed)). */
  extraBands: Array<{ name: string; values: Float32Array }>;
  tiff: ArrayBuffer;
}

/** Number of extra bands of the many-band case (40 bands in all with mean, sd and P(exceed)). */
/** The Software tag of the fixture files: fixed, so a new release does not change their bytes. */
export const GDAL_CASE_SOFTWARE = 'Gapwise (reference case)';

export const EXTRA_BANDS = 37;

/** Extra band b (0-based) at cell k: a value that tells band and cell apart, exact in Float32. */
export function extraBandValue(b: number, k: number): number {
  return 100 * (b + 1) + k / 64;
}

/** 40 seeded samples over a 300 m × 200 m field in UTM zone 33N with a smooth signal and noise. */
export function caseSamples(seed = 7): Samples {
  const r = createRandom(seed);
  const x: number[] = [], y: number[] = [], v: number[] = [];
  for (let i = 0; i < 40; i++) {
    const px = 500000 + 300 * r.uniform();
    const py = 5400000 + 200 * r.uniform();
    x.push(px);
    y.push(py);
    v.push(50 + 15 * Math.sin((px - 500000) / 70) + 10 * Math.cos((py - 5400000) / 50) + 2 * r.normal());
  }
  return makeSamples(x, y, v);
}

export const CASE_MODEL: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 4 }, { type: 'matern', sill: 150, scale: 60, nu: 1.5 }],
  trend: 'constant',
  transform: 'none',
};

export function gdalCases(): GdalCase[] {
  const samples = caseSamples();
  const pentagon = [[[500010, 5400010], [500290, 5400020], [500300, 5400150], [500150, 5400195], [500005, 5400140], [500010, 5400010]]] as const;
  const specs = [
    { name: 'boundary-threshold', grid: gridForPolygons([pentagon as unknown as number[][][]], 10), threshold: 60 },
    { name: 'extent', grid: gridFromExtent(500000, 5400000, 500300, 5400200, 12.5, 10) },
    { name: 'many-bands', grid: gridForPolygons([pentagon as unknown as number[][][]], 20), threshold: 60, extra: EXTRA_BANDS },
  ];
  return specs.map((s) => {
    const surface = computeSurface(samples, CASE_MODEL, s.grid, s.threshold !== undefined ? { threshold: s.threshold } : {});
    const cells = s.grid.nx * s.grid.ny;
    const extraBands = Array.from({ length: s.extra ?? 0 }, (_, b) => ({
      name: `realisation ${b + 1} (mg/L)`,
      values: Float32Array.from({ length: cells }, (_, k) => extraBandValue(b, k)),
    }));
    const tiff = surfaceGeoTiff({ grid: s.grid, surface, workCrs: 'EPSG:32633', unit: 'mg/L', valueName: 'nitrate', extraBands, software: GDAL_CASE_SOFTWARE }).buffer;
    return { name: s.name, samples, model: CASE_MODEL, grid: s.grid, threshold: s.threshold, workCrs: 'EPSG:32633', unit: 'mg/L', valueName: 'nitrate', extraBands, tiff };
  });
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  const dir = process.argv[2] ?? '.';
  for (const c of gdalCases()) writeFileSync(join(dir, `${c.name}.tif`), new Uint8Array(c.tiff));
}
