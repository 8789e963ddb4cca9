import { describe, expect, it } from 'vitest';
import { numericalFailureAdvice, LARGEST_SQUARABLE } from '../../../src/core/covariance/numerical-advice.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { fitModel } from '../../../src/core/fitting/fit.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { parseModel, type CovarianceModel } from '../../../src/core/covariance/model.ts';
import { createLocalPredictor } from '../../../src/core/prediction/local-kriging.ts';
import { vecchiaTrend } from '../../../src/core/fitting/vecchia.ts';
import { searchLikelihood } from '../../../src/core/fitting/fit-search.ts';
import { thrown } from '../../helpers/thrown.ts';

// Ten samples along a bent line, 10 m apart, values about 5 ± 2.
const x = Float64Array.from({ length: 10 }, (_, i) => 10 * i);
const y = Float64Array.from({ length: 10 }, (_, i) => (i % 3) * 7);
const value = Float64Array.from({ length: 10 }, (_, i) => 5 + 2 * Math.sin(i));

describe('numericalFailureAdvice', () => {
  it('numericalFailureAdvice names values too large to square before anything else', () => {
    const big = value.map((v) => v * 1e200);
    expect(numericalFailureAdvice(x, y, big)).toMatch(/^the values reach .*e\+200, too large to square in double precision \(the most is about 1\.00e\+150\): rescale them/);
    expect(LARGEST_SQUARABLE).toBe(1e150);
  });

  it('numericalFailureAdvice tells duplicates, near-duplicates and an over-long scale apart', () => {
    const noNugget = parseModel({ structures: [{ type: 'exponential', sill: 4, scale: 30 }] });
    const dx = Float64Array.from(x); dx[3] = dx[2]; const dy = Float64Array.from(y); dy[3] = dy[2];
    expect(numericalFailureAdvice(dx, dy, value, noNugget)).toBe('1 sample shares its location with another and the model has no nugget: try merging duplicates or a model with a nugget');
    const nx = Float64Array.from(x); nx[3] = nx[2] + 1e-6; const ny = Float64Array.from(y); ny[3] = ny[2];
    expect(numericalFailureAdvice(nx, ny, value, noNugget)).toMatch(/^the closest two samples are 1\.00e-6 m apart, .* of the extent \(.* m\): try merging near-duplicate locations/);
    const long = parseModel({ structures: [{ type: 'nugget', sill: 0.1 }, { type: 'gaussian', sill: 4, scale: 1e6 }] });
    expect(numericalFailureAdvice(x, y, value, long)).toMatch(/^the model's scale \(1\.00e\+6 m\) is .* times the samples' extent \(.* m\), so the covariance is nearly constant/);
  });

  it('createPredictor without jitter on a singular matrix gives the advice that fits the cause', () => {
    const dx = Float64Array.from(x); dx[3] = dx[2]; const dy = Float64Array.from(y); dy[3] = dy[2];
    const model = parseModel({ structures: [{ type: 'exponential', sill: 4, scale: 30 }] });
    const e = thrown(() => createPredictor({ x: dx, y: dy, value }, model, { jitter: false }));
    expect(e.code).toBe('not-positive-definite');
    expect(e.message).toBe('The 10×10 covariance matrix is not positive definite: 1 sample shares its location with another and the model has no nugget: try merging duplicates or a model with a nugget.');
  });

  it('fitModel on values of 1e200 says the values are out of scale, not that locations are duplicated', () => {
    const e = thrown(() => fitModel({ x, y, value: value.map((v) => v * 1e200) }, { family: 'exponential' }));
    expect(e.code).toBe('fit-failed');
    expect(e.message).toContain('too large to square in double precision');
    expect(e.message).not.toContain('duplicated');
  });
});

describe('numerical advice on the local-neighbourhood and nearest-neighbour paths', () => {
  // The ten samples above, all in one neighbourhood; no jitter, so a singular matrix fails.
  const target = { x: Float64Array.of(45), y: Float64Array.of(5) };
  const localFailure = (sx: Float64Array, sy: Float64Array, model: CovarianceModel) =>
    thrown(() => createLocalPredictor({ x: sx, y: sy, value }, model, { jitter: false, neighbours: 10 }).predict(target.x, target.y));

  it('createLocalPredictor: duplicated samples with no nugget are named as such', () => {
    const dx = Float64Array.from(x); dx[3] = dx[2]; const dy = Float64Array.from(y); dy[3] = dy[2];
    const e = localFailure(dx, dy, parseModel({ structures: [{ type: 'exponential', sill: 4, scale: 30 }] }));
    expect(e.code).toBe('not-positive-definite');
    expect(e.message).toBe('The covariance matrix of a 10-sample neighbourhood is not positive definite: 1 sample shares its location with another and the model has no nugget: try merging duplicates or a model with a nugget.');
  });

  it('createLocalPredictor: near-duplicate samples are named by their distance, not as duplicates', () => {
    const nx = Float64Array.from(x); nx[3] = nx[2] + 1e-6; const ny = Float64Array.from(y); ny[3] = ny[2];
    const e = localFailure(nx, ny, parseModel({ structures: [{ type: 'gaussian', sill: 4, scale: 30 }] }));
    expect(e.code).toBe('not-positive-definite');
    expect(e.message).toMatch(/not positive definite: the closest two samples are 1\.00e-6 m apart, .* of the extent \(.* m\): try merging near-duplicate locations or a larger nugget\.$/);
  });

  it('createLocalPredictor: a scale far longer than the neighbourhood is named as the cause', () => {
    const e = localFailure(x, y, parseModel({ structures: [{ type: 'gaussian', sill: 4, scale: 1e6 }] }));
    expect(e.code).toBe('not-positive-definite');
    expect(e.message).toMatch(/not positive definite: the model's scale \(1\.00e\+6 m\) is .* times the samples' extent \(.* m\), so the covariance is nearly constant between samples: try a shorter scale/);
    expect(e.message).not.toContain('duplicat');
  });

  it('vecchiaTrend: a model that cannot be factorised with no duplicates does not blame duplicates', () => {
    const e = thrown(() => vecchiaTrend({ x, y, value }, parseModel({ structures: [{ type: 'exponential', sill: 0, scale: 30 }] }), { neighbours: 5 }));
    expect(e.code).toBe('not-positive-definite');
    expect(e.message).toBe('The covariance of neighbouring samples is not positive definite: try another family, a nugget, or a log transform for positive, right-skewed values.');
  });
});

describe('numerical advice of the richer likelihood fits', () => {
  it('searchLikelihood on values of 1e200 says the values are out of scale', () => {
    const e = thrown(() => searchLikelihood({ x, y, value: value.map((v) => v * 1e200) }, { family: 'exponential', trend: 'constant' }, undefined as never, {
      parameters: [{ lower: 1, upper: 1e4, log: true, step: 0.5 }],
      starts: [[20], [60]],
      toTheta: (p) => ({ scale: p[0], nuggetRatio: 0.1 }),
      allowJitter: true,
    }, { what: 'test model' }));
    expect(e.code).toBe('fit-failed');
    expect(e.message).toMatch(/^No starting value gave a finite likelihood for the test model \(10 samples\): the values reach .*, too large to square in double precision/);
  });
});
