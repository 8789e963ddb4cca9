import { afterAll, describe, expect, it } from 'vitest';
import { readSamples } from '../../../src/io/intake.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { createLocalPredictor } from '../../../src/core/prediction/local-kriging.ts';
import { parseModel } from '../../../src/core/covariance/model.ts';
import { normalCdf } from '../../../src/core/shared/normal.ts';
import { expectClose } from '../../helpers/tolerance.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { FIELD_MODEL, fieldSamplesCsv, planarSamplesCsv, workspace } from '../run-cli.ts';

interface RefTarget { crs: string; x: number; y: number; mean: number; sd: number; sdObserved: number }
interface RefFixture { samples: Array<{ id: string; x: number; y: number; value: number }>; model: unknown }

const ws = workspace();
afterAll(() => ws.remove());

const SAMPLES = ws.write('wells.csv', planarSamplesCsv());
const NO_NUGGET = ws.write('exact.json', JSON.stringify({
  structures: [{ type: 'exponential', sill: 20, scale: 90 }], trend: 'constant', crs: { work: 'EPSG:32633' },
}));
const WITH_NUGGET = { structures: [{ type: 'nugget', sill: 1.5 }, { type: 'matern', sill: 18, scale: 60, nu: 1.5 }], trend: 'linear' };
ws.write('smooth.json', JSON.stringify({ ...WITH_NUGGET, crs: { work: 'EPSG:32633' } }));
const COMMON = ['--samples', SAMPLES, '--crs', 'EPSG:32633'];

function csvRows(text: string): string[][] {
  return text.trimEnd().split('\n').map((l) => l.split(','));
}

