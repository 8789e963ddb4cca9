/**
 * Dense symmetric positive-definite linear algebra on row-major Float64Array.
 *
 * cholesky: A = L·Lᵀ (lower triangle, row-major), n³/3 flops; optional diagonal jitter, reported as a
 * warning. The factorisation is a blocked left-looking Cholesky (Golub & Van Loan 2013, Matrix
 * Computations 4th ed., §4.2.9): for each block column of width 64, the contributions of all earlier
 * columns are subtracted with a register-tiled kernel (4 rows × 2 columns of dot products at once, in
 * chunks of 512 along the rows so the panel stays in cache), then the block column is factorised the
 * same way with sub-blocks of 16 and short dot products. Every inner loop runs along contiguous rows.
 * Only the lower triangle of the input is read.
 * Triangular solves: forward L·x = b and backward Lᵀ·x = b (n² flops each), for one right-hand side or
 * for m of them at once (n²·m flops; the right-hand sides are worked on in slabs of 32, transposed so
 * every inner loop is again a contiguous dot product or update). log|A| = 2·Σ ln Lᵢᵢ.
 * Never form an inverse where a solve will do. Units: whatever the matrix carries.
 *
 * choleskyInPlace (so cholesky) and the many-right-hand-side solves first offer the work to the
 * WebAssembly SIMD kernel (./linalg-wasm.ts: recursive, on one packed matrix-product kernel, several
 * times faster from n ≈ 100 on); the TypeScript code here runs when it declines (no WebAssembly, small
 * problems) and is the reference it is tested against. The two agree to rounding (~1e-15 relative).
 */
import { GapwiseError, type Warning } from '../shared/errors.ts';
import { wasmCholeskyInPlace, wasmSolveLowerMultiple, wasmSolveUpperTransposeMultiple } from './linalg-wasm.ts';

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

/** Width of a block column in the outer loop. */
const BLOCK = 64;
/** Length of the dot-product chunks in the update (keeps 64 rows × 512 of the panel in L2). */
const CHUNK = 512;
/** Width of the sub-blocks inside a block column. */
const SUB = 16;
/** Right-hand sides per slab in the multiple solves. */
const RHS_SLAB = 32;

/**
 * a[i][j] −= Σ_{p ∈ [p0, p1)} a[i][p]·a[j][p] for rows i ∈ [i0, i1) and columns j ∈ [j0, j1).
 * Register tile of 4 rows × 2 columns: 6 loads per 8 multiply-adds, all along contiguous rows.
 * Entries with j > i are written too (harmless scratch in the upper triangle, cleared at the end).
 */
function subtractRowProducts(
  a: Float64Array, n: number, i0: number, i1: number, j0: number, j1: number, p0: number, p1: number,
): void {
  let i = i0;
  for (; i + 4 <= i1; i += 4) {
    const r0 = i * n;
    const r1 = r0 + n;
    const r2 = r1 + n;
    const r3 = r2 + n;
    let j = j0;
    for (; j + 2 <= j1; j += 2) {
      const s0 = j * n;
      const s1 = s0 + n;
      let c00 = 0, c01 = 0, c10 = 0, c11 = 0, c20 = 0, c21 = 0, c30 = 0, c31 = 0;
      for (let p = p0; p < p1; p++) {
        const b0 = a[s0 + p];
        const b1 = a[s1 + p];
        const x0 = a[r0 + p];
        const x1 = a[r1 + p];
        const x2 = a[r2 + p];
        const x3 = a[r3 + p];
        c00 += x0 * b0; c01 += x0 * b1;
        c10 += x1 * b0; c11 += x1 * b1;
        c20 += x2 * b0; c21 += x2 * b1;
        c30 += x3 * b0; c31 += x3 * b1;
      }
      a[r0 + j] -= c00; a[r0 + j + 1] -= c01;
      a[r1 + j] -= c10; a[r1 + j + 1] -= c11;
      a[r2 + j] -= c20; a[r2 + j + 1] -= c21;
      a[r3 + j] -= c30; a[r3 + j + 1] -= c31;
    }
    if (j < j1) {
      const s0 = j * n;
      let c0 = 0, c1 = 0, c2 = 0, c3 = 0;
      for (let p = p0; p < p1; p++) {
        const b0 = a[s0 + p];
        c0 += a[r0 + p] * b0;
        c1 += a[r1 + p] * b0;
        c2 += a[r2 + p] * b0;
        c3 += a[r3 + p] * b0;
      }
      a[r0 + j] -= c0; a[r1 + j] -= c1; a[r2 + j] -= c2; a[r3 + j] -= c3;
    }
  }
  for (; i < i1; i++) {
    const r0 = i * n;
    for (let j = j0; j < j1; j++) {
      const s0 = j * n;
      let c = 0;
      for (let p = p0; p < p1; p++) c += a[r0 + p] * a[s0 + p];
      a[r0 + j] -= c;
    }
  }
}

