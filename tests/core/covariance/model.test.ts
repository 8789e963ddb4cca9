import { describe, expect, it } from 'vitest';
import {
  parseModel, checkModelScale, MAX_SILL, MAX_ABS_MEAN, MODEL_DATA_RATIO, type CovarianceModel,
} from '../../../src/core/covariance/model.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { createLocalPredictor } from '../../../src/core/prediction/local-kriging.ts';
import { leaveOneOut } from '../../../src/core/validation/cross-validation.ts';
import { computeSurface } from '../../../src/core/prediction/surface.ts';
import { gridFromExtent } from '../../../src/core/geometry/grid.ts';
import { thrown } from '../../helpers/thrown.ts';

// Twelve samples on a 3 × 4 lattice, 10 m apart, values about 20 ± 5.
const samples = (() => {
  const x: number[] = [], y: number[] = [], value: number[] = [];
  for (let i = 0; i < 3; i++) for (let j = 0; j < 4; j++) {
    x.push(10 * i + (j % 2)); y.push(10 * j); value.push(20 + 5 * Math.sin(i + 2 * j));
  }
  return { x: Float64Array.from(x), y: Float64Array.from(y), value: Float64Array.from(value) };
})();

const base = { structures: [{ type: 'nugget', sill: 1 }, { type: 'exponential', sill: 20, scale: 15 }], trend: 'constant' };

describe('parseModel bounds', () => {
  it('parseModel refuses a nugget of 1e300 and a known mean of 1e308, naming the parameter and the limit', () => {
    const nugget = thrown(() => parseModel({ ...base, structures: [{ type: 'nugget', sill: 1e300 }, base.structures[1]] }));
    expect(nugget.code).toBe('bad-model');
    expect(nugget.message).toBe(`Expected structures[0].sill from 0 to ${MAX_SILL}, got 1e+300.`);
    const mean = thrown(() => parseModel({ ...base, trend: { known: 1e308 } }));
    expect(mean.message).toBe(`Expected trend.known from ${-MAX_ABS_MEAN} to ${MAX_ABS_MEAN}, got 1e+308.`);
    expect(thrown(() => parseModel({ ...base, trend: { known: -1e200 } })).message).toContain('trend.known');
  });

  it('parseModel refuses scales, smoothness and anisotropy outside their ranges', () => {
    const scale = (v: number) => thrown(() => parseModel({ structures: [{ type: 'gaussian', sill: 1, scale: v }] })).message;
    expect(scale(1e-9)).toBe('Expected structures[0].scale from 0.000001 m to 1000000000 m, got 1e-9 m.');
    expect(scale(1e12)).toContain('got 1000000000000 m');
    expect(thrown(() => parseModel({ structures: [{ type: 'matern', sill: 1, scale: 5, nu: 1e4 }] })).message)
      .toBe('Expected structures[0].nu from 0.05 to 100, got 10000.');
    expect(thrown(() => parseModel({ ...base, anisotropy: { azimuth: 1e9, ratio: 0.5 } })).message).toContain('anisotropy.azimuth');
    expect(thrown(() => parseModel({ ...base, anisotropy: { azimuth: 30, ratio: 1e-9 } })).message)
      .toBe('Expected anisotropy.ratio from 0.001 to 1, got 1e-9.');
  });

  it('parseModel keeps parameters at the edge of their ranges', () => {
    const m = parseModel({ structures: [{ type: 'nugget', sill: MAX_SILL }, { type: 'matern', sill: 0, scale: 1e9, nu: 100 }], trend: { known: -MAX_ABS_MEAN } });
    expect(m.structures[0].sill).toBe(MAX_SILL);
    expect(m.trend).toEqual({ known: -MAX_ABS_MEAN });
  });
});

