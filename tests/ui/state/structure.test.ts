import { describe, expect, it } from 'vitest';
import { CANDIDATES } from '../../../src/core/fitting/fit.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import type { EmpiricalVariogram } from '../../../src/core/fitting/variogram.ts';
import {
  anisotropyHint, bestKey, CANDIDATE_SPECS, modelCurve, modelName, modelParts, withParts, type CandidateRow,
} from '../../../src/ui/state/structure.ts';
import { expectClose } from '../../helpers/tolerance.ts';

const exp: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.5 }, { type: 'exponential', sill: 2, scale: 100 }],
  trend: 'constant', transform: 'none', fit: { method: 'reml', converged: true, aic: 10, logLikelihood: -2 },
};

function row(key: string, aic: number, model: CovarianceModel | null = exp): CandidateRow {
  return { key, label: key, model, logLikelihood: -aic / 2, aic, rmse: 1, msse: 1 };
}

describe('CANDIDATE_SPECS', () => {
  it('CANDIDATE_SPECS lists the six candidates with distinct keys, the exponential (Matérn ν = ½) once, as core fitCandidates', () => {
    expect(CANDIDATE_SPECS.map((c) => c.key)).toEqual(['exponential', 'matern-1.5', 'matern-2.5', 'matern-free', 'spherical', 'gaussian']);
    expect(CANDIDATE_SPECS.map((c) => [c.family, c.nu])).toEqual(CANDIDATES.map((c) => [c.family, c.nu]));
  });
});

describe('bestKey', () => {
  it('bestKey picks the lowest AIC and skips failed or non-finite rows', () => {
    expect(bestKey([row('a', 12), row('b', 9.5), row('c', NaN), row('d', 1, null)])).toBe('b');
    expect(bestKey([])).toBe('');
  });
});

describe('modelParts / withParts', () => {
  it('modelParts reads nugget, partial sill and scale', () => {
    expect(modelParts(exp)).toEqual({ nugget: 0.5, sill: 2, scale: 100, family: 'exponential' });
  });
  it('withParts replaces the edited parts, keeps the rest and marks the model manual', () => {
    const m = withParts(exp, { nugget: 0, scale: 50 });
    expect(m.structures).toEqual([{ type: 'exponential', sill: 2, scale: 50 }]);
    expect(m.fit?.method).toBe('manual');
    expect(m.fit?.aic).toBeUndefined();
    // Exponential practical range: correlation exp(−h/scale) = 0.05 at h = 3.00·scale (methods: ln 20 = 2.996).
    expectClose(m.practicalRange!, 50 * Math.log(20), { rel: 1e-6 }, 'practical range');
  });
  it('withParts ignores impossible values', () => {
    expect(withParts(exp, { sill: -1 })).toBe(exp);
    expect(withParts(exp, { scale: 0 })).toBe(exp);
  });
});

describe('modelCurve', () => {
  it('modelCurve is 0 at h = 0, jumps to the nugget and rises to the total sill', () => {
    const c = modelCurve(exp, 1000, 100);
    expect(c[0]).toEqual({ h: 0, gamma: 0 });
    // γ(10) = 0.5 + 2·(1 − e^(−0.1)) by the exponential formula.
    expectClose(c[1].gamma, 0.5 + 2 * (1 - Math.exp(-0.1)), { rel: 1e-12 }, 'γ(10)');
    expectClose(c[100].gamma, 2.5 - 2 * Math.exp(-10), { rel: 1e-12 }, 'γ(1000)');
  });
});

describe('anisotropyHint', () => {
  function dir(level: number): EmpiricalVariogram {
    const lags = [20, 40, 60, 80, 100, 120].map((d) => ({ distance: d, semivariance: level * d, pairs: 50, from: d - 10, to: d + 10 }));
    return { lags, options: { estimator: 'matheron', lagWidth: 20, maxLag: 120, lagCount: 6, maxPairs: 1e6, seed: 1 }, n: 100, maxDistance: 240, pairsUsed: 300, pairsExamined: 300, subsampled: false, notes: [], warnings: [] };
  }
  it('anisotropyHint names the slowest-rising direction as the long axis', () => {
    const h = anisotropyHint([dir(1), dir(0.5), dir(1), dir(1.2)]);
    expect(h.longAxis).toBe(45);
    expect(h.ratio).toBeCloseTo(0.42, 2);
    expect(h.text).toContain('45°');
  });
  it('anisotropyHint says there is no clear direction when the directions agree within 25 %', () => {
    const h = anisotropyHint([dir(1), dir(0.9), dir(1), dir(0.95)]);
    expect(h.longAxis).toBeUndefined();
    expect(h.text).toMatch(/No clear direction/);
  });
});

describe('modelName', () => {
  it('modelName names the family, ν and the nugget', () => {
    expect(modelName(exp)).toBe('Exponential + nugget');
    expect(modelName({ structures: [{ type: 'matern', sill: 1, scale: 1, nu: 1.5 }], trend: 'constant', transform: 'none' })).toBe('Matérn ν = 1.5');
  });
});
