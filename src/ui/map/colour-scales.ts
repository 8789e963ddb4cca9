/**
 * Gapwise's own colour scales, designed in OKLCH (Ottosson 2020, "A perceptual color space for image
 * processing": OKLab, with L lightness, C chroma, h hue angle).
 *
 * Each scale is a short list of OKLCH stops interpolated piecewise-linearly in L, C and h, then
 * brought into the sRGB gamut by lowering chroma only (L and h kept), so lightness follows the stops
 * exactly:
 * - 'loam'  (mean): sequential; lightness rises from a deep plum-slate through brick and ochre to a
 *   pale straw, so higher values are lighter and warmer.
 * - 'haze'  (sd): sequential; from a deep ink blue to a pale fog: the more uncertain, the more washed out.
 * - 'tide'  (P(exceed)): diverging around 0.5; blue below, orange above, a light neutral grey at 0.5
 *   (where exceeding and not exceeding are equally likely); both arms have the same lightness profile.
 * Lightness differences carry the order, and the arms of 'tide' differ along the blue–yellow axis,
 * which the common red–green colour-vision deficiencies keep (checked in the tests with the
 * Machado, Oliveira & Fernandes 2009 simulation).
 */

export type ScaleName = 'loam' | 'haze' | 'tide';
export type Rgb = [number, number, number];

export interface OklchStop {
  /** Position on the scale, 0..1. */
  t: number;
  /** OKLab lightness, 0..1. */
  L: number;
  /** OKLCH chroma (before gamut mapping). */
  C: number;
  /** Hue angle, degrees; may exceed 360 to set the direction of travel. */
  h: number;
}

export interface ScaleSpec {
  name: ScaleName;
  kind: 'sequential' | 'diverging';
  /** What the scale is meant for, for a picker's tooltip. */
  purpose: string;
  stops: OklchStop[];
}

/** A scale from its stops written as [t, L, C, h] rows. */
function scale(name: ScaleName, kind: ScaleSpec['kind'], purpose: string, rows: readonly (readonly [number, number, number, number])[]): ScaleSpec {
  return { name, kind, purpose, stops: rows.map(([t, L, C, h]) => ({ t, L, C, h })) };
}

export const SCALES: Readonly<Record<ScaleName, ScaleSpec>> = {
  loam: scale('loam', 'sequential', 'Estimated value (mean): darker is lower, lighter and warmer is higher.', [
    [0, 0.26, 0.06, 290],
    [0.25, 0.42, 0.1, 340],
    [0.5, 0.58, 0.13, 393],
    [0.75, 0.75, 0.13, 432],
    [1, 0.93, 0.1, 458],
  ]),
  haze: scale('haze', 'sequential', 'Uncertainty (sd): deep ink where the map is sure, pale fog where it is not.', [
    [0, 0.3, 0.1, 268],
    [0.5, 0.62, 0.075, 232],
    [1, 0.965, 0.015, 195],
  ]),
  tide: scale('tide', 'diverging', 'Chance of exceeding the threshold: blue unlikely, orange likely, pale at even odds.', [
    [0, 0.5, 0.13, 258],
    [0.25, 0.73, 0.085, 250],
    // Two stops at 0.5, both grey: each arm fades to neutral in its own hue instead of turning
    // through green on the way from blue to orange.
    [0.5, 0.96, 0, 245],
    [0.5, 0.96, 0, 70],
    [0.75, 0.73, 0.11, 62],
    [1, 0.5, 0.14, 45],
  ]),
};

export const SCALE_NAMES: readonly ScaleName[] = ['loam', 'haze', 'tide'];

// --- colour space conversions (Ottosson 2020; matrices as published there) -----------------------

/** OKLab [L, a, b] → linear sRGB [r, g, b] (not clamped). */
export function oklabToLinearSrgb(L: number, a: number, b: number): Rgb {
  const l_ = L + 0.3963377774 * a + 0.2158037573 * b;
  const m_ = L - 0.1055613458 * a - 0.0638541728 * b;
  const s_ = L - 0.0894841775 * a - 1.291485548 * b;
  const l = l_ * l_ * l_, m = m_ * m_ * m_, s = s_ * s_ * s_;
  return [
    4.0767416621 * l - 3.3077115913 * m + 0.2309699292 * s,
    -1.2684380046 * l + 2.6097574011 * m - 0.3413193965 * s,
    -0.0041960863 * l - 0.7034186147 * m + 1.707614701 * s,
  ];
}

