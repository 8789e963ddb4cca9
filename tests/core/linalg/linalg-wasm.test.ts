// The WebAssembly linear-algebra kernel (src/core/linalg/linalg-wasm.ts, src/core/linalg/wasm/linalg.wat) against the
// TypeScript reference in src/core/linalg/linalg.ts: Cholesky factors and triangular solves with many
// right-hand sides agree to 1e-12 relative on random SPD matrices of sizes 1 to 2,999 (odd sizes and
// the kernel's block edges included); the matrix product against a plain triple loop; the fallback
// when WebAssembly is switched off; and the committed binary is what the WAT source assembles to.
import { afterEach, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import {
  choleskyBlockedInPlace, choleskyInPlace, solveLowerMultiple, solveLowerMultipleJs,
  solveUpperTransposeMultiple, solveUpperTransposeMultipleJs,
} from '../../../src/core/linalg/linalg.ts';
import {
  setWasmKernelEnabled, wasmCholeskyInPlace, wasmKernelActive, wasmSolveLowerMultiple,
  wasmSolveUpperTransposeMultiple, wasmSubtractProductNT, wasmCrossCovarianceInto,
} from '../../../src/core/linalg/linalg-wasm.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import { crossCovarianceInto } from '../../../src/core/covariance/covariance.ts';
import type { CovarianceModel, Structure } from '../../../src/core/covariance/model.ts';

/** An exponential covariance of random points plus a nugget: SPD for any points, O(n²) to build. */
function randomCovariance(n: number, seed: number): Float64Array {
  const rnd = createRandom(seed);
  const x = Float64Array.from({ length: n }, () => rnd.uniform() * 100);
  const y = Float64Array.from({ length: n }, () => rnd.uniform() * 100);
  const scale = 5 + 50 * rnd.uniform();
  const A = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < i; j++) {
      const c = Math.exp(-Math.hypot(x[i] - x[j], y[i] - y[j]) / scale);
      A[i * n + j] = c;
      A[j * n + i] = c;
    }
    A[i * n + i] = 1.05 + 0.5 * rnd.uniform();
  }
  return A;
}

function randomMatrix(rows: number, cols: number, seed: number): Float64Array {
  const rnd = createRandom(seed);
  return Float64Array.from({ length: rows * cols }, () => rnd.normal());
}

/** max |a − b| / max |b|. */
function relativeDifference(a: Float64Array, b: Float64Array): number {
  expect(a.length).toBe(b.length);
  let diff = 0;
  let size = 0;
  for (let i = 0; i < a.length; i++) {
    diff = Math.max(diff, Math.abs(a[i] - b[i]));
    size = Math.max(size, Math.abs(b[i]));
  }
  return diff / size;
}

function factorJs(A: Float64Array, n: number): Float64Array {
  const L = Float64Array.from(A);
  expect(choleskyBlockedInPlace(L, n)).toBe(true);
  return L;
}

afterEach(() => {
  setWasmKernelEnabled(true);
});

