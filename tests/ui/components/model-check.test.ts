import { describe, expect, it } from 'vitest';
import { empiricalPlateau, modelConcerns } from '../../../src/ui/components/model-check.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import type { EmpiricalVariogram } from '../../../src/core/fitting/variogram.ts';

/** A variogram with a plateau of 10 beyond 40 m (lags 10 … 90 m, 50 pairs each). */
function variogram(): EmpiricalVariogram {
  const lags = [10, 20, 30, 40, 50, 60, 70, 80, 90].map((d) => ({ distance: d, semivariance: Math.min(10, d / 4), pairs: 50 }));
  return { lags, options: { maxLag: 90, lagWidth: 10 } } as unknown as EmpiricalVariogram;
}
const model = (sill: number): CovarianceModel => ({
  structures: [{ type: 'nugget', sill: 1 }, { type: 'exponential', sill, scale: 10 }], trend: 'constant', transform: 'none',
});

describe('empiricalPlateau', () => {
  it('empiricalPlateau averages the outer third of the lags, weighted by pairs', () => {
    expect(empiricalPlateau(variogram())).toBe(10);
  });
});

describe('modelConcerns', () => {
  it('modelConcerns says nothing for a model that matches the plateau with MSSE near 1', () => {
    expect(modelConcerns(model(9), variogram(), 1.05)).toEqual([]);
  });
  it('modelConcerns names an MSSE far from 1 in plain words, with what to try', () => {
    const high = modelConcerns(model(9), variogram(), 6.34e6);
    expect(high).toHaveLength(1);
    expect(high[0]).toMatch(/MSSE 6,340,000.*sd on the map is too small.*Try/);
    expect(modelConcerns(model(9), variogram(), 0.3)[0]).toMatch(/MSSE 0\.3.*too large/);
  });
  it('modelConcerns names a curve well below the empirical plateau', () => {
    // nugget 1 + partial sill 4 = 5 at the largest lag against a plateau of 10: below 70 %.
    const low = modelConcerns(model(4), variogram(), 1);
    expect(low).toHaveLength(1);
    expect(low[0]).toMatch(/well below the variogram's plateau \(5 against about 10/);
  });
});
