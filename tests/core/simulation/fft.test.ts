import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { createFftPlan, createFft2Plan, fft, fft2, isFastLength, nextFastLength } from '../../../src/core/simulation/fft.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import { expectClose } from '../../helpers/tolerance.ts';

/** The DFT by its definition X[k] = Σ x[j]·e^(−2πi·jk/n), O(n²), in long-hand complex arithmetic. */
function naiveDft(re: ArrayLike<number>, im: ArrayLike<number>): { re: Float64Array; im: Float64Array } {
  const n = re.length;
  const outRe = new Float64Array(n);
  const outIm = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    let sr = 0, si = 0;
    for (let j = 0; j < n; j++) {
      const a = (-2 * Math.PI * ((j * k) % n)) / n;
      sr += re[j] * Math.cos(a) - im[j] * Math.sin(a);
      si += re[j] * Math.sin(a) + im[j] * Math.cos(a);
    }
    outRe[k] = sr;
    outIm[k] = si;
  }
  return { re: outRe, im: outIm };
}

function randomComplex(n: number, seed: number): { re: Float64Array; im: Float64Array } {
  const r = createRandom(seed);
  const re = new Float64Array(n);
  const im = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    re[j] = r.normal();
    im[j] = r.normal();
  }
  return { re, im };
}

describe('fft', () => {
  it('fft equals the DFT definition for every length 1..64 and some larger mixed and prime lengths', () => {
    // Source: the definition of the discrete Fourier transform (numpy.fft's sign and scaling convention).
    const lengths = [...Array.from({ length: 64 }, (_, i) => i + 1), 96, 100, 120, 125, 128, 135, 150, 243, 97];
    for (const n of lengths) {
      const x = randomComplex(n, 100 + n);
      const want = naiveDft(x.re, x.im);
      const re = Float64Array.from(x.re);
      const im = Float64Array.from(x.im);
      fft(re, im);
      // Round-off grows like log n for the fast transform and like n for the definition: 1e-11 absolute is ample.
      expectClose(re, want.re, { abs: 1e-11 * Math.max(1, n / 16) }, `re n=${n}`);
      expectClose(im, want.im, { abs: 1e-11 * Math.max(1, n / 16) }, `im n=${n}`);
    }
  });

  it('fft of a cosine puts n/2 at ±frequency and nothing elsewhere', () => {
    // Source: DFT of cos(2π f j/n) = (n/2)(δ[k−f] + δ[k+f]) (orthogonality of the roots of unity).
    const n = 60;
    const f = 7;
    const re = Float64Array.from({ length: n }, (_, j) => Math.cos((2 * Math.PI * f * j) / n));
    const im = new Float64Array(n);
    fft(re, im);
    for (let k = 0; k < n; k++) {
      const want = k === f || k === n - f ? n / 2 : 0;
      expectClose(re[k], want, { abs: 1e-12 }, `re[${k}]`);
      expectClose(im[k], 0, { abs: 1e-12 }, `im[${k}]`);
    }
  });

  it('fft inverse undoes the forward transform (property, random lengths and data)', () => {
    fc.assert(fc.property(fc.integer({ min: 1, max: 300 }), fc.integer({ min: 0, max: 1e6 }), (n, seed) => {
      const x = randomComplex(n, seed);
      const re = Float64Array.from(x.re);
      const im = Float64Array.from(x.im);
      const plan = createFftPlan(n);
      plan.transform(re, im);
      plan.transform(re, im, true);
      for (let j = 0; j < n; j++) {
        if (Math.abs(re[j] - x.re[j]) > 1e-12 * Math.max(1, n / 8) || Math.abs(im[j] - x.im[j]) > 1e-12 * Math.max(1, n / 8)) return false;
      }
      return true;
    }), { numRuns: 60 });
  });

  it('fft keeps Parseval: Σ|x|² = Σ|X|²/n', () => {
    // Source: Parseval's theorem for the unnormalised DFT.
    const n = 360;
    const x = randomComplex(n, 5);
    let e0 = 0;
    for (let j = 0; j < n; j++) e0 += x.re[j] ** 2 + x.im[j] ** 2;
    fft(x.re, x.im);
    let e1 = 0;
    for (let j = 0; j < n; j++) e1 += x.re[j] ** 2 + x.im[j] ** 2;
    expectClose(e1 / n, e0, { rel: 1e-13 });
  });

  it('createFftPlan rejects a length that is not a positive whole number', () => {
    expect(() => createFftPlan(0)).toThrow(/whole number/);
    expect(() => createFftPlan(2.5)).toThrow(/whole number/);
  });
});

describe('fft2', () => {
  it('fft2 equals the 2-D DFT definition (rows × columns of different lengths)', () => {
    // Source: X[l, k] = Σ_j Σ_i x[j, i]·e^(−2πi(jl/ny + ik/nx)), computed directly.
    const nx = 12;
    const ny = 9;
    const x = randomComplex(nx * ny, 42);
    const wantRe = new Float64Array(nx * ny);
    const wantIm = new Float64Array(nx * ny);
    for (let l = 0; l < ny; l++) {
      for (let k = 0; k < nx; k++) {
        let sr = 0, si = 0;
        for (let j = 0; j < ny; j++) {
          for (let i = 0; i < nx; i++) {
            const a = -2 * Math.PI * ((j * l) / ny + (i * k) / nx);
            const vr = x.re[j * nx + i], vi = x.im[j * nx + i];
            sr += vr * Math.cos(a) - vi * Math.sin(a);
            si += vr * Math.sin(a) + vi * Math.cos(a);
          }
        }
        wantRe[l * nx + k] = sr;
        wantIm[l * nx + k] = si;
      }
    }
    const re = Float64Array.from(x.re);
    const im = Float64Array.from(x.im);
    fft2(re, im, nx, ny);
    expectClose(re, wantRe, { abs: 1e-10 }, 're');
    expectClose(im, wantIm, { abs: 1e-10 }, 'im');
    createFft2Plan(nx, ny).transform(re, im, true);
    expectClose(re, x.re, { abs: 1e-12 }, 'roundtrip re');
    expectClose(im, x.im, { abs: 1e-12 }, 'roundtrip im');
  });

  it('fft2 of a real even array is real (the fact circulant embedding relies on)', () => {
    // Source: the DFT of a real sequence with x[−j] = x[j] (indices mod n) is real and even.
    const nx = 10, ny = 8;
    const re = new Float64Array(nx * ny);
    const im = new Float64Array(nx * ny);
    for (let j = 0; j < ny; j++) {
      for (let i = 0; i < nx; i++) {
        const a = Math.min(i, nx - i), b = Math.min(j, ny - j);
        re[j * nx + i] = Math.exp(-(a * a + 2 * b * b) / 9);
      }
    }
    fft2(re, im, nx, ny);
    for (let k = 0; k < nx * ny; k++) expect(Math.abs(im[k])).toBeLessThan(1e-13);
  });
});

describe('nextFastLength', () => {
  it('nextFastLength returns the smallest 2^a·3^b·5^c at or above n', () => {
    expect(nextFastLength(1)).toBe(1);
    expect(nextFastLength(7)).toBe(8);
    expect(nextFastLength(401)).toBe(405);
    expect(nextFastLength(412)).toBe(432);
    expect(nextFastLength(1025)).toBe(1080);
    expect(isFastLength(97)).toBe(false);
    expect(isFastLength(3600)).toBe(true);
  });
});
