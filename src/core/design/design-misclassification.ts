/**
 * Misclassification against an action level T under a Gaussian posterior, now and after more samples.
 *
 * Now: a cell with posterior mean m and sd s is on the wrong side of T with probability
 *   p = Φ(−|m − T|/s).
 * After adding sites whose values are not known yet, the variance falls to s'² (known) while the
 * future mean M' is random, M' ~ N(m, σ²) with σ² = s² − s'². The expected future misclassification
 * probability E[Φ(−|M' − T|/s')] has the closed form (derived below; the criterion of Bect et al. 2012,
 * Stat. Comput. 22:773, and Picheny et al. 2010, J. Mech. Des. 132:071008):
 *   with a = m − T, h = a/s, k = a/σ, ρ = −σ/s,
 *   E = Φ₂(−h, k; ρ) + Φ₂(h, −k; ρ) = 2·Φ₂(−h, k; ρ) + Φ(h) − Φ(k).
 * Derivation: write Φ(u) = P(Z' ≤ u) with Z' independent of M' = m + σZ. The first term is
 * P(s'Z' + σZ ≤ −a, −Z < a/σ) and (s'Z' + σZ)/s ~ N(0, 1) has correlation −σ/s with −Z; the second
 * is the mirror image; Φ₂(x, y; ρ) = Φ₂(−x, −y; ρ) + Φ(x) + Φ(y) − 1 joins them.
 * Φ₂ is the bivariate normal distribution function, by Genz's method (Genz 2004, Stat. Comput.
 * 14:251, refining Drezner & Wesolowsky 1990, J. Stat. Comput. Simul. 35:101): Gauss–Legendre
 * quadrature of Sheppard's integral over asin ρ with 12, 24 or 40 points for |ρ| < 0.3, 0.75, 0.925,
 * and for |ρ| ≥ 0.925 an asymptotic expansion plus quadrature of the remainder. Absolute error about
 * 1e-15 (checked against scipy).
 * Units: dimensionless probabilities. Cost: at most about 40 exponentials per Φ₂.
 */
import { normalCdf } from '../shared/normal.ts';

/** Gauss–Legendre nodes and weights on [−1, 1] by Newton's method on P_n (any n ≥ 1). */
function gaussLegendre(n: number): { x: Float64Array; w: Float64Array } {
  const x = new Float64Array(n);
  const w = new Float64Array(n);
  for (let i = 0; i < Math.ceil(n / 2); i++) {
    // Tricomi's first guess for the i-th root, then Newton on the three-term recurrence.
    let z = Math.cos((Math.PI * (i + 0.75)) / (n + 0.5));
    let dp = 0;
    for (let iter = 0; iter < 100; iter++) {
      let p0 = 1;
      let p1 = z;
      for (let k = 2; k <= n; k++) {
        const p2 = ((2 * k - 1) * z * p1 - (k - 1) * p0) / k;
        p0 = p1;
        p1 = p2;
      }
      const pn = n === 1 ? z : p1;
      const pm = n === 1 ? 1 : p0;
      dp = (n * (z * pn - pm)) / (z * z - 1);
      const dz = pn / dp;
      z -= dz;
      if (Math.abs(dz) < 1e-16) break;
    }
    x[i] = -z;
    x[n - 1 - i] = z;
    w[i] = 2 / ((1 - z * z) * dp * dp);
    w[n - 1 - i] = w[i];
  }
  return { x, w };
}

const RULES = [gaussLegendre(12), gaussLegendre(24), gaussLegendre(40)];
const TWO_PI = 2 * Math.PI;
const SQRT_TWO_PI = Math.sqrt(TWO_PI);