/**
 * Factorises columns [kb, ke) once every column before kb has been subtracted from them.
 * Returns false when a pivot is not positive.
 */
function factorBlockColumn(a: Float64Array, n: number, kb: number, ke: number): boolean {
  for (let sb = kb; sb < ke; sb += SUB) {
    const se = Math.min(sb + SUB, ke);
    if (sb > kb) subtractRowProducts(a, n, sb, n, sb, se, kb, sb);
    if (!factorColumns(a, n, sb, se)) return false;
  }
  return true;
}

/**
 * Columns `from` to `to` − 1 of L, column by column, with the products of columns `from` onwards
 * subtracted here (earlier columns' products already taken off): the pivot, then the rows below it.
 * Returns false when a pivot is not positive.
 */
function factorColumns(a: Float64Array, n: number, from: number, to: number): boolean {
  for (let j = from; j < to; j++) {
    const rowJ = j * n;
    let d = a[rowJ + j];
    for (let p = from; p < j; p++) d -= a[rowJ + p] * a[rowJ + p];
    if (!(d > 0)) return false;
    const ljj = Math.sqrt(d);
    a[rowJ + j] = ljj;
    const inv = 1 / ljj;
    for (let i = j + 1; i < n; i++) {
      const rowI = i * n;
      let s = a[rowI + j];
      for (let p = from; p < j; p++) s -= a[rowI + p] * a[rowJ + p];
      a[rowI + j] = s * inv;
    }
  }
  return true;
}

/**
 * Factorises a symmetric positive-definite n×n matrix in place: on success the lower triangle holds L
 * (A = L·Lᵀ) and the strict upper triangle is zeroed. Reads only the lower triangle of `a`.
 * Returns false when a pivot is not positive (the contents of `a` are then undefined).
 * Cost n³/3 flops.
 */
export function choleskyInPlace(a: Float64Array, n: number): boolean {
  const fast = wasmCholeskyInPlace(a, n);
  if (fast !== null) return fast;
  return choleskyBlockedInPlace(a, n);
}

/**
 * The blocked TypeScript Cholesky (same contract as choleskyInPlace): the reference the WebAssembly
 * path is tested against, and the path taken when WebAssembly is unavailable or the matrix is small.
 */
export function choleskyBlockedInPlace(a: Float64Array, n: number): boolean {
  for (let kb = 0; kb < n; kb += BLOCK) {
    const ke = Math.min(kb + BLOCK, n);
    for (let p0 = 0; p0 < kb; p0 += CHUNK) subtractRowProducts(a, n, kb, n, kb, ke, p0, Math.min(p0 + CHUNK, kb));
    if (!factorBlockColumn(a, n, kb, ke)) return false;
  }
  for (let i = 0; i < n; i++) a.fill(0, i * n + i + 1, i * n + n);
  return true;
}

/**
 * The plain unblocked column-by-column Cholesky (same contract as choleskyInPlace). Kept as the
 * reference the blocked version is tested and benchmarked against.
 */
