/**
 * Covariance functions of the model contract, evaluated on typed arrays.
 *
 * C(h) = Σ sill_k · ρ_k(h); the nugget contributes only on the diagonal of a sample covariance
 * matrix (measurement error), never to cross-covariances (predictions are of the noise-free surface).
 * Families: exponential e^(−h/ℓ); gaussian e^(−h²/2ℓ²); spherical 1 − 1.5(h/ℓ) + 0.5(h/ℓ)³ for h < ℓ;
 * Matérn ρ(h) = 2^(1−ν)/Γ(ν)·z^ν·K_ν(z), z = √(2ν)h/ℓ, with closed forms for ν = ½, 3/2, 5/2
 * (Rasmussen & Williams 2006, eq. 4.14–4.17; see ./matern.ts).
 * Geometric anisotropy: the long axis points `azimuth` degrees clockwise from grid north; a separation is
 * split into its components along and across that axis, and the across component is divided by
 * `ratio` (short/long), so `scale` is the length along the long axis. For matrices the points are
 * mapped once into these stretched coordinates (O(n)) and isotropic distances are taken there.
 * Matrices are filled a row at a time: distances into a scratch row, then one tight loop per structure
 * (the family is chosen once per row, not per entry).
 * Units: coordinates, h and scale in metres; covariance in data units squared. Cost: O(n²) kernel
 * evaluations for an n×n matrix (one exp per entry for the closed forms, one K_ν for general ν).
 */
import type { CovarianceModel, CorrelatedStructure, Anisotropy, Family } from './model.ts';
import { maternCorrelation, maternCorrelationAtZ, maternLogNormaliser, maternTableAtZ } from './matern.ts';

/** Rows of at least this many distances use the tabulated general-ν Matérn (building a table costs ~2 × 8,193 K_ν). */
const TABLE_FROM = 256;

/** Correlation of one structure at (already anisotropy-scaled) distance h ≥ 0. */
export function correlation(s: CorrelatedStructure, h: number): number {
  const r = h / s.scale;
  switch (s.type) {
    case 'exponential':
      return Math.exp(-r);
    case 'gaussian':
      return Math.exp(-0.5 * r * r);
    case 'spherical':
      return r < 1 ? 1 - 1.5 * r + 0.5 * r * r * r : 0;
    case 'matern':
      return maternCorrelation(h, s.scale, s.nu ?? 1.5);
  }
}

/**
 * The rotation and stretch of a geometric anisotropy, worked out once: the long axis points along
 * (sin a, cos a) in (east, north), a = azimuth clockwise from grid north. A separation (dx, dy) maps to
 * u = dx·sin a + dy·cos a (along the long axis) and v = (dx·cos a − dy·sin a)·inverseRatio (across
 * it, stretched), where plain distance is the model's effective distance. `null` when isotropic
 * (no anisotropy, or ratio 1). The one place the rotation is written: every module that needs
 * isotropic coordinates goes through this frame or the functions below.
 */
export interface AnisotropyFrame {
  sin: number;
  cos: number;
  /** 1 / ratio. */
  inverseRatio: number;
}

/** The frame of an anisotropy (see AnisotropyFrame), or null for an isotropic model. */
export function anisotropyFrame(anisotropy?: Anisotropy): AnisotropyFrame | null {
  if (!anisotropy || anisotropy.ratio === 1) return null;
  const a = (anisotropy.azimuth * Math.PI) / 180;
  return { sin: Math.sin(a), cos: Math.cos(a), inverseRatio: 1 / anisotropy.ratio };
}

/** Component of a separation along the long axis (metres). */
export function alongAxis(frame: AnisotropyFrame, dx: number, dy: number): number {
  return dx * frame.sin + dy * frame.cos;
}

/** Component of a separation across the long axis, stretched by 1/ratio (metres). */
export function acrossAxis(frame: AnisotropyFrame, dx: number, dy: number): number {
  return (dx * frame.cos - dy * frame.sin) * frame.inverseRatio;
}

/** The inverse of (alongAxis, acrossAxis): the separation (dx east, dy north) of a point (u, v) in stretched coordinates. */
export function fromStretched(frame: AnisotropyFrame, u: number, v: number): { dx: number; dy: number } {
  const w = v / frame.inverseRatio;
  return { dx: u * frame.sin + w * frame.cos, dy: u * frame.cos - w * frame.sin };
}

/** Transforms a separation (dx east, dy north) into an effective isotropic distance. */
export function effectiveDistance(dx: number, dy: number, anisotropy?: Anisotropy): number {
  const f = anisotropyFrame(anisotropy);
  if (!f) return Math.hypot(dx, dy);
  return Math.hypot(alongAxis(f, dx, dy), acrossAxis(f, dx, dy));
}

