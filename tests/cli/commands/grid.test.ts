// gapwise grid: the three outputs by extension, their contents against the engine, and input errors;
// the automatic switch to local neighbourhoods on many samples and its agreement with exact kriging;
// block support and realisations.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import * as gjv from 'geojson-validation';
import { fromArrayBuffer } from 'geotiff';
import { FIELD_MODEL, fieldSamplesCsv, planarSamplesCsv, workspace, type Workspace } from '../run-cli.ts';
import { readSamples } from '../../../src/io/intake.ts';
import { computeSurface } from '../../../src/core/prediction/surface.ts';
import { gridFromExtent, type Grid } from '../../../src/core/geometry/grid.ts';
import { computeBlockSurface } from '../../../src/core/prediction/block-kriging.ts';
import { simulateConditional } from '../../../src/core/simulation/conditional-simulation.ts';
import { parseModel } from '../../../src/core/covariance/model.ts';
import { CAUTION } from '../../../src/core/shared/caution.ts';
import { computeSurfaceSingle } from '../../../src/cli/parallel.ts';
import { expectClose } from '../../helpers/tolerance.ts';

/** The bands of a GeoTIFF in the workspace, as geotiff.js reads them. */
async function readBands(ws: Workspace, name: string): Promise<Float32Array[]> {
  const bytes = readFileSync(join(ws.dir, name));
  const image = await (await fromArrayBuffer(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength))).getImage();
  return (await image.readRasters()) as unknown as Float32Array[];
}

/** The grid a summary describes (no boundary, so no mask). */
function gridOf(summary: { grid: Grid }): Grid {
  const { x0, y0, cell, nx, ny } = summary.grid;
  return { x0, y0, cell, nx, ny };
}