export function choleskyUnblockedInPlace(a: Float64Array, n: number): boolean {
  if (!factorColumns(a, n, 0, n)) return false;
  for (let i = 0; i < n; i++) a.fill(0, i * n + i + 1, i * n + n);
  return true;
}

/**
 * Cholesky factor of a symmetric positive-definite matrix (A is not modified; only its lower triangle
 * is read). With `jitter`, a failed factorisation is retried with 1e-10, 1e-9, ... (up to maxJitter,
 * default 1e-4) times the mean diagonal added to the diagonal, and a 'jitter' warning says how much.
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

/** Solves L·x = b in place (the first n entries of b are overwritten by x); returns b. n² flops. */
export function solveLowerInPlace(L: Float64Array, n: number, b: Float64Array): Float64Array {
  for (let i = 0; i < n; i++) {
    const row = i * n;
    let s0 = b[i];
    let s1 = 0;
    let k = 0;
    for (; k + 2 <= i; k += 2) {
      s0 -= L[row + k] * b[k];
      s1 -= L[row + k + 1] * b[k + 1];
    }
    if (k < i) s0 -= L[row + k] * b[k];
    b[i] = (s0 + s1) / L[row + i];
  }
  return b;
}

/**
 * Solves Lᵀ·x = b in place (the first n entries of b are overwritten by x); returns b. n² flops.
 * Works along rows of L: once x_k is known, x_k·L[k][0..k) is subtracted from the entries before it.
 */
export function solveUpperTransposeInPlace(L: Float64Array, n: number, b: Float64Array): Float64Array {
  for (let k = n - 1; k >= 0; k--) {
    const row = k * n;
    const xk = b[k] / L[row + k];
    b[k] = xk;
    for (let i = 0; i < k; i++) b[i] -= L[row + i] * xk;
  }
  return b;
}

/** Copies columns [c0, c0 + w) of the n×m row-major B into the w×n row-major slab. */
function gatherColumns(B: Float64Array, n: number, m: number, c0: number, w: number, slab: Float64Array): void {
  for (let i = 0; i < n; i++) {
    const row = i * m + c0;
    for (let c = 0; c < w; c++) slab[c * n + i] = B[row + c];
  }
}

function scatterColumns(B: Float64Array, n: number, m: number, c0: number, w: number, slab: Float64Array): void {
  for (let i = 0; i < n; i++) {
    const row = i * m + c0;
    for (let c = 0; c < w; c++) B[row + c] = slab[c * n + i];
  }
}


/** Backward substitution Lᵀ·x = b for w right-hand sides stored as rows of `slab` (w×n). */
function backwardRows(L: Float64Array, n: number, slab: Float64Array, w: number): void {
  for (let k = n - 1; k >= 0; k--) {
    const row = k * n;
    const inv = 1 / L[row + k];
    let r = 0;
    for (; r + 4 <= w; r += 4) {
      const x0 = r * n;
      const x1 = x0 + n;
      const x2 = x1 + n;
      const x3 = x2 + n;
      const v0 = slab[x0 + k] * inv;
      const v1 = slab[x1 + k] * inv;
      const v2 = slab[x2 + k] * inv;
      const v3 = slab[x3 + k] * inv;
      slab[x0 + k] = v0;
      slab[x1 + k] = v1;
      slab[x2 + k] = v2;
      slab[x3 + k] = v3;
      for (let i = 0; i < k; i++) {
        const l = L[row + i];
        slab[x0 + i] -= l * v0;
        slab[x1 + i] -= l * v1;
        slab[x2 + i] -= l * v2;
        slab[x3 + i] -= l * v3;
      }
    }
    for (; r < w; r++) {
      const x0 = r * n;
      const v = slab[x0 + k] * inv;
      slab[x0 + k] = v;
      for (let i = 0; i < k; i++) slab[x0 + i] -= L[row + i] * v;
    }
  }
}

