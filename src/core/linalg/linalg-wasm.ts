/**
 * The WebAssembly path of the dense linear algebra (src/core/linalg/linalg.ts keeps the plain TypeScript
 * reference and falls back to it whenever this module declines).
 *
 * One SIMD kernel does almost all the arithmetic: `gemm` in src/core/linalg/wasm/linalg.wat, C −= op(A)·op(B)
 * on row-major matrices, blocked for the caches (depth KC, width NC; B packed into 4-column panels,
 * A into 4-row panels) around a 4×4 register tile of f64x2 multiply-adds. The Cholesky factorisation
 * and the triangular solves with many right-hand sides are recursive (split in halves, Gustavson 1997,
 * "Recursion leads to automatic variable blocking for dense linear-algebra algorithms", IBM J. Res.
 * Dev. 41(6), from memory): each level is two half-size problems and one matrix product, so all but
 * the small leaves (≤ LEAF rows, done here in TypeScript) run in `gemm`.
 *
 *   chol([A11 ·; A21 A22]):  L11 = chol(A11); L21 = A21·L11⁻ᵀ; L22 = chol(A22 − L21·L21ᵀ)
 *   L·Y = B:                 Y1 = L11⁻¹B1;  Y2 = L22⁻¹(B2 − L21·Y1)
 *   Lᵀ·X = B:                X2 = L22⁻ᵀB2;  X1 = L11⁻ᵀ(B1 − L21ᵀ·X2)
 *
 * Operands are copied into the module's memory (a bump layout rebuilt per call; memory only grows) and
 * the results copied back, O(n²) against O(n³) or O(n²m) arithmetic. The same bytes run in Node, the
 * workers and the app (instantiated synchronously from the base64 in ./generated; the app's
 * Content-Security-Policy allows WebAssembly compilation with 'wasm-unsafe-eval'). Results differ
 * from the TypeScript path only by rounding (summation order), ~1e-15 relative.
 */
import { LINALG_WASM_BASE64 } from './generated/linalg-wasm.ts';
import { crossCovarianceInto, toIsotropicCoordinates } from '../covariance/covariance.ts';
import type { CovarianceModel } from '../covariance/model.ts';

interface Kernel {
  memory: WebAssembly.Memory;
  gemm: (
    C: number, ldc: number, A: number, lda: number, at: number, B: number, ldb: number, bt: number,
    m: number, n: number, k: number, lower: number, pa: number, pb: number, kcMax: number, ncMax: number,
  ) => void;
  rowUpdate: (d: number, s: number, ld: number, coef: number, cstride: number, cnt: number, m: number, scale: number) => void;
  trsmRightLeaf: (l: number, ldl: number, b: number, ldb: number, m: number, k: number) => void;
  covarianceFill: (out: number, pu: number, pv: number, n: number, qu: number, qv: number, m: number,
    kind: number, sill: number, f: number, add: number) => void;
}

/** Depth of the packed blocks (doubles along the summed index). */
const KC = 256;
/** Width of the packed B block (columns; a multiple of 4). KC·NC·8 bytes = 512 KiB. */
const NC = 256;
/** Problems at or below this size are finished in TypeScript. */
const LEAF = 32;
/** Bytes [0, 1024) belong to the module (its scratch tile); the packing buffers follow. */
const PA = 1024;
const PB = PA + 4 * KC * 8;
const DATA = PB + KC * NC * 8;
/** Largest memory this path asks for (bytes); larger problems take the TypeScript path. */
const MAX_BYTES = 2 ** 31;
/** Smallest sizes worth the copies: below them the TypeScript path is as fast. */
const MIN_N = 48;
const MIN_RHS = 8;

let kernel: Kernel | null | undefined;
let enabled = true;
let heap = new Float64Array(0);

function decodeBase64(text: string): Uint8Array {
  const raw = atob(text);
  const bytes = new Uint8Array(raw.length);
  for (let i = 0; i < raw.length; i++) bytes[i] = raw.charCodeAt(i);
  return bytes;
}

function load(): Kernel | null {
  if (typeof WebAssembly === 'undefined') return null;
  try {
    const module = new WebAssembly.Module(decodeBase64(LINALG_WASM_BASE64) as BufferSource);
    const instance = new WebAssembly.Instance(module, {});
    const exports = instance.exports as unknown as Kernel;
    return { memory: exports.memory, gemm: exports.gemm, rowUpdate: exports.rowUpdate, trsmRightLeaf: exports.trsmRightLeaf, covarianceFill: exports.covarianceFill };
  } catch {
    // No SIMD, or compilation refused (a Content-Security-Policy without 'wasm-unsafe-eval').
    return null;
  }
}