/** Float32 values with no-data (-9999) where the engine has NaN, as the GeoTIFF holds them. */
function asWritten(a: ArrayLike<number>): number[] {
  return Array.from(Float32Array.from(a), (v) => (Number.isNaN(v) ? -9999 : v));
}

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
  const base20 = base.map((v, i) => (base[i - 1] === '--cell' ? '20' : v));

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

  it('grid --support block writes block-kriged cells (computeBlockSurface) and says so in the summary and on stderr', async () => {
    const r = await ws.run('grid', ...base20, '--support', 'block', '--block-points', '3', '--threshold', '25', '--out', 'block.tif');
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    expect(summary).toMatchObject({ support: 'block', blockPoints: 3, method: 'block kriging', n: 25 });
    expect(r.stderr).toContain(`note: block kriging: each of ${summary.grid.cells} cells averaged over 3 × 3 points, from all 25 samples\n`);
    const intake = readSamples(planarSamplesCsv(), { fileName: 'wells.csv', crs: 'EPSG:32633' });
    const expected = computeBlockSurface(intake.samples, parseModel(MODEL), gridOf(summary), { points: 3, threshold: 25 });
    const [mean, sd, p] = await readBands(ws, 'block.tif');
    expect(Array.from(mean)).toEqual(asWritten(expected.mean));
    expect(Array.from(sd)).toEqual(asWritten(expected.sd));
    expect(Array.from(p)).toEqual(asWritten(expected.pExceed!));
    // A block average varies less than the value at a point: its sd is smaller in every cell.
    const point = computeSurface(intake.samples, parseModel(MODEL), gridOf(summary));
    for (let k = 0; k < sd.length; k++) expect(sd[k]).toBeLessThan(point.sd[k]);
  });

  it('grid --realisations adds P(exceed) from the realisations as a band and the area and volume above the threshold (median, p5, p95) to the summary', async () => {
    // Three threads share out the realisations; the area and the band equal one core run's.
    const r = await ws.run('grid', ...base20, '--realisations', '24', '--seed', '4', '--threshold', '25', '--depth', '0.5', '--workers', '3', '--out', 'sim.tif');
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    expect(summary.bands).toEqual(['mean nitrate (mg/L)', 'sd nitrate (mg/L)', 'P(nitrate > 25 mg/L)', 'P(value > 25 mg/L) from 24 realisations']);
    expect(r.stderr).toContain('note: 24 conditional realisations (seed 4, point support) on 3 worker threads\n');
    // The conditioning is chosen by cost as `simulate` chooses it: a few samples take exact kriging.
    expect(r.stderr).toMatch(/note: conditioned by kriging from all \d+ samples; chosen automatically: .* \(--local overrides\)/);
    const intake = readSamples(planarSamplesCsv(), { fileName: 'wells.csv', crs: 'EPSG:32633' });
    const sim = simulateConditional(intake.samples, parseModel(MODEL), gridOf(summary), { count: 24, seed: 4, threshold: 25, depth: 0.5, keepRealisations: false });
    const a = sim.area!;
    expect(summary.realisations).toBe(24);
    expect(summary.seed).toBe(4);
    expect(summary.areaAbove).toEqual({ median: a.area.median, p5: a.area.p05, p95: a.area.p95, mean: a.area.mean, unit: 'm²' });
    expect(summary.volumeAbove).toEqual({ median: a.volume!.median, p5: a.volume!.p05, p95: a.volume!.p95, mean: a.volume!.mean, unit: 'm³', depth: 0.5 });
    expectClose(summary.volumeAbove.median, summary.areaAbove.median * 0.5, { rel: 1e-12 });
    expect(summary.areaAbove.p5).toBeLessThanOrEqual(summary.areaAbove.p95);
    const bands = await readBands(ws, 'sim.tif');
    expect(bands.length).toBe(4);
    expect(Array.from(bands[3])).toEqual(asWritten(sim.pExceed!));
    // The share of realisations above T follows the closed-form P(exceed) (24 draws: within 0.35).
    for (let k = 0; k < bands[3].length; k++) expect(Math.abs(bands[3][k] - bands[2][k])).toBeLessThan(0.35);
  });

  it('grid --realisations with a .csv output warns that the realisation bands go to GeoTIFF only, and keeps the area in the summary', async () => {
    const r = await ws.run('grid', ...base20, '--realisations', '5', '--threshold', '25', '--out', 'sim.csv');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('warning: The band "P(value > 25 mg/L) from 5 realisations" from the realisations is written to GeoTIFF only; use --out FILE.tif to keep it.\n');
    expect(JSON.parse(r.stdout).areaAbove.unit).toBe('m²');
  });

  it('grid refuses contradictory path options, --neighbours with --exact, --workers 0 and --depth without realisations (exit 2)', async () => {
    const both = await ws.run('grid', ...base, '--exact', '--local', '--out', 'x.tif');
    expect(both.stderr).toBe('error: Options "--exact" and "--local" contradict each other; expected at most one of them.\n');
    const m = await ws.run('grid', ...base, '--exact', '--neighbours', '10', '--out', 'x.tif');
    expect(m.code).toBe(2);
    expect(m.stderr).toContain('"--neighbours" sets the size of local neighbourhoods; it does not apply with "--exact"');
    const w = await ws.run('grid', ...base, '--workers', '0', '--out', 'x.tif');
    expect(w.stderr).toBe('error: Option "--workers" expects a whole number of threads from 1 to 256, got 0.\n');
    const d = await ws.run('grid', ...base, '--threshold', '25', '--depth', '1', '--out', 'x.tif');
    expect(d.code).toBe(2);
    expect(d.stderr).toContain('"--depth" needs "--realisations N"');
    const block = await ws.run('grid', ...base, '--support', 'block', '--local', '--out', 'x.tif');
    expect(block.stderr).toContain('apply to point support; block kriging uses all samples');
  });
});

