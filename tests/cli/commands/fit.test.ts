import { afterAll, describe, expect, it } from 'vitest';
import { readSamples } from '../../../src/io/intake.ts';
import { fitModel } from '../../../src/core/fitting/fit.ts';
import { vecchiaFit } from '../../../src/core/fitting/vecchia.ts';
import { parseModel } from '../../../src/core/covariance/model.ts';
import { CAUTION } from '../../../src/cli/common.ts';
import { expectClose } from '../../helpers/tolerance.ts';
import { parseNu, parseTrend, resolveFitMethod } from '../../../src/cli/commands/fit.ts';
import { fieldSamplesCsv, planarSamplesCsv, workspace } from '../run-cli.ts';

const ws = workspace();
afterAll(() => ws.remove());
const SAMPLES = ws.write('wells.csv', planarSamplesCsv());
const COMMON = ['--samples', SAMPLES, '--crs', 'EPSG:32633'];
const intake = readSamples(planarSamplesCsv(), { fileName: 'wells.csv', crs: 'EPSG:32633' });

describe('fit command', () => {
  it('fit writes the fitted model JSON with diagnostics, practical range, working CRS and caution', async () => {
    const r = await ws.run('fit', ...COMMON);
    expect(r.code, r.stderr).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.crs).toEqual({ work: 'EPSG:32633', input: 'EPSG:32633' });
    expect(out.caution).toBe(CAUTION);
    expect(out.data).toEqual({ file: 'wells.csv', valueColumn: 'nitrate (mg/L)', unit: 'mg/L', n: 25 });
    expect(out.fit).toMatchObject({ method: 'reml', converged: true, choice: 'automatic', note: 'fitted with the exact REML likelihood on 25 samples' });
    expect(r.stderr).toContain('note: fitted with the exact REML likelihood on 25 samples\n');
    expect(Number.isFinite(out.fit.logLikelihood) && Number.isFinite(out.fit.aic)).toBe(true);
    expect(out.practicalRange).toBeGreaterThan(0);
    // The defaults are Matérn ν = 3/2, REML, constant trend, with a nugget: the same model as a direct call.
    const direct = fitModel(intake.samples, { family: 'matern', nu: 1.5, method: 'reml', trend: 'constant', nugget: true });
    expect(out.structures).toEqual(direct.structures);
    expect(out.practicalRange).toBe(direct.practicalRange);
    // The file is a model other commands can read: parseModel ignores crs, data and caution.
    const parsed = parseModel(out);
    expect(parsed.structures).toEqual(direct.structures);
    expect(Object.keys(parsed)).not.toContain('crs');
  });

  it('fit passes --family, --method, --trend and --no-nugget to the engine and writes --out', async () => {
    const r = await ws.run('fit', ...COMMON, '--family', 'exponential', '--method', 'ml', '--trend', 'linear', '--no-nugget', '--out', 'm.json');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toBe('');
    const out = JSON.parse(ws.read('m.json'));
    const direct = fitModel(intake.samples, { family: 'exponential', method: 'ml', trend: 'linear', nugget: false });
    expect(out.structures).toEqual(direct.structures);
    expect(out.structures.map((s: { type: string }) => s.type)).toEqual(['exponential']);
    expect(out.trend).toBe('linear');
    expect(out.fit.method).toBe('ml');
    expect(out.fit.choice).toBe('given');
  });

  it('fit on 5,000 samples chooses the nearest-neighbour likelihood by itself and says so on stderr and in the model', async () => {
    ws.write('field-5k.csv', fieldSamplesCsv(5000, 3));
    const r = await ws.run('fit', '--samples', 'field-5k.csv', '--crs', 'EPSG:32633', '--nnl-neighbours', '10', '--out', 'field.json');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('note: fitted with a nearest-neighbour likelihood on 5,000 samples (10 neighbours); chosen automatically from 3,000 samples (--method reml|ml|wls overrides)\n');
    const out = JSON.parse(ws.read('field.json'));
    expect(out.fit).toMatchObject({
      method: 'nnl', likelihood: 'reml', choice: 'automatic', n: 5000, neighbours: 10,
      note: 'fitted with a nearest-neighbour likelihood on 5,000 samples (10 neighbours)',
    });
    expect(out.data.n).toBe(5000);
    // The field's noise has sd 0.5 (variance 0.25): the nugget finds it (run-cli.ts fieldSamplesCsv).
    expectClose(out.structures[0].sill, 0.25, { rel: 0.25 });
    expect(parseModel(out).structures.length).toBe(2);
  });

  it('fit --method nnl on few samples passes family, smoothness, trend and neighbours to vecchiaFit', async () => {
    ws.write('field-600.csv', fieldSamplesCsv(600, 4));
    const r = await ws.run('fit', '--samples', 'field-600.csv', '--crs', 'EPSG:32633', '--method', 'nnl', '--nnl-neighbours', '12', '--family', 'exponential', '--trend', 'linear');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('note: fitted with a nearest-neighbour likelihood on 600 samples (12 neighbours); --method nnl\n');
    const out = JSON.parse(r.stdout);
    const samples = readSamples(fieldSamplesCsv(600, 4), { fileName: 'field-600.csv', crs: 'EPSG:32633' }).samples;
    const direct = vecchiaFit(samples, { family: 'exponential', trend: 'linear', neighbours: 12, method: 'reml', nugget: true });
    expect(out.structures).toEqual(direct.structures);
    expect(out.fit).toMatchObject({ method: 'nnl', choice: 'given', neighbours: 12 });
  });

  it('fit --method reml on more than 3,000 samples refuses and says what to use instead (exit 2)', async () => {
    ws.write('field-3001.csv', fieldSamplesCsv(3001, 5));
    const r = await ws.run('fit', '--samples', 'field-3001.csv', '--crs', 'EPSG:32633', '--method', 'reml');
    expect(r.code).toBe(2);
    expect(r.stderr).toBe('error: Option "--method reml" fits the exact likelihood, which is limited to 3,000 samples (n³/3 flops and 8·n² bytes per evaluation); got 3,001. '
      + 'Leave --method out (or give --method nnl) for the nearest-neighbour likelihood, or use --method wls.\n');
  });

  it('fit --transform log fits ln(value) and marks the model "log"', async () => {
    const r = await ws.run('fit', ...COMMON, '--transform', 'log', '--family', 'matern', '--nu', '0.5');
    expect(r.code, r.stderr).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.transform).toBe('log');
    const logged = { ...intake.samples, value: intake.samples.value.map(Math.log) };
    expect(out.structures).toEqual(fitModel(logged, { family: 'matern', nu: 0.5, method: 'reml', trend: 'constant', nugget: true }).structures);
  });

  it('fit --transform log names the line and column of a value that is not positive (exit 2)', async () => {
    ws.write('zero.csv', planarSamplesCsv().replace(/\nS3,([^,]+),([^,]+),[^\n]+/, '\nS3,$1,$2,0'));
    const r = await ws.run('fit', '--samples', 'zero.csv', '--crs', 'EPSG:32633', '--transform', 'log');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('error: zero.csv, line 4, column "nitrate (mg/L)": The value 0 cannot be log-transformed');
  });

  it('fit rejects bad option values (exit 2)', async () => {
    const nuFamily = await ws.run('fit', ...COMMON, '--family', 'spherical', '--nu', '2');
    expect(nuFamily.code).toBe(2);
    expect(nuFamily.stderr).toContain('"--nu" applies to the matern family only');
    const trend = await ws.run('fit', ...COMMON, '--trend', 'known:abc');
    expect(trend.code).toBe(2);
    expect(trend.stderr).toContain('"--trend" expects constant, linear or known:VALUE');
    const method = await ws.run('fit', ...COMMON, '--method', 'ols');
    expect(method.code).toBe(2);
    // Checked before the file is read, so no reading warnings come first.
    const workers = await ws.run('fit', ...COMMON, '--workers', '0');
    expect(workers.code).toBe(2);
    expect(workers.stderr).toBe('error: Option "--workers" expects a whole number of threads from 1 to 256, got 0.\n');
  });

  it('fit reports too few samples and constant values as input problems (exit 2)', async () => {
    ws.write('two.csv', 'x,y,v\n500000,5400000,1\n500010,5400000,2\n');
    const two = await ws.run('fit', '--samples', 'two.csv', '--crs', 'EPSG:32633');
    expect(two.code).toBe(2);
    expect(two.stderr).toContain('error: two.csv: Expected at least 3 samples to fit a model, got 2.\n');
    ws.write('flat.csv', 'x,y,v\n500000,5400000,4\n500010,5400000,4\n500000,5400010,4\n500010,5400010,4\n');
    const flat = await ws.run('fit', '--samples', 'flat.csv', '--crs', 'EPSG:32633');
    expect(flat.code).toBe(2);
    expect(flat.stderr).toMatch(/^error: flat\.csv: All 4 values equal 4/m);
  });
});

