// Covariance matrices of the model contract: scikit-learn values, symmetry, positive definiteness,
// nugget placement, anisotropy conventions and practical ranges.
import { describe, expect, it } from 'vitest';
import {
  correlation, crossCovarianceInto, crossCovarianceMatrix, effectiveDistance, practicalRange, sampleCovarianceMatrix,
  surfaceCovariance, surfaceVariance, toIsotropicCoordinates, anisotropyFrame, alongAxis, acrossAxis, fromStretched,
} from '../../../src/core/covariance/covariance.ts';
import { maternCorrelation } from '../../../src/core/covariance/matern.ts';
import { cholesky } from '../../../src/core/linalg/linalg.ts';
import type { CorrelatedStructure, CovarianceModel } from '../../../src/core/covariance/model.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';

interface KernelCase {
  family: 'matern' | 'exponential' | 'gaussian';
  nu?: number;
  scale: number;
  h: number;
  value: number;
}
interface MatrixCase {
  model: CovarianceModel;
  K: number[];
  cross: number[];
}

const fixture = loadFixture<KernelCase>('kernels.json');
const samples = fixture.samples as { x: number[]; y: number[] };
const targets = fixture.targets as { x: number[]; y: number[] };
const matrices = fixture.matrices as MatrixCase[];

function model(structures: CovarianceModel['structures'], anisotropy?: CovarianceModel['anisotropy']): CovarianceModel {
  return { structures, trend: 'constant', transform: 'none', ...(anisotropy ? { anisotropy } : {}) };
}

function randomPoints(n: number, seed: number, size = 1000): { x: Float64Array; y: Float64Array } {
  const r = createRandom(seed);
  return {
    x: Float64Array.from({ length: n }, () => size * (r.uniform() - 0.5)),
    y: Float64Array.from({ length: n }, () => size * (r.uniform() - 0.5)),
  };
}

const FAMILIES: CorrelatedStructure[] = [
  { type: 'exponential', sill: 1.3, scale: 120 },
  { type: 'gaussian', sill: 0.8, scale: 90 },
  { type: 'spherical', sill: 2, scale: 300 },
  { type: 'matern', sill: 1, scale: 100, nu: 0.5 },
  { type: 'matern', sill: 1, scale: 100, nu: 1.5 },
  { type: 'matern', sill: 1, scale: 100, nu: 2.5 },
  { type: 'matern', sill: 1, scale: 100, nu: 0.8 },
  { type: 'matern', sill: 1, scale: 100, nu: 3.7 },
];

describe(`correlation against scikit-learn kernels (${fixture.source})`, () => {
  for (const family of ['exponential', 'gaussian', 'matern'] as const) {
    it(`correlation of the ${family} family matches sklearn ${family === 'gaussian' ? 'RBF' : 'Matern'}`, () => {
      const cases = fixture.cases.filter((c) => c.family === family);
      expect(cases.length).toBeGreaterThan(20);
      for (const c of cases) {
        const s: CorrelatedStructure = { type: family, sill: 1, scale: c.scale, ...(c.nu !== undefined ? { nu: c.nu } : {}) };
        expectClose(correlation(s, c.h), c.value, fixture.tolerance, `${family} ν=${c.nu} ℓ=${c.scale} h=${c.h}`);
      }
    });
  }
  it('correlation of the spherical family follows 1 − 1.5r + 0.5r³ below the range and 0 beyond (design.md formula)', () => {
    const s: CorrelatedStructure = { type: 'spherical', sill: 1, scale: 200 };
    for (const r of [0, 0.1, 0.5, 0.9, 0.999]) expectClose(correlation(s, r * 200), 1 - 1.5 * r + 0.5 * r ** 3, { rel: 1e-15, abs: 1e-16 });
    expect(correlation(s, 200)).toBe(0);
    expect(correlation(s, 500)).toBe(0);
  });
});

describe('sampleCovarianceMatrix and crossCovarianceMatrix against scikit-learn kernel sums', () => {
  matrices.forEach((mc, k) => {
    const label = mc.model.structures.map((s) => s.type + ('nu' in s && s.nu ? ` ν=${s.nu}` : '')).join(' + ')
      + (mc.model.anisotropy ? `, azimuth ${mc.model.anisotropy.azimuth}° ratio ${mc.model.anisotropy.ratio}` : '');
    it(`sampleCovarianceMatrix matches sklearn K(X) for model ${k + 1} (${label})`, () => {
      expectClose(sampleCovarianceMatrix(mc.model, samples.x, samples.y), mc.K, fixture.tolerance, 'K');
    });
    it(`crossCovarianceMatrix matches sklearn K(T, X) for model ${k + 1} (${label})`, () => {
      expectClose(crossCovarianceMatrix(mc.model, targets.x, targets.y, samples.x, samples.y), mc.cross, fixture.tolerance, 'cross');
    });
  });
});