function checkMultiple(L: Float64Array, n: number, B: Float64Array, m: number): void {
  if (L.length < n * n) throw new Error(`Expected an ${n}×${n} factor (${n * n} entries), got ${L.length}.`);
  if (B.length !== n * m) throw new Error(`Expected B to be ${n}×${m} (${n * m} entries), got ${B.length}.`);
}

/**
 * Solves L·X = B in place for m right-hand sides: B is n×m row-major (one column per right-hand side,
 * e.g. the cross-covariances of m targets) and is overwritten by X; returns B. n²·m flops.
 */
export function solveLowerMultiple(L: Float64Array, n: number, B: Float64Array, m: number): Float64Array {
  checkMultiple(L, n, B, m);
  if (m === 1) return solveLowerInPlace(L, n, B);
  if (!wasmSolveLowerMultiple(L, n, B, m)) forwardPanels(L, n, B, m, false);
  return B;
}

/**
 * Solves Lᵀ·X = B in place for m right-hand sides (B n×m row-major, overwritten by X); returns B.
 * n²·m flops.
 */
export function solveUpperTransposeMultiple(L: Float64Array, n: number, B: Float64Array, m: number): Float64Array {
  checkMultiple(L, n, B, m);
  if (m === 1) return solveUpperTransposeInPlace(L, n, B);
  if (wasmSolveUpperTransposeMultiple(L, n, B, m)) return B;
  solveUpperTransposeMultipleJs(L, n, B, m);
  return B;
}

/** The TypeScript Lᵀ·X = B for many right-hand sides (reference and fallback of the WebAssembly path). */
export function solveUpperTransposeMultipleJs(L: Float64Array, n: number, B: Float64Array, m: number): void {
  const slab = new Float64Array(Math.min(RHS_SLAB, m) * n);
  for (let c0 = 0; c0 < m; c0 += RHS_SLAB) {
    const w = Math.min(RHS_SLAB, m - c0);
    gatherColumns(B, n, m, c0, w, slab);
    backwardRows(L, n, slab, w);
    scatterColumns(B, n, m, c0, w, slab);
  }
}

/** Columns of a block handled together by the panel solve (128 doubles = 1 KiB per row). */
const SOLVE_PANEL = 128;

/**
 * Solves L·Y = B in place for an n×m row-major B (m right-hand sides as columns): n²·m flops.
 * Works on column panels (the rows touched stay in cache) and updates four rows of B with four
 * earlier rows of Y at a time (32 flops per 12 loads and stores), then finishes each 4×4 diagonal
 * triangle row by row.
 */
export function solveLowerBlock(L: Float64Array, n: number, B: Float64Array, m: number): void {
  if (!wasmSolveLowerMultiple(L, n, B, m)) forwardPanels(L, n, B, m, false);
}

/** The TypeScript L·X = B for many right-hand sides (reference and fallback of the WebAssembly path). */
export function solveLowerMultipleJs(L: Float64Array, n: number, B: Float64Array, m: number): void {
  forwardPanels(L, n, B, m, false);
}

/**
 * Z = L⁻¹ for a lower-triangular row-major L (Z is lower triangular too): the forward solve with the
 * identity as right-hand sides, skipping the rows above each column panel, which stay zero.
 * n³/3 flops. Used where the diagonal of K⁻¹ is needed (leave-one-out).
 */
export function lowerTriangularInverse(L: Float64Array, n: number): Float64Array {
  const Z = new Float64Array(n * n);
  for (let i = 0; i < n; i++) Z[i * n + i] = 1;
  // The kernel does not skip the zero rows (n³ flops instead of n³/3) and is still faster from n ≈ 100.
  if (!wasmSolveLowerMultiple(L, n, Z, n)) forwardPanels(L, n, Z, n, true);
  for (let i = 0; i < n; i++) Z.fill(0, i * n + i + 1, i * n + n);
  return Z;
}