/** Linear sRGB [r, g, b] → OKLab [L, a, b]. */
export function linearSrgbToOklab(r: number, g: number, b: number): [number, number, number] {
  const l = Math.cbrt(0.4122214708 * r + 0.5363325363 * g + 0.0514459929 * b);
  const m = Math.cbrt(0.2119034982 * r + 0.6806995451 * g + 0.1073969566 * b);
  const s = Math.cbrt(0.0883024619 * r + 0.2817188376 * g + 0.6299787005 * b);
  return [
    0.2104542553 * l + 0.793617785 * m - 0.0040720468 * s,
    1.9779984951 * l - 2.428592205 * m + 0.4505937099 * s,
    0.0259040371 * l + 0.7827717662 * m - 0.808675766 * s,
  ];
}

/** sRGB transfer function (IEC 61966-2-1): encoded 0..1 → linear 0..1. */
function srgbToLinear(v: number): number {
  return v <= 0.04045 ? v / 12.92 : ((v + 0.055) / 1.055) ** 2.4;
}

/** Linear 0..1 → encoded 0..1. */
function linearToSrgb(v: number): number {
  return v <= 0.0031308 ? 12.92 * v : 1.055 * v ** (1 / 2.4) - 0.055;
}

/** 8-bit sRGB → OKLab. */
export function rgbToOklab(rgb: Rgb): [number, number, number] {
  return linearSrgbToOklab(srgbToLinear(rgb[0] / 255), srgbToLinear(rgb[1] / 255), srgbToLinear(rgb[2] / 255));
}

function inGamut(c: Rgb, eps = 1e-9): boolean {
  return c[0] >= -eps && c[0] <= 1 + eps && c[1] >= -eps && c[1] <= 1 + eps && c[2] >= -eps && c[2] <= 1 + eps;
}

function lchToLinear(L: number, C: number, h: number): Rgb {
  const rad = (h * Math.PI) / 180;
  return oklabToLinearSrgb(L, C * Math.cos(rad), C * Math.sin(rad));
}

/** The scale's stop-interpolated OKLCH at t (clamped to 0..1), before gamut mapping. */
export function designedOklch(scale: ScaleName, t: number): { L: number; C: number; h: number } {
  const stops = SCALES[scale].stops;
  const u = Math.min(1, Math.max(0, Number.isFinite(t) ? t : 0));
  let k = 0;
  // A repeated t (a hue switch) is never the chosen segment, so b.t > a.t below.
  while (k < stops.length - 2 && u > stops[k + 1].t) k++;
  const a = stops[k], b = stops[k + 1];
  const f = b.t > a.t ? (u - a.t) / (b.t - a.t) : 1;
  return { L: a.L + f * (b.L - a.L), C: a.C + f * (b.C - a.C), h: a.h + f * (b.h - a.h) };
}

/**
 * OKLCH at t after gamut mapping: chroma is lowered (bisection, 30 steps) until the colour fits in
 * sRGB; lightness and hue stay as designed.
 */
export function oklchAt(scale: ScaleName, t: number): { L: number; C: number; h: number } {
  const d = designedOklch(scale, t);
  if (inGamut(lchToLinear(d.L, d.C, d.h))) return d;
  let lo = 0, hi = d.C;
  for (let k = 0; k < 30; k++) {
    const mid = 0.5 * (lo + hi);
    if (inGamut(lchToLinear(d.L, mid, d.h))) lo = mid;
    else hi = mid;
  }
  return { L: d.L, C: lo, h: d.h };
}

function to8bit(v: number): number {
  return Math.round(255 * linearToSrgb(Math.min(1, Math.max(0, v))));
}

/** 8-bit sRGB colour of the scale at t ∈ [0, 1] (t is clamped; NaN gives t = 0). */
export function colourAt(scale: ScaleName, t: number): Rgb {
  const c = oklchAt(scale, t);
  const lin = lchToLinear(c.L, c.C, c.h);
  return [to8bit(lin[0]), to8bit(lin[1]), to8bit(lin[2])];
}