describe('gapwise grid on many samples', () => {
  let ws: Workspace;
  beforeAll(() => {
    ws = workspace();
    ws.write('field-5k.csv', fieldSamplesCsv(5000, 1));
    ws.write('field-1k.csv', fieldSamplesCsv(1000, 2));
    ws.write('field.json', JSON.stringify(FIELD_MODEL));
  });
  afterAll(() => ws.remove());
  const model = parseModel(FIELD_MODEL);

  it('grid on 5,000 samples switches to local neighbourhoods by itself, says so, and writes the local predictor\'s surfaces', async () => {
    const r = await ws.run('grid', '--samples', 'field-5k.csv', '--crs', 'EPSG:32633', '--model', 'field.json', '--cell', '50', '--padding', '0', '--workers', '2', '--threshold', '35', '--out', 'big.tif');
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    expect(summary).toMatchObject({ method: 'local neighbourhoods', neighbours: 64, globalMean: true, n: 5000 });
    // The measured error: against the 800 nearest samples at 30 cells (above 3,000 samples), within the default tolerance.
    expect(summary.localError).toMatchObject({ reference: 'nearest', referenceNeighbours: 800, checked: 30, targets: summary.grid.cells, tolerance: { mean: 1, sd: 2 }, within: true });
    expect(summary.localError.mean.max).toBeGreaterThanOrEqual(summary.localError.mean.rms);
    const cells = summary.grid.cells.toLocaleString('en-US');
    expect(r.stderr).toMatch(new RegExp(`note: predicted from the 64 nearest samples at each target \\(local neighbourhoods, with the GLS mean of all samples\\); 5,000 samples; chosen automatically: local neighbourhoods are cheaper here \\(about [\\d.]+ billion operations local, [\\d.]+ exact\\) \\(--exact overrides\\); ${cells} cells on 2 worker threads\n`));
    expect(r.stderr).toContain(`note: measured error of the local neighbourhoods against kriging from the 800 nearest samples at 30 of ${cells} targets (seed 1): mean largest`);
    const intake = readSamples(fieldSamplesCsv(5000, 1), { fileName: 'field-5k.csv', crs: 'EPSG:32633' });
    const single = computeSurfaceSingle({ samples: intake.samples, model, grid: gridOf(summary), path: 'local', local: { neighbours: 64, globalMean: true }, surface: { threshold: 35 } });
    const [mean, sd, p] = await readBands(ws, 'big.tif');
    expect(Array.from(mean)).toEqual(asWritten(single.mean));
    expect(Array.from(sd)).toEqual(asWritten(single.sd));
    expect(Array.from(p)).toEqual(asWritten(single.pExceed!));
  });

  it('grid --block on 5,000 samples refuses: block kriging uses all samples (exit 2)', async () => {
    const r = await ws.run('grid', '--samples', 'field-5k.csv', '--crs', 'EPSG:32633', '--model', 'field.json', '--support', 'block', '--out', 'x.tif');
    expect(r.code).toBe(2);
    expect(r.stderr).toBe('error: Block kriging (--support block) uses all samples and is limited to fewer than 3,000 of them; got 5,000. '
      + 'Use --support point (local neighbourhoods from that many samples), or thin the samples.\n');
  });

  it('grid --local agrees with grid --exact on 1,000 samples: mean within 1 % of the prior sd, sd within 2 % (also with --global-mean)', async () => {
    const common = ['--samples', 'field-1k.csv', '--crs', 'EPSG:32633', '--model', 'field.json', '--cell', '25', '--padding', '0', '--workers', '2', '--out'];
    const exact = await ws.run('grid', ...common, 'exact.tif', '--exact');
    expect(exact.code, exact.stderr).toBe(0);
    expect(exact.stderr).toContain('note: predicted by exact kriging from all 1,000 samples (--exact); ');
    const local = await ws.run('grid', ...common, 'local.tif', '--local', '--local-mean');
    expect(local.code, local.stderr).toBe(0);
    expect(local.stderr).toContain('note: predicted from the 64 nearest samples at each target (local neighbourhoods, the mean re-estimated in each); 1,000 samples (--local); ');
    const global = await ws.run('grid', ...common, 'global.tif', '--local');
    expect(global.code, global.stderr).toBe(0);
    expect(global.stderr).toContain('(local neighbourhoods, with the GLS mean of all samples); 1,000 samples (--local);');
    // The measured error (exact kriging at 200 cells) is in the JSON summary and in the GeoTIFF's metadata.
    const measured = JSON.parse(global.stdout).localError;
    expect(measured).toMatchObject({ reference: 'exact', checked: 200, within: true });
    const tags = readFileSync(join(ws.dir, 'global.tif')).toString('latin1');
    expect(tags).toContain(`<Item name="LOCAL_ERROR_MEAN_MAX_PCT">${measured.mean.max.toPrecision(3)}</Item>`);
    expect(tags).toContain('<Item name="LOCAL_ERROR_REFERENCE">exact kriging from all samples</Item>');
    // Automatic choice for 1,000 samples and 1,024 cells on 2 threads: local neighbourhoods are cheaper, the same file as --local.
    const auto = await ws.run('grid', ...common, 'auto.tif');
    expect(auto.stderr).toContain('1,000 samples; chosen automatically: local neighbourhoods are cheaper here');
    expect(readFileSync(join(ws.dir, 'auto.tif')).equals(readFileSync(join(ws.dir, 'global.tif')))).toBe(true);

    const priorSd = Math.sqrt(178);
    const [me, se] = await readBands(ws, 'exact.tif');
    for (const name of ['local.tif', 'global.tif']) {
      const [ml, sl] = await readBands(ws, name);
      expect(ml.length).toBe(me.length);
      expect(me.length).toBeGreaterThan(900);
      // Tolerances of the local path: mean within 1 % of the prior sd, sd within 2 % of the exact sd.
      expectClose(ml, me, { abs: 0.01 * priorSd }, `${name} mean`);
      expectClose(sl, se, { rel: 0.02 }, `${name} sd`);
      expect(Array.from(ml)).not.toEqual(Array.from(me));
    }
  });
});