describe('sampleCovarianceMatrix invariants', () => {
  const { x, y } = randomPoints(150, 42);
  for (const s of FAMILIES) {
    const label = `${s.type}${s.nu ? ` ν=${s.nu}` : ''}`;
    it(`sampleCovarianceMatrix is exactly symmetric and positive definite for ${label} (Cholesky succeeds)`, () => {
      // The gaussian family is analytic: numerically singular for close points without a nugget.
      const structures: CovarianceModel['structures'] = s.type === 'gaussian' ? [{ type: 'nugget', sill: 1e-4 }, s] : [s];
      const m = model(structures, { azimuth: 35, ratio: 0.6 });
      const n = x.length;
      const K = sampleCovarianceMatrix(m, x, y);
      let asymmetric = 0;
      for (let i = 0; i < n; i++) for (let j = 0; j < i; j++) if (K[i * n + j] !== K[j * n + i]) asymmetric++;
      expect(asymmetric).toBe(0);
      const f = cholesky(K, n);
      expect(f.jitter).toBe(0);
      // Entries agree with the scalar path.
      for (const [i, j] of [[3, 7], [100, 20], [149, 0]]) {
        const h = effectiveDistance(x[i] - x[j], y[i] - y[j], m.anisotropy);
        expectClose(K[i * n + j], surfaceCovariance(m, h), { rel: 1e-12, abs: 1e-300 }, `K[${i},${j}]`);
      }
    });
  }

  it('sampleCovarianceMatrix puts the nugget on the diagonal only, even for coincident samples', () => {
    const m = model([{ type: 'nugget', sill: 0.25 }, { type: 'matern', sill: 1.5, scale: 50, nu: 1.5 }, { type: 'spherical', sill: 0.5, scale: 80 }]);
    const px = [0, 0, 30];
    const py = [0, 0, 40];
    const K = sampleCovarianceMatrix(m, px, py);
    expect(surfaceVariance(m)).toBe(2);
    for (let i = 0; i < 3; i++) expect(K[i * 3 + i]).toBe(2.25);
    expect(K[1]).toBe(2); // coincident samples: surface variance, no nugget
    expectClose(K[2], 1.5 * maternCorrelation(50, 50, 1.5) + 0.5 * (1 - 1.5 * (50 / 80) + 0.5 * (50 / 80) ** 3), { rel: 1e-14 });
    const C = crossCovarianceMatrix(m, [0], [0], px, py);
    expect(C[0]).toBe(2); // a target on a sample: no nugget in cross-covariances
  });
});

describe('anisotropy', () => {
  const base: CorrelatedStructure = { type: 'matern', sill: 1, scale: 100, nu: 1.5 };
  it('effectiveDistance: azimuth 0 puts the long axis north, 90 east, 30 at (sin 30°, cos 30°)', () => {
    expectClose(effectiveDistance(0, 50, { azimuth: 0, ratio: 0.5 }), 50, { rel: 1e-15 });
    expectClose(effectiveDistance(50, 0, { azimuth: 0, ratio: 0.5 }), 100, { rel: 1e-15 });
    expectClose(effectiveDistance(50, 0, { azimuth: 90, ratio: 0.5 }), 50, { rel: 1e-15 });
    expectClose(effectiveDistance(0, 50, { azimuth: 90, ratio: 0.5 }), 100, { rel: 1e-15 });
    const a = (30 * Math.PI) / 180;
    expectClose(effectiveDistance(40 * Math.sin(a), 40 * Math.cos(a), { azimuth: 30, ratio: 0.25 }), 40, { rel: 1e-14 });
    expectClose(effectiveDistance(40 * Math.cos(a), -40 * Math.sin(a), { azimuth: 30, ratio: 0.25 }), 160, { rel: 1e-14 });
  });

  for (const azimuth of [0, 30, 90, 145]) {
    it(`crossCovarianceMatrix: distance d along the long axis (azimuth ${azimuth}°) equals d·ratio across it`, () => {
      const ratio = 0.4;
      const m = model([base], { azimuth, ratio });
      const a = (azimuth * Math.PI) / 180;
      const along = [Math.sin(a), Math.cos(a)];
      const across = [Math.cos(a), -Math.sin(a)];
      for (const d of [10, 75, 200]) {
        const cAlong = crossCovarianceMatrix(m, [d * along[0]], [d * along[1]], [0], [0])[0];
        const cAcross = crossCovarianceMatrix(m, [d * ratio * across[0]], [d * ratio * across[1]], [0], [0])[0];
        expectClose(cAcross, cAlong, { rel: 1e-12 }, `d = ${d}`);
        expectClose(cAlong, maternCorrelation(d, 100, 1.5), { rel: 1e-12 }, `along, d = ${d}`);
      }
    });
  }

  it('toIsotropicCoordinates maps points so that plain distances equal effectiveDistance', () => {
    const an = { azimuth: 212, ratio: 0.3 };
    const { x, y } = randomPoints(20, 9);
    const { u, v } = toIsotropicCoordinates(an, x, y);
    for (let i = 1; i < 20; i++) {
      expectClose(Math.hypot(u[i] - u[0], v[i] - v[0]), effectiveDistance(x[i] - x[0], y[i] - y[0], an), { rel: 1e-12 });
    }
  });
});

