/**
 * Matérn correlation ρ(h) = 2^(1−ν)/Γ(ν)·(√(2ν)h/ℓ)^ν·K_ν(√(2ν)h/ℓ) (Rasmussen & Williams 2006,
 * eq. 4.14), with the closed forms for ν = ½, 3/2, 5/2 (eq. 4.16–4.17).
 * General ν uses K_ν from ./bessel.ts. Cost: O(1) closed form; O(ν + 30) general.
 */
import { besselK, logGamma } from './bessel.ts';

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
  const z = Math.sqrt(2 * nu) * r;
  if (z > 700) return 0;
  // 2^(1−ν)/Γ(ν)·z^ν·K_ν(z) computed in logs to avoid overflow for large ν.
  const k = besselK(nu, z);
  if (k === 0) return 0;
  const logv = (1 - nu) * Math.LN2 - logGamma(nu) + nu * Math.log(z) + Math.log(k);
  return Math.min(1, Math.exp(logv));
}
