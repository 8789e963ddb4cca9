/**
 * Discrete Fourier transforms of complex data held as separate real and imaginary Float64Arrays,
 * in one dimension (any length) and in two (row-major rows × columns).
 *
 * Definition (unnormalised forward transform, numpy's convention):
 *   X[k] = Σ_{j<n} x[j]·e^(−2πi·jk/n);   inverse x[j] = (1/n)·Σ_k X[k]·e^(+2πi·jk/n).
 * Method: mixed-radix decimation in time (Cooley & Tukey 1965, Math. Comput. 19:297) in Stockham's
 * self-sorting order (no digit reversal; Van Loan 1992, Computational Frameworks for the FFT, §1.7 —
 * from memory). After the stages with radices r₁..r_s, L = r₁···r_s and M = n/L, the buffer holds for
 * each residue class c < M the length-L transform Y_c of x[c], x[c + M], ..., stored at y[j·M + c].
 * The next radix r merges the r classes c' + q·M' (M' = M/r) of class c' mod M':
 *   Y'_{c'}[j + s·L] = Σ_{q<r} W_r^(q·s) · (W_{rL}^(q·j) · Y_{c'+qM'}[j]),   j < L, s < r,
 * reading and writing runs of M' contiguous values with one twiddle per (j, q). Two buffers alternate.
 * Radices 4, 3 and 2 have their own butterflies; 5 and any other prime use the r-point sum (r²
 * operations per group). Lengths of the form 2^a·3^b·5^c are fast
 * (`nextFastLength`); a large prime length works but costs O(n²).
 * Twiddles W_n^k = e^(−2πik/n) come from one table per plan, computed directly (cos, sin of 2πk/n),
 * so rounding does not accumulate along the table.
 * Units: none. Cost: about 5·n·log₂(n) flops for fast lengths; 2-D: the 1-D cost for every row and
 * every column, with each column gathered into a contiguous buffer.
 */

/** A reusable transform of one length. */
export interface FftPlan {
  readonly n: number;
  /** Radices in the order they are applied (product = n). */
  readonly factors: readonly number[];
  /**
   * Transforms re, im (length ≥ offset + n) in place. `inverse` uses e^(+2πi·jk/n) and divides by n.
   */
  transform(re: Float64Array, im: Float64Array, inverse?: boolean): void;
}

/** Radices: 4 first (cheapest butterfly), then 2, 3, 5, then any remaining primes. */
function factorise(n: number): number[] {
  const out: number[] = [];
  let m = n;
  while (m % 4 === 0) { out.push(4); m /= 4; }
  while (m % 2 === 0) { out.push(2); m /= 2; }
  for (let p = 3; p * p <= m; p += 2) {
    while (m % p === 0) { out.push(p); m /= p; }
  }
  if (m > 1) out.push(m);
  return out;
}

/** True when n > 0 has no prime factor above 5. */
export function isFastLength(n: number): boolean {
  if (!(Number.isInteger(n) && n >= 1)) return false;
  let m = n;
  for (const p of [2, 3, 5]) while (m % p === 0) m /= p;
  return m === 1;
}

/** The smallest length ≥ n of the form 2^a·3^b·5^c (n ≥ 1). */
export function nextFastLength(n: number): number {
  let m = Math.max(1, Math.ceil(n));
  while (!isFastLength(m)) m++;
  return m;
}

/** The twiddle table W_n^k = cos − i·sin(2πk/n) of a plan and its scratch for odd radices. */
interface Twiddles {
  n: number;
  cos: Float64Array;
  sin: Float64Array;
  tRe: Float64Array;
  tIm: Float64Array;
}

/** The positions of one Stockham stage's butterflies: input block j of M, output stride Mp, twiddle step. */
interface StageShape {
  L: number;
  M: number;
  Mp: number;
  step: number;
  sign: number;
}

