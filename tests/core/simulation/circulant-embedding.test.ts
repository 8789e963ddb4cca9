import { describe, expect, it } from 'vitest';
import {
  createCirculantEmbedding, createFieldSampler, embeddingBase, embeddingEigenvalues,
} from '../../../src/core/simulation/circulant-embedding.ts';
import { crossCovarianceMatrix, effectiveDistance, surfaceCovariance } from '../../../src/core/covariance/covariance.ts';
import { fft2 } from '../../../src/core/simulation/fft.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { expectClose } from '../../helpers/tolerance.ts';

const anisotropic: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.2 }, { type: 'matern', sill: 1.5, scale: 30, nu: 1.5 }],
  trend: 'constant', transform: 'none', anisotropy: { azimuth: 30, ratio: 0.5 },
};

/** Node (i east, j south) of a lattice at spacing h: coordinates with y north. */
function nodeXY(nx: number, ny: number, h: number): { x: Float64Array; y: Float64Array } {
  const x = new Float64Array(nx * ny);
  const y = new Float64Array(nx * ny);
  for (let j = 0; j < ny; j++) for (let i = 0; i < nx; i++) {
    x[j * nx + i] = i * h;
    y[j * nx + i] = -j * h;
  }
  return { x, y };
}

describe('embeddingBase', () => {
  it('embeddingBase: the embedded matrix restricted to the lattice equals the model covariance, entry by entry', () => {
    // Source: the model covariances of covariance.ts (crossCovarianceMatrix, noise-free) at every node pair.
    const nx = 7, ny = 5, h = 10;
    const emb = createCirculantEmbedding(anisotropic, { nx, ny, spacing: h });
    const base = embeddingBase(anisotropic, emb.mx, emb.my, h);
    const { x, y } = nodeXY(nx, ny, h);
    const model = crossCovarianceMatrix(anisotropic, x, y, x, y);
    const N = nx * ny;
    for (let p = 0; p < N; p++) {
      for (let q = 0; q < N; q++) {
        const di = ((p % nx) - (q % nx) + emb.mx) % emb.mx;
        const dj = (Math.floor(p / nx) - Math.floor(q / nx) + emb.my) % emb.my;
        const embedded = base[dj * emb.mx + di];
        if (Math.abs(embedded - model[p * N + q]) > 1e-14) expect.fail(`node pair ${p}, ${q}: ${embedded} vs ${model[p * N + q]}`);
      }
    }
    // First row: node (0, 0) against node (i, j) is C(−i·h east, +j·h north).
    expect(base[0]).toBe(1.5);
    expectClose(base[2 * emb.mx + 3], surfaceCovariance(anisotropic, effectiveDistance(3 * h, -2 * h, anisotropic.anisotropy)), { rel: 1e-15 });
  });

  it('embeddingBase is symmetric under (a, b) → (−a, −b) also at the halfway lags', () => {
    const mx = 12, my = 8;
    const c = embeddingBase(anisotropic, mx, my, 7);
    for (let b = 0; b < my; b++) for (let a = 0; a < mx; a++) {
      expect(c[((my - b) % my) * mx + ((mx - a) % mx)]).toBe(c[b * mx + a]);
    }
  });
});

describe('embeddingEigenvalues', () => {
  it('embeddingEigenvalues diagonalise the embedded matrix: C·v equals IFFT(λ·FFT(v)) for a random v', () => {
    // Source: direct multiplication by the dense block-circulant matrix built from the base.
    const mx = 12, my = 10, M = mx * my;
    const base = embeddingBase(anisotropic, mx, my, 8);
    const lambda = embeddingEigenvalues(base, mx, my);
    const r = createRandom(3);
    const v = Float64Array.from({ length: M }, () => r.normal());
    const direct = new Float64Array(M);
    for (let p = 0; p < M; p++) {
      let s = 0;
      for (let q = 0; q < M; q++) {
        const di = ((p % mx) - (q % mx) + mx) % mx;
        const dj = (Math.floor(p / mx) - Math.floor(q / mx) + my) % my;
        s += base[dj * mx + di] * v[q];
      }
      direct[p] = s;
    }
    const re = Float64Array.from(v);
    const im = new Float64Array(M);
    fft2(re, im, mx, my);
    for (let k = 0; k < M; k++) {
      re[k] *= lambda[k];
      im[k] *= lambda[k];
    }
    fft2(re, im, mx, my, true);
    expectClose(re, direct, { abs: 1e-12 }, 'C·v');
    for (let k = 0; k < M; k++) expect(Math.abs(im[k])).toBeLessThan(1e-12);
  });
});

