// Checks K_ν, eˣK_ν, ln K_ν, Γ and ln Γ against published tables and scipy/mpmath fixtures.
import { describe, expect, it } from 'vitest';
import { besselK, besselKScaled, logBesselK, gamma, logGamma, EULER_GAMMA } from '../../../src/core/covariance/bessel.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';

interface BesselCase {
  fn: 'kv' | 'kve' | 'gamma' | 'gammaln';
  nu?: number;
  x: number;
  value: number;
}

const fixture = loadFixture<BesselCase>('bessel.json');

describe('besselKScaled against Abramowitz & Stegun Table 9.8 (10 digits)', () => {
  // Source: Abramowitz & Stegun, Handbook of Mathematical Functions, Table 9.8 (eˣK₀(x), eˣK₁(x)).
  const table: [number, number, number][] = [
    [0, 1, 1.1444630798],
    [1, 1, 1.6361534863],
    [0, 2, 0.8415682151],
    [1, 2, 1.0334768471],
    [0, 5, 0.5478075643],
    [1, 10, 0.4107665706],
  ];
  for (const [nu, x, expected] of table) {
    it(`besselKScaled(${nu}, ${x}) = ${expected}`, () => {
      expectClose(besselKScaled(nu, x), expected, { abs: 6e-11 }, `e^x K_${nu}(${x})`);
      expectClose(besselK(nu, x) * Math.exp(x), expected, { abs: 6e-11 }, `K_${nu}(${x})·e^x`);
    });
  }
});

describe('besselK against the closed form K_½(x) = √(π/2x)·e^(−x) (DLMF 10.39.2)', () => {
  it('besselK(0.5, 1) = 0.4610685044 (DLMF 10.39.2)', () => {
    expectClose(besselK(0.5, 1), 0.4610685044, { abs: 6e-11 });
  });
  for (const x of [1e-6, 0.01, 0.7, 1.99, 2, 2.01, 7, 40, 300]) {
    it(`besselK(0.5, ${x}) equals √(π/2x)·e^(−x)`, () => {
      expectClose(besselK(0.5, x), Math.sqrt(Math.PI / (2 * x)) * Math.exp(-x), { rel: 1e-14 });
      expectClose(besselKScaled(0.5, x), Math.sqrt(Math.PI / (2 * x)), { rel: 1e-14 });
    });
  }
  // DLMF 10.49.12 (from memory): K_{3/2}(x) = √(π/2x)·e^(−x)·(1 + 1/x).
  it('besselK(1.5, x) equals √(π/2x)·e^(−x)·(1 + 1/x) (closed form, from memory)', () => {
    for (const x of [0.05, 1, 3, 20]) {
      expectClose(besselK(1.5, x), Math.sqrt(Math.PI / (2 * x)) * Math.exp(-x) * (1 + 1 / x), { rel: 1e-14 });
    }
  });
});

describe(`besselK against scipy/mpmath fixture (${fixture.cases.length} cases)`, () => {
  const tol = fixture.tolerance;
  it('besselK matches scipy.special.kv over ν ∈ [0.1, 10], x ∈ [1e-4, 50]', () => {
    const cases = fixture.cases.filter((c) => c.fn === 'kv');
    expect(cases.length).toBeGreaterThan(300);
    for (const c of cases) expectClose(besselK(c.nu!, c.x), c.value, tol, `K_${c.nu}(${c.x})`);
  });
  it('besselKScaled matches scipy.special.kve', () => {
    const cases = fixture.cases.filter((c) => c.fn === 'kve');
    expect(cases.length).toBeGreaterThan(300);
    for (const c of cases) expectClose(besselKScaled(c.nu!, c.x), c.value, tol, `e^x K_${c.nu}(${c.x})`);
  });
  it('logBesselK matches ln of scipy.special.kv', () => {
    for (const c of fixture.cases.filter((k) => k.fn === 'kv')) {
      expectClose(logBesselK(c.nu!, c.x), Math.log(c.value), { abs: 1e-10, rel: 1e-10 }, `ln K_${c.nu}(${c.x})`);
    }
  });
});