function getKernel(): Kernel | null {
  if (!enabled) return null;
  if (kernel === undefined) kernel = load();
  return kernel;
}

/** Whether the WebAssembly kernel is loaded and in use (false: the TypeScript path does everything). */
export function wasmKernelActive(): boolean {
  return getKernel() !== null;
}

/**
 * Turns the WebAssembly path on or off for this process (tests and benchmarks compare the two);
 * returns the previous setting.
 */
export function setWasmKernelEnabled(on: boolean): boolean {
  const was = enabled;
  enabled = on;
  return was;
}

/** Makes the memory hold `doubles` doubles from DATA; returns the kernel, or null when too large. */
function reserve(doubles: number): Kernel | null {
  const k = getKernel();
  if (!k) return null;
  const bytes = DATA + doubles * 8;
  if (bytes > MAX_BYTES) return null;
  const have = k.memory.buffer.byteLength;
  if (bytes > have) {
    try {
      k.memory.grow(Math.ceil((bytes - have) / 65536));
    } catch {
      return null;
    }
  }
  if (heap.buffer !== k.memory.buffer) heap = new Float64Array(k.memory.buffer);
  return k;
}

/** C −= op(A)·op(B), offsets in doubles into the heap. */
function gemm(
  k: Kernel, c: number, ldc: number, a: number, lda: number, at: boolean, b: number, ldb: number, bt: boolean,
  m: number, n: number, depth: number, lower: boolean,
): void {
  k.gemm(c * 8, ldc, a * 8, lda, at ? 1 : 0, b * 8, ldb, bt ? 1 : 0, m, n, depth, lower ? 1 : 0, PA, PB, KC, NC);
}

/** Splits a size in two, the first part a multiple of 4 (keeps the tiles of the products whole). */
function half(n: number): number {
  return Math.max(4, (n >> 1) & ~3);
}

// ---- Cholesky ------------------------------------------------------------------------------------

/** Unblocked Cholesky of the n×n block at heap offset a (row stride ld). */
function potrfLeaf(h: Float64Array, a: number, n: number, ld: number): boolean {
  for (let j = 0; j < n; j++) {
    const rj = a + j * ld;
    let d = h[rj + j];
    for (let p = 0; p < j; p++) d -= h[rj + p] * h[rj + p];
    if (!(d > 0)) return false;
    const ljj = Math.sqrt(d);
    h[rj + j] = ljj;
    const inv = 1 / ljj;
    for (let i = j + 1; i < n; i++) {
      const ri = a + i * ld;
      let s = h[ri + j];
      for (let p = 0; p < j; p++) s -= h[ri + p] * h[rj + p];
      h[ri + j] = s * inv;
    }
  }
  return true;
}

/** X·Lᵀ = B for the m×k block B at b (overwritten by X), L the k×k lower block at l. */
function trsmRightLowerTrans(k: Kernel, l: number, kk: number, b: number, m: number, ld: number): void {
  if (kk <= LEAF) {
    k.trsmRightLeaf(l * 8, ld * 8, b * 8, ld * 8, m, kk);
    return;
  }
  const k1 = half(kk);
  const k2 = kk - k1;
  trsmRightLowerTrans(k, l, k1, b, m, ld);
  // B2 −= X1·L21ᵀ
  gemm(k, b + k1, ld, b, ld, false, l + k1 * ld, ld, true, m, k2, k1, false);
  trsmRightLowerTrans(k, l + k1 * ld + k1, k2, b + k1, m, ld);
}

function potrfRecursive(k: Kernel, a: number, n: number, ld: number): boolean {
  if (n <= LEAF) return potrfLeaf(heap, a, n, ld);
  const n1 = half(n);
  const n2 = n - n1;
  if (!potrfRecursive(k, a, n1, ld)) return false;
  const a21 = a + n1 * ld;
  trsmRightLowerTrans(k, a, n1, a21, n2, ld);
  gemm(k, a21 + n1, ld, a21, ld, false, a21, ld, true, n2, n2, n1, true);
  return potrfRecursive(k, a21 + n1, n2, ld);
}

/**
 * Cholesky in place with the WebAssembly kernel (contract of linalg.ts choleskyInPlace: reads the lower
 * triangle, writes L and zeros above it). Returns true / false as the factorisation succeeds, or null
 * when this path declines (kernel unavailable, n below `smallest`, too large) and `a` is untouched.
 */
