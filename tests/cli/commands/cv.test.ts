import { SOFTWARE } from '../../../src/core/shared/version.ts';
import { afterAll, describe, expect, it } from 'vitest';
import { readSamples } from '../../../src/io/intake.ts';
import { sampleIds } from '../../../src/io/sample-table.ts';
import { leaveOneOut } from '../../../src/core/validation/cross-validation.ts';
import { parseModel } from '../../../src/core/covariance/model.ts';
import { CAUTION } from '../../../src/cli/common.ts';
import { localLeaveOneOut } from '../../../src/core/validation/local-cross-validation.ts';
import { chooseCheckTargets } from '../../../src/core/prediction/local-accuracy.ts';
import { globalMeanCoefficients } from '../../../src/core/prediction/local-kriging.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { surfaceVariance } from '../../../src/core/covariance/covariance.ts';
import { expectClose } from '../../helpers/tolerance.ts';
import { FIELD_MODEL, fieldSamplesCsv, planarSamplesCsv, workspace } from '../run-cli.ts';

const ws = workspace();
afterAll(() => ws.remove());
const SAMPLES = ws.write('wells.csv', planarSamplesCsv());
const COMMON = ['--samples', SAMPLES, '--crs', 'EPSG:32633'];
const MODEL = { structures: [{ type: 'nugget', sill: 1.2 }, { type: 'matern', sill: 16, scale: 55, nu: 1.5 }], trend: 'constant' };
ws.write('model.json', JSON.stringify({ ...MODEL, crs: { work: 'EPSG:32633' } }));
const intake = readSamples(planarSamplesCsv(), { fileName: 'wells.csv', crs: 'EPSG:32633' });