describe('checkModelScale', () => {
  it('checkModelScale refuses a sill whose square root is more than 1e6 standard deviations of the values (exit 3 kind)', () => {
    const model = parseModel({ ...base, structures: [{ type: 'nugget', sill: 1e90 }, base.structures[1]] }) as CovarianceModel;
    const e = thrown(() => checkModelScale(model, samples.x, samples.y, samples.value));
    expect(e.code).toBe('non-finite');
    expect(e.kind).toBe('numeric');
    expect(e.message).toMatch(/^The model's structures\[0\]\.sill \(1\.00e\+90\) is out of scale with the data: the square root of the total sill is .* times the standard deviation of the values \(.*\); expected at most 1\.00e\+6 times/);
    // The same model through every predictor that takes a whole sample set.
    expect(thrown(() => createPredictor(samples, model)).code).toBe('non-finite');
    expect(thrown(() => createLocalPredictor(samples, model, { neighbours: 5 })).code).toBe('non-finite');
    expect(thrown(() => leaveOneOut(samples, model)).code).toBe('non-finite');
  });

  it('checkModelScale refuses a known mean far from the values and a scale far beyond the sample extent', () => {
    const mean = thrown(() => checkModelScale(parseModel({ ...base, trend: { known: 1e50 } }), samples.x, samples.y, samples.value));
    expect(mean.message).toContain("The model's trend.known (1.00e+50) is out of scale with the data: its distance from the mean of the values");
    const far = parseModel({ structures: [{ type: 'gaussian', sill: 20, scale: 1e9 }] });
    const scale = thrown(() => checkModelScale(far, samples.x, samples.y, samples.value));
    expect(scale.message).toContain("The model's structures[0].scale (1.00e+9) is out of scale with the data: it is");
    expect(scale.message).toContain("the diagonal of the samples' extent (36.62 m)");
  });

  it('checkModelScale accepts a model just inside the ratio and a log model judged on ln(value)', () => {
    let mean = 0;
    for (const v of samples.value) mean += v;
    mean /= samples.value.length;
    let ss = 0;
    for (const v of samples.value) ss += (v - mean) ** 2;
    const sd = Math.sqrt(ss / (samples.value.length - 1));
    const sill = (0.99 * MODEL_DATA_RATIO * sd) ** 2;
    expect(() => checkModelScale(parseModel({ structures: [{ type: 'exponential', sill, scale: 15 }] }), samples.x, samples.y, samples.value)).not.toThrow();
    // ln(value) has an sd of about 0.25, so a sill of 1e12 is far out on the log scale.
    const log = parseModel({ structures: [{ type: 'exponential', sill: 1e12, scale: 15 }], transform: 'log' });
    expect(thrown(() => checkModelScale(log, samples.x, samples.y, samples.value)).message).toContain('standard deviation of ln(value)');
  });
});

describe('non-finite results', () => {
  it('computeSurface with values beyond 32-bit floats fails with non-finite, naming the cell and the output limit', () => {
    // Values of about 1e40: fine in double precision, beyond Float32 (3.4e38) storage.
    const big = { ...samples, value: samples.value.map((v) => v * 1e39) };
    const model = parseModel({ structures: [{ type: 'nugget', sill: 1e78 }, { type: 'exponential', sill: 2e79, scale: 15 }] });
    const grid = gridFromExtent(0, 0, 20, 30, 10);
    const e = thrown(() => computeSurface(big, model, grid));
    expect(e.code).toBe('non-finite');
    expect(e.message).toMatch(/^The kriging mean at the cell in column 0, row 0 is .*e\+40, beyond the largest 32-bit float \(3\.4e38\) of this output/);
    // In full precision the same surface is finite.
    const full = computeSurface(big, model, grid, { precision: 'float64' });
    expect(Number.isFinite(full.mean[0])).toBe(true);
  });

  it('createPredictor.predict fails with non-finite when a log model overflows exp, naming the sill', () => {
    // ln(value) sd about 0.25; a sill of 4e3 passes the scale check but exp(Ŷ + σ²/2) overflows far away.
    const log = parseModel({ structures: [{ type: 'exponential', sill: 4e3, scale: 15 }], transform: 'log' });
    const p = createPredictor(samples, log);
    const e = thrown(() => p.predict([1e6], [1e6]));
    expect(e.code).toBe('non-finite');
    expect(e.message).toBe("The kriging mean at target 1 (1000000, 1000000) is Infinity, not a finite number; expected a finite result: the model's structures[0].sill (4000) is the largest parameter, so rescale the values (other units) or refit the model to them.");
  });
});