export function wasmCholeskyInPlace(a: Float64Array, n: number, smallest = MIN_N): boolean | null {
  if (n < smallest) return null;
  const k = reserve(n * n);
  if (!k) return null;
  const base = DATA / 8;
  heap.set(a.subarray(0, n * n), base);
  const ok = potrfRecursive(k, base, n, n);
  if (!ok) return false;
  for (let i = 0; i < n; i++) {
    const r = i * n;
    a.set(heap.subarray(base + r, base + r + i + 1), r);
    a.fill(0, r + i + 1, r + n);
  }
  return true;
}

// ---- Triangular solves with many right-hand sides --------------------------------------------------

/** L·Y = B: L n×n lower at l (stride ldl), B n×m at b (stride ldb), overwritten by Y. */
function trsmLeftLower(k: Kernel, l: number, n: number, ldl: number, b: number, m: number, ldb: number): void {
  if (n <= LEAF) {
    // Row i −= Σ_{p<i} L[i][p]·row p, then ÷ L[i][i].
    for (let i = 0; i < n; i++) {
      const rl = l + i * ldl;
      k.rowUpdate((b + i * ldb) * 8, b * 8, ldb * 8, rl * 8, 8, i, m, 1 / heap[rl + i]);
    }
    return;
  }
  const n1 = half(n);
  const n2 = n - n1;
  trsmLeftLower(k, l, n1, ldl, b, m, ldb);
  gemm(k, b + n1 * ldb, ldb, l + n1 * ldl, ldl, false, b, ldb, false, n2, m, n1, false);
  trsmLeftLower(k, l + n1 * ldl + n1, n2, ldl, b + n1 * ldb, m, ldb);
}

/** Lᵀ·X = B: L n×n lower at l, B n×m at b, overwritten by X. */
function trsmLeftLowerTrans(k: Kernel, l: number, n: number, ldl: number, b: number, m: number, ldb: number): void {
  if (n <= LEAF) {
    // Row i −= Σ_{r>i} L[r][i]·row r, then ÷ L[i][i], from the last row up.
    for (let i = n - 1; i >= 0; i--) {
      const below = l + (i + 1) * ldl + i;
      k.rowUpdate((b + i * ldb) * 8, (b + (i + 1) * ldb) * 8, ldb * 8, below * 8, ldl * 8, n - 1 - i, m, 1 / heap[l + i * ldl + i]);
    }
    return;
  }
  const n1 = half(n);
  const n2 = n - n1;
  trsmLeftLowerTrans(k, l + n1 * ldl + n1, n2, ldl, b + n1 * ldb, m, ldb);
  // B1 −= L21ᵀ·X2: op(A)[i][p] = L21[p][i].
  gemm(k, b, ldb, l + n1 * ldl, ldl, true, b + n1 * ldb, ldb, false, n1, m, n2, false);
  trsmLeftLowerTrans(k, l, n1, ldl, b, m, ldb);
}

function solveMultiple(L: Float64Array, n: number, B: Float64Array, m: number, transposed: boolean, any: boolean): boolean {
  if (!any && (n < MIN_N || m < MIN_RHS)) return false;
  const k = reserve(n * n + n * m);
  if (!k) return false;
  const l = DATA / 8;
  const b = l + n * n;
  heap.set(L.subarray(0, n * n), l);
  heap.set(B.subarray(0, n * m), b);
  if (transposed) trsmLeftLowerTrans(k, l, n, n, b, m, m);
  else trsmLeftLower(k, l, n, n, b, m, m);
  B.set(heap.subarray(b, b + n * m));
  return true;
}

/**
 * L·X = B in place for B n×m row-major (m right-hand sides as columns). Returns false, leaving B
 * untouched, when this path declines (kernel unavailable, too large, or — unless `anySize` — too small
 * to gain from it).
 */
export function wasmSolveLowerMultiple(L: Float64Array, n: number, B: Float64Array, m: number, anySize = false): boolean {
  return solveMultiple(L, n, B, m, false, anySize);
}

/** Lᵀ·X = B in place for B n×m row-major. Returns false, leaving B untouched, when this path declines. */
export function wasmSolveUpperTransposeMultiple(L: Float64Array, n: number, B: Float64Array, m: number, anySize = false): boolean {
  return solveMultiple(L, n, B, m, true, anySize);
}

