/**
 * PLACEHOLDER — to be replaced by Temme's series + Steed's CF2 (owned by the numerics helper).
 * Modified Bessel function of the second kind K_ν(x) by numerical integration of
 * K_ν(x) = ∫₀^∞ exp(−x cosh t) cosh(νt) dt.
 */
export function besselK(nu: number, x: number): number {
  const T = Math.acosh(Math.max(1, 750 / x)) + 10;
  const steps = 4000;
  const dt = T / steps;
  let s = 0.5 * Math.exp(-x);
  for (let i = 1; i <= steps; i++) {
    const t = i * dt;
    s += Math.exp(-x * Math.cosh(t)) * Math.cosh(nu * t);
  }
  return s * dt;
}

/** ln Γ(x), Lanczos approximation (g = 7, n = 9). */
export function logGamma(x: number): number {
  const c = [0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313,
    -176.61502916214059, 12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7];
  if (x < 0.5) return Math.log(Math.PI / Math.abs(Math.sin(Math.PI * x))) - logGamma(1 - x);
  x -= 1;
  let a = c[0];
  const t = x + 7.5;
  for (let i = 1; i < 9; i++) a += c[i] / (x + i);
  return 0.5 * Math.log(2 * Math.PI) + (x + 0.5) * Math.log(t) - t + Math.log(a);
}