describe('resolveFitMethod', () => {
  it('resolveFitMethod: auto is reml below 3,000 samples and nnl from 3,000; a given method stays; limits are checked', () => {
    expect(resolveFitMethod('auto', 2999)).toEqual({ method: 'reml', automatic: true });
    expect(resolveFitMethod('auto', 3000)).toEqual({ method: 'nnl', automatic: true });
    expect(resolveFitMethod('auto', 48211, 20)).toEqual({ method: 'nnl', automatic: true });
    expect(resolveFitMethod('wls', 48211)).toEqual({ method: 'wls', automatic: false });
    expect(resolveFitMethod('nnl', 50, 5)).toEqual({ method: 'nnl', automatic: false });
    expect(resolveFitMethod('ml', 3000)).toEqual({ method: 'ml', automatic: false });
    expect(() => resolveFitMethod('ml', 3001)).toThrow(/limited to 3,000 samples/);
    expect(() => resolveFitMethod('auto', 100, 10)).toThrow('Option "--nnl-neighbours" applies to the nearest-neighbour likelihood, which is chosen from 3,000 samples; got 100 samples (add --method nnl to use it anyway).');
    expect(() => resolveFitMethod('reml', 100, 10)).toThrow('Option "--nnl-neighbours" applies to --method nnl only; got --method reml.');
    expect(() => resolveFitMethod('nnl', 100, 0)).toThrow('Option "--nnl-neighbours" expects a whole number from 1 to 1,000, got 0.');
  });
});

describe('parseTrend', () => {
  it('parseTrend reads constant, linear and known:VALUE', () => {
    expect(parseTrend('constant')).toBe('constant');
    expect(parseTrend('linear')).toBe('linear');
    expect(parseTrend('known:-2.5')).toEqual({ known: -2.5 });
    expect(() => parseTrend('known:')).toThrow(/known:VALUE/);
    expect(() => parseTrend('quadratic')).toThrow(/known:VALUE/);
  });
});

describe('parseNu', () => {
  it('parseNu reads a positive number or free', () => {
    expect(parseNu('2.5')).toBe(2.5);
    expect(parseNu('free')).toBe('free');
    expect(() => parseNu('0')).toThrow(/positive number or "free"/);
    expect(() => parseNu('x')).toThrow(/positive number or "free"/);
  });
});
