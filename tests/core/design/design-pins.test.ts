/**
 * Pins: seeded designs whose outputs must stay bit for bit what they were when these pins were
 * written (splitting the design functions into named steps must not change one bit). Regression
 * pins only (no outside reference): SHA-256 over the sites, benefits and summary figures.
 */
import { describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { suggestSites, type DesignOptions, type DesignResult } from '../../../src/core/design/design.ts';
import { waveSamples } from '../../../bench/common.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';

function designDigest(r: DesignResult): string {
  const h = createHash('sha256');
  const figures = r.suggestions.flatMap((s) => [s.x, s.y, s.benefit, s.mean ?? NaN, s.sd ?? NaN, s.pExceed ?? NaN]);
  figures.push(r.averageSdBefore ?? NaN, r.averageSdAfter ?? NaN, r.misclassifiedAreaBefore ?? NaN, r.misclassifiedAreaAfter ?? NaN,
    r.coverageDistanceBefore ?? NaN, r.coverageDistanceAfter ?? NaN, r.evaluationPoints, r.screenedCandidates, r.candidatePoints);
  const f = Float64Array.from(figures);
  h.update(new Uint8Array(f.buffer));
  h.update(r.warnings.map((w) => `${w.code}:${w.message}`).join('\n'));
  return h.digest('hex').slice(0, 16);
}

const model: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 250, nu: 1.5 }], trend: 'constant', transform: 'none',
};
const samples = waveSamples(150, { side: 600, amplitude: 10, lengthX: 300, lengthY: 400, seed: 3 });
const boundary = [[[[500000, 6000000], [500600, 6000000], [500600, 6000600], [500000, 6000600], [500000, 6000000]]]] as DesignOptions['boundary'] & object;
const base: DesignOptions = { count: 6, boundary: [boundary[0]], cell: 15 };
const threshold = Float64Array.from(samples.value).sort()[75];

describe('suggestSites pins (bit for bit across refactoring)', () => {
  it('suggestSites variance, decision (screened and refined), log model, spacing and coverage', () => {
    const cases: Record<string, () => DesignResult> = {
      variance: () => suggestSites(samples, model, { ...base, mode: 'variance' }),
      decision: () => suggestSites(samples, model, { ...base, mode: 'decision', threshold }),
      screened: () => suggestSites(samples, model, { ...base, mode: 'variance', maxScreenCandidates: 200, maxEvaluationPoints: 300, minSpacing: 40 }),
      screenedDecision: () => suggestSites(samples, { ...model, trend: 'linear' }, { ...base, threshold, maxScreenCandidates: 150, minSpacing: 30 }),
      log: () => suggestSites(samples, { ...model, transform: 'log' }, { ...base, threshold: Math.exp(0) + 50 }),
      coverage: () => suggestSites(samples, null, { ...base, mode: 'coverage', seed: 3 }),
      coverageSpaced: () => suggestSites(samples, model, { ...base, mode: 'coverage', seed: 2, minSpacing: 50, restarts: 2 }),
    };
    const got = Object.fromEntries(Object.entries(cases).map(([name, run]) => [name, designDigest(run())]));
    expect(got).toMatchInlineSnapshot(`
      {
        "coverage": "68a671e4b98cc132",
        "coverageSpaced": "b061fe3927176b3f",
        "decision": "bda8a862c7f14bd2",
        "log": "e9ee37fd593da3c3",
        "screened": "176d15cf9769d361",
        "screenedDecision": "1187611afc08044b",
        "variance": "f31ae6c34487cc9c",
      }
    `);
  });
});
