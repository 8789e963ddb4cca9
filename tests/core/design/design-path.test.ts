import { describe, expect, it } from 'vitest';
import { chooseDesignPath, designExactCost, designLocalCost, planDesignPath } from '../../../src/core/design/design-path.ts';
import { createLocalPosterior } from '../../../src/core/design/design-posterior.ts';
import { posteriorCovariance } from '../../../src/core/simulation/conditional-simulation.ts';
import { suggestSites } from '../../../src/core/design/design.ts';
import { buildKrigingSystem, createPredictor } from '../../../src/core/prediction/kriging.ts';
import { EXACT_SAMPLE_LIMIT } from '../../../src/core/prediction/path-choice.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { waveSamples } from '../../../bench/common.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';

const model: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 250, nu: 1.5 }], trend: 'constant', transform: 'none',
};

describe('chooseDesignPath', () => {
  it('chooseDesignPath takes the exact posterior for a small problem and the local one for a large one', () => {
    const small = chooseDesignPath({ samples: 200, evaluation: 1000, candidates: 1000, sites: 10 });
    expect(small).toMatchObject({ path: 'exact', automatic: true });
    const large = chooseDesignPath({ samples: 5000, evaluation: 1000, candidates: 1000, sites: 10 });
    expect(large.path).toBe('local');
    expect(large.reason).toMatch(/^local neighbourhoods are cheaper here \(about [\d.]+ billion operations local, [\d.]+ exact\)$/);
  });

  it('chooseDesignPath switches exactly where the estimated costs cross (1,000 evaluation points and candidates, 10 sites)', () => {
    let boundary = 0;
    for (let n = 65; n <= EXACT_SAMPLE_LIMIT; n++) {
      if (chooseDesignPath({ samples: n, evaluation: 1000, candidates: 1000, sites: 10 }).path === 'local') { boundary = n; break; }
    }
    expect(boundary).toBeGreaterThan(65);
    expect(chooseDesignPath({ samples: boundary - 1, evaluation: 1000, candidates: 1000, sites: 10 }).path).toBe('exact');
    expect(designExactCost(boundary - 1, 1000, 1000, 10)).toBeLessThanOrEqual(designLocalCost(boundary - 1, 1000, 1000, 10));
    expect(designLocalCost(boundary, 1000, 1000, 10)).toBeLessThan(designExactCost(boundary, 1000, 1000, 10));
  });

  it('chooseDesignPath: exact for covariates, a tolerance of 0 or a neighbourhood holding every sample; local above the limit; --local with covariates refused', () => {
    expect(chooseDesignPath({ samples: 5000, evaluation: 1000, candidates: 1000, sites: 10, covariates: true }).reason).toBe('a model with covariates estimates its trend from all samples');
    expect(chooseDesignPath({ samples: 5000, evaluation: 1000, candidates: 1000, sites: 10, tolerance: { mean: 1, sd: 0 } }).path).toBe('exact');
    expect(chooseDesignPath({ samples: 50, evaluation: 1000, candidates: 1000, sites: 10 }).path).toBe('exact');
    expect(chooseDesignPath({ samples: EXACT_SAMPLE_LIMIT + 1, evaluation: 10, candidates: 10, sites: 1 }).path).toBe('local');
    expect(() => chooseDesignPath({ samples: 100, evaluation: 10, candidates: 10, sites: 1, covariates: true, force: 'local' })).toThrow(GapwiseError);
  });
});

const samples = waveSamples(400, { side: 600, amplitude: 10, lengthX: 300, lengthY: 400, seed: 5 });