/** Radix-2 butterflies of block j. */
function radix2(tw: Twiddles, inRe: Float64Array, inIm: Float64Array, outRe: Float64Array, outIm: Float64Array, sh: StageShape, j: number, inBase: number): void {
  const { cos, sin } = tw;
  const { L, Mp, step, sign } = sh;
  const w = j * step;
  const wr = cos[w], wi = sign * sin[w];
  const o0 = j * Mp, o1 = (j + L) * Mp;
  for (let c = 0; c < Mp; c++) {
    const a = inBase + c, b = a + Mp;
    const xr = inRe[b] * wr - inIm[b] * wi;
    const xi = inRe[b] * wi + inIm[b] * wr;
    const ur = inRe[a], ui = inIm[a];
    outRe[o0 + c] = ur + xr; outIm[o0 + c] = ui + xi;
    outRe[o1 + c] = ur - xr; outIm[o1 + c] = ui - xi;
  }
}

/** Radix-4 butterflies of block j. */
function radix4(tw: Twiddles, inRe: Float64Array, inIm: Float64Array, outRe: Float64Array, outIm: Float64Array, sh: StageShape, j: number, inBase: number): void {
  const { cos, sin } = tw;
  const { L, Mp, step, sign } = sh;
  const w1 = j * step, w2 = 2 * w1, w3 = 3 * w1;
  const c1 = cos[w1], s1 = sign * sin[w1];
  const c2 = cos[w2], s2 = sign * sin[w2];
  const c3 = cos[w3], s3 = sign * sin[w3];
  const o0 = j * Mp, o1 = (j + L) * Mp, o2 = (j + 2 * L) * Mp, o3 = (j + 3 * L) * Mp;
  for (let c = 0; c < Mp; c++) {
    const i0 = inBase + c, i1 = i0 + Mp, i2 = i1 + Mp, i3 = i2 + Mp;
    const a0r = inRe[i0], a0i = inIm[i0];
    const a1r = inRe[i1] * c1 - inIm[i1] * s1, a1i = inRe[i1] * s1 + inIm[i1] * c1;
    const a2r = inRe[i2] * c2 - inIm[i2] * s2, a2i = inRe[i2] * s2 + inIm[i2] * c2;
    const a3r = inRe[i3] * c3 - inIm[i3] * s3, a3i = inRe[i3] * s3 + inIm[i3] * c3;
    const e0r = a0r + a2r, e0i = a0i + a2i;
    const e1r = a0r - a2r, e1i = a0i - a2i;
    const f0r = a1r + a3r, f0i = a1i + a3i;
    const f1r = a1r - a3r, f1i = a1i - a3i;
    // W_4 = −i forward (+i inverse): −i·sign·f1 = sign·f1i − i·sign·f1r.
    outRe[o0 + c] = e0r + f0r; outIm[o0 + c] = e0i + f0i;
    outRe[o2 + c] = e0r - f0r; outIm[o2 + c] = e0i - f0i;
    outRe[o1 + c] = e1r + sign * f1i; outIm[o1 + c] = e1i - sign * f1r;
    outRe[o3 + c] = e1r - sign * f1i; outIm[o3 + c] = e1i + sign * f1r;
  }
}

/** Radix-3 butterflies of block j. */
function radix3(tw: Twiddles, inRe: Float64Array, inIm: Float64Array, outRe: Float64Array, outIm: Float64Array, sh: StageShape, j: number, inBase: number): void {
  const { cos, sin } = tw;
  const { L, Mp, step, sign } = sh;
  const SQRT3_2 = Math.sqrt(3) / 2;
  const w1 = j * step, w2 = 2 * w1;
  const c1 = cos[w1], s1 = sign * sin[w1];
  const c2 = cos[w2], s2 = sign * sin[w2];
  const k3 = sign * SQRT3_2;
  const o0 = j * Mp, o1 = (j + L) * Mp, o2 = (j + 2 * L) * Mp;
  for (let c = 0; c < Mp; c++) {
    const i0 = inBase + c, i1 = i0 + Mp, i2 = i1 + Mp;
    const a0r = inRe[i0], a0i = inIm[i0];
    const a1r = inRe[i1] * c1 - inIm[i1] * s1, a1i = inRe[i1] * s1 + inIm[i1] * c1;
    const a2r = inRe[i2] * c2 - inIm[i2] * s2, a2i = inRe[i2] * s2 + inIm[i2] * c2;
    const sr = a1r + a2r, si = a1i + a2i;
    const dr = a1r - a2r, di = a1i - a2i;
    const mr = a0r - 0.5 * sr, mi = a0i - 0.5 * si;
    // W_3 = −½ − i·sign·√3/2: X1 = a0 − s/2 − i·k3·d, X2 = a0 − s/2 + i·k3·d.
    outRe[o0 + c] = a0r + sr; outIm[o0 + c] = a0i + si;
    outRe[o1 + c] = mr + k3 * di; outIm[o1 + c] = mi - k3 * dr;
    outRe[o2 + c] = mr - k3 * di; outIm[o2 + c] = mi + k3 * dr;
  }
}

