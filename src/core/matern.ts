/**
 * Matérn correlation ρ(h) = 2^(1−ν)/Γ(ν)·z^ν·K_ν(z), z = √(2ν)·h/ℓ (Rasmussen & Williams 2006, eq. 4.14),
 * with the closed forms for ν = ½, 3/2, 5/2 (eq. 4.16–4.17): e^(−z), (1 + z)e^(−z), (1 + z + z²/3)e^(−z).
 * General ν is evaluated in logarithms, ln ρ = (1−ν)ln 2 − lnΓ(ν) + ν ln z + ln K_ν(z), with ln K_ν from
 * ./bessel.ts, so neither the z^ν factor (large ν) nor K_ν (tiny z, where K_ν ~ ½Γ(ν)(2/z)^ν, DLMF
 * 10.30.2) overflows; ρ → 1 as h → 0 and is exactly 1 at h = 0.
 * Units: h and ℓ (scale) in metres; ρ is dimensionless. Cost: O(1) for the closed forms; O(30 + ν) for
 * general ν (one K_ν per value — prefer the closed forms inside fits).
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
