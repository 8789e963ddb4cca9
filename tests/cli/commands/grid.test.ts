// gapwise grid: the three outputs by extension, their contents against the engine, and input errors.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import * as gjv from 'geojson-validation';
import { fromArrayBuffer } from 'geotiff';
import { planarSamplesCsv, workspace, type Workspace } from '../run-cli.ts';
import { readSamples } from '../../../src/io/intake.ts';
import { computeSurface } from '../../../src/core/surface.ts';
import { gridFromExtent } from '../../../src/core/grid.ts';
import { CAUTION } from '../../../src/core/caution.ts';

const MODEL = {
  structures: [{ type: 'nugget', sill: 0.5 }, { type: 'exponential', sill: 12, scale: 80 }], trend: 'constant', transform: 'none',
  crs: { work: 'EPSG:32633' },
};

describe('gapwise grid', () => {
  let ws: Workspace;
  beforeAll(() => {
    ws = workspace();
    ws.write('wells.csv', planarSamplesCsv());
    ws.write('model.json', JSON.stringify(MODEL));
  });
  afterAll(() => ws.remove());
  const base = ['--samples', 'wells.csv', '--crs', 'EPSG:32633', '--model', 'model.json', '--cell', '10', '--padding', '0'];

  it('grid --out .tif writes mean, sd and P(exceed) equal to computeSurface on the planned grid, and a JSON summary with the caution', async () => {
    const r = await ws.run('grid', ...base, '--threshold', '25', '--out', 'n.tif');
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    const intake = readSamples(planarSamplesCsv(), { fileName: 'wells.csv', crs: 'EPSG:32633' });
    let xmin = Infinity, xmax = -Infinity, ymin = Infinity, ymax = -Infinity;
    intake.samples.x.forEach((x) => { xmin = Math.min(xmin, x); xmax = Math.max(xmax, x); });
    intake.samples.y.forEach((y) => { ymin = Math.min(ymin, y); ymax = Math.max(ymax, y); });
    const grid = gridFromExtent(xmin, ymin, xmax, ymax, 10, 0);
    expect(summary).toMatchObject({ format: 'tif', workCrs: 'EPSG:32633', grid: { ...grid, cells: grid.nx * grid.ny }, threshold: 25, caution: CAUTION });
    expect(summary.bands).toEqual(['mean nitrate (mg/L)', 'sd nitrate (mg/L)', 'P(nitrate > 25 mg/L)']);
    const model = MODEL as unknown as Parameters<typeof computeSurface>[1];
    const expected = computeSurface(intake.samples, model, grid, { threshold: 25 });
    const image = await (await fromArrayBuffer(new Uint8Array(readFileSync(join(ws.dir, 'n.tif'))).buffer)).getImage();
    const [mean, sd, p] = (await image.readRasters()) as unknown as Float32Array[];
    expect(Array.from(mean)).toEqual(Array.from(expected.mean));
    expect(Array.from(sd)).toEqual(Array.from(expected.sd));
    expect(Array.from(p)).toEqual(Array.from(expected.pExceed!));
  });

  it('grid --out .csv writes one row per cell with the caution on the first line', async () => {
    const r = await ws.run('grid', ...base, '--out', 'n.csv');
    expect(r.code, r.stderr).toBe(0);
    const lines = ws.read('n.csv').trimEnd().split('\n');
    expect(lines[0]).toContain(CAUTION);
    expect(lines[1]).toBe('x,y,lon,lat,mean,sd');
    expect(lines.length - 2).toBe(JSON.parse(r.stdout).grid.cells);
  });

  it('grid --out .geojson writes valid contour GeoJSON at the given levels', async () => {
    const r = await ws.run('grid', ...base, '--threshold', '25', '--levels', '20,25,30', '--out', 'n.geojson');
    expect(r.code, r.stderr).toBe(0);
    const fc = JSON.parse(ws.read('n.geojson'));
    expect(gjv.valid(fc)).toBe(true);
    const levels = fc.features.filter((f: { properties: { kind: string; surface: string } }) => f.properties.kind === 'isoline' && f.properties.surface === 'mean').map((f: { properties: { level: number } }) => f.properties.level);
    expect(levels.every((l: number) => [20, 25, 30].includes(l))).toBe(true);
    expect(JSON.parse(r.stdout).features).toBe(fc.features.length);
  });

  it('grid refuses an unknown extension, a bad --levels list and a missing model, naming what is expected (exit 2)', async () => {
    expect((await ws.run('grid', ...base, '--out', 'n.png')).stderr).toBe('error: Option "--out n.png" has an extension Gapwise cannot write; expected .tif, .csv or .geojson.\n');
    const levels = await ws.run('grid', ...base, '--levels', '20,abc', '--out', 'x.geojson');
    expect(levels.code).toBe(2);
    expect(levels.stderr).toContain('expects numbers separated by commas');
    const none = await ws.run('grid', '--samples', 'wells.csv', '--out', 'n.tif');
    expect(none.code).toBe(2);
    expect(none.stderr).toContain('"--model FILE" is required for "gapwise grid" (or --project FILE)');
  });
});