describe('cv command', () => {
  it('cv prints the summary of leaveOneOut on stdout and the per-sample table in --out', async () => {
    const r = await ws.run('cv', ...COMMON, '--model', 'model.json', '--out', 'cv.csv');
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    const direct = leaveOneOut(intake.samples, parseModel(MODEL));
    expect(summary).toEqual({
      ...direct.summary, scale: 'data', unit: 'mg/L', caution: CAUTION, method: 'exact kriging',
      reason: 'up to 3,000 samples exact leave-one-out costs no more than checking local neighbourhoods against it',
    });
    expect(r.stderr).toContain(`caution: ${CAUTION}`);
    expect(r.stderr).toContain(`Written by ${SOFTWARE}.`);

    const lines = ws.read('cv.csv').trimEnd().split('\n');
    expect(lines[0]).toBe('id,x,y,observed,predicted,sd_obs,error,standardised_error');
    expect(lines.length).toBe(26);
    const rows = lines.slice(1).map((l) => l.split(','));
    expect(rows.map((c) => c[0])).toEqual(sampleIds(intake.table));
    const col = (k: number) => rows.map((c) => Number(c[k]));
    expectClose(col(1), intake.table.inputX, { rel: 1e-12 }, 'x');
    expectClose(col(3), intake.samples.value, { rel: 1e-11 }, 'observed');
    expectClose(col(4), direct.prediction, { rel: 1e-11 }, 'predicted');
    expectClose(col(5), direct.sdObserved, { rel: 1e-11 }, 'sd_obs');
    expectClose(col(6), direct.error, { rel: 1e-10, abs: 1e-10 }, 'error');
    expectClose(col(7), direct.standardisedError, { rel: 1e-10, abs: 1e-10 }, 'standardised_error');
    // error = predicted − observed, on every row.
    expectClose(col(6), col(4).map((p, i) => p - col(3)[i]), { abs: 1e-9 }, 'error = predicted − observed');
  });

  it('cv on a log model reports on the log scale', async () => {
    const logModel = { structures: [{ type: 'nugget', sill: 0.002 }, { type: 'exponential', sill: 0.04, scale: 60 }], trend: 'constant', transform: 'log' };
    ws.write('log.json', JSON.stringify(logModel));
    const r = await ws.run('cv', ...COMMON, '--model', 'log.json', '--out', 'cv-log.csv');
    expect(r.code, r.stderr).toBe(0);
    // A model file without "crs" works, with a warning that the samples' working CRS is assumed.
    expect(r.stderr).toContain('warning: log.json does not say which working CRS its distances are in; EPSG:32633 is assumed.');
    const summary = JSON.parse(r.stdout);
    expect(summary.scale).toBe('log');
    expect(summary.unit).toBe('ln(mg/L)');
    expect(summary.rmse).toBe(leaveOneOut(intake.samples, parseModel(logModel)).summary.rmse);
    const first = ws.read('cv-log.csv').split('\n')[1].split(',').map(Number);
    expectClose(first[3], Math.log(intake.samples.value[0]), { rel: 1e-11 }, 'observed on the log scale');
  });

  it('cv exits 3 when the numbers fail (linear trend on samples along a line)', async () => {
    ws.write('transect.csv', 'x,y,v\n500000,5400000,1\n500010,5400010,2\n500020,5400020,4\n500030,5400030,3\n500040,5400040,5\n');
    ws.write('linear.json', JSON.stringify({ ...MODEL, trend: 'linear' }));
    const r = await ws.run('cv', '--samples', 'transect.csv', '--crs', 'EPSG:32633', '--model', 'linear.json');
    expect(r.code).toBe(3);
    expect(r.stdout).toBe('');
    expect(r.stderr).toContain('error: The linear trend cannot be estimated');
  });

  it('cv needs --model (exit 2)', async () => {
    const r = await ws.run('cv', ...COMMON);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('Option "--model FILE" is required for "gapwise cv"');
  });

  it('cv --local --neighbours 24 on 25 samples (every other sample) gives the closed form\'s numbers, and says how it was done', async () => {
    const r = await ws.run('cv', ...COMMON, '--model', 'model.json', '--local', '--local-mean', '--neighbours', '24', '--out', 'cv-local.csv');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('note: each sample left out and predicted from the 24 nearest other samples (local neighbourhoods, the mean re-estimated in each); 25 samples (--local)\n');
    const summary = JSON.parse(r.stdout);
    const direct = leaveOneOut(intake.samples, parseModel(MODEL)).summary;
    expectClose([summary.me, summary.rmse, summary.msse], [direct.me, direct.rmse, direct.msse], { rel: 1e-9, abs: 1e-12 }, 'summary');
    expect(summary.coverage95).toBe(direct.coverage95);
    // The measurement: every sample checked against the closed form (24 others = all others: rounding only).
    expect(r.stderr).toContain('note: measured error of the local leave-one-out against exact leave-one-out at 25 of 25 samples (seed 1)');
    expect(summary.localError).toMatchObject({ checked: 25, targets: 25, reference: 'exact', within: true, neighbours: 24, globalMean: false });
    expect(summary.localError.mean.max).toBeLessThan(1e-6);
    expect(summary.localError.sd.max).toBeLessThan(1e-6);
  });

  it('cv --local --neighbours 4 reports its measured error: the largest differences from the closed form at every sample', async () => {
    const r = await ws.run('cv', ...COMMON, '--model', 'model.json', '--local', '--local-mean', '--neighbours', '4');
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    const local = localLeaveOneOut(intake.samples, parseModel(MODEL), { neighbours: 4 });
    const exact = leaveOneOut(intake.samples, parseModel(MODEL));
    let mean = 0;
    let sd = 0;
    for (let i = 0; i < 25; i++) {
      mean = Math.max(mean, Math.abs(local.prediction[i] - exact.prediction[i]));
      sd = Math.max(sd, Math.abs(local.sdObserved[i] - exact.sdObserved[i]));
    }
    const prior = Math.sqrt(16); // the Matérn sill; the nugget is measurement error
    expectClose(summary.localError.mean.max, (100 * mean) / prior, { rel: 1e-9 }, 'largest prediction difference');
    expectClose(summary.localError.sd.max, (100 * sd) / prior, { rel: 1e-9 }, 'largest sd_obs difference');
    expect(summary.localError.mean.max).toBeGreaterThan(1);
    expect(summary.localError.within).toBe(false);
    expect(r.stderr).toContain('warning: The local leave-one-out missed the tolerance');
  });

  it('cv on 3,500 samples leaves each out of its 64 nearest others by itself, as localLeaveOneOut does', async () => {
    ws.write('field.csv', fieldSamplesCsv(3500, 7));
    ws.write('field.json', JSON.stringify(FIELD_MODEL));
    const r = await ws.run('cv', '--samples', 'field.csv', '--crs', 'EPSG:32633', '--model', 'field.json');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('note: each sample left out and predicted from the 64 nearest other samples (local neighbourhoods, with the GLS mean of all samples); 3,500 samples; chosen automatically: above 3,000 samples exact leave-one-out (about n³/2 operations) costs too much (--exact overrides)\n');
    const summary = JSON.parse(r.stdout);
    const field = readSamples(fieldSamplesCsv(3500, 7), { fileName: 'field.csv', crs: 'EPSG:32633' });
    expect(summary).toEqual({
      ...localLeaveOneOut(field.samples, parseModel(FIELD_MODEL), { neighbours: 64, globalMean: true }).summary, scale: 'data', unit: '', caution: CAUTION,
      method: 'local neighbourhoods', neighbours: 64, globalMean: true, reason: 'above 3,000 samples exact leave-one-out (about n³/2 operations) costs too much',
      localError: expect.any(Object),
    });
    // The measured error, recomputed independently: the same 30 seeded samples, each kriged from its
    // 800 nearest others found by sorting all distances, around the GLS mean of all samples.
    const model = parseModel(FIELD_MODEL);
    const local = localLeaveOneOut(field.samples, model, { neighbours: 64, globalMean: true });
    const beta = globalMeanCoefficients(field.samples, model).beta[0];
    const { x, y, value } = field.samples;
    let largest = 0;
    for (const i of chooseCheckTargets(3500, 30, 1)) {
      const others = Array.from({ length: 3500 }, (_, j) => j).filter((j) => j !== i)
        .sort((a, b) => Math.hypot(x[a] - x[i], y[a] - y[i]) - Math.hypot(x[b] - x[i], y[b] - y[i]) || a - b).slice(0, 800);
      const p = createPredictor({ x: Float64Array.from(others, (j) => x[j]), y: Float64Array.from(others, (j) => y[j]), value: Float64Array.from(others, (j) => value[j] - beta) }, { ...model, trend: { known: 0 } }, { checkScale: false })
        .predict([x[i]], [y[i]]);
      largest = Math.max(largest, Math.abs(local.prediction[i] - (p.mean[0] + beta)));
    }
    expect(summary.localError).toMatchObject({ checked: 30, targets: 3500, reference: 'nearest', referenceNeighbours: 800, seed: 1 });
    expectClose(summary.localError.mean.max, (100 * largest) / Math.sqrt(surfaceVariance(model)), { rel: 1e-6 }, 'largest prediction difference');
    expect(r.stderr).toContain('note: measured error of the local leave-one-out against kriging from the 800 nearest other samples at 30 of 3,500 samples (seed 1)');
    // The field's noise has sd 0.5 (run-cli.ts): errors of about that size, honest sds.
    expect(summary.rmse).toBeGreaterThan(0.4);
    expect(summary.rmse).toBeLessThan(0.7);
    expect(Math.abs(summary.msse - 1)).toBeLessThan(0.2);
    expect(Math.abs(summary.coverage95 - 0.95)).toBeLessThan(0.02);
  });
});
