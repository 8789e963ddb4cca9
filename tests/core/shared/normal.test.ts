import { describe, expect, it } from 'vitest';
import { erf, erfc, exceedanceProbability, normalCdf } from '../../../src/core/shared/normal.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose, isClose } from '../../helpers/tolerance.ts';

interface CdfCase { x: number; cdf: number }
const fixture = loadFixture<CdfCase>('normal.json');
const erfcCases = fixture.erfc as { z: number; erfc: number }[];

describe('normalCdf', () => {
  it('normalCdf matches scipy.special.ndtr to 1e-15 absolute (source: scipy, tests/reference/normal.json)', () => {
    for (const c of fixture.cases) expectClose(normalCdf(c.x), c.cdf, { abs: 1e-15 }, `Φ(${c.x})`);
  });

  it('normalCdf is relatively accurate in the lower tail (source: scipy)', () => {
    for (const c of fixture.cases) {
      if (c.x < -1 && c.cdf > 0) expect(isClose(normalCdf(c.x), c.cdf, 2e-13), `Φ(${c.x}) = ${normalCdf(c.x)} vs ${c.cdf}`).toBe(true);
    }
  });

  it('normalCdf(x) + normalCdf(−x) = 1 and Φ(0) = ½ (symmetry)', () => {
    expect(normalCdf(0)).toBe(0.5);
    for (let x = -8; x <= 8; x += 0.37) expectClose(normalCdf(x) + normalCdf(-x), 1, { abs: 2e-16 }, `x=${x}`);
  });

  it('normalCdf is monotone non-decreasing on a fine sweep', () => {
    let prev = 0;
    for (let x = -10; x <= 10; x += 0.001) {
      const p = normalCdf(x);
      expect(p).toBeGreaterThanOrEqual(prev);
      prev = p;
    }
  });

  it('normalCdf gives 0 and 1 at the infinities and NaN for NaN', () => {
    expect(normalCdf(-Infinity)).toBe(0);
    expect(normalCdf(Infinity)).toBe(1);
    expect(normalCdf(NaN)).toBeNaN();
  });
});

describe('erfc', () => {
  it('erfc matches scipy.special.erfc (relative 3e-14, both sides of the series/fraction switch; source: scipy)', () => {
    for (const c of erfcCases) expectClose(erfc(c.z), c.erfc, { rel: 3e-14, abs: 1e-300 }, `erfc(${c.z})`);
  });

  it('erf(z) = 1 − erfc(z) and erf is odd', () => {
    for (let z = -4; z <= 4; z += 0.25) {
      expectClose(erf(z), 1 - erfc(z), { abs: 3e-16 }, `z=${z}`);
      expectClose(erf(-z), -erf(z), { abs: 0 }, `odd z=${z}`);
    }
  });

  it('erf(1) equals the tabulated 0.8427007929497149 (Abramowitz & Stegun Table 7.1, from memory)', () => {
    expectClose(erf(1), 0.8427007929497149, { abs: 2.3e-16 });
  });
});

describe('exceedanceProbability', () => {
  it('exceedanceProbability = 1 − Φ((T − mean)/sd) (source: scipy ndtr via the fixture)', () => {
    // mean 3, sd 2, T = 3 + 2·x ⇒ P = 1 − Φ(x) = Φ(−x).
    for (const c of fixture.cases) {
      if (Math.abs(c.x) > 8) continue;
      expectClose(exceedanceProbability(3, 2, 3 - 2 * c.x), c.cdf, { abs: 2e-15 }, `x=${c.x}`);
    }
  });

  it('exceedanceProbability with sd = 0 is a step at the threshold', () => {
    expect(exceedanceProbability(5, 0, 4)).toBe(1);
    expect(exceedanceProbability(3, 0, 4)).toBe(0);
    expect(exceedanceProbability(4, 0, 4)).toBe(0.5);
    expect(exceedanceProbability(NaN, 1, 4)).toBeNaN();
  });
});