/** '#rrggbb' of an 8-bit colour. */
export function hex(rgb: Rgb): string {
  return '#' + rgb.map((v) => v.toString(16).padStart(2, '0')).join('');
}

/**
 * Lookup table of `size` RGBA entries (entry k is the scale at t = k/(size − 1), alpha 255), for
 * drawing: index = round(t·(size − 1)).
 */
export function buildLut(scale: ScaleName, size = 256): Uint8ClampedArray {
  if (!Number.isInteger(size) || size < 2) throw new RangeError(`Expected a lookup table of at least 2 entries, got ${size}.`);
  const lut = new Uint8ClampedArray(size * 4);
  for (let k = 0; k < size; k++) {
    const [r, g, b] = colourAt(scale, k / (size - 1));
    lut[4 * k] = r;
    lut[4 * k + 1] = g;
    lut[4 * k + 2] = b;
    lut[4 * k + 3] = 255;
  }
  return lut;
}

/** Position of a value on a domain [min, max] as t ∈ [0, 1] (clamped); NaN for NaN or an empty domain. */
export function scalePosition(value: number, domain: readonly [number, number]): number {
  const [a, b] = domain;
  if (!Number.isFinite(value) || !(b > a)) return b === a && Number.isFinite(value) ? 0.5 : NaN;
  return Math.min(1, Math.max(0, (value - a) / (b - a)));
}

/**
 * Class of a value when the domain [min, max] is cut into `steps` equal classes: 0..steps−1
 * (values outside the domain go to the end classes); −1 for NaN.
 */
export function classify(value: number, domain: readonly [number, number], steps: number): number {
  if (!Number.isInteger(steps) || steps < 1) throw new RangeError(`Expected at least 1 class, got ${steps}.`);
  const t = scalePosition(value, domain);
  if (Number.isNaN(t)) return -1;
  return Math.min(steps - 1, Math.floor(t * steps));
}

/** Colours of `steps` equal classes: class k takes the scale at its middle, t = (k + ½)/steps. */
export function classColours(scale: ScaleName, steps: number): Rgb[] {
  return Array.from({ length: steps }, (_, k) => colourAt(scale, (k + 0.5) / steps));
}

// --- colour-vision deficiency simulation --------------------------------------------------------

/**
 * Machado, Oliveira & Fernandes (2009), "A physiologically-based model for simulation of color
 * vision deficiency", IEEE TVCG 15(6):1291–1298, Table 2, severity 1.0; applied to linear RGB.
 */
const CVD_MATRICES = {
  protanopia: [
    [0.152286, 1.052583, -0.204868],
    [0.114503, 0.786281, 0.099216],
    [-0.003882, -0.048116, 1.051998],
  ],
  deuteranopia: [
    [0.367322, 0.860646, -0.227968],
    [0.280085, 0.672501, 0.047413],
    [-0.01182, 0.04294, 0.968881],
  ],
  tritanopia: [
    [1.255528, -0.076749, -0.178779],
    [-0.078411, 0.930809, 0.147602],
    [0.004733, 0.691367, 0.3039],
  ],
} as const;

export type Deficiency = keyof typeof CVD_MATRICES;

/** How an 8-bit colour looks with the given deficiency (severity 1), as an 8-bit colour. */
export function simulateDeficiency(rgb: Rgb, deficiency: Deficiency): Rgb {
  const m = CVD_MATRICES[deficiency];
  const lin = [srgbToLinear(rgb[0] / 255), srgbToLinear(rgb[1] / 255), srgbToLinear(rgb[2] / 255)];
  const out = m.map((row) => row[0] * lin[0] + row[1] * lin[1] + row[2] * lin[2]);
  return [to8bit(out[0]), to8bit(out[1]), to8bit(out[2])];
}

/** Euclidean distance in OKLab between two 8-bit colours (ΔE_OK; about 0.02 is just noticeable). */
export function deltaE(a: Rgb, b: Rgb): number {
  const p = rgbToOklab(a), q = rgbToOklab(b);
  return Math.hypot(p[0] - q[0], p[1] - q[1], p[2] - q[2]);
}
