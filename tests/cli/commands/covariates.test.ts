// Covariates of the mean through the command line: fit --covariates, predict with covariate columns
// in the targets (and its errors), cv with a covariate model.
import { afterAll, describe, expect, it } from 'vitest';
import { readSamples } from '../../../src/io/intake.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { encodeCovariates } from '../../../src/core/covariance/covariates.ts';
import { parseModel, type CovariateTrend } from '../../../src/core/covariance/model.ts';
import { covariateColumns } from '../../../src/io/sample-columns.ts';
import { expectClose } from '../../helpers/tolerance.ts';
import { workspace } from '../run-cli.ts';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { bandsGeoTiff } from '../../../src/io/geotiff.ts';
import { readCovariateRaster, sampleRaster } from '../../../src/io/covariate-raster.ts';

const ws = workspace();
afterAll(() => ws.remove());

/** Planar samples with a numeric covariate (d) and a categorical one (soil); invented. */
function covariateCsv(): string {
  const lines = ['id,easting,northing,value,d,soil'];
  let k = 0;
  for (let i = 0; i < 6; i++) {
    for (let j = 0; j < 6; j++) {
      k++;
      const x = 500000 + 40 * i + ((k * 7) % 11);
      const y = 5400000 + 35 * j + ((k * 5) % 9);
      const d = Math.hypot(x - 500100, y - 5400090);
      const soil = i < 2 ? 'clay' : j < 3 ? 'loam' : 'sand';
      const v = 30 - 0.05 * d + (soil === 'loam' ? 3 : soil === 'sand' ? -2 : 0) + 2 * Math.sin(i / 1.3) + ((k * 13) % 7) / 4;
      lines.push(`S${k},${x},${y},${v.toFixed(3)},${d.toFixed(2)},${soil}`);
    }
  }
  return `${lines.join('\n')}\n`;
}

const CSV = covariateCsv();
const SAMPLES = ws.write('soil.csv', CSV);
const COMMON = ['--samples', SAMPLES, '--crs', 'EPSG:32633', '--value', 'value'];

