// Matérn correlation: closed forms against the general K_ν path, scikit-learn values, limits.
import { describe, expect, it } from 'vitest';
import { maternCorrelation, maternCorrelationAtZ, maternHasClosedForm, maternLogNormaliser, maternTableAtZ } from '../../../src/core/covariance/matern.ts';
import { gamma } from '../../../src/core/covariance/bessel.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';

interface KernelCase {
  family: 'matern' | 'exponential' | 'gaussian';
  nu?: number;
  scale: number;
  h: number;
  value: number;
}

const fixture = loadFixture<KernelCase>('kernels.json');
const RATIOS = [1e-9, 1e-6, 1e-3, 0.01, 0.1, 0.3, 0.5, 1, 1.7, 2.5, 4, 7, 12, 20];

describe('maternCorrelationAtZ (general ν via K_ν) against the closed forms', () => {
  // Closed forms: Rasmussen & Williams 2006, eq. 4.16–4.17.
  for (const nu of [0.5, 1.5, 2.5]) {
    it(`maternCorrelationAtZ at ν = ${nu} equals the closed form to 1e-12`, () => {
      expect(maternHasClosedForm(nu)).toBe(true);
      const logNorm = maternLogNormaliser(nu);
      for (const r of RATIOS) {
        const general = maternCorrelationAtZ(Math.sqrt(2 * nu) * r, nu, logNorm);
        expectClose(general, maternCorrelation(r * 40, 40, nu), { rel: 1e-12 }, `ν=${nu}, h/ℓ=${r}`);
      }
    });
  }
  it('maternCorrelation closed forms equal their formulas (R&W 2006 eq. 4.16–4.17)', () => {
    const r = 0.37;
    expect(maternCorrelation(r, 1, 0.5)).toBe(Math.exp(-r));
    const a = Math.sqrt(3) * r;
    expectClose(maternCorrelation(r, 1, 1.5), (1 + a) * Math.exp(-a), { rel: 1e-15 });
    const b = Math.sqrt(5) * r;
    expectClose(maternCorrelation(r, 1, 2.5), (1 + b + (5 * r * r) / 3) * Math.exp(-b), { rel: 1e-15 });
  });
});

describe(`maternCorrelation against scikit-learn Matern (${fixture.source})`, () => {
  const cases = fixture.cases.filter((c) => c.family === 'matern');
  it('maternCorrelation matches sklearn Matern(length_scale = scale, nu) for ν ∈ {0.5, 1.5, 2.5, 0.8, 1, 3.7}', () => {
    expect(new Set(cases.map((c) => c.nu)).size).toBe(6);
    for (const c of cases) {
      expectClose(maternCorrelation(c.h, c.scale, c.nu!), c.value, fixture.tolerance, `ν=${c.nu}, ℓ=${c.scale}, h=${c.h}`);
    }
  });
});

describe('maternTableAtZ (tabulated general ν)', () => {
  it('maternTableAtZ agrees with the log form to 1e-12 over z from 1e-6 to 100, ν from 0.2 to 5 (inside and outside the table)', () => {
    for (const nu of [0.2, 0.35, 0.8, 1, 1.3, 2.2, 3.7, 5]) {
      const t = maternTableAtZ(nu);
      const ln = maternLogNormaliser(nu);
      for (let i = 0; i <= 4000; i++) {
        const z = Math.exp(Math.log(1e-6) + (i / 4000) * Math.log(1e8));
        expectClose(t(z), maternCorrelationAtZ(z, nu, ln), { abs: 1e-12 }, `ν=${nu}, z=${z}`);
      }
    }
  });

  it('maternTableAtZ matches scikit-learn Matern for the general orders of the fixture', () => {
    // Source: tests/reference/make_kernels.py (scikit-learn Matern). The table is accurate in absolute
    // terms (about 1e-13; covariances enter kriging relative to the sill), not relative in the far tail.
    const cases = fixture.cases.filter((c) => c.family === 'matern' && !maternHasClosedForm(c.nu!));
    expect(cases.length).toBeGreaterThan(10);
    for (const c of cases) {
      const z = (Math.sqrt(2 * c.nu!) * c.h) / c.scale;
      expectClose(z === 0 ? 1 : maternTableAtZ(c.nu!)(z), c.value, { abs: 1e-12 }, `ν=${c.nu}, ℓ=${c.scale}, h=${c.h}`);
    }
  });
});

describe('maternCorrelation limits', () => {
  it('maternCorrelation is exactly 1 at h = 0 and tends to 1 as h → 0', () => {
    for (const nu of [0.3, 0.8, 1, 1.5, 3.7, 12]) {
      expect(maternCorrelation(0, 10, nu)).toBe(1);
      expect(maternCorrelation(1e-12, 10, nu)).toBeLessThanOrEqual(1);
      expect(maternCorrelation(1e-12, 10, nu)).toBeGreaterThan(1 - 1e-6);
    }
  });
  it('maternCorrelation follows the small-z expansion 1 − z²/(4(ν−1)) for ν > 1 (DLMF 10.31.1, from memory)', () => {
    const nu = 3.7;
    const z = 1e-3;
    const h = (z * 50) / Math.sqrt(2 * nu);
    expectClose(1 - maternCorrelation(h, 50, nu), (z * z) / (4 * (nu - 1)), { rel: 1e-5 });
  });
  it('maternCorrelation follows 1 − Γ(1−ν)/Γ(1+ν)·(z/2)^(2ν) for ν < 1 (DLMF 10.31.1, from memory)', () => {
    // Γ from ./bessel.ts, itself checked against scipy.special.gamma in bessel.test.ts.
    const nu = 0.3;
    const z = 1e-6;
    const h = (z * 50) / Math.sqrt(2 * nu);
    const expected = (gamma(1 - nu) / gamma(1 + nu)) * Math.pow(z / 2, 2 * nu);
    expectClose(1 - maternCorrelation(h, 50, nu), expected, { rel: 1e-3 });
  });
  it('maternCorrelation decreases monotonically and stays finite for large ν and large h', () => {
    for (const nu of [0.2, 1, 7.3, 40]) {
      let previous = 1;
      for (let h = 0.01; h < 60; h *= 1.3) {
        const v = maternCorrelation(h, 1, nu);
        expect(Number.isFinite(v)).toBe(true);
        expect(v).toBeLessThanOrEqual(previous);
        previous = v;
      }
    }
    expect(maternCorrelation(1e6, 1, 2.2)).toBe(0);
  });
  it('maternCorrelation approaches the gaussian exp(−h²/2ℓ²) as ν grows (R&W 2006 §4.2.1)', () => {
    for (const r of [0.3, 1, 2]) {
      expectClose(maternCorrelation(r, 1, 400), Math.exp(-0.5 * r * r), { rel: 0.01 }, `h/ℓ = ${r}`);
    }
  });
});