describe('createCirculantEmbedding', () => {
  it('createCirculantEmbedding: empirical covariances of unconditional fields match the model (4 standard errors)', () => {
    // Source: the model covariance (covariance.ts); Monte Carlo over 6,000 seeded fields, standard error
    // of a mean product √((C(0)² + C(h)²)/N) for a Gaussian pair.
    const nx = 10, ny = 8, h = 12;
    const emb = createCirculantEmbedding(anisotropic, { nx, ny, spacing: h });
    expect(emb.warnings).toEqual([]);
    const sampler = createFieldSampler(emb);
    const r = createRandom(77);
    const a = new Float64Array(nx * ny), b = new Float64Array(nx * ny);
    const pairs: Array<[number, number]> = [[0, 0], [3 * nx + 4, 3 * nx + 4], [0, 1], [0, nx], [2 * nx + 5, 4 * nx + 3], [12, 3 * nx + 9], [nx - 1, (ny - 1) * nx]];
    const sums = new Float64Array(pairs.length);
    const means = new Float64Array(2);
    const N = 6000;
    for (let s = 0; s < N / 2; s++) {
      sampler.pair(r, a, b);
      for (const f of [a, b]) {
        pairs.forEach(([p, q], k) => { sums[k] += f[p] * f[q]; });
        means[0] += f[0];
        means[1] += f[3 * nx + 4];
      }
    }
    const c0 = 1.5;
    pairs.forEach(([p, q], k) => {
      const dx = (p % nx - q % nx) * h;
      const dy = -(Math.floor(p / nx) - Math.floor(q / nx)) * h;
      const want = surfaceCovariance(anisotropic, effectiveDistance(dx, dy, anisotropic.anisotropy));
      const se = Math.sqrt((c0 * c0 + want * want) / N);
      expect(Math.abs(sums[k] / N - want), `pair ${p},${q}: ${sums[k] / N} vs ${want} ± ${se}`).toBeLessThan(4 * se);
    });
    for (const m of means) expect(Math.abs(m / N)).toBeLessThan(4 * Math.sqrt(c0 / N));
  });

  it('createCirculantEmbedding pads for a long-range gaussian covariance, says so, and then reproduces it', () => {
    const gaussian: CovarianceModel = { structures: [{ type: 'gaussian', sill: 1, scale: 40 }], trend: 'constant', transform: 'none' };
    const emb = createCirculantEmbedding(gaussian, { nx: 20, ny: 20, spacing: 5 });
    expect(emb.paddingSteps).toBeGreaterThan(0);
    expect(emb.mx).toBeGreaterThan(40);
    expect(emb.warnings.map((w) => w.code)).toContain('embedding-padded');
    expect(emb.negativeFraction).toBeLessThanOrEqual(1e-8);
    // The padded base still holds the model covariance at every lattice lag.
    const base = embeddingBase(gaussian, emb.mx, emb.my, 5);
    expectClose(base[7 * emb.mx + 19], surfaceCovariance(gaussian, Math.hypot(19 * 5, 7 * 5)), { rel: 1e-15 });
  });

  it('createCirculantEmbedding at the size cap truncates small negative eigenvalues with a warning, else fails', () => {
    const gaussian: CovarianceModel = { structures: [{ type: 'gaussian', sill: 1, scale: 40 }], trend: 'constant', transform: 'none' };
    const lattice = { nx: 20, ny: 20, spacing: 5 };
    const loose = createCirculantEmbedding(gaussian, lattice, { maxCells: 40 * 40, maxNegativeFraction: 0.5 });
    expect(loose.mx).toBe(40);
    expect(loose.negativeFraction).toBeGreaterThan(1e-8);
    expect(loose.warnings.map((w) => w.code)).toContain('embedding-truncated');
    try {
      createCirculantEmbedding(gaussian, lattice, { maxCells: 40 * 40, maxNegativeFraction: 1e-9 });
      expect.fail('expected an error');
    } catch (e) {
      expect(e).toBeInstanceOf(GapwiseError);
      expect((e as GapwiseError).code).toBe('not-positive-definite');
      expect((e as GapwiseError).message).toMatch(/larger cell/);
    }
    expect(() => createCirculantEmbedding(gaussian, { nx: 3000, ny: 3000, spacing: 1 })).toThrow(/larger cell/);
  });

  it('createFieldSampler is deterministic for a seed', () => {
    const emb = createCirculantEmbedding(anisotropic, { nx: 6, ny: 4, spacing: 10 });
    const s = createFieldSampler(emb);
    const a1 = new Float64Array(24), b1 = new Float64Array(24), a2 = new Float64Array(24), b2 = new Float64Array(24);
    s.pair(createRandom(5), a1, b1);
    s.pair(createRandom(5), a2, b2);
    expect(Array.from(a1)).toEqual(Array.from(a2));
    expect(Array.from(b1)).toEqual(Array.from(b2));
    expect(Array.from(a1)).not.toEqual(Array.from(b1));
  });
});