describe('fit, predict and cv with covariates', () => {
  it('fit --covariates records the levels and the coefficients with standard errors; predict matches the engine', async () => {
    const f = await ws.run('fit', ...COMMON, '--family', 'exponential', '--covariates', 'd,soil', '--trend', 'linear', '--out', 'model.json');
    expect(f.code, f.stderr).toBe(0);
    const json = JSON.parse(ws.read('model.json'));
    expect(json.trend).toEqual({ covariates: ['d', 'soil'], coordinates: true, levels: { soil: ['clay', 'loam', 'sand'] } });
    const names = json.fit.coefficients.map((c: { name: string }) => c.name);
    expect(names).toEqual(['constant', 'x', 'y', 'd', 'soil=loam', 'soil=sand']);
    for (const c of json.fit.coefficients) expect(c.standardError).toBeGreaterThan(0);

    const targets = ws.write('targets.csv', 'id,easting,northing,d,soil\nT1,500050,5400060,60.5,loam\nT2,500170,5400150,95,sand\n');
    const p = await ws.run('predict', ...COMMON, '--model', 'model.json', '--targets', targets, '--out', 'pred.csv');
    expect(p.code, p.stderr).toBe(0);
    const rows = ws.read('pred.csv').trimEnd().split('\n').map((l) => l.split(','));
    expect(rows[0]).toEqual(['id', 'easting', 'northing', 'd', 'soil', 'mean', 'sd', 'sd_obs']);

    // The same prediction through the engine directly.
    const intake = readSamples(CSV, { fileName: 'soil.csv', crs: 'EPSG:32633', value: 'value' });
    const model = parseModel(json);
    const trend = model.trend as CovariateTrend;
    const { columns, source } = covariateColumns(intake, trend);
    const samples = { ...intake.samples, covariates: encodeCovariates(trend, columns, intake.samples.value.length, source) };
    const tc = encodeCovariates(trend, {
      d: { kind: 'numeric', values: Float64Array.from([60.5, 95]) },
      soil: { kind: 'text', codes: Uint32Array.from([0, 1]), levels: ['loam', 'sand'] },
    }, 2);
    const expected = createPredictor(samples, model).predict([500050, 500170], [5400060, 5400150], { covariates: tc });
    expectClose(rows.slice(1).map((r) => Number(r[5])), expected.mean, { rel: 1e-10 }, 'mean');
    expectClose(rows.slice(1).map((r) => Number(r[6])), expected.sd, { rel: 1e-10 }, 'sd');

    const cv = await ws.run('cv', ...COMMON, '--model', 'model.json');
    expect(cv.code, cv.stderr).toBe(0);
    expect(JSON.parse(cv.stdout).n).toBe(36);
  });

  it('predict stops with exit 2 naming the column and line for a missing column, an empty or non-numeric cell and an unknown level', async () => {
    const f = await ws.run('fit', ...COMMON, '--family', 'exponential', '--covariates', 'd,soil', '--out', 'model2.json');
    expect(f.code, f.stderr).toBe(0);
    const cases: Array<[string, RegExp]> = [
      ['id,easting,northing,soil\nT1,500050,5400060,loam\n', /line 1, column "d".*no column "d"/],
      ['id,easting,northing,d,soil\nT1,500050,5400060,1,loam\nT2,500050,5400060,,loam\n', /line 3, column "d".*empty/],
      ['id,easting,northing,d,soil\nT1,500050,5400060,near,loam\n', /line 2, column "d".*"near" is not a number/],
      ['id,easting,northing,d,soil\nT1,500050,5400060,3,peat\n', /line 2, column "soil".*"peat".*clay, loam, sand/],
    ];
    for (const [text, pattern] of cases) {
      const t = ws.write('bad-targets.csv', text);
      const r = await ws.run('predict', ...COMMON, '--model', 'model2.json', '--targets', t);
      expect(r.code, r.stderr).toBe(2);
      expect(r.stderr).toMatch(pattern);
    }
  });

  it('fit --covariates with --method nnl and --method wls carries the levels and the coefficients', async () => {
    for (const method of ['nnl', 'wls']) {
      const f = await ws.run('fit', ...COMMON, '--family', 'exponential', '--method', method, '--covariates', 'd,soil', '--out', `model-${method}.json`);
      expect(f.code, f.stderr).toBe(0);
      const json = JSON.parse(ws.read(`model-${method}.json`));
      expect(json.trend.levels).toEqual({ soil: ['clay', 'loam', 'sand'] });
      expect(json.fit.coefficients.map((c: { name: string }) => c.name)).toEqual(['constant', 'd', 'soil=loam', 'soil=sand']);
      expect(json.fit.trendVarianceExplained).toBeGreaterThan(0);
    }
  });

  it('grid refuses a covariate model without its raster, and a raster for a model without covariates (exit 2)', async () => {
    const f = await ws.run('fit', ...COMMON, '--family', 'exponential', '--covariates', 'd', '--out', 'model-d.json');
    expect(f.code, f.stderr).toBe(0);
    const a = await ws.run('grid', ...COMMON, '--model', 'model-d.json', '--out', 'g.tif');
    expect(a.code).toBe(2);
    expect(a.stderr).toContain('--covariate-raster NAME=FILE.tif');
    // Samples whose "d" holds words: a fitted model recorded d as numeric, so that is a bad cell, not a category.
    const swapped = ws.write('swapped.csv', CSV.replace('id,easting,northing,value,d,soil', 'id,easting,northing,value,soil,d'));
    const c = await ws.run('cv', '--samples', swapped, '--crs', 'EPSG:32633', '--value', 'value', '--model', 'model-d.json');
    expect(c.code).toBe(2);
    expect(c.stderr).toMatch(/line 2, column "d".*"clay".*expected a number/);
    for (const command of ['suggest', 'simulate']) {
      const s = await ws.run(command, ...COMMON, '--model', 'model-d.json', '--count', '2', '--out', command === 'suggest' ? 's.csv' : 's.tif');
      expect(s.code, command).toBe(2);
      expect(s.stderr, command).toContain('covariates d; expected --covariate-raster NAME=FILE.tif');
    }
  });

  it('fit --covariates names a missing sample column and refuses a known mean (exit 2)', async () => {
    const a = await ws.run('fit', ...COMMON, '--covariates', 'depth');
    expect(a.code).toBe(2);
    expect(a.stderr).toContain('"depth"');
    const b = await ws.run('fit', ...COMMON, '--covariates', 'd', '--trend', 'known:3');
    expect(b.code).toBe(2);
    expect(b.stderr).toContain('--covariates');
  });
});

