// Cholesky factorisation, triangular solves and log-determinants on row-major Float64Array.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  cholesky, choleskyInPlace, choleskyUnblockedInPlace, choleskySolve, choleskySolveMultiple, logDeterminant,
  solveLowerInPlace, solveUpperTransposeInPlace, solveLowerMultiple, solveUpperTransposeMultiple,
} from '../../../src/core/linalg/linalg.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import { expectClose } from '../../helpers/tolerance.ts';

/** A random SPD matrix M·Mᵀ/n + I (well conditioned) of size n. */
function randomSpd(n: number, seed: number): Float64Array {
  const rnd = createRandom(seed);
  const M = new Float64Array(n * n);
  for (let i = 0; i < n * n; i++) M[i] = rnd.normal();
  const A = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = 0;
      for (let k = 0; k < n; k++) s += M[i * n + k] * M[j * n + k];
      s /= n;
      if (i === j) s += 1;
      A[i * n + j] = s;
      A[j * n + i] = s;
    }
  }
  return A;
}

/**
 * A random SPD matrix in O(n²): an exponential covariance of random points (random scale) plus a random
 * positive diagonal (a nugget), so it is positive definite for any points.
 */
function randomCovariance(n: number, seed: number): Float64Array {
  const rnd = createRandom(seed);
  const x = Float64Array.from({ length: n }, () => rnd.uniform() * 100);
  const y = Float64Array.from({ length: n }, () => rnd.uniform() * 100);
  const scale = 5 + 100 * rnd.uniform();
  const sill = 0.1 + 10 * rnd.uniform();
  const A = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < i; j++) {
      const c = sill * Math.exp(-Math.hypot(x[i] - x[j], y[i] - y[j]) / scale);
      A[i * n + j] = c;
      A[j * n + i] = c;
    }
    A[i * n + i] = sill * (1 + 0.01 + rnd.uniform());
  }
  return A;
}

/** L·Lᵀ for a row-major lower-triangular L. */
function timesTranspose(L: Float64Array, n: number): Float64Array {
  const out = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      let s = 0;
      const m = Math.min(i, j);
      for (let k = 0; k <= m; k++) s += L[i * n + k] * L[j * n + k];
      out[i * n + j] = s;
    }
  }
  return out;
}

function maxAbs(a: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i]));
  return m;
}

/** n×m row-major product A·X. */
function multiply(A: Float64Array, n: number, X: Float64Array, m: number): Float64Array {
  const out = new Float64Array(n * m);
  for (let i = 0; i < n; i++) for (let k = 0; k < n; k++) {
    const a = A[i * n + k];
    for (let c = 0; c < m; c++) out[i * m + c] += a * X[k * m + c];
  }
  return out;
}

