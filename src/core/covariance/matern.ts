/**
 * Matérn correlation ρ(h) = 2^(1−ν)/Γ(ν)·z^ν·K_ν(z), z = √(2ν)·h/ℓ (Rasmussen & Williams 2006, eq. 4.14),
 * with the closed forms for ν = ½, 3/2, 5/2 (eq. 4.16–4.17): e^(−z), (1 + z)e^(−z), (1 + z + z²/3)e^(−z).
 * General ν is evaluated in logarithms, ln ρ = (1−ν)ln 2 − lnΓ(ν) + ν ln z + ln K_ν(z), with ln K_ν from
 * ./bessel.ts, so neither the z^ν factor (large ν) nor K_ν (tiny z, where K_ν ~ ½Γ(ν)(2/z)^ν, DLMF
 * 10.30.2) overflows; ρ → 1 as h → 0 and is exactly 1 at h = 0.
 * For hot loops over many distances, maternTableAtZ(ν) tabulates ρ once per ν (8,193 points, cubic
 * Hermite interpolation in ln z with exact slopes dρ/d ln z = −N·z^(ν+1)·K_(ν−1)(z), DLMF §10.29, from memory):
 * about 30 ns a value instead of one K_ν, within about 1e-13 of the log form in absolute terms (not
 * relative: in the far tail, where ρ < 1e-4, relative errors reach 1e-10).
 * Units: h and ℓ (scale) in metres; ρ is dimensionless. Cost: O(1) for the closed forms; O(30 + ν) for
 * general ν (one K_ν per value — prefer the closed forms inside fits); a table costs 2 × 8,193 K_ν once.
 */
import { logBesselK, logGamma } from './bessel.ts';

/** True when ν has a closed form here (½, 3/2, 5/2). */
export function maternHasClosedForm(nu: number): boolean {
  return nu === 0.5 || nu === 1.5 || nu === 2.5;
}

/** ln of the Matérn normalising constant 2^(1−ν)/Γ(ν); compute once per ν for maternCorrelationAtZ. */
export function maternLogNormaliser(nu: number): number {
  return (1 - nu) * Math.LN2 - logGamma(nu);
}

// Below this z the log form is evaluated at SMALLEST_Z instead (1 − ρ ~ z^(2ν) is far below 1e-16 there
// for any ν ≥ 0.05, and 2/z must stay finite inside K_ν).
const SMALLEST_Z = 1e-300;

/**
 * General-ν Matérn correlation at the scaled distance z = √(2ν)·h/ℓ ≥ 0, by logarithms.
 * `logNormaliser` is maternLogNormaliser(nu). Works for the closed-form orders too (used to test them).
 */
export function maternCorrelationAtZ(z: number, nu: number, logNormaliser: number = maternLogNormaliser(nu)): number {
  if (z === 0) return 1;
  if (!(z > 0)) return NaN;
  const zz = z < SMALLEST_Z ? SMALLEST_Z : z;
  const logRho = logNormaliser + nu * Math.log(zz) + logBesselK(nu, zz);
  // Rounding can put ln ρ a hair above 0 at tiny z; ρ ≤ 1 always.
  return logRho >= 0 ? 1 : Math.exp(logRho);
}

/**
 * Matérn correlation at distance h ≥ 0 for scale ℓ > 0 and smoothness ν > 0 (closed forms for ½, 3/2, 5/2).
 * @param h distance (metres, after any anisotropy scaling)
 * @param scale ℓ, the length in the R&W parameterisation (metres)
 * @param nu smoothness ν > 0
 */
export function maternCorrelation(h: number, scale: number, nu: number): number {
  if (h === 0) return 1;
  const r = h / scale;
  if (nu === 0.5) return Math.exp(-r);
  if (nu === 1.5) {
    const a = Math.sqrt(3) * r;
    return (1 + a) * Math.exp(-a);
  }
  if (nu === 2.5) {
    const a = Math.sqrt(5) * r;
    return (1 + a + (a * a) / 3) * Math.exp(-a);
  }
  return maternCorrelationAtZ(Math.sqrt(2 * nu) * r, nu);
}

/** Table range in z (outside it the log form is evaluated) and its points. */
const TABLE_Z_MIN = 1e-4;
const TABLE_Z_MAX = 60;
const TABLE_POINTS = 8193;
const TABLE_CACHE = 8;
const tables = new Map<number, (z: number) => number>();

/**
 * ρ at the scaled distance z for one ν, from a table: values and slopes at 8,193 points evenly spaced
 * in u = ln z over [ln 10⁻⁴, ln 60], cubic Hermite between them (in u the function is smooth at both
 * ends: 1 − c·z^(2ν) near 0, e^(−z)-like decay at the far end). Outside the range the log form
 * (maternCorrelationAtZ) is used. The last 8 tables are kept, so building one (2 × 8,193 K_ν) is paid
 * once per ν.
 */
export function maternTableAtZ(nu: number): (z: number) => number {
  const cached = tables.get(nu);
  if (cached) return cached;
  const ln = maternLogNormaliser(nu);
  const u0 = Math.log(TABLE_Z_MIN);
  const u1 = Math.log(TABLE_Z_MAX);
  const step = (u1 - u0) / (TABLE_POINTS - 1);
  const inv = 1 / step;
  const value = new Float64Array(TABLE_POINTS);
  const slope = new Float64Array(TABLE_POINTS);
  const order = Math.abs(nu - 1);
  for (let k = 0; k < TABLE_POINTS; k++) {
    const u = u0 + k * step;
    const z = Math.exp(u);
    value[k] = maternCorrelationAtZ(z, nu, ln);
    // dρ/du = z·dρ/dz = −N·z^(ν+1)·K_(ν−1)(z), and K_(ν−1) = K_(1−ν).
    slope[k] = -Math.exp(ln + (nu + 1) * u + logBesselK(order, z));
  }
  const f = (z: number): number => {
    if (!(z >= TABLE_Z_MIN && z < TABLE_Z_MAX)) return maternCorrelationAtZ(z, nu, ln);
    const t = (Math.log(z) - u0) * inv;
    let k = Math.floor(t);
    if (k >= TABLE_POINTS - 1) k = TABLE_POINTS - 2;
    const s = t - k;
    const s2 = s * s;
    const s3 = s2 * s;
    const h00 = 2 * s3 - 3 * s2 + 1;
    const h10 = s3 - 2 * s2 + s;
    const h01 = -2 * s3 + 3 * s2;
    const h11 = s3 - s2;
    return h00 * value[k] + h10 * step * slope[k] + h01 * value[k + 1] + h11 * step * slope[k + 1];
  };
  if (tables.size >= TABLE_CACHE) tables.delete(tables.keys().next().value as number);
  tables.set(nu, f);
  return f;
}