describe('predict command', () => {
  it('predict writes a target id that starts a formula back with a leading apostrophe, and says so on stderr', async () => {
    // Spreadsheets run cells beginning with = + - @; a text cell is neutralised, numbers stay as written.
    const targets = ws.write('hostile-targets.csv', 'station,easting,northing\n=HYPERLINK("http://x"),500010,5000020\n@SUM(1),500030,5000040\n');
    const r = await ws.run('predict', ...COMMON, '--model', NO_NUGGET, '--targets', targets, '--out', 'hostile-out.csv');
    expect(r.code).toBe(0);
    const lines = ws.read('hostile-out.csv').trimEnd().split('\n');
    expect(lines[0]).toBe('station,easting,northing,mean,sd,sd_obs');
    expect(lines[1].startsWith(`"'=HYPERLINK(""http://x"")",500010,5000020,`)).toBe(true);
    expect(lines[2].startsWith("'@SUM(1),500030,5000040,")).toBe(true);
    expect(r.stderr).toContain('apostrophe');
  });

  it('predict at the sample locations of a zero-nugget model returns the sample values with sd 0', async () => {
    // The samples file is its own targets file: same columns, same order.
    const r = await ws.run('predict', ...COMMON, '--model', NO_NUGGET, '--targets', SAMPLES, '--out', 'at-samples.csv');
    expect(r.code).toBe(0);
    expect(r.stdout).toBe('');
    expect(r.stderr).toContain('caution: Screening only');
    const rows = csvRows(ws.read('at-samples.csv'));
    expect(rows[0]).toEqual(['station', 'easting', 'northing', 'nitrate (mg/L)', 'mean', 'sd', 'sd_obs']);
    expect(rows.length).toBe(26);
    // Kriging interpolates exactly without a nugget (an invariant of the method).
    expectClose(rows.slice(1).map((c) => Number(c[4])), rows.slice(1).map((c) => Number(c[3])), { rel: 1e-9, abs: 1e-9 }, 'mean');
    expectClose(rows.slice(1).map((c) => Number(c[5])), rows.slice(1).map(() => 0), { abs: 1e-4 }, 'sd');
  });

  it('predict keeps the targets\' order, cells, quoting and line ends, and appends p_exceed', async () => {
    const targets = [
      'label;note;x;y',
      'north;"has ; semicolon";500100,5;5400140',
      'south;;500020;5400010',
      'middle;"quoted ""text""";500080;5400070',
    ].join('\r\n') + '\r\n';
    ws.write('targets.csv', targets);
    const r = await ws.run('predict', ...COMMON, '--model', 'smooth.json', '--targets', 'targets.csv', '--threshold', '25');
    expect(r.code).toBe(0);
    const lines = r.stdout.split('\r\n');
    expect(lines.length).toBe(5);
    expect(lines[4]).toBe('');
    const original = targets.split('\r\n');
    expect(lines[0]).toBe(`${original[0]};mean;sd;sd_obs;p_exceed`);
    for (let i = 1; i <= 3; i++) expect(lines[i].startsWith(`${original[i]};`), lines[i]).toBe(true);

    // The same numbers straight from the engine (decimal comma read as 500100.5).
    const intake = readSamples(planarSamplesCsv(), { fileName: 'wells.csv', crs: 'EPSG:32633' });
    const predictor = createPredictor(intake.samples, parseModel(WITH_NUGGET));
    const p = predictor.predict([500100.5, 500020, 500080], [5400140, 5400010, 5400070]);
    for (let i = 0; i < 3; i++) {
      const cells = lines[i + 1].split(';').slice(-4).map(Number);
      expectClose(cells[0], p.mean[i], { rel: 1e-10 }, `mean ${i}`);
      expectClose(cells[1], p.sd[i], { rel: 1e-10 }, `sd ${i}`);
      expectClose(cells[2], Math.sqrt(p.sd[i] ** 2 + 1.5), { rel: 1e-10 }, `sd_obs ${i}`);
      // P(value > T) = 1 − Φ((T − mean)/sd) for the noise-free surface.
      expectClose(cells[3], 1 - normalCdf((25 - p.mean[i]) / p.sd[i]), { rel: 1e-9, abs: 1e-12 }, `p_exceed ${i}`);
    }
  });

  it('predict on a log model computes p_exceed on the log scale', async () => {
    const logModel = { structures: [{ type: 'nugget', sill: 0.01 }, { type: 'exponential', sill: 0.05, scale: 70 }], trend: 'constant', transform: 'log' };
    ws.write('log.json', JSON.stringify({ ...logModel, crs: { work: 'EPSG:32633' } }));
    ws.write('one.csv', 'easting,northing\n500050,5400050\n');
    const r = await ws.run('predict', ...COMMON, '--model', 'log.json', '--targets', 'one.csv', '--threshold', '22');
    expect(r.code).toBe(0);
    const row = csvRows(r.stdout)[1].map(Number);
    const intake = readSamples(planarSamplesCsv(), { fileName: 'wells.csv', crs: 'EPSG:32633' });
    const p = createPredictor(intake.samples, parseModel(logModel)).predict([500050], [5400050]);
    expectClose(row[2], p.mean[0], { rel: 1e-10 }, 'data-scale mean');
    expectClose(row[5], 1 - normalCdf((Math.log(22) - p.logMean![0]) / p.logSd![0]), { rel: 1e-9 }, 'p_exceed');
  });

  it('predict matches scikit-learn simple kriging, with targets projected from --targets-crs as PROJ does', async () => {
    // Source: tests/reference/cli.json (scikit-learn GaussianProcessRegressor and pyproj, see its script).
    const f = loadFixture<RefTarget>('cli.json') as ReturnType<typeof loadFixture<RefTarget>> & RefFixture;
    ws.write('ref-samples.csv', ['id,x,y,value', ...f.samples.map((r) => `${r.id},${r.x},${r.y},${r.value}`)].join('\n'));
    ws.write('ref-model.json', JSON.stringify(f.model));
    for (const crs of ['EPSG:32633', 'EPSG:4326']) {
      const cases = f.cases.filter((c) => c.crs === crs);
      ws.write('ref-targets.csv', ['x,y', ...cases.map((c) => `${c.x},${c.y}`)].join('\n'));
      const r = await ws.run('predict', '--samples', 'ref-samples.csv', '--crs', 'EPSG:32633', '--model', 'ref-model.json',
        '--targets', 'ref-targets.csv', '--targets-crs', crs);
      expect(r.code, r.stderr).toBe(0);
      const rows = csvRows(r.stdout).slice(1).map((c) => c.map(Number));
      expectClose(rows.map((c) => c[2]), cases.map((c) => c.mean), f.tolerance, `mean (${crs})`);
      expectClose(rows.map((c) => c[3]), cases.map((c) => c.sd), f.tolerance, `sd (${crs})`);
      expectClose(rows.map((c) => c[4]), cases.map((c) => c.sdObserved), f.tolerance, `sd_obs (${crs})`);
    }
  });

  it('predict rejects a bad target cell with its line and column (exit 2)', async () => {
    ws.write('bad-targets.csv', 'id,easting,northing\nA,500010,5400010\nB,5OO020,5400020\n');
    const r = await ws.run('predict', ...COMMON, '--model', 'smooth.json', '--targets', 'bad-targets.csv');
    expect(r.code).toBe(2);
    expect(r.stderr).toBe('error: bad-targets.csv, line 3, column "easting": "5OO020" is not a number; expected a number.\n');
  });

  it('predict rejects a broken model file with its line (exit 2)', async () => {
    ws.write('broken.json', '{\n  "structures": [\n    {"type": "nugget", "sill": 1},\n  ]\n}\n');
    const r = await ws.run('predict', ...COMMON, '--model', 'broken.json', '--targets', SAMPLES);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/^error: broken\.json, line 4: The model is not valid JSON/);
    ws.write('family.json', '{"structures": [{"type": "cubic", "sill": 1, "scale": 5}]}');
    const f = await ws.run('predict', ...COMMON, '--model', 'family.json', '--targets', SAMPLES);
    expect(f.code).toBe(2);
    expect(f.stderr).toContain('family.json: Expected structures[0].type to be one of');
  });

  it('predict refuses a --work-crs that differs from the model\'s (exit 2)', async () => {
    const r = await ws.run('predict', ...COMMON, '--work-crs', 'EPSG:32632', '--model', 'smooth.json', '--targets', SAMPLES);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('differs from the model\'s working CRS EPSG:32633');
  });

  it('predict exits 3 with what to try when the numbers fail (linear trend on samples along a line)', async () => {
    ws.write('transect.csv', 'x,y,v\n500000,5400000,1\n500010,5400010,2\n500020,5400020,4\n500030,5400030,3\n500040,5400040,5\n');
    ws.write('linear.json', JSON.stringify({ ...WITH_NUGGET, crs: { work: 'EPSG:32633' } }));
    const r = await ws.run('predict', '--samples', 'transect.csv', '--crs', 'EPSG:32633', '--model', 'linear.json', '--targets', 'transect.csv');
    expect(r.code).toBe(3);
    expect(r.stderr).toContain('error: The linear trend cannot be estimated: the samples lie on a line');
    expect(r.stderr).not.toMatch(/\n\s+at /);
  });

  it('predict --local --neighbours 8 gives the local predictor\'s numbers (p_exceed on the log scale for a log model) and says so on stderr', async () => {
    const logModel = { structures: [{ type: 'nugget', sill: 0.01 }, { type: 'matern', sill: 0.05, scale: 70, nu: 1.5 }], trend: 'constant', transform: 'log' };
    ws.write('log-local.json', JSON.stringify({ ...logModel, crs: { work: 'EPSG:32633' } }));
    ws.write('two.csv', 'easting,northing\n500050,5400050\n500170,5400020\n');
    const r = await ws.run('predict', ...COMMON, '--model', 'log-local.json', '--targets', 'two.csv', '--threshold', '22', '--local', '--neighbours', '8');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('note: predicted from the 8 nearest samples at each target (local neighbourhoods, with the GLS mean of all samples); 25 samples (--local); 2 targets\n');
    expect(r.stderr).toMatch(/note: measured error of the local neighbourhoods against exact kriging at 2 of 2 targets \(seed 1\): mean largest [\d.]+ %, RMS [\d.]+ %; sd largest [\d.]+ %, RMS [\d.]+ % of the prior sd \(log scale\); tolerance 1 % \/ 2 % (met|MISSED)\n/);
    const rows = csvRows(r.stdout).slice(1).map((c) => c.map(Number));
    const intake = readSamples(planarSamplesCsv(), { fileName: 'wells.csv', crs: 'EPSG:32633' });
    const p = createLocalPredictor(intake.samples, parseModel(logModel), { neighbours: 8, globalMean: true }).predict([500050, 500170], [5400050, 5400020]);
    for (let i = 0; i < 2; i++) {
      expectClose(rows[i][2], p.mean[i], { rel: 1e-10 }, `mean ${i}`);
      expectClose(rows[i][3], p.sd[i], { rel: 1e-10 }, `sd ${i}`);
      expectClose(rows[i][4], p.sdObserved[i], { rel: 1e-10 }, `sd_obs ${i}`);
      expectClose(rows[i][5], 1 - normalCdf((Math.log(22) - p.logMean![i]) / p.logSd![i]), { rel: 1e-9 }, `p_exceed ${i}`);
    }
    // Eight neighbours are not all 25 samples: the numbers differ from exact kriging.
    const exact = createPredictor(intake.samples, parseModel(logModel)).predict([500050, 500170], [5400050, 5400020]);
    expect(rows[1][2]).not.toBe(Number(exact.mean[1].toPrecision(12)));
  });

  it('predict on 5,000 samples at 3 targets predicts from the 64 nearest samples by itself, with the local predictor\'s numbers', async () => {
    ws.write('field-5k.csv', fieldSamplesCsv(5000, 6));
    ws.write('field.json', JSON.stringify(FIELD_MODEL));
    ws.write('field-targets.csv', 'easting,northing\n500400,5400400\n501000,5401200\n501700,5400100\n');
    const args = ['--samples', 'field-5k.csv', '--crs', 'EPSG:32633', '--model', 'field.json', '--targets', 'field-targets.csv'];
    const r = await ws.run('predict', ...args);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toMatch(/note: predicted from the 64 nearest samples at each target \(local neighbourhoods, with the GLS mean of all samples\); 5,000 samples; chosen automatically: local neighbourhoods are cheaper here \(about [\d.]+ billion operations local, [\d.]+ exact\) \(--exact overrides\); 3 targets\n/);
    expect(r.stderr).toMatch(/note: measured error of the local neighbourhoods against kriging from the 800 nearest samples at 3 of 3 targets/);
    const rows = csvRows(r.stdout).slice(1).map((c) => c.map(Number));
    const intake = readSamples(fieldSamplesCsv(5000, 6), { fileName: 'field-5k.csv', crs: 'EPSG:32633' });
    const p = createLocalPredictor(intake.samples, parseModel(FIELD_MODEL), { globalMean: true }).predict([500400, 501000, 501700], [5400400, 5401200, 5400100]);
    expectClose(rows.map((c) => c[2]), p.mean, { rel: 1e-10 }, 'mean');
    expectClose(rows.map((c) => c[3]), p.sd, { rel: 1e-10 }, 'sd');
  });

  it('predict --neighbours on few samples is not used (exact kriging) and says so', async () => {
    const r = await ws.run('predict', ...COMMON, '--model', 'smooth.json', '--targets', SAMPLES, '--neighbours', '10');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('warning: --neighbours 10 is not used: exact kriging from all 25 samples was chosen (25 targets are few enough to krige exactly (the error check would do it anyway)); add --local to predict from neighbourhoods.\n');
    expect(r.stderr).toContain('note: predicted by exact kriging from all 25 samples; chosen automatically: 25 targets are few enough to krige exactly (the error check would do it anyway) (--local overrides); 25 targets\n');
  });
});