describe('cholesky', () => {
  it('cholesky factors the 3×3 example [[4,12,−16],[12,37,−43],[−16,−43,98]] into [[2],[6,1],[−8,5,3]] (textbook example, from memory; checked by multiplication below)', () => {
    const A = Float64Array.from([4, 12, -16, 12, 37, -43, -16, -43, 98]);
    const f = cholesky(A, 3);
    expectClose(f.L, [2, 0, 0, 6, 1, 0, -8, 5, 3], { abs: 1e-14 }, 'L');
    expectClose(timesTranspose(f.L, 3), A, { abs: 1e-13 }, 'L·Lᵀ');
    expect(f.jitter).toBe(0);
    expect(f.warnings).toEqual([]);
  });

  it('cholesky recovers a known lower-triangular factor (unique with a positive diagonal)', () => {
    const n = 150;
    const rnd = createRandom(7);
    const L0 = new Float64Array(n * n);
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < i; j++) L0[i * n + j] = (0.5 * rnd.normal()) / Math.sqrt(n);
      L0[i * n + i] = 0.5 + rnd.uniform();
    }
    const A = timesTranspose(L0, n);
    const f = cholesky(A, n);
    expectClose(f.L, L0, { abs: 1e-11 }, 'L');
    // log|A| = 2 Σ ln L0ᵢᵢ from the known factor.
    let expected = 0;
    for (let i = 0; i < n; i++) expected += 2 * Math.log(L0[i * n + i]);
    expectClose(logDeterminant(f), expected, { rel: 1e-12 });
  });

  it('cholesky of a diagonal matrix gives square roots and logDeterminant the sum of logs', () => {
    const d = [0.5, 2, 3, 7, 1e-3, 40];
    const n = d.length;
    const A = new Float64Array(n * n);
    d.forEach((v, i) => (A[i * n + i] = v));
    const f = cholesky(A, n);
    for (let i = 0; i < n; i++) expectClose(f.L[i * n + i], Math.sqrt(d[i]), { rel: 1e-15 });
    expectClose(logDeterminant(f), d.reduce((s, v) => s + Math.log(v), 0), { rel: 1e-14 });
  });

  it('cholesky agrees with the unblocked column-by-column factorisation across block boundaries', () => {
    for (const n of [1, 2, 15, 16, 17, 63, 64, 65, 130, 200]) {
      const A = randomSpd(n, n);
      const blocked = cholesky(A, n).L;
      const plain = Float64Array.from(A);
      expect(choleskyUnblockedInPlace(plain, n)).toBe(true);
      expectClose(blocked, plain, { rel: 1e-12, abs: 1e-13 }, `n=${n}`);
    }
  });

  it('cholesky reads only the lower triangle and zeroes the upper one', () => {
    const n = 70;
    const A = randomSpd(n, 3);
    const lowerOnly = Float64Array.from(A);
    for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) lowerOnly[i * n + j] = NaN;
    const f = cholesky(lowerOnly, n);
    expectClose(f.L, cholesky(A, n).L, { rel: 0, abs: 0 }, 'L');
    for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) expect(f.L[i * n + j]).toBe(0);
  });

  it('cholesky throws GapwiseError not-positive-definite for an indefinite matrix', () => {
    const A = Float64Array.from([1, 2, 2, 1]); // eigenvalues 3 and −1
    expect(choleskyInPlace(Float64Array.from(A), 2)).toBe(false);
    let caught: unknown;
    try {
      cholesky(A, 2, { jitter: true });
    } catch (e) {
      caught = e;
    }
    expect(caught).toBeInstanceOf(GapwiseError);
    expect((caught as GapwiseError).code).toBe('not-positive-definite');
    expect((caught as GapwiseError).kind).toBe('numeric');
  });

  it('cholesky adds jitter to a singular matrix only when asked, and reports it as a warning', () => {
    // Two identical samples under an exponential covariance with no nugget: rank deficient.
    const xs = [0, 0, 10, 25, 40];
    const n = xs.length;
    const A = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) A[i * n + j] = Math.exp(-Math.abs(xs[i] - xs[j]) / 20);
    expect(() => cholesky(A, n)).toThrow(GapwiseError);
    const f = cholesky(A, n, { jitter: true });
    expect(f.jitter).toBeGreaterThan(0);
    expect(f.jitter).toBeLessThanOrEqual(1e-4);
    expect(f.warnings).toHaveLength(1);
    expect(f.warnings[0].code).toBe('jitter');
    expect(f.warnings[0].message).toContain(f.jitter.toPrecision(3));
    const withJitter = Float64Array.from(A);
    for (let i = 0; i < n; i++) withJitter[i * n + i] += f.jitter;
    expectClose(timesTranspose(f.L, n), withJitter, { abs: 1e-12 }, 'L·Lᵀ = A + jitter·I');
  });

  it('cholesky rejects a buffer of the wrong length', () => {
    expect(() => cholesky(new Float64Array(5), 2)).toThrow(/2×2/);
  });

  it('cholesky reproduces A = L·Lᵀ to 1e-10 relative on random SPD matrices (fast-check, n ≤ 300 and block edges)', () => {
    fc.assert(
      fc.property(
        fc.oneof(fc.integer({ min: 1, max: 300 }), fc.constantFrom(63, 64, 65, 127, 128, 129, 192, 257)),
        fc.integer({ min: 1, max: 1_000_000 }),
        (n, seed) => {
          const A = randomCovariance(n, seed);
          const f = cholesky(A, n);
          const R = timesTranspose(f.L, n);
          let err = 0;
          for (let i = 0; i < n * n; i++) err = Math.max(err, Math.abs(R[i] - A[i]));
          return err <= 1e-10 * maxAbs(A);
        },
      ),
      { numRuns: 20, seed: 20240611 },
    );
  });
});

describe('triangular solves', () => {
  const n = 97;
  const A = randomSpd(n, 11);
  const f = cholesky(A, n);
  const rnd = createRandom(5);
  const b = Float64Array.from({ length: n }, () => rnd.normal());

  it('solveLowerInPlace solves L·x = b (checked by multiplying back)', () => {
    const x = solveLowerInPlace(f.L, n, Float64Array.from(b));
    expectClose(multiply(f.L, n, x, 1), b, { abs: 1e-12 }, 'L·x');
  });

  it('solveUpperTransposeInPlace solves Lᵀ·x = b (checked by multiplying back)', () => {
    const x = solveUpperTransposeInPlace(f.L, n, Float64Array.from(b));
    const Lt = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) Lt[i * n + j] = f.L[j * n + i];
    expectClose(multiply(Lt, n, x, 1), b, { abs: 1e-12 }, 'Lᵀ·x');
  });

  it('choleskySolve solves A·x = b', () => {
    const x = choleskySolve(f, b);
    expectClose(multiply(A, n, x, 1), b, { abs: 1e-11 }, 'A·x');
  });

  for (const m of [1, 3, 4, 37, 70]) {
    it(`solveLowerMultiple and solveUpperTransposeMultiple solve ${m} right-hand sides like ${m} single solves`, () => {
      const B = Float64Array.from({ length: n * m }, () => rnd.normal());
      const X = solveLowerMultiple(f.L, n, Float64Array.from(B), m);
      expectClose(multiply(f.L, n, X, m), B, { abs: 1e-12 }, 'L·X');
      const Y = solveUpperTransposeMultiple(f.L, n, Float64Array.from(B), m);
      for (let c = 0; c < m; c++) {
        const col = Float64Array.from({ length: n }, (_, i) => B[i * m + c]);
        solveUpperTransposeInPlace(f.L, n, col);
        expectClose(Array.from({ length: n }, (_, i) => Y[i * m + c]), col, { rel: 1e-12, abs: 1e-13 }, `column ${c}`);
      }
      const Z = choleskySolveMultiple(f, B, m);
      expectClose(multiply(A, n, Z, m), B, { abs: 1e-11 }, 'A·Z');
    });
  }

  it('solveLowerMultiple rejects a B of the wrong size', () => {
    expect(() => solveLowerMultiple(f.L, n, new Float64Array(n * 3 - 1), 3)).toThrow(/97×3/);
  });
});
