/**
 * The app's covariate plumbing: the columns offered, the encoded covariates of a choice (against the
 * file's cells read here independently), the residuals the Structure step's variogram uses (against
 * the closed-form simple regression, common practice), the snapshot field, the covariate rows a
 * surface band gets, the value choices an intake error carries across the worker, and the predictor
 * cache key.
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { readSamples } from '../../../src/io/intake.ts';
import {
  covariateCandidates, residualSamples, samplesForModel, withChosenCovariates,
} from '../../../src/ui/state/covariates.ts';
import { emptySnapshot, parseSnapshot } from '../../../src/ui/state/snapshot.ts';
import { bandOptions } from '../../../src/worker/pool.ts';
import { errorData, errorFromData } from '../../../src/worker/protocol.ts';
import { predictorKey } from '../../../src/worker/handler.ts';
import { computeSurface } from '../../../src/core/prediction/surface.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';

const TEXT = readFileSync(new URL('../../../data-demo/lead-topsoil-covariates.csv', import.meta.url), 'utf8');
const intake = readSamples(TEXT, { fileName: 'lead-topsoil-covariates.csv', value: 'Pb (mg/kg)' });

/** The file's column `name` by line (header = 1), read with a plain split (no quoted commas in this file). */
function columnByLine(name: string): Map<number, number> {
  const lines = TEXT.trim().split(/\r?\n/);
  const head = lines[0].split(',');
  const k = head.indexOf(name);
  return new Map(lines.slice(1).map((l, i) => [i + 2, Number(l.split(',')[k])]));
}

describe('covariates in the app', () => {
  it('offers every column but coordinates, value and name', () => {
    const offered = covariateCandidates(intake);
    expect(offered).toContain('workshop_dist_m');
    for (const taken of [intake.report.xColumn, intake.report.yColumn, 'Pb (mg/kg)']) expect(offered).not.toContain(taken);
  });

  it('encodes the chosen numeric column as the file gives it, sample by sample', () => {
    const got = withChosenCovariates(intake, ['workshop_dist_m'])!;
    expect(got.trend).toEqual({ covariates: ['workshop_dist_m'] });
    const byLine = columnByLine('workshop_dist_m');
    expect(got.samples.covariates!.length).toBe(intake.table.length);
    intake.table.line.forEach((line, i) => {
      // A merged duplicate keeps the first row's cells.
      expect(got.samples.covariates![i]).toBe(byLine.get(line));
    });
    expect(withChosenCovariates(intake, [])).toBeNull();
  });

  it('gives the least-squares residuals of the closed-form simple regression', () => {
    const got = withChosenCovariates(intake, ['workshop_dist_m'])!;
    const x = got.samples.covariates!;
    const y = Array.from(got.samples.value, Math.log);
    const n = y.length;
    const mx = x.reduce((a, b) => a + b, 0) / n;
    const my = y.reduce((a, b) => a + b, 0) / n;
    let sxy = 0, sxx = 0;
    for (let i = 0; i < n; i++) { sxy += (x[i] - mx) * (y[i] - my); sxx += (x[i] - mx) ** 2; }
    const slope = sxy / sxx;
    const r = residualSamples(got.samples, got.trend, true);
    for (let i = 0; i < n; i++) expect(r.value[i]).toBeCloseTo(y[i] - my - slope * (x[i] - mx), 9);
    expect(slope).toBeLessThan(0);
  });

  it('reads a model\'s own covariates for cross-validation and surfaces', () => {
    const model: CovarianceModel = { structures: [{ type: 'exponential', sill: 1, scale: 30 }], trend: { covariates: ['workshop_dist_m'] }, transform: 'none' };
    const s = samplesForModel(intake, model);
    expect(Array.from(s.covariates!)).toEqual(Array.from(withChosenCovariates(intake, ['workshop_dist_m'])!.samples.covariates!));
    expect(samplesForModel(intake, { ...model, trend: 'constant' }).covariates).toBeUndefined();
  });

  it('keeps the choice in the snapshot and drops a malformed one', () => {
    const s = emptySnapshot();
    s.samples.covariates = ['workshop_dist_m', 'Site'];
    expect(parseSnapshot(JSON.parse(JSON.stringify(s)))!.samples.covariates).toEqual(['workshop_dist_m', 'Site']);
    expect(parseSnapshot({ ...s, samples: { ...s.samples, covariates: ['a', 3] } })!.samples.covariates).toBeUndefined();
    expect(parseSnapshot({ ...s, samples: { ...s.samples, covariates: 'a' } })!.samples.covariates).toBeUndefined();
  });

  it('gives each surface band the covariate rows of its cells, and bands rebuild the whole surface', () => {
    const grid = { x0: 0, y0: 40, cell: 10, nx: 4, ny: 4 };
    // Two encoded columns per cell: the cell index and its square.
    const cov = new Float64Array(16 * 2);
    for (let k = 0; k < 16; k++) { cov[2 * k] = k; cov[2 * k + 1] = k * k; }
    const band = bandOptions({ covariates: cov }, grid, 1, 3).covariates!;
    expect(Array.from(band)).toEqual(Array.from(cov.slice(2 * 4, 2 * 12)));
    expect(bandOptions({ threshold: 2 }, grid, 0, 1)).toEqual({ threshold: 2 });

    const samples = { x: Float64Array.of(5, 35, 15, 25, 30), y: Float64Array.of(5, 35, 25, 10, 20), value: Float64Array.of(1, 4, 2, 3, 3.5), covariates: Float64Array.of(0.2, 3.1, 1.4, 2.2, 2.9) };
    const model: CovarianceModel = { structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 1, scale: 20 }], trend: { covariates: ['d'] }, transform: 'none' };
    const one = new Float64Array(16);
    for (let k = 0; k < 16; k++) one[k] = (k % 4) + Math.floor(k / 4) * 0.5;
    const whole = computeSurface(samples, model, grid, { covariates: one, precision: 'float64' });
    const top = computeSurface(samples, model, { ...grid, ny: 2 }, { ...bandOptions({ covariates: one, precision: 'float64' }, grid, 0, 2) });
    const bottom = computeSurface(samples, model, { ...grid, y0: 20, ny: 2 }, { ...bandOptions({ covariates: one, precision: 'float64' }, grid, 2, 4) });
    expect([...top.mean, ...bottom.mean]).toEqual([...whole.mean]);
  });

  it('carries the numeric columns of an open value choice across the worker', () => {
    const e = Object.assign(new GapwiseError('missing-column', 'Several columns hold numbers.'), { numericColumns: ['a', 'b'] });
    const back = errorFromData(errorData(e)) as GapwiseError & { numericColumns?: string[] };
    expect(back.numericColumns).toEqual(['a', 'b']);
    expect(errorData(new GapwiseError('bad-value', 'x')).choices).toBeUndefined();
  });

  it('keys the cached predictor by the covariates too', () => {
    const s = { x: Float64Array.of(0, 1), y: Float64Array.of(0, 1), value: Float64Array.of(1, 2) };
    const model: CovarianceModel = { structures: [{ type: 'exponential', sill: 1, scale: 2 }], trend: { covariates: ['d'] }, transform: 'none' };
    expect(predictorKey({ ...s, covariates: Float64Array.of(1, 2) }, model)).not.toBe(predictorKey({ ...s, covariates: Float64Array.of(1, 3) }, model));
  });
});