/** Butterflies of any other prime radix r of block j (a direct DFT of length r). */
function radixAny(r: number, tw: Twiddles, inRe: Float64Array, inIm: Float64Array, outRe: Float64Array, outIm: Float64Array, sh: StageShape, j: number, inBase: number): void {
  const { cos, sin, tRe, tIm, n } = tw;
  const { L, Mp, step, sign } = sh;
  const stepR = n / r;
  for (let c = 0; c < Mp; c++) {
    for (let q = 0; q < r; q++) {
      const idx = inBase + q * Mp + c;
      const w = q * j * step;
      const cw = cos[w], sw = sign * sin[w];
      tRe[q] = inRe[idx] * cw - inIm[idx] * sw;
      tIm[q] = inRe[idx] * sw + inIm[idx] * cw;
    }
    for (let s = 0; s < r; s++) {
      let accR = 0, accI = 0;
      for (let q = 0; q < r; q++) {
        const w = ((q * s) % r) * stepR;
        const cw = cos[w], sw = sign * sin[w];
        accR += tRe[q] * cw - tIm[q] * sw;
        accI += tRe[q] * sw + tIm[q] * cw;
      }
      const o = (j + s * L) * Mp + c;
      outRe[o] = accR;
      outIm[o] = accI;
    }
  }
}

/**
 * One Stockham stage: from DFTs of length L of the M = n/L residue classes (stored y[j·M + c]) to
 * DFTs of length L·r of the M/r classes (stored y'[j'·M' + c']), see the file header.
 */
function stockhamStage(tw: Twiddles, inRe: Float64Array, inIm: Float64Array, outRe: Float64Array, outIm: Float64Array, L: number, r: number, sign: number): void {
  const M = tw.n / L;
  const sh: StageShape = { L, M, Mp: M / r, step: tw.n / (L * r), sign }; // W_{L'}^x = W_n^(x·step)
  for (let j = 0; j < L; j++) {
    const inBase = j * M;
    if (r === 2) radix2(tw, inRe, inIm, outRe, outIm, sh, j, inBase);
    else if (r === 4) radix4(tw, inRe, inIm, outRe, outIm, sh, j, inBase);
    else if (r === 3) radix3(tw, inRe, inIm, outRe, outIm, sh, j, inBase);
    else radixAny(r, tw, inRe, inIm, outRe, outIm, sh, j, inBase);
  }
}

/**
 * A plan for transforms of length n (any n ≥ 1): factorisation, twiddle table and scratch space.
 * Throws RangeError for a length that is not a positive whole number.
 */
export function createFftPlan(n: number): FftPlan {
  if (!(Number.isInteger(n) && n >= 1)) throw new RangeError(`Expected a transform length that is a whole number ≥ 1, got ${n}.`);
  const factors = factorise(n);
  const cos = new Float64Array(n);
  const sin = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const a = (2 * Math.PI * k) / n;
    cos[k] = Math.cos(a);
    sin[k] = -Math.sin(a); // W_n^k = cos − i·sin(2πk/n)
  }
  const bufRe = [new Float64Array(n), new Float64Array(n)];
  const bufIm = [new Float64Array(n), new Float64Array(n)];
  const maxR = Math.max(1, ...factors);
  const tRe = new Float64Array(maxR);
  const tIm = new Float64Array(maxR);
  const tw: Twiddles = { n, cos, sin, tRe, tIm };

  return {
    n,
    factors,
    transform(re: Float64Array, im: Float64Array, inverse = false): void {
      if (re.length < n || im.length < n) throw new RangeError(`Expected arrays of at least ${n} entries, got ${re.length} and ${im.length}.`);
      const sign = inverse ? -1 : 1;
      let inRe: Float64Array = re, inIm: Float64Array = im;
      let which = 0;
      let L = 1;
      for (const r of factors) {
        const outRe = bufRe[which], outIm = bufIm[which];
        stockhamStage(tw, inRe, inIm, outRe, outIm, L, r, sign);
        inRe = outRe;
        inIm = outIm;
        which = 1 - which;
        L *= r;
      }
      const f = inverse ? 1 / n : 1;
      if (inRe !== re) {
        for (let j = 0; j < n; j++) {
          re[j] = inRe[j] * f;
          im[j] = inIm[j] * f;
        }
      } else if (inverse) {
        for (let j = 0; j < n; j++) {
          re[j] *= f;
          im[j] *= f;
        }
      }
    },
  };
}