describe('gamma and logGamma', () => {
  const tol = fixture.gammaTolerance as { rel: number; abs: number };
  it('gamma matches scipy.special.gamma', () => {
    const cases = fixture.cases.filter((c) => c.fn === 'gamma');
    expect(cases.length).toBeGreaterThan(10);
    for (const c of cases) expectClose(gamma(c.x), c.value, { rel: tol.rel }, `Γ(${c.x})`);
  });
  it('logGamma matches mpmath loggamma', () => {
    const cases = fixture.cases.filter((c) => c.fn === 'gammaln');
    for (const c of cases) expectClose(logGamma(c.x), c.value, tol, `lnΓ(${c.x})`);
  });
  it('gamma gives factorials at whole numbers and √π at ½', () => {
    let f = 1;
    for (let k = 1; k <= 20; k++) {
      expectClose(gamma(k), f, { rel: 1e-15 }, `Γ(${k})`);
      f *= k;
    }
    expectClose(gamma(0.5), Math.sqrt(Math.PI), { rel: 1e-15 });
    expect(logGamma(1)).toBe(0);
    expect(logGamma(2)).toBe(0);
  });
  it('gamma reflects to negative non-integers and has poles at 0, −1, ...', () => {
    // Γ(−½) = −2√π.
    expectClose(gamma(-0.5), -2 * Math.sqrt(Math.PI), { rel: 1e-15 });
    expect(Number.isNaN(gamma(0))).toBe(true);
    expect(Number.isNaN(gamma(-3))).toBe(true);
    expect(logGamma(0)).toBe(Infinity);
  });
});

describe('besselK edge behaviour', () => {
  it('besselK at μ → 0 is continuous (Γ₁(μ) → −γ)', () => {
    // K₀ from A&S Table 9.8 and orders 1e-12, 1e-15 either side must agree with it.
    for (const nu of [0, 1e-15, 1e-12, 1e-8]) {
      expectClose(besselKScaled(nu, 1), 1.1444630798, { abs: 6e-11 }, `ν = ${nu}`);
    }
    expect(EULER_GAMMA).toBeCloseTo(0.5772156649, 10);
  });
  it('besselK is symmetric in ν (K_{−ν} = K_ν)', () => {
    expect(besselK(-2.3, 0.7)).toBe(besselK(2.3, 0.7));
  });
  it('besselK underflows to 0 for large x while besselKScaled and logBesselK stay finite', () => {
    expect(besselK(2, 800)).toBe(0);
    // e^x K_ν(x) ≈ √(π/2x)(1 + (4ν²−1)/(8x)) for large x (DLMF 10.40.2, first two terms).
    const x = 800;
    expectClose(besselKScaled(2, x), Math.sqrt(Math.PI / (2 * x)) * (1 + 15 / (8 * x) + (15 * 7) / (2 * (8 * x) ** 2)), { rel: 1e-8 });
    expectClose(logBesselK(2, x), Math.log(besselKScaled(2, x)) - x, { rel: 1e-15 });
  });
  it('logBesselK stays finite where K_ν overflows (large ν, tiny x)', () => {
    // Small-x limit K_ν(x) ≈ ½Γ(ν)(2/x)^ν (DLMF 10.30.2).
    const nu = 80;
    const x = 1e-3;
    expect(besselK(nu, x)).toBe(Infinity);
    expectClose(logBesselK(nu, x), logGamma(nu) - Math.LN2 + nu * Math.log(2 / x), { rel: 1e-10 });
  });
  it('besselK rejects x < 0 and NaN, is infinite at 0', () => {
    expect(Number.isNaN(besselK(1, -1))).toBe(true);
    expect(Number.isNaN(besselK(NaN, 1))).toBe(true);
    expect(besselK(1, 0)).toBe(Infinity);
  });
});