function forwardPanels(L: Float64Array, n: number, B: Float64Array, m: number, identity: boolean): void {
  for (let c0 = 0; c0 < m; c0 += SOLVE_PANEL) {
    const c1 = Math.min(m, c0 + SOLVE_PANEL);
    // With B = I, rows above c0 are zero in this panel and stay zero: start at the group holding c0.
    const first = identity ? c0 - (c0 % 4) : 0;
    let i0 = first;
    for (; i0 + 3 < n; i0 += 4) {
      const r0 = i0 * n;
      const r1 = r0 + n;
      const r2 = r1 + n;
      const r3 = r2 + n;
      const o0 = i0 * m;
      const o1 = o0 + m;
      const o2 = o1 + m;
      const o3 = o2 + m;
      // i0 is a multiple of 4, so the earlier rows come in whole groups of four.
      for (let k = first; k < i0; k += 4) {
        const a00 = L[r0 + k], a01 = L[r0 + k + 1], a02 = L[r0 + k + 2], a03 = L[r0 + k + 3];
        const a10 = L[r1 + k], a11 = L[r1 + k + 1], a12 = L[r1 + k + 2], a13 = L[r1 + k + 3];
        const a20 = L[r2 + k], a21 = L[r2 + k + 1], a22 = L[r2 + k + 2], a23 = L[r2 + k + 3];
        const a30 = L[r3 + k], a31 = L[r3 + k + 1], a32 = L[r3 + k + 2], a33 = L[r3 + k + 3];
        const y0 = k * m;
        const y1 = y0 + m;
        const y2 = y1 + m;
        const y3 = y2 + m;
        for (let j = c0; j < c1; j++) {
          const b0 = B[y0 + j];
          const b1 = B[y1 + j];
          const b2 = B[y2 + j];
          const b3 = B[y3 + j];
          B[o0 + j] -= a00 * b0 + a01 * b1 + a02 * b2 + a03 * b3;
          B[o1 + j] -= a10 * b0 + a11 * b1 + a12 * b2 + a13 * b3;
          B[o2 + j] -= a20 * b0 + a21 * b1 + a22 * b2 + a23 * b3;
          B[o3 + j] -= a30 * b0 + a31 * b1 + a32 * b2 + a33 * b3;
        }
      }
      finishRows(L, n, B, m, i0, i0, i0 + 4, c0, c1);
    }
    finishRows(L, n, B, m, first, i0, n, c0, c1);
  }
}

/** Rows [from, to) of the forward solve, subtracting rows k ≥ kStart one at a time, then dividing. */
function finishRows(
  L: Float64Array, n: number, B: Float64Array, m: number,
  kStart: number, from: number, to: number, c0: number, c1: number,
): void {
  for (let i = from; i < to; i++) {
    const rowL = i * n;
    const oi = i * m;
    for (let k = kStart; k < i; k++) {
      const l = L[rowL + k];
      const ok = k * m;
      for (let j = c0; j < c1; j++) B[oi + j] -= l * B[ok + j];
    }
    const inv = 1 / L[rowL + i];
    for (let j = c0; j < c1; j++) B[oi + j] *= inv;
  }
}

/** Solves A·x = b given A = L·Lᵀ; returns a new array. */
export function choleskySolve(f: CholeskyFactor, b: ArrayLike<number>): Float64Array {
  const x = Float64Array.from(b);
  solveLowerInPlace(f.L, f.n, x);
  solveUpperTransposeInPlace(f.L, f.n, x);
  return x;
}

/** Solves A·X = B for m right-hand sides (B n×m row-major) given A = L·Lᵀ; returns a new array. */
export function choleskySolveMultiple(f: CholeskyFactor, B: ArrayLike<number>, m: number): Float64Array {
  const X = Float64Array.from(B);
  solveLowerMultiple(f.L, f.n, X, m);
  solveUpperTransposeMultiple(f.L, f.n, X, m);
  return X;
}

/** ln|A| = 2·Σ ln Lᵢᵢ. */
export function logDeterminant(f: CholeskyFactor): number {
  let s = 0;
  for (let i = 0; i < f.n; i++) s += Math.log(f.L[i * f.n + i]);
  return 2 * s;
}