/**
 * Maps points into the stretched coordinates in which the anisotropic model is isotropic:
 * u = along the long axis, v = across it divided by the ratio, after subtracting (cx, cy) (default 0).
 * Euclidean distances between mapped points equal effectiveDistance of the separations. Without
 * anisotropy (or ratio 1) returns centred copies. Useful for neighbour searches that must agree with
 * the covariance.
 */
export function toIsotropicCoordinates(
  anisotropy: Anisotropy | undefined, x: ArrayLike<number>, y: ArrayLike<number>, cx = 0, cy = 0,
): { u: Float64Array; v: Float64Array } {
  const n = x.length;
  const u = new Float64Array(n);
  const v = new Float64Array(n);
  const f = anisotropyFrame(anisotropy);
  for (let i = 0; i < n; i++) {
    const dx = x[i] - cx;
    const dy = y[i] - cy;
    u[i] = f ? alongAxis(f, dx, dy) : dx;
    v[i] = f ? acrossAxis(f, dx, dy) : dy;
  }
  return { u, v };
}

/** Covariance of the noise-free surface at effective distance h (no nugget). */
export function surfaceCovariance(model: CovarianceModel, h: number): number {
  let c = 0;
  for (const s of model.structures) if (s.type !== 'nugget') c += s.sill * correlation(s, h);
  return c;
}

/** Prior variance of the noise-free surface (sum of non-nugget sills). */
export function surfaceVariance(model: CovarianceModel): number {
  let c = 0;
  for (const s of model.structures) if (s.type !== 'nugget') c += s.sill;
  return c;
}

// Family codes of a compiled structure (plain numbers so the switch in addStructure stays cheap).
const Kind = { Exponential: 0, Gaussian: 1, Spherical: 2, Matern32: 3, Matern52: 4, MaternGeneral: 5 } as const;
type Kind = (typeof Kind)[keyof typeof Kind];

interface CompiledStructure {
  kind: Kind;
  sill: number;
  /** Multiplier taking a distance to the family's argument (1/ℓ, √3/ℓ, √5/ℓ, √(2ν)/ℓ; 1/(2ℓ²) on h²). */
  factor: number;
  nu: number;
  logNormaliser: number;
  /** General-ν Matérn: use the tabulated ρ on every row, however short (set by the caller's `tabulate`). */
  tabulate?: boolean;
}

interface CompiledModel {
  structures: CompiledStructure[];
  nugget: number;
  variance: number;
  /** Whether any structure needs h (all but the gaussian work on h²). */
  needsDistance: boolean;
}

function compile(model: CovarianceModel, tabulate = false): CompiledModel {
  const structures: CompiledStructure[] = [];
  let nugget = 0;
  let variance = 0;
  let needsDistance = false;
  for (const s of model.structures) {
    if (s.type === 'nugget') {
      nugget += s.sill;
      continue;
    }
    variance += s.sill;
    if (s.sill === 0) continue;
    const inv = 1 / s.scale;
    let c: CompiledStructure;
    if (s.type === 'exponential') c = { kind: Kind.Exponential, sill: s.sill, factor: inv, nu: 0.5, logNormaliser: 0 };
    else if (s.type === 'gaussian') c = { kind: Kind.Gaussian, sill: s.sill, factor: 0.5 * inv * inv, nu: Infinity, logNormaliser: 0 };
    else if (s.type === 'spherical') c = { kind: Kind.Spherical, sill: s.sill, factor: inv, nu: 0, logNormaliser: 0 };
    else {
      const nu = s.nu ?? 1.5;
      if (nu === 0.5) c = { kind: Kind.Exponential, sill: s.sill, factor: inv, nu, logNormaliser: 0 };
      else if (nu === 1.5) c = { kind: Kind.Matern32, sill: s.sill, factor: Math.sqrt(3) * inv, nu, logNormaliser: 0 };
      else if (nu === 2.5) c = { kind: Kind.Matern52, sill: s.sill, factor: Math.sqrt(5) * inv, nu, logNormaliser: 0 };
      else c = { kind: Kind.MaternGeneral, sill: s.sill, factor: Math.sqrt(2 * nu) * inv, nu, logNormaliser: maternLogNormaliser(nu), tabulate };
    }
    if (c.kind !== Kind.Gaussian) needsDistance = true;
    structures.push(c);
  }
  return { structures, nugget, variance, needsDistance };
}

/**
 * out[o + j] += C_s(h_j) for j < count, one family per call. `d` holds distances, `d2` squared
 * distances (only the gaussian reads d2; only the others read d).
 */