/** P(X > h, Y > k) for standard normals with correlation r (Genz's bivariate upper tail). */
function bivariateUpper(h: number, k: number, r: number): number {
  const ar = Math.abs(r);
  const rule = ar < 0.3 ? RULES[0] : ar < 0.75 ? RULES[1] : RULES[2];
  const { x, w } = rule;
  const n = x.length;
  let hk = h * k;
  let bvn = 0;
  if (ar < 0.925) {
    const hs = (h * h + k * k) / 2;
    const asr = Math.asin(r);
    for (let i = 0; i < n; i++) {
      const sn = Math.sin((asr * (x[i] + 1)) / 2);
      bvn += w[i] * Math.exp((sn * hk - hs) / (1 - sn * sn));
    }
    return (bvn * asr) / (2 * TWO_PI) + normalCdf(-h) * normalCdf(-k);
  }
  let kk = k;
  if (r < 0) {
    kk = -k;
    hk = -hk;
  }
  if (ar < 1) {
    const as = (1 - r) * (1 + r);
    let a = Math.sqrt(as);
    const bs = (h - kk) * (h - kk);
    const c = (4 - hk) / 8;
    const d = (12 - hk) / 16;
    bvn = a * Math.exp(-(bs / as + hk) / 2) * (1 - (c * (bs - as) * (1 - (d * bs) / 5)) / 3 + (c * d * as * as) / 5);
    if (hk > -160) {
      const b = Math.sqrt(bs);
      bvn -= Math.exp(-hk / 2) * SQRT_TWO_PI * normalCdf(-b / a) * b * (1 - (c * bs * (1 - (d * bs) / 5)) / 3);
    }
    a /= 2;
    for (let i = 0; i < n; i++) {
      const t = a * (x[i] + 1);
      const xs = t * t;
      const rs = Math.sqrt(1 - xs);
      bvn += a * w[i] * (Math.exp(-bs / (2 * xs) - hk / (1 + rs)) / rs - Math.exp(-(bs / xs + hk) / 2) * (1 + c * xs * (1 + d * xs)));
    }
    bvn = -bvn / TWO_PI;
  }
  if (r > 0) return bvn + normalCdf(-Math.max(h, kk));
  bvn = -bvn;
  if (kk > h) bvn += h < 0 ? normalCdf(kk) - normalCdf(h) : normalCdf(-h) - normalCdf(-kk);
  return bvn;
}

/**
 * Bivariate standard normal distribution function Φ₂(x, y; ρ) = P(X ≤ x, Y ≤ y) with corr(X, Y) = ρ.
 * Infinite limits are allowed; ρ is clamped to [−1, 1]. Absolute error about 1e-15.
 */
export function bivariateNormalCdf(x: number, y: number, rho: number): number {
  if (Number.isNaN(x) || Number.isNaN(y) || Number.isNaN(rho)) return NaN;
  if (x === -Infinity || y === -Infinity) return 0;
  if (x === Infinity) return normalCdf(y);
  if (y === Infinity) return normalCdf(x);
  const r = Math.max(-1, Math.min(1, rho));
  // P(X ≤ x, Y ≤ y) = P(−X > −x, −Y > −y), and (−X, −Y) has the same correlation.
  const p = bivariateUpper(-x, -y, r);
  return Math.min(1, Math.max(0, p));
}

/** Current chance of misclassification Φ(−|m − T|/s) (0 when s = 0 and m ≠ T, ½ at m = T). */
export function misclassificationProbability(mean: number, sd: number, threshold: number): number {
  const a = Math.abs(mean - threshold);
  if (!(sd > 0)) return a > 0 ? 0 : 0.5;
  return normalCdf(-a / sd);
}

/**
 * Expected misclassification probability after new sites lower the variance from sdNow² to
 * sdAfter² (their values not known yet): E[Φ(−|M' − T|/sdAfter)] with M' ~ N(mean, sdNow² − sdAfter²).
 * Equals the current probability when sdAfter = sdNow and falls to 0 as sdAfter → 0.
 */
export function expectedMisclassification(mean: number, sdNow: number, sdAfter: number, threshold: number): number {
  if (!(sdNow > 0)) return misclassificationProbability(mean, sdNow, threshold);
  const after = Math.max(0, Math.min(sdAfter, sdNow));
  const sigma2 = Math.max(0, sdNow * sdNow - after * after);
  // E is even in m − T; with a ≤ 0 every term is a small probability (no 1 − 1 cancellation).
  const a = -Math.abs(mean - threshold);
  if (sigma2 <= 0) return normalCdf(a / sdNow);
  const sigma = Math.sqrt(sigma2);
  const h = a / sdNow;
  if (after === 0) return 0;
  if (a === 0) {
    // k = 0: E = 2·Φ₂(0, 0; ρ) = ½ + asin(ρ)/π with ρ = −σ/s.
    return 0.5 + Math.asin(-sigma / sdNow) / Math.PI;
  }
  const k = a / sigma;
  const rho = -sigma / sdNow;
  const e = 2 * bivariateNormalCdf(-h, k, rho) + normalCdf(h) - normalCdf(k);
  return Math.max(0, Math.min(e, normalCdf(h)));
}