/** One-shot 1-D transform in place (builds a plan; reuse createFftPlan for repeated lengths). */
export function fft(re: Float64Array, im: Float64Array, inverse = false): void {
  if (re.length !== im.length) throw new RangeError(`Expected re and im of equal length, got ${re.length} and ${im.length}.`);
  createFftPlan(re.length).transform(re, im, inverse);
}

/** Columns gathered together in a 2-D transform (8 doubles = one 64-byte cache line per row). */
const COLUMN_GROUP = 8;

/** A reusable 2-D transform of ny rows × nx columns (row-major, index j·nx + i). */
export interface Fft2Plan {
  readonly nx: number;
  readonly ny: number;
  /** Transforms in place: every row, then every column. `inverse` divides by nx·ny. */
  transform(re: Float64Array, im: Float64Array, inverse?: boolean): void;
}

/** Plan for 2-D transforms of ny rows by nx columns. */
export function createFft2Plan(nx: number, ny: number): Fft2Plan {
  const rowPlan = createFftPlan(nx);
  const colPlan = ny === nx ? rowPlan : createFftPlan(ny);
  const rowRe = new Float64Array(nx);
  const rowIm = new Float64Array(nx);
  const colRe = new Float64Array(ny * COLUMN_GROUP);
  const colIm = new Float64Array(ny * COLUMN_GROUP);
  return {
    nx,
    ny,
    transform(re: Float64Array, im: Float64Array, inverse = false): void {
      const size = nx * ny;
      if (re.length !== size || im.length !== size) {
        throw new RangeError(`Expected ${ny} × ${nx} = ${size} entries, got ${re.length} and ${im.length}.`);
      }
      for (let j = 0; j < ny; j++) {
        const o = j * nx;
        for (let i = 0; i < nx; i++) {
          rowRe[i] = re[o + i];
          rowIm[i] = im[o + i];
        }
        rowPlan.transform(rowRe, rowIm, inverse);
        for (let i = 0; i < nx; i++) {
          re[o + i] = rowRe[i];
          im[o + i] = rowIm[i];
        }
      }
      // Columns in groups of COLUMN_GROUP: each row contributes one contiguous run (a cache line) per group.
      for (let i0 = 0; i0 < nx; i0 += COLUMN_GROUP) {
        const g = Math.min(COLUMN_GROUP, nx - i0);
        for (let j = 0; j < ny; j++) {
          const o = j * nx + i0;
          for (let c = 0; c < g; c++) {
            colRe[c * ny + j] = re[o + c];
            colIm[c * ny + j] = im[o + c];
          }
        }
        for (let c = 0; c < g; c++) {
          const a = colRe.subarray(c * ny, (c + 1) * ny);
          const b = colIm.subarray(c * ny, (c + 1) * ny);
          colPlan.transform(a, b, inverse);
        }
        for (let j = 0; j < ny; j++) {
          const o = j * nx + i0;
          for (let c = 0; c < g; c++) {
            re[o + c] = colRe[c * ny + j];
            im[o + c] = colIm[c * ny + j];
          }
        }
      }
    },
  };
}

/** One-shot 2-D transform in place of ny rows × nx columns (row-major). */
export function fft2(re: Float64Array, im: Float64Array, nx: number, ny: number, inverse = false): void {
  createFft2Plan(nx, ny).transform(re, im, inverse);
}
