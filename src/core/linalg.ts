/**
 * Dense symmetric positive-definite linear algebra on row-major Float64Array.
 *
 * cholesky: A = L·Lᵀ (lower triangle, row-major), n³/3 flops; optional diagonal jitter, reported.
 * Triangular solves: forward L·x = b, backward Lᵀ·x = b, n² flops each; log|A| = 2·Σ ln Lᵢᵢ.
 * Never form an inverse where a solve will do.
 */
import { GapwiseError, type Warning } from './errors.ts';

export interface CholeskyOptions {
  /** Try adding jitter·mean(diag) to the diagonal (growing ×10, up to maxJitter) when A is not PD. */
  jitter?: boolean;
  maxJitter?: number;
}

export interface CholeskyFactor {
  n: number;
  /** Lower-triangular factor, row-major n×n; the strict upper triangle is zero. */
  L: Float64Array;
  /** Absolute amount added to the diagonal (0 when none). */
  jitter: number;
  warnings: Warning[];
}

/** Factorises in place: returns false when a pivot is not positive. */
export function choleskyInPlace(a: Float64Array, n: number): boolean {
  for (let j = 0; j < n; j++) {
    const rowJ = j * n;
    let d = a[rowJ + j];
    for (let k = 0; k < j; k++) d -= a[rowJ + k] * a[rowJ + k];
    if (!(d > 0)) return false;
    const ljj = Math.sqrt(d);
    a[rowJ + j] = ljj;
    const inv = 1 / ljj;
    for (let i = j + 1; i < n; i++) {
      const rowI = i * n;
      let s = a[rowI + j];
      for (let k = 0; k < j; k++) s -= a[rowI + k] * a[rowJ + k];
      a[rowI + j] = s * inv;
    }
  }
  for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) a[i * n + j] = 0;
  return true;
}

/**
 * Cholesky factor of a symmetric positive-definite matrix (A is not modified).
 * Throws GapwiseError('not-positive-definite') when A cannot be factorised even with jitter.
 */
export function cholesky(A: Float64Array, n: number, options: CholeskyOptions = {}): CholeskyFactor {
  if (A.length !== n * n) throw new Error(`Expected a ${n}×${n} matrix (${n * n} entries), got ${A.length}.`);
  const L = Float64Array.from(A);
  if (choleskyInPlace(L, n)) return { n, L, jitter: 0, warnings: [] };
  if (options.jitter) {
    let meanDiag = 0;
    for (let i = 0; i < n; i++) meanDiag += A[i * n + i];
    meanDiag /= n;
    const maxJitter = options.maxJitter ?? 1e-4;
    for (let rel = 1e-10; rel <= maxJitter * 1.0001; rel *= 10) {
      L.set(A);
      const add = rel * meanDiag;
      for (let i = 0; i < n; i++) L[i * n + i] += add;
      if (choleskyInPlace(L, n)) {
        return {
          n, L, jitter: add,
          warnings: [{
            code: 'jitter',
            message: `The covariance matrix was not numerically positive definite; added ${add.toPrecision(3)} (${rel.toExponential(0)} of the mean variance) to its diagonal.`,
          }],
        };
      }
    }
  }
  throw new GapwiseError('not-positive-definite',
    `The ${n}×${n} covariance matrix is not positive definite: samples may be duplicated or the model has no nugget; try merging duplicates or adding a nugget.`);
}

/** Solves L·x = b in place (b overwritten by x). */
export function solveLowerInPlace(L: Float64Array, n: number, b: Float64Array): Float64Array {
  for (let i = 0; i < n; i++) {
    const row = i * n;
    let s = b[i];
    for (let k = 0; k < i; k++) s -= L[row + k] * b[k];
    b[i] = s / L[row + i];
  }
  return b;
}

/** Solves Lᵀ·x = b in place (b overwritten by x). */
export function solveUpperTransposeInPlace(L: Float64Array, n: number, b: Float64Array): Float64Array {
  for (let i = n - 1; i >= 0; i--) {
    let s = b[i];
    for (let k = i + 1; k < n; k++) s -= L[k * n + i] * b[k];
    b[i] = s / L[i * n + i];
  }
  return b;
}

/** Solves A·x = b given A = L·Lᵀ; returns a new array. */
export function choleskySolve(f: CholeskyFactor, b: ArrayLike<number>): Float64Array {
  const x = Float64Array.from(b);
  solveLowerInPlace(f.L, f.n, x);
  solveUpperTransposeInPlace(f.L, f.n, x);
  return x;
}

/** ln|A| = 2·Σ ln Lᵢᵢ. */
export function logDeterminant(f: CholeskyFactor): number {
  let s = 0;
  for (let i = 0; i < f.n; i++) s += Math.log(f.L[i * f.n + i]);
  return 2 * s;
}