function addStructure(s: CompiledStructure, d: Float64Array, d2: Float64Array, count: number, out: Float64Array, o: number): void {
  const sill = s.sill;
  const f = s.factor;
  switch (s.kind) {
    case Kind.Exponential:
      for (let j = 0; j < count; j++) out[o + j] += sill * Math.exp(-f * d[j]);
      return;
    case Kind.Gaussian:
      for (let j = 0; j < count; j++) out[o + j] += sill * Math.exp(-f * d2[j]);
      return;
    case Kind.Spherical:
      for (let j = 0; j < count; j++) {
        const r = f * d[j];
        if (r < 1) out[o + j] += sill * (1 - r * (1.5 - 0.5 * r * r));
      }
      return;
    case Kind.Matern32:
      for (let j = 0; j < count; j++) {
        const a = f * d[j];
        out[o + j] += sill * (1 + a) * Math.exp(-a);
      }
      return;
    case Kind.Matern52:
      for (let j = 0; j < count; j++) {
        const a = f * d[j];
        out[o + j] += sill * (1 + a + (a * a) / 3) * Math.exp(-a);
      }
      return;
    case Kind.MaternGeneral: {
      const nu = s.nu;
      if (count >= TABLE_FROM || s.tabulate) {
        // Long rows: the tabulated ρ (./matern.ts; within about 1e-13, 10–30× faster than one K_ν each).
        const table = maternTableAtZ(nu);
        for (let j = 0; j < count; j++) {
          const z = f * d[j];
          out[o + j] += sill * (z === 0 ? 1 : table(z));
        }
        return;
      }
      const ln = s.logNormaliser;
      for (let j = 0; j < count; j++) out[o + j] += sill * maternCorrelationAtZ(f * d[j], nu, ln);
      return;
    }
  }
}

/** Scratch rows reused across calls (grown on demand). */
let scratchD = new Float64Array(0);
let scratchD2 = new Float64Array(0);
function scratch(n: number): void {
  if (scratchD.length < n) {
    scratchD = new Float64Array(n);
    scratchD2 = new Float64Array(n);
  }
}

/**
 * Fills out[o .. o+count) with the noise-free covariance between point (pu, pv) and mapped points
 * (u[j], v[j]), j < count. Overwrites.
 */
function covarianceRow(cm: CompiledModel, pu: number, pv: number, u: Float64Array, v: Float64Array, count: number,
  out: Float64Array, o: number): void {
  const d = scratchD;
  const d2 = scratchD2;
  for (let j = 0; j < count; j++) {
    const du = pu - u[j];
    const dv = pv - v[j];
    d2[j] = du * du + dv * dv;
  }
  if (cm.needsDistance) for (let j = 0; j < count; j++) d[j] = Math.sqrt(d2[j]);
  out.fill(0, o, o + count);
  for (const s of cm.structures) addStructure(s, d, d2, count, out, o);
}

/**
 * Covariance matrix K (n×n, row-major Float64Array) of the samples: surface covariance plus the
 * nugget on the diagonal only (coincident samples get the surface variance off the diagonal).
 * Exactly symmetric. Coordinates should be centred by the caller.
 */
export function sampleCovarianceMatrix(model: CovarianceModel, x: ArrayLike<number>, y: ArrayLike<number>): Float64Array {
  const n = x.length;
  if (y.length !== n) throw new Error(`Expected as many y as x coordinates (${n}), got ${y.length}.`);
  const K = new Float64Array(n * n);
  sampleCovarianceLowerInto(model, x, y, K);
  // Mirror the lower triangle into the upper one, in tiles so both sides stay in cache.
  const T = 32;
  for (let bi = 0; bi < n; bi += T) {
    const ie = Math.min(bi + T, n);
    for (let bj = 0; bj <= bi; bj += T) {
      const je = Math.min(bj + T, n);
      for (let i = bi; i < ie; i++) {
        const row = i * n;
        const jEnd = Math.min(je, i);
        for (let j = bj; j < jEnd; j++) K[j * n + i] = K[row + j];
      }
    }
  }
  return K;
}

/**
 * Fills the lower triangle and the diagonal of `out` (n×n row-major, length at least n²) with the
 * samples' covariance matrix as sampleCovarianceMatrix gives it; the strict upper triangle is left as
 * it was. For code that factorises in place many times (a Cholesky factor reads the lower triangle
 * only), so no matrix is allocated per call. `tabulate` takes a general-ν Matérn from its table
 * (./matern.ts, within about 1e-13) on every row, not only on long ones: for repeated fills with one
 * ν, where the table is built once and each fill would otherwise cost one K_ν per pair.
 */
export function sampleCovarianceLowerInto(
  model: CovarianceModel, x: ArrayLike<number>, y: ArrayLike<number>, out: Float64Array, options: { tabulate?: boolean } = {},
): Float64Array {
  const n = x.length;
  if (y.length !== n) throw new Error(`Expected as many y as x coordinates (${n}), got ${y.length}.`);
  if (out.length < n * n) throw new Error(`Expected an output buffer of at least ${n}×${n} = ${n * n} entries, got ${out.length}.`);
  const cm = compile(model, options.tabulate);
  const { u, v } = toIsotropicCoordinates(model.anisotropy, x, y);
  scratch(n);
  for (let i = 0; i < n; i++) {
    covarianceRow(cm, u[i], v[i], u, v, i, out, i * n);
    out[i * n + i] = cm.variance + cm.nugget;
  }
  return out;
}

