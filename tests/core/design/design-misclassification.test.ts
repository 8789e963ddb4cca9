import { describe, expect, it } from 'vitest';
import {
  bivariateNormalCdf, expectedMisclassification, misclassificationProbability,
} from '../../../src/core/design/design-misclassification.ts';
import { normalCdf } from '../../../src/core/shared/normal.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';

interface BvnCase { x: number; y: number; rho: number; cdf: number }
interface ExpectedCase { mean: number; sdNow: number; sdAfter: number; threshold: number; expected: number }

const fixture = loadFixture<BvnCase>('design.json');

describe('bivariateNormalCdf', () => {
  it('bivariateNormalCdf matches scipy.stats.multivariate_normal.cdf on every branch (|rho| < 0.3, 0.75, 0.925, above)', () => {
    // Source: scipy multivariate_normal.cdf, fixture tests/reference/design.json.
    expect(fixture.cases.length).toBeGreaterThan(200);
    for (const c of fixture.cases) {
      expectClose(bivariateNormalCdf(c.x, c.y, c.rho), c.cdf, fixture.tolerance, `Φ₂(${c.x}, ${c.y}; ${c.rho})`);
    }
  });

  it('bivariateNormalCdf reduces to products and minima at rho = 0 and ±1, and to Φ at infinite limits', () => {
    // Exact identities of the bivariate normal.
    expectClose(bivariateNormalCdf(0.7, -0.4, 0), normalCdf(0.7) * normalCdf(-0.4), { abs: 1e-15 });
    expectClose(bivariateNormalCdf(0.7, -0.4, 1), normalCdf(-0.4), { abs: 1e-15 });
    expectClose(bivariateNormalCdf(0.7, -0.4, -1), normalCdf(0.7) - normalCdf(0.4), { abs: 1e-15 });
    expectClose(bivariateNormalCdf(0, 0, 0.5), 0.25 + Math.asin(0.5) / (2 * Math.PI), { abs: 1e-15 });
    expect(bivariateNormalCdf(Infinity, 1.1, 0.3)).toBe(normalCdf(1.1));
    expect(bivariateNormalCdf(-Infinity, 1.1, 0.3)).toBe(0);
  });
});

describe('expectedMisclassification', () => {
  const expected = fixture.expected as ExpectedCase[];
  const tol = fixture.expectedTolerance as { abs: number };

  it('expectedMisclassification matches numerical integration with scipy.integrate.quad', () => {
    // Source: scipy.integrate.quad of E[Φ(−|M' − T|/s')] over M' ~ N(m, s² − s'²), tests/reference/design.json.
    for (const c of expected) {
      expectClose(expectedMisclassification(c.mean, c.sdNow, c.sdAfter, c.threshold), c.expected, tol,
        `E(m=${c.mean}, s=${c.sdNow}, s'=${c.sdAfter}, T=${c.threshold})`);
    }
  });

  it('expectedMisclassification matches a seeded Monte Carlo estimate within 4 standard errors', () => {
    // Draw M' ~ N(m, s² − s'²), average Φ(−|M' − T|/s'); 200,000 draws per case.
    const rnd = createRandom(9173);
    const cases: Array<[number, number, number, number]> = [[3, 1.2, 0.6, 3.5], [3, 1.2, 1.1, 1.9], [0, 2, 0.3, 0.1], [8, 0.4, 0.39, 8.2]];
    for (const [m, s, s1, t] of cases) {
      const sigma = Math.sqrt(s * s - s1 * s1);
      const draws = 200_000;
      let sum = 0;
      let sum2 = 0;
      for (let i = 0; i < draws; i++) {
        const v = normalCdf(-Math.abs(m + sigma * rnd.normal() - t) / s1);
        sum += v;
        sum2 += v * v;
      }
      const mc = sum / draws;
      const se = Math.sqrt((sum2 / draws - mc * mc) / draws);
      const e = expectedMisclassification(m, s, s1, t);
      expect(Math.abs(e - mc), `case ${[m, s, s1, t]}: closed form ${e}, Monte Carlo ${mc} ± ${se}`).toBeLessThan(4 * se);
    }
  });

  it('expectedMisclassification equals the current probability with no new information and 0 with perfect information', () => {
    expectClose(expectedMisclassification(4, 1.5, 1.5, 5), misclassificationProbability(4, 1.5, 5), { abs: 1e-15 });
    expectClose(expectedMisclassification(4, 1.5, 1.5 * (1 - 1e-12), 5), normalCdf(-1 / 1.5), { abs: 1e-9 });
    expect(expectedMisclassification(4, 1.5, 0, 5)).toBe(0);
    // At m = T: ½ + asin(−σ/s)/π, e.g. s' = s/√2 gives ¼.
    expectClose(expectedMisclassification(5, 2, 2 / Math.SQRT2, 5), 0.25, { abs: 1e-15 });
  });

  it('expectedMisclassification never exceeds the current probability and falls as sdAfter falls', () => {
    for (const a of [-3, -1, -0.2, 0, 0.4, 2]) {
      let last = misclassificationProbability(a, 1, 0);
      for (let s1 = 0.99; s1 > 0.01; s1 -= 0.07) {
        const e = expectedMisclassification(a, 1, s1, 0);
        expect(e).toBeLessThanOrEqual(last + 1e-15);
        last = e;
      }
    }
  });
});

describe('misclassificationProbability', () => {
  it('misclassificationProbability is Φ(−|m − T|/s), ½ at the threshold and 0 with sd 0', () => {
    expectClose(misclassificationProbability(12, 4, 10), normalCdf(-0.5), { abs: 1e-16 });
    expectClose(misclassificationProbability(8, 4, 10), normalCdf(-0.5), { abs: 1e-16 });
    expect(misclassificationProbability(10, 4, 10)).toBe(0.5);
    expect(misclassificationProbability(11, 0, 10)).toBe(0);
  });
});
