/**
 * Colours for the report's maps and legends, computed from a lookup table (LUT) passed in: the io
 * layer does not import the app's colour code, so the app hands its LUTs over, and the defaults here
 * are copies of the app's scales (loam for the mean, haze for the sd, tide for P(exceed)) sampled at
 * 64 points as hex RGB. tests/io/report.test.ts checks these copies against the app's scales, so
 * they cannot drift apart silently.
 * A value maps to t = (value − min)/(max − min) clamped to [0, 1], then to the LUT by linear
 * interpolation between its two nearest entries (sRGB, per channel).
 */

/** RGB(A) entries, 3 or 4 numbers each (0–255), at least 2 entries. */
export interface Lut {
  data: ArrayLike<number>;
  /** 3 (RGB) or 4 (RGBA: alpha is ignored). */
  channels: 3 | 4;
}

export type ReportScale = 'mean' | 'sd' | 'pExceed';

function fromHex(hex: string): Lut {
  const data = new Uint8Array(hex.length / 2);
  for (let k = 0; k < data.length; k++) data[k] = parseInt(hex.slice(2 * k, 2 * k + 2), 16);
  return { data, channels: 3 };
}

/** The app's scales sampled at 64 points (entry k at t = k/63), RGB hex. */
export const DEFAULT_LUT_HEX: Readonly<Record<ReportScale, string>> = {
  mean:
    '241e3f2820422c214531234835244b3a264d3e2750432852482a544d2b56522d58572e5a5c2f5b61315c66325d6c345e'
    + '71355e76375e7b385e813a5d863c5d8b3e5c90405b9542599a44589e4756a34954a84c52ac4e50b0514db4544ab85847'
    + 'bc5b45bf5f44c26343c56843c86c42cb7041ce7541d07941d37d40d58240d78740d98b41db9041dd9542de9944e09e45'
    + 'e2a349e3a84ee5ac53e6b158e8b65eeabb63ebbf68edc46deec973f0ce78f1d27ef3d784f5db89f6e08ff8e595f9e99a',
  sd:
    '19285f1a2b621b2f641c32671d356a1e386c1f3b6f203f71224274234576244879264b7b284f7e2952802b55832d5885'
    + '2f5c87315f8a33628c35658f376991396c933c6f963e729840769a43799d467c9f4880a14b83a44e86a65089a8538dab'
    + '5790ad5b94af5f97b1639ab3689eb56ca1b770a5b975a8bb79abbd7eafbf82b2c187b5c38cb9c690bcc895bfca9ac3cc'
    + '9fc6cfa3c9d1a8cdd3add0d6b2d3d8b7d6dbbcdaddc1dde0c6e0e3cbe3e5d0e7e8d5eaebdaedeedff0f0e4f4f3e9f7f6',
  pExceed:
    '2f62ac3467af386bb23d70b54275b8477abb4c7ebe5183c15688c45b8cc76091ca6596cd6a9bd0709fd375a4d67aa9d9'
    + '80addc87b2dd8eb6df95bbe09dbfe2a4c4e3abc8e5b2cde6bad1e8c1d5e9c8daead0deecd7e3eddfe7eee6ebf0eeeff1'
    + 'f1efedefe9e3eee4daecded0ebd9c7e9d3bde8ceb4e6c8aae5c2a1e3bc98e2b78ee0b185deab7bdda572db9f68da995e'
    + 'd79358d38e52d0894dcc8348c97e43c5793ec27339be6e34bb682fb7632ab35e25b0581fac531aa84d14a5480da14206',
};

/** Default LUTs for the report's three maps. */
export function defaultLuts(): Record<ReportScale, Lut> {
  return { mean: fromHex(DEFAULT_LUT_HEX.mean), sd: fromHex(DEFAULT_LUT_HEX.sd), pExceed: fromHex(DEFAULT_LUT_HEX.pExceed) };
}

/** A LUT from the app's RGBA Uint8ClampedArray (e.g. buildLut(scale, 256)). */
export function lutFromRgba(rgba: ArrayLike<number>): Lut {
  return { data: rgba, channels: 4 };
}

function entries(lut: Lut): number {
  const n = Math.floor(lut.data.length / lut.channels);
  if (n < 2) throw new RangeError(`Expected a colour table of at least 2 entries, got ${n}.`);
  return n;
}

/** Position of a value on [min, max] as t in [0, 1] (clamped); NaN for NaN or an empty domain. */
function scaleT(value: number, domain: readonly [number, number]): number {
  const [a, b] = domain;
  if (Number.isNaN(value) || !Number.isFinite(a) || !Number.isFinite(b)) return NaN;
  if (b === a) return 0.5;
  const t = (value - a) / (b - a);
  return t < 0 ? 0 : t > 1 ? 1 : t;
}

/** The colour at t in [0, 1] (linear between neighbouring entries), as [r, g, b] 0–255 integers. */
export function colourAtT(lut: Lut, t: number): [number, number, number] {
  const n = entries(lut);
  const c = lut.channels;
  const f = Math.min(1, Math.max(0, t)) * (n - 1);
  const k = Math.min(n - 2, Math.floor(f));
  const w = f - k;
  const out: [number, number, number] = [0, 0, 0];
  for (let ch = 0; ch < 3; ch++) out[ch] = Math.round(lut.data[k * c + ch] * (1 - w) + lut.data[(k + 1) * c + ch] * w);
  return out;
}

/** '#rrggbb'. */
export function hexColour(rgb: readonly number[]): string {
  return `#${rgb.slice(0, 3).map((v) => Math.round(v).toString(16).padStart(2, '0')).join('')}`;
}

/** A palette of `size` colours evenly spaced along the LUT (size·3 bytes, RGB). */
export function paletteFromLut(lut: Lut, size = 255): Uint8Array {
  const out = new Uint8Array(size * 3);
  for (let k = 0; k < size; k++) out.set(colourAtT(lut, size === 1 ? 0 : k / (size - 1)), 3 * k);
  return out;
}

/**
 * Palette indices of values for an image: 0 = no value (NaN or masked out), 1..levels = colour
 * round(t·(levels − 1)) + 1 of a palette of `levels` colours.
 */
export function paletteIndices(values: ArrayLike<number>, domain: readonly [number, number], levels = 255): Uint8Array {
  const out = new Uint8Array(values.length);
  for (let k = 0; k < values.length; k++) {
    const t = scaleT(values[k], domain);
    out[k] = Number.isNaN(t) ? 0 : 1 + Math.round(t * (levels - 1));
  }
  return out;
}