describe('WebAssembly kernel', () => {
  it('loads in Node (SIMD available), so the comparisons below run the kernel', () => {
    expect(wasmKernelActive()).toBe(true);
  });

  // Sizes around the leaf (32), the 4×4 tile, the packing depth and width (256) and odd sizes.
  const choleskySizes = [1, 2, 3, 4, 5, 7, 31, 32, 33, 47, 48, 49, 63, 64, 65, 127, 129, 255, 256, 257, 511, 513, 777, 1001];
  it.each(choleskySizes)('Cholesky of a random SPD matrix, n = %i, matches the TypeScript factor to 1e-12', (n) => {
    const A = randomCovariance(n, 1000 + n);
    const reference = factorJs(A, n);
    const L = Float64Array.from(A);
    expect(wasmCholeskyInPlace(L, n, 1)).toBe(true);
    expect(relativeDifference(L, reference)).toBeLessThan(1e-12);
    for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) expect(L[i * n + j]).toBe(0);
  });

  it('Cholesky, n = 2,999: matches the TypeScript factor to 1e-12', () => {
    const n = 2999;
    const A = randomCovariance(n, 7);
    const reference = factorJs(A, n);
    const L = Float64Array.from(A);
    expect(wasmCholeskyInPlace(L, n)).toBe(true);
    expect(relativeDifference(L, reference)).toBeLessThan(1e-12);
  }, 180_000);

  it('Cholesky reads only the lower triangle (garbage above the diagonal changes nothing)', () => {
    const n = 301;
    const A = randomCovariance(n, 3);
    const reference = factorJs(A, n);
    const B = Float64Array.from(A);
    for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) B[i * n + j] = 1e300;
    expect(wasmCholeskyInPlace(B, n)).toBe(true);
    expect(relativeDifference(B, reference)).toBeLessThan(1e-12);
  });

  it('Cholesky of a matrix that is not positive definite reports false, as the TypeScript path does', () => {
    const n = 200;
    const A = randomCovariance(n, 5);
    A[150 * n + 150] = -1;
    expect(choleskyBlockedInPlace(Float64Array.from(A), n)).toBe(false);
    expect(wasmCholeskyInPlace(Float64Array.from(A), n)).toBe(false);
    // Pivots that fail in a late leaf and in the first one.
    for (const k of [199, 20]) {
      const C = randomCovariance(n, 6);
      C[k * n + k] = 0.5;
      C[k * n + (k - 1)] = 1;
      expect(choleskyBlockedInPlace(Float64Array.from(C), n)).toBe(false);
      expect(wasmCholeskyInPlace(Float64Array.from(C), n)).toBe(false);
    }
  });

  const solveCases: Array<[number, number]> = [[1, 1], [5, 3], [33, 8], [48, 9], [97, 2], [130, 33], [257, 64], [500, 301], [1001, 517]];
  it.each(solveCases)('L·X = B and Lᵀ·X = B, n = %i, m = %i: match the TypeScript solves to 1e-12', (n, m) => {
    const L = factorJs(randomCovariance(n, 2000 + n), n);
    const B = randomMatrix(n, m, 3000 + m);
    const lowerJs = Float64Array.from(B);
    solveLowerMultipleJs(L, n, lowerJs, m);
    const lower = Float64Array.from(B);
    expect(wasmSolveLowerMultiple(L, n, lower, m, true)).toBe(true);
    expect(relativeDifference(lower, lowerJs)).toBeLessThan(1e-12);
    const upperJs = Float64Array.from(B);
    solveUpperTransposeMultipleJs(L, n, upperJs, m);
    const upper = Float64Array.from(B);
    expect(wasmSolveUpperTransposeMultiple(L, n, upper, m, true)).toBe(true);
    expect(relativeDifference(upper, upperJs)).toBeLessThan(1e-12);
    // And the solves undo the multiplication: L·X reproduces B.
    const back = new Float64Array(n * m);
    for (let i = 0; i < n; i++) {
      for (let k = 0; k <= i; k++) {
        const l = L[i * n + k];
        for (let j = 0; j < m; j++) back[i * m + j] += l * lower[k * m + j];
      }
    }
    expect(relativeDifference(back, B)).toBeLessThan(1e-12);
  });

  it.each([[1, 1, 1], [4, 4, 4], [5, 3, 7], [13, 258, 300], [300, 517, 261], [67, 9, 513]])(
    'C −= A·Bᵀ for %i×%i with depth %i matches a plain triple loop to 1e-13', (m, n, k) => {
      const A = randomMatrix(m, k, 1);
      const B = randomMatrix(n, k, 2);
      const C0 = randomMatrix(m, n, 3);
      const expected = Float64Array.from(C0);
      for (let i = 0; i < m; i++) {
        for (let j = 0; j < n; j++) {
          let s = 0;
          for (let p = 0; p < k; p++) s += A[i * k + p] * B[j * k + p];
          expected[i * n + j] -= s;
        }
      }
      const C = Float64Array.from(C0);
      expect(wasmSubtractProductNT(C, A, B, m, n, k)).toBe(true);
      expect(relativeDifference(C, expected)).toBeLessThan(1e-13);
    });

  it('linalg.ts routes large problems through the kernel and, with it switched off, is the TypeScript path bit for bit', () => {
    const n = 400;
    const m = 50;
    const A = randomCovariance(n, 9);
    const reference = factorJs(A, n);
    const viaWasm = Float64Array.from(A);
    choleskyInPlace(viaWasm, n);
    const direct = Float64Array.from(A);
    wasmCholeskyInPlace(direct, n);
    expect(viaWasm).toEqual(direct);
    expect(viaWasm).not.toEqual(reference); // a different summation order: equal only to rounding
    const B = randomMatrix(n, m, 10);
    const x1 = Float64Array.from(B);
    solveLowerMultiple(reference, n, x1, m);
    const x2 = Float64Array.from(B);
    wasmSolveLowerMultiple(reference, n, x2, m);
    expect(x1).toEqual(x2);

    expect(setWasmKernelEnabled(false)).toBe(true);
    expect(wasmKernelActive()).toBe(false);
    const viaJs = Float64Array.from(A);
    choleskyInPlace(viaJs, n);
    expect(viaJs).toEqual(reference);
    const y1 = Float64Array.from(B);
    solveUpperTransposeMultiple(reference, n, y1, m);
    const y2 = Float64Array.from(B);
    solveUpperTransposeMultipleJs(reference, n, y2, m);
    expect(y1).toEqual(y2);
  });

  const families: Structure[] = [
    { type: 'matern', sill: 1.3, scale: 100, nu: 1.5 }, { type: 'matern', sill: 0.7, scale: 40, nu: 2.5 },
    { type: 'matern', sill: 2, scale: 7, nu: 0.5 }, { type: 'exponential', sill: 2, scale: 50 },
    { type: 'gaussian', sill: 2, scale: 30 }, { type: 'spherical', sill: 2, scale: 300 },
  ];
  it.each(families.map((f) => [`${f.type}${f.type === 'matern' ? ` ν = ${f.nu}` : ''}`, f] as const))(
    'covariance fill, %s (+ a nugget, a second structure, with and without anisotropy): matches covariance.ts to 1e-14', (_, family) => {
      const rnd = createRandom(21);
      const n = 301;
      const m = 77; // odd: the last column goes through the half-vector path
      const x = Float64Array.from({ length: n }, () => 2000 * rnd.uniform());
      const y = Float64Array.from({ length: n }, () => 2000 * rnd.uniform());
      const tx = Float64Array.from({ length: m }, () => 2000 * rnd.uniform());
      const ty = Float64Array.from({ length: m }, () => 2000 * rnd.uniform());
      tx[3] = x[5]; // a target on a sample: the full surface variance
      ty[3] = y[5];
      for (const anisotropy of [undefined, { azimuth: 30, ratio: 0.4 }]) {
        const model: CovarianceModel = {
          structures: [{ type: 'nugget', sill: 0.1 }, family, { type: 'exponential', sill: 0.3, scale: 500 }],
          trend: 'constant', transform: 'none', anisotropy,
        };
        const expected = crossCovarianceInto(model, tx, ty, x, y, new Float64Array(m * n));
        const got = new Float64Array(m * n);
        expect(wasmCrossCovarianceInto(model, tx, ty, x, y, got)).toBe(true);
        for (let i = 0; i < m * n; i++) {
          const scale = Math.max(Math.abs(expected[i]), 1e-300);
          if (!(Math.abs(got[i] - expected[i]) / scale <= 1e-14)) expect.fail(`entry ${i}: ${got[i]} against ${expected[i]}`);
        }
        expect(got[3 * n + 5]).toBeCloseTo(family.sill + 0.3, 14);
      }
    });

  it('covariance fill: far beyond the range the exponential underflows to 0 (Math.exp gives < 1e-307 there); a general ν is declined', () => {
    const model: CovarianceModel = { structures: [{ type: 'exponential', sill: 1, scale: 1 }], trend: 'constant', transform: 'none' };
    const out = new Float64Array(4);
    expect(wasmCrossCovarianceInto(model, [0, 0], [0, 0], [700, 720], [0, 0], out)).toBe(true);
    expect(Math.abs(out[0] / Math.exp(-700) - 1)).toBeLessThan(1e-14);
    expect(out[1]).toBe(0);
    expect(Math.exp(-720)).toBeLessThan(1e-307);
    const general: CovarianceModel = { structures: [{ type: 'matern', sill: 1, scale: 1, nu: 1.2 }], trend: 'constant', transform: 'none' };
    const untouched = new Float64Array([7, 7, 7, 7]);
    expect(wasmCrossCovarianceInto(general, [0, 0], [0, 0], [1, 2], [0, 0], untouched)).toBe(false);
    expect(Array.from(untouched)).toEqual([7, 7, 7, 7]);
  });

  it('the committed binary is what src/core/linalg/wasm/linalg.wat assembles to (scripts/build-wasm.mjs --check)', () => {
    const r = spawnSync(process.execPath, ['scripts/build-wasm.mjs', '--check'], { encoding: 'utf8' });
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
  });
});