/**
 * Writes the noise-free cross-covariances between m targets (tx, ty) and n samples (x, y) into
 * `out` (m×n row-major, overwritten; length at least m·n) and returns it. For streaming a grid a
 * block of rows at a time into a reused buffer.
 */
export function crossCovarianceInto(
  model: CovarianceModel,
  tx: ArrayLike<number>, ty: ArrayLike<number>,
  x: ArrayLike<number>, y: ArrayLike<number>,
  out: Float64Array,
): Float64Array {
  const m = tx.length;
  const n = x.length;
  if (ty.length !== m || y.length !== n) {
    throw new Error(`Expected matching coordinate lengths: tx ${m}, ty ${ty.length}, x ${n}, y ${y.length}.`);
  }
  if (out.length < m * n) throw new Error(`Expected an output buffer of at least ${m}×${n} = ${m * n} entries, got ${out.length}.`);
  const cm = compile(model);
  const s = toIsotropicCoordinates(model.anisotropy, x, y);
  const t = toIsotropicCoordinates(model.anisotropy, tx, ty);
  scratch(n);
  for (let i = 0; i < m; i++) covarianceRow(cm, t.u[i], t.v[i], s.u, s.v, n, out, i * n);
  return out;
}

/**
 * Cross-covariance (m×n, row-major) between m targets and n samples, noise-free.
 */
export function crossCovarianceMatrix(
  model: CovarianceModel,
  tx: ArrayLike<number>, ty: ArrayLike<number>,
  x: ArrayLike<number>, y: ArrayLike<number>,
): Float64Array {
  return crossCovarianceInto(model, tx, ty, x, y, new Float64Array(tx.length * x.length));
}

/**
 * Practical range: the distance (along the long axis) where the surface correlation falls to 5 %.
 * Found by bisection on the summed structures; 0 when there is no correlated structure.
 */
export function practicalRange(model: CovarianceModel): number {
  const c0 = surfaceVariance(model);
  if (c0 <= 0) return 0;
  let hi = 1;
  for (const s of model.structures) if (s.type !== 'nugget') hi = Math.max(hi, s.scale);
  while (surfaceCovariance(model, hi) > 0.05 * c0) hi *= 2;
  let lo = 0;
  for (let k = 0; k < 200 && hi - lo > 1e-12 * hi; k++) {
    const mid = 0.5 * (lo + hi);
    if (surfaceCovariance(model, mid) > 0.05 * c0) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

/**
 * Correlation ρ(h) of one family as a closure with its constants folded in (the hot loops call it
 * n·m²/2 times per evaluation). Same formulas as `correlation` above.
 */
export function correlationFunction(family: Family, scale: number, nu = 1.5): (h: number) => number {
  const inv = 1 / scale;
  switch (family) {
    case 'exponential':
      return (h) => Math.exp(-h * inv);
    case 'gaussian': {
      const c = 0.5 * inv * inv;
      return (h) => Math.exp(-c * h * h);
    }
    case 'spherical':
      return (h) => {
        const r = h * inv;
        return r < 1 ? 1 - 1.5 * r + 0.5 * r * r * r : 0;
      };
    case 'matern': {
      if (nu === 0.5) return (h) => Math.exp(-h * inv);
      if (nu === 1.5) {
        const c = Math.sqrt(3) * inv;
        return (h) => {
          const a = c * h;
          return (1 + a) * Math.exp(-a);
        };
      }
      if (nu === 2.5) {
        const c = Math.sqrt(5) * inv;
        return (h) => {
          const a = c * h;
          return (1 + a + (a * a) / 3) * Math.exp(-a);
        };
      }
      // General ν: the tabulated form (./matern.ts, within about 1e-13 of the log form, 10–30× faster).
      const table = maternTableAtZ(nu);
      const c = Math.sqrt(2 * nu) * inv;
      return (h) => (h === 0 ? 1 : table(c * h));
    }
  }
}

/**
 * Covariance of the noise-free surface as a function of effective distance, specialised for the
 * common one-structure model (saves the loop over structures in hot code).
 */
export function covarianceFunction(model: CovarianceModel): (h: number) => number {
  const correlated = model.structures.filter((s) => s.type !== 'nugget');
  if (correlated.length === 1) {
    const s = correlated[0] as Exclude<typeof correlated[0], { type: 'nugget' }>;
    const sill = s.sill;
    const rho = correlationFunction(s.type, s.scale, s.nu ?? 1.5);
    return (h: number) => sill * rho(h);
  }
  return (h: number) => surfaceCovariance(model, h);
}