describe('suggest, simulate and block support with covariates', () => {
  // A raster of the covariate d (distance to the invented point (500100, 5400090)) on a 5 m lattice
  // over the samples, in the samples' CRS.
  const lattice = { x0: 499980, y0: 5400220, cell: 5, nx: 60, ny: 56 };
  const d = new Float32Array(lattice.nx * lattice.ny);
  for (let j = 0; j < lattice.ny; j++) for (let i = 0; i < lattice.nx; i++) {
    d[j * lattice.nx + i] = Math.hypot(lattice.x0 + (i + 0.5) * 5 - 500100, lattice.y0 - (j + 0.5) * 5 - 5400090);
  }
  const RASTER = 'd.tif';
  writeFileSync(join(ws.dir, RASTER), bandsGeoTiff({ grid: lattice, bands: [d], names: ['d'], workCrs: 'EPSG:32633', title: 'd' }).bytes);
  const WITH_RASTER = ['--model', 'model-dr.json', '--covariate-raster', `d=${RASTER}`];

  it('suggest with a covariate model picks cells of the raster lattice; the sites\' mean and sd are kriging with the raster\'s value there', async () => {
    const f = await ws.run('fit', ...COMMON, '--family', 'exponential', '--covariates', 'd', '--out', 'model-dr.json');
    expect(f.code, f.stderr).toBe(0);
    const r = await ws.run('suggest', ...COMMON, ...WITH_RASTER, '--count', '3', '--out', 'sites.csv');
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    expect(summary.cell_m).toBe(5);
    expect(summary.suggestions).toHaveLength(3);
    const raster = await readCovariateRaster(new Uint8Array(readFileSync(join(ws.dir, RASTER))), 'd', 'd.tif');
    const intake = readSamples(CSV, { fileName: 'soil.csv', crs: 'EPSG:32633', value: 'value' });
    const model = parseModel(JSON.parse(ws.read('model-dr.json')));
    const trend = model.trend as CovariateTrend;
    const { columns, source } = covariateColumns(intake, trend);
    const samples = { ...intake.samples, covariates: encodeCovariates(trend, columns, intake.samples.value.length, source) };
    for (const s of summary.suggestions) {
      // A cell centre of the raster's lattice.
      expect(Math.abs((s.x - lattice.x0) / 5 - 0.5 - Math.round((s.x - lattice.x0) / 5 - 0.5))).toBeLessThan(1e-6);
      const at = sampleRaster(raster, [s.x], [s.y], 'EPSG:32633', 'bilinear');
      const p = createPredictor(samples, model).predict([s.x], [s.y], { covariates: at });
      expectClose(s.mean, p.mean[0], { rel: 1e-9 }, 'mean');
      expectClose(s.sd, p.sd[0], { rel: 1e-9 }, 'sd');
    }
  }, 60000);

  it('simulate with a covariate model draws on the raster\'s lattice, the same bands over two threads as over one', async () => {
    const one = await ws.run('simulate', ...COMMON, ...WITH_RASTER, '--count', '4', '--seed', '3', '--workers', '1', '--out', 'one.tif');
    expect(one.code, one.stderr).toBe(0);
    const two = await ws.run('simulate', ...COMMON, ...WITH_RASTER, '--count', '4', '--seed', '3', '--workers', '2', '--out', 'two.tif');
    expect(two.code, two.stderr).toBe(0);
    const summary = JSON.parse(two.stdout);
    expect(summary.grid).toMatchObject({ x0: lattice.x0, y0: lattice.y0, cell: 5, nx: 60, ny: 56 });
    const a = readFileSync(join(ws.dir, 'one.tif'));
    const b = readFileSync(join(ws.dir, 'two.tif'));
    expect(Buffer.compare(a, b)).toBe(0);
  }, 120000);

  it('grid with block support and realisations honours a covariate model', async () => {
    const block = await ws.run('grid', ...COMMON, ...WITH_RASTER, '--cell', '20', '--support', 'block', '--out', 'block.csv', '--workers', '1');
    expect(block.code, block.stderr).toBe(0);
    const b = JSON.parse(block.stdout);
    expect(b.method).toBe('block kriging');
    expect(Number.isFinite(b.range.mean.min) && Number.isFinite(b.range.mean.max)).toBe(true);
    const point = await ws.run('grid', ...COMMON, ...WITH_RASTER, '--cell', '20', '--out', 'point.csv', '--workers', '1');
    expect(point.code, point.stderr).toBe(0);
    // Block averages are smoother than point values: a narrower sd range, the same grid.
    const p = JSON.parse(point.stdout);
    expect(b.grid).toEqual(p.grid);
    expect(b.range.sd.max).toBeLessThan(p.range.sd.max);
    const sim = await ws.run('grid', ...COMMON, ...WITH_RASTER, '--cell', '20', '--realisations', '8', '--threshold', '25', '--out', 'sim.tif', '--workers', '1');
    expect(sim.code, sim.stderr).toBe(0);
    const summary = JSON.parse(sim.stdout);
    expect(summary.realisations).toBe(8);
    expect(summary.areaAbove.unit).toBe('m²');
  }, 120000);
});