/**
 * C −= A·Bᵀ for row-major A (m×k) and B (n×k), C m×n — the kernel exposed for tests and benchmarks.
 * Returns false when this path declines.
 */
export function wasmSubtractProductNT(C: Float64Array, A: Float64Array, B: Float64Array, m: number, n: number, depth: number): boolean {
  const k = reserve(m * n + m * depth + n * depth);
  if (!k) return false;
  const c = DATA / 8;
  const a = c + m * n;
  const b = a + m * depth;
  heap.set(C.subarray(0, m * n), c);
  heap.set(A.subarray(0, m * depth), a);
  heap.set(B.subarray(0, n * depth), b);
  gemm(k, c, n, a, depth, false, b, depth, true, m, n, depth, false);
  C.set(heap.subarray(c, c + m * n));
  return true;
}

// ---- Covariance fill ----------------------------------------------------------------------------

/** The kernel's family codes and the factor taking a distance to its argument (as covariance.ts compiles them). */
function fillStructures(model: CovarianceModel): Array<{ kind: number; sill: number; f: number }> | null {
  const out: Array<{ kind: number; sill: number; f: number }> = [];
  for (const s of model.structures) {
    if (s.type === 'nugget' || s.sill === 0) continue;
    const inv = 1 / s.scale;
    if (s.type === 'exponential') out.push({ kind: 0, sill: s.sill, f: inv });
    else if (s.type === 'gaussian') out.push({ kind: 1, sill: s.sill, f: 0.5 * inv * inv });
    else if (s.type === 'spherical') out.push({ kind: 4, sill: s.sill, f: inv });
    else {
      const nu = s.nu ?? 1.5;
      if (nu === 0.5) out.push({ kind: 0, sill: s.sill, f: inv });
      else if (nu === 1.5) out.push({ kind: 2, sill: s.sill, f: Math.sqrt(3) * inv });
      else if (nu === 2.5) out.push({ kind: 3, sill: s.sill, f: Math.sqrt(5) * inv });
      else return null; // general ν: the tabulated Bessel form stays in TypeScript
    }
  }
  return out;
}

/**
 * The noise-free cross-covariances between m points (tx, ty) and n points (x, y) into `out` (m×n
 * row-major, overwritten), as covariance.ts crossCovarianceInto computes them, with f64x2 distances
 * and exponentials (exp to about 1 ulp; arguments below −708 give 0 where Math.exp gives < 1e-307).
 * Returns false, leaving `out` untouched, when this path declines (kernel unavailable, a Matérn
 * smoothness other than ½, 3/2, 5/2, too large).
 */
export function wasmCrossCovarianceInto(
  model: CovarianceModel, tx: ArrayLike<number>, ty: ArrayLike<number>, x: ArrayLike<number>, y: ArrayLike<number>,
  out: Float64Array,
): boolean {
  const m = tx.length;
  const n = x.length;
  if (ty.length !== m || y.length !== n || out.length < m * n) return false;
  const structures = fillStructures(model);
  if (!structures) return false;
  const k = reserve(m * n + 2 * (m + n) + 4);
  if (!k) return false;
  const o = DATA / 8;
  const pu = o + m * n;
  const pv = pu + m;
  const qu = pv + m;
  const qv = qu + n;
  const t = toIsotropicCoordinates(model.anisotropy, tx, ty);
  const s = toIsotropicCoordinates(model.anisotropy, x, y);
  heap.set(t.u, pu);
  heap.set(t.v, pv);
  heap.set(s.u, qu);
  heap.set(s.v, qv);
  if (structures.length === 0) heap.fill(0, o, o + m * n);
  structures.forEach((c, idx) => k.covarianceFill(o * 8, pu * 8, pv * 8, m, qu * 8, qv * 8, n, c.kind, c.sill, c.f, idx > 0 ? 1 : 0));
  out.set(heap.subarray(o, o + m * n));
  return true;
}

/**
 * covariance.ts crossCovarianceInto through the WebAssembly fill when it takes the model, else the
 * TypeScript one; returns `out`.
 */
export function crossCovarianceFastInto(
  model: CovarianceModel, tx: ArrayLike<number>, ty: ArrayLike<number>, x: ArrayLike<number>, y: ArrayLike<number>,
  out: Float64Array,
): Float64Array {
  if (!wasmCrossCovarianceInto(model, tx, ty, x, y, out)) crossCovarianceInto(model, tx, ty, x, y, out);
  return out;
}