describe('crossCovarianceInto', () => {
  it('crossCovarianceInto overwrites a reused buffer and streamed row blocks equal the whole matrix', () => {
    const m = model([{ type: 'nugget', sill: 0.1 }, { type: 'gaussian', sill: 0.6, scale: 80 }, { type: 'matern', sill: 0.4, scale: 150, nu: 0.8 }],
      { azimuth: 60, ratio: 0.5 });
    const s = randomPoints(60, 1);
    const t = randomPoints(25, 2);
    const whole = crossCovarianceMatrix(m, t.x, t.y, s.x, s.y);
    const buffer = new Float64Array(10 * 60).fill(NaN);
    for (let r0 = 0; r0 < 25; r0 += 10) {
      const r1 = Math.min(r0 + 10, 25);
      crossCovarianceInto(m, t.x.subarray(r0, r1), t.y.subarray(r0, r1), s.x, s.y, buffer);
      expect(Array.from(buffer.subarray(0, (r1 - r0) * 60))).toEqual(Array.from(whole.subarray(r0 * 60, r1 * 60)));
    }
    for (let i = 0; i < 25; i++) {
      for (let j = 0; j < 60; j += 7) {
        const h = effectiveDistance(t.x[i] - s.x[j], t.y[i] - s.y[j], m.anisotropy);
        expectClose(whole[i * 60 + j], surfaceCovariance(m, h), { rel: 1e-12 }, `(${i}, ${j})`);
      }
    }
  });
  it('crossCovarianceInto rejects a buffer that is too small', () => {
    const m = model([{ type: 'exponential', sill: 1, scale: 10 }]);
    expect(() => crossCovarianceInto(m, [0, 1], [0, 1], [0, 1, 2], [0, 1, 2], new Float64Array(5))).toThrow(/2×3/);
  });
});

describe('practicalRange', () => {
  // Practical ranges in the scale parameterisation, to 3 significant digits (methods.md, "Fitting").
  const expected: [number, number][] = [[0.5, 3.0], [1.5, 2.74], [2.5, 2.65]];
  for (const [nu, ratio] of expected) {
    it(`practicalRange of a Matérn ν = ${nu} is ${ratio.toFixed(2)}·scale`, () => {
      const scale = 130;
      const pr = practicalRange(model([{ type: 'nugget', sill: 0.3 }, { type: 'matern', sill: 2, scale, nu }]));
      expect(Math.abs(pr / scale - ratio)).toBeLessThan(0.005);
      expectClose(maternCorrelation(pr, scale, nu), 0.05, { rel: 1e-9 });
    });
  }
  it('practicalRange of the exponential is ln 20·scale and of the gaussian √(2 ln 20)·scale (≈ 2.45, the ν → ∞ limit)', () => {
    expectClose(practicalRange(model([{ type: 'exponential', sill: 1, scale: 70 }])), 70 * Math.log(20), { rel: 1e-10 });
    const pr = practicalRange(model([{ type: 'gaussian', sill: 1, scale: 70 }]));
    expectClose(pr, 70 * Math.sqrt(2 * Math.log(20)), { rel: 1e-10 });
    expect(Math.abs(pr / 70 - 2.45)).toBeLessThan(0.005);
  });
  it('practicalRange of the spherical is below its range, where the correlation is 0.05', () => {
    const pr = practicalRange(model([{ type: 'spherical', sill: 1, scale: 300 }]));
    expect(pr).toBeLessThan(300);
    expect(pr).toBeGreaterThan(0);
    expectClose(correlation({ type: 'spherical', sill: 1, scale: 300 }, pr), 0.05, { rel: 1e-9 });
  });
  it('practicalRange is 0 for a pure nugget', () => {
    expect(practicalRange(model([{ type: 'nugget', sill: 1 }]))).toBe(0);
  });
});

describe('the anisotropy rotation', () => {
  it('fromStretched undoes alongAxis and acrossAxis (azimuths all round, ratios 0.02 to 1)', () => {
    const r = createRandom(7);
    for (let k = 0; k < 200; k++) {
      const frame = anisotropyFrame({ azimuth: 360 * r.uniform(), ratio: 0.02 + 0.98 * r.uniform() })!;
      const dx = 2000 * (r.uniform() - 0.5);
      const dy = 2000 * (r.uniform() - 0.5);
      const back = fromStretched(frame, alongAxis(frame, dx, dy), acrossAxis(frame, dx, dy));
      expectClose(back.dx, dx, { abs: 1e-9 });
      expectClose(back.dy, dy, { abs: 1e-9 });
    }
  });
  it('the long axis at azimuth 90° (east) keeps east-west separations and stretches north-south ones by 1/ratio', () => {
    const frame = anisotropyFrame({ azimuth: 90, ratio: 0.5 })!;
    expectClose(alongAxis(frame, 10, 0), 10, { abs: 1e-12 });
    expectClose(Math.abs(acrossAxis(frame, 0, 10)), 20, { abs: 1e-12 });
    expect(anisotropyFrame({ azimuth: 30, ratio: 1 })).toBeNull();
  });
});
