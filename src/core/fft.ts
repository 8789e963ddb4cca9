/**
 * Discrete Fourier transforms of complex data held as separate real and imaginary Float64Arrays,
 * in one dimension (any length) and in two (row-major rows × columns).
 *
 * Definition (unnormalised forward transform, numpy's convention):
 *   X[k] = Σ_{j<n} x[j]·e^(−2πi·jk/n);   inverse x[j] = (1/n)·Σ_k X[k]·e^(+2πi·jk/n).
 * Method: mixed-radix decimation in time (Cooley & Tukey 1965, Math. Comput. 19:297): with n = r·m,
 *   X[k + s·m] = Σ_{q<r} W_r^(q·s) · (W_n^(q·k) · F_q[k]),   k < m, s < r,
 * where F_q is the length-m transform of x[q], x[q + r], x[q + 2r], ... The sub-transforms are
 * written side by side into the output, so each combining step works in place on the r entries
 * k, k + m, ..., k + (r−1)m. Radices 4 and 2 have their own butterflies; 3, 5 and any other prime
 * use the r-point sum (r² operations per group). Lengths of the form 2^a·3^b·5^c are fast
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
function factorize(n: number): number[] {
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

/**
 * A plan for transforms of length n (any n ≥ 1): factorisation, twiddle table and scratch space.
 * Throws RangeError for a length that is not a positive whole number.
 */
export function createFftPlan(n: number): FftPlan {
  if (!(Number.isInteger(n) && n >= 1)) throw new RangeError(`Expected a transform length that is a whole number ≥ 1, got ${n}.`);
  const factors = factorize(n);
  const cos = new Float64Array(n);
  const sin = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const a = (2 * Math.PI * k) / n;
    cos[k] = Math.cos(a);
    sin[k] = -Math.sin(a); // W_n^k = cos − i·sin(2πk/n)
  }
  const outRe = new Float64Array(n);
  const outIm = new Float64Array(n);
  const maxR = Math.max(1, ...factors);
  const tRe = new Float64Array(maxR);
  const tIm = new Float64Array(maxR);

  // sign = +1 forward, −1 inverse (conjugate twiddles).
  let sign = 1;

  /** Transform of in[inOff + j·stride], j < len, written to out[outOff .. outOff + len). */
  const rec = (inRe: Float64Array, inIm: Float64Array, inOff: number, stride: number, len: number, outOff: number, level: number): void => {
    if (len === 1) {
      outRe[outOff] = inRe[inOff];
      outIm[outOff] = inIm[inOff];
      return;
    }
    const r = factors[level];
    const m = len / r;
    for (let q = 0; q < r; q++) rec(inRe, inIm, inOff + q * stride, stride * r, m, outOff + q * m, level + 1);
    const step = n / len; // W_len^j = W_n^(j·step)
    const stepR = n / r; // W_r^j = W_n^(j·stepR)
    if (r === 2) {
      for (let k = 0; k < m; k++) {
        const a = outOff + k;
        const b = a + m;
        const w = k * step;
        const wr = cos[w], wi = sign * sin[w];
        const xr = outRe[b] * wr - outIm[b] * wi;
        const xi = outRe[b] * wi + outIm[b] * wr;
        const ur = outRe[a], ui = outIm[a];
        outRe[a] = ur + xr; outIm[a] = ui + xi;
        outRe[b] = ur - xr; outIm[b] = ui - xi;
      }
      return;
    }
    if (r === 4) {
      for (let k = 0; k < m; k++) {
        const i0 = outOff + k, i1 = i0 + m, i2 = i1 + m, i3 = i2 + m;
        const w1 = k * step, w2 = 2 * k * step, w3 = 3 * k * step;
        const a0r = outRe[i0], a0i = outIm[i0];
        const c1 = cos[w1], s1 = sign * sin[w1];
        const a1r = outRe[i1] * c1 - outIm[i1] * s1, a1i = outRe[i1] * s1 + outIm[i1] * c1;
        const c2 = cos[w2], s2 = sign * sin[w2];
        const a2r = outRe[i2] * c2 - outIm[i2] * s2, a2i = outRe[i2] * s2 + outIm[i2] * c2;
        const c3 = cos[w3], s3 = sign * sin[w3];
        const a3r = outRe[i3] * c3 - outIm[i3] * s3, a3i = outRe[i3] * s3 + outIm[i3] * c3;
        // W_4 = −i forward (+i inverse): X1 = b0 − i·sign·b1', X3 = b0 + i·sign·b1'.
        const e0r = a0r + a2r, e0i = a0i + a2i;
        const e1r = a0r - a2r, e1i = a0i - a2i;
        const o0r = a1r + a3r, o0i = a1i + a3i;
        const o1r = a1r - a3r, o1i = a1i - a3i;
        outRe[i0] = e0r + o0r; outIm[i0] = e0i + o0i;
        outRe[i2] = e0r - o0r; outIm[i2] = e0i - o0i;
        // −i·sign·(o1r + i·o1i) = sign·o1i − i·sign·o1r
        outRe[i1] = e1r + sign * o1i; outIm[i1] = e1i - sign * o1r;
        outRe[i3] = e1r - sign * o1i; outIm[i3] = e1i + sign * o1r;
      }
      return;
    }
    // General radix r: twiddle, then the r-point sum.
    for (let k = 0; k < m; k++) {
      for (let q = 0; q < r; q++) {
        const idx = outOff + q * m + k;
        const w = (q * k * step) % n;
        const c = cos[w], s = sign * sin[w];
        tRe[q] = outRe[idx] * c - outIm[idx] * s;
        tIm[q] = outRe[idx] * s + outIm[idx] * c;
      }
      for (let s = 0; s < r; s++) {
        let sr = 0, si = 0;
        for (let q = 0; q < r; q++) {
          const w = ((q * s) % r) * stepR;
          const c = cos[w], sn = sign * sin[w];
          sr += tRe[q] * c - tIm[q] * sn;
          si += tRe[q] * sn + tIm[q] * c;
        }
        outRe[outOff + s * m + k] = sr;
        outIm[outOff + s * m + k] = si;
      }
    }
  };

  return {
    n,
    factors,
    transform(re: Float64Array, im: Float64Array, inverse = false): void {
      if (re.length < n || im.length < n) throw new RangeError(`Expected arrays of at least ${n} entries, got ${re.length} and ${im.length}.`);
      sign = inverse ? -1 : 1;
      rec(re, im, 0, 1, n, 0, 0);
      if (inverse) {
        const f = 1 / n;
        for (let j = 0; j < n; j++) {
          re[j] = outRe[j] * f;
          im[j] = outIm[j] * f;
        }
      } else {
        re.set(outRe.subarray(0, n));
        im.set(outIm.subarray(0, n));
      }
    },
  };
}