describe('createLocalPosterior', () => {
  it('createLocalPosterior with every sample in the neighbourhood equals the exact posterior covariance (1e-9 relative)', () => {
    // With m = n each column's neighbourhood is all samples, so k₀(q, r) = c(q, r) − λ_rᵀk_q + x_qᵀν_r is the exact posterior.
    const few = waveSamples(40, { side: 600, amplitude: 10, lengthX: 300, lengthY: 400, seed: 6 });
    for (const trend of ['constant', 'linear', { known: 40 }] as const) {
      const m: CovarianceModel = { ...model, trend };
      const local = createLocalPosterior(few, m, 40);
      const A = local.features([500100, 500300], [6000200, 6000450]);
      const B = local.features([500250, 500400, 500120], [6000300, 6000100, 6000210]);
      const K = local.cross(A, B);
      const sys = buildKrigingSystem(few, m);
      for (let i = 0; i < 2; i++) for (let j = 0; j < 3; j++) {
        const want = posteriorCovariance(sys, A.x[i], A.y[i], B.x[j], B.y[j]);
        expect(Math.abs(K[i * 3 + j] - want), `${JSON.stringify(trend)} ${i},${j}`).toBeLessThan(1e-9 * m.structures[1].sill);
      }
      const p = createPredictor(few, m).predict(A.x, A.y);
      for (let i = 0; i < 2; i++) expect(Math.abs(A.variance[i] - p.sd[i] ** 2)).toBeLessThan(1e-9);
    }
  });
});

describe('suggestSites on the local posterior', () => {
  const boundary = [[[[500000, 6000000], [500600, 6000000], [500600, 6000600], [500000, 6000600], [500000, 6000000]]]] as const;
  const base = { count: 5, boundary: [boundary[0] as unknown as number[][][]], cell: 20 };

  it('planDesignPath measures the local posterior at seeded evaluation points against exact kriging', () => {
    const evaluation = { x: Float64Array.from({ length: 50 }, (_, i) => 500010 + 12 * i), y: Float64Array.from({ length: 50 }, (_, i) => 6000590 - 11 * i) };
    const plan = planDesignPath(samples, model, evaluation, { candidates: 900, sites: 5, force: 'local', neighbours: 32 });
    expect(plan.choice.path).toBe('local');
    expect(plan.accuracy!.checked).toBe(50);
    expect(plan.accuracy!.reference).toBe('exact');
    expect(plan.accuracy!.mean.max).toBeGreaterThan(0);
  });

  it('suggestSites --local: the area\'s average sd before differs from the exact design\'s by at most the measured largest sd difference', () => {
    // 14 × 14 cells of 45 m: every evaluation point is checked (fewer than 200), so the measured largest
    // sd difference bounds the difference of the averages exactly (prior sd 1: % / 100).
    const opts = { ...base, cell: 45 };
    const exact = suggestSites(samples, model, { ...opts, path: 'exact' });
    const local = suggestSites(samples, model, { ...opts, path: 'local', neighbours: 48 });
    expect(exact.path).toMatchObject({ path: 'exact', automatic: false });
    expect(local.path).toMatchObject({ path: 'local', automatic: false, neighbours: 48 });
    const a = local.path!.accuracy!;
    expect(a.checked).toBe(a.targets);
    expect(local.evaluationPoints).toBe(exact.evaluationPoints);
    expect(Math.abs(local.averageSdBefore! - exact.averageSdBefore!)).toBeLessThanOrEqual(a.sd.max / 100 + 1e-12);
    expect(local.averageSdAfter!).toBeLessThan(local.averageSdBefore!);
    expect(local.suggestions).toHaveLength(5);
  });

  it('suggestSites chooses automatically and says why; a local posterior that misses the tolerance is replaced by the exact one', () => {
    const small = suggestSites(samples, model, { ...base, cell: 45 });
    expect(small.path).toMatchObject({ path: 'exact', automatic: true });
    expect(small.path!.reason).toMatch(/^the exact posterior is cheaper here/);
    const few = suggestSites(samples, model, { ...base, cell: 45, neighbours: 8, maxEvaluationPoints: 50 });
    expect(few.path).toMatchObject({ path: 'exact', automatic: true });
    expect(few.path!.reason).toMatch(/^local neighbourhoods of 8 samples missed the tolerance \(mean [\d.]+ %, sd [\d.]+ % of the prior sd\)$/);
  });
});