/** One-shot 1-D transform in place (builds a plan; reuse createFftPlan for repeated lengths). */
export function fft(re: Float64Array, im: Float64Array, inverse = false): void {
  if (re.length !== im.length) throw new RangeError(`Expected re and im of equal length, got ${re.length} and ${im.length}.`);
  createFftPlan(re.length).transform(re, im, inverse);
}

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
  const colRe = new Float64Array(ny);
  const colIm = new Float64Array(ny);
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
        rowRe.set(re.subarray(o, o + nx));
        rowIm.set(im.subarray(o, o + nx));
        rowPlan.transform(rowRe, rowIm, inverse);
        re.set(rowRe, o);
        im.set(rowIm, o);
      }
      for (let i = 0; i < nx; i++) {
        for (let j = 0; j < ny; j++) {
          colRe[j] = re[j * nx + i];
          colIm[j] = im[j * nx + i];
        }
        colPlan.transform(colRe, colIm, inverse);
        for (let j = 0; j < ny; j++) {
          re[j * nx + i] = colRe[j];
          im[j * nx + i] = colIm[j];
        }
      }
    },
  };
}

/** One-shot 2-D transform in place of ny rows × nx columns (row-major). */
export function fft2(re: Float64Array, im: Float64Array, nx: number, ny: number, inverse = false): void {
  createFft2Plan(nx, ny).transform(re, im, inverse);
}
