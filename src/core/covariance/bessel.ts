/**
 * Modified Bessel function of the second kind K_ν(x) for real ν and x > 0, and the gamma function.
 *
 * Method (Temme 1975, J. Comput. Phys. 19:324; the arrangement of Numerical Recipes §6.7): write
 * ν = μ + k with |μ| ≤ ½ and k a whole number. For x ≤ 2, Temme's series gives K_μ and K_{μ+1}:
 *   f₀ = (μπ/sin μπ)·[Γ₁(μ)·cosh σ + Γ₂(μ)·(sinh σ/σ)·ln(2/x)],  σ = μ·ln(2/x),
 *   p₀ = ½(x/2)^(−μ)Γ(1+μ),  q₀ = ½(x/2)^μ Γ(1−μ),
 *   f_j = (j f_{j−1} + p_{j−1} + q_{j−1})/(j² − μ²),  p_j = p_{j−1}/(j − μ),  q_j = q_{j−1}/(j + μ),
 *   K_μ = Σ c_j f_j,  K_{μ+1} = (2/x)·Σ c_j (p_j − j f_j),  c_j = (x²/4)^j / j!,
 * with Γ₁(μ) = [1/Γ(1−μ) − 1/Γ(1+μ)]/(2μ) (→ −γ as μ → 0) and Γ₂(μ) = [1/Γ(1−μ) + 1/Γ(1+μ)]/2, both
 * taken from the power series of 1/Γ(1+z) so that μ → 0 loses nothing to cancellation.
 * For x > 2, Steed's continued fraction CF2 (with Thompson & Barnett's sum for the normalisation) gives
 * eˣK_μ and eˣK_{μ+1}. Then the upward recurrence K_{μ+j+1} = (2(μ+j)/x)·K_{μ+j} + K_{μ+j−1}, which is
 * stable for K, with rescaling so that large ν at tiny x does not overflow (logBesselK).
 * Gamma: 1/Γ(1+z) power series on |z| ≤ ½ (coefficients of A&S 6.1.34, recomputed to 22 digits with
 * mpmath), the recurrence Γ(x+1) = xΓ(x), and Stirling's series with Bernoulli numbers for x ≥ 10.
 * Units: dimensionless. Accuracy: about 1e-15 relative for Γ and lnΓ, a few 1e-15 for K_ν (checked
 * against scipy.special in tests/core/covariance/bessel.test.ts). Cost: O(30 + ν) flops for K_ν; O(1) for Γ.
 */

/** Coefficients a_k of 1/Γ(1+z) = Σ a_k z^k (A&S 6.1.34 shifted by one), computed with mpmath at 40 digits. */
const RECIP_GAMMA_1P = [
  1.0,
  0.5772156649015328606065,
  -0.655878071520253881077,
  -0.042002635034095235529,
  0.1665386113822914895017,
  -0.04219773455554433674821,
  -0.009621971527876973562115,
  0.007218943246663099542395,
  -0.001165167591859065112114,
  -0.0002152416741149509728157,
  0.0001280502823881161861532,
  -0.00002013485478078823865569,
  -0.000001250493482142670657345,
  0.000001133027231981695882374,
  -2.05633841697760710345e-7,
  6.116095104481415817862e-9,
  5.002007644469222930056e-9,
  -1.181274570487020144588e-9,
  1.043426711691100510492e-10,
  7.78226343990507125405e-12,
  -3.696805618642205708188e-12,
  5.100370287454475979015e-13,
  -2.058326053566506783222e-14,
  -5.34812253942301798237e-15,
  1.226778628238260790159e-15,
  -1.181259301697458769514e-16,
  1.18669225475160033258e-18,
  1.412380655318031781556e-18,
  -2.298745684435370206592e-19,
  1.714406321927337433384e-20,
];

/** Euler–Mascheroni constant γ. */
export const EULER_GAMMA = 0.5772156649015329;

const HALF_LOG_2PI = 0.9189385332046728; // ½ ln(2π)
const EPS = 1e-16;

/** 1/Γ(1+z) − 1 for |z| ≤ ½, without cancellation near z = 0. */
function recipGamma1pMinus1(z: number): number {
  let s = 0;
  for (let k = RECIP_GAMMA_1P.length - 1; k >= 1; k--) s = s * z + RECIP_GAMMA_1P[k];
  return s * z;
}

/**
 * Γ₁(μ) = [1/Γ(1−μ) − 1/Γ(1+μ)]/(2μ) = −Σ a_{2k+1} μ^{2k} and Γ₂(μ) = [1/Γ(1−μ) + 1/Γ(1+μ)]/2 =
 * Σ a_{2k} μ^{2k}, for |μ| ≤ ½ (even and odd parts of the series of 1/Γ(1+z)).
 */
function temmeGammas(mu: number): { gam1: number; gam2: number; recipGammaPlus: number; recipGammaMinus: number } {
  const m2 = mu * mu;
  let odd = 0;
  let even = 0;
  const last = RECIP_GAMMA_1P.length - 1;
  for (let k = last; k >= 0; k--) {
    if (k % 2 === 1) odd = odd * m2 + RECIP_GAMMA_1P[k];
    else even = even * m2 + RECIP_GAMMA_1P[k];
  }
  // 1/Γ(1+μ) = even + μ·odd,  1/Γ(1−μ) = even − μ·odd.
  return { gam1: -odd, gam2: even, recipGammaPlus: even + mu * odd, recipGammaMinus: even - mu * odd };
}

// Stirling's series ln Γ(x) = (x−½)ln x − x + ½ln 2π + Σ B_{2k}/(2k(2k−1)x^{2k−1}), B_2..B_16.
const STIRLING = [
  1 / 6 / 2, -1 / 30 / 12, 1 / 42 / 30, -1 / 30 / 56, 5 / 66 / 90, -691 / 2730 / 132, 7 / 6 / 182, -3617 / 510 / 240,
];

function stirlingLogGamma(x: number): number {
  const r = 1 / x;
  const r2 = r * r;
  let s = 0;
  for (let k = STIRLING.length - 1; k >= 0; k--) s = s * r2 + STIRLING[k];
  return (x - 0.5) * Math.log(x) - x + HALF_LOG_2PI + s * r;
}

/**
 * Γ(x) for real x (poles at 0, −1, −2, ... give NaN). Relative accuracy about 1e-15 for 0 < x < 171.
 */
export function gamma(x: number): number {
  if (Number.isNaN(x)) return NaN;
  if (x === Infinity) return Infinity;
  if (x <= 0 && Number.isInteger(x)) return NaN;
  if (x < 0.5) {
    // Reflection Γ(x)Γ(1−x) = π / sin(πx).
    return Math.PI / (Math.sin(Math.PI * x) * gamma(1 - x));
  }
  if (x <= 1.5) return 1 / (1 + recipGamma1pMinus1(x - 1));
  if (x < 20) {
    let y = x;
    let p = 1;
    while (y > 1.5) {
      y -= 1;
      p *= y;
    }
    return p / (1 + recipGamma1pMinus1(y - 1));
  }
  if (x > 171.7) return Infinity;
  // Γ(x) = √(2π)·x^(x−½)·e^(−x)·e^(series), with x^(x−½) split in two halves so that neither
  // overflows and no large logarithm is exponentiated (which would cost ~x·1e-16 in accuracy).
  const r = 1 / x;
  const r2 = r * r;
  let s = 0;
  for (let k = STIRLING.length - 1; k >= 0; k--) s = s * r2 + STIRLING[k];
  const half = Math.pow(x, 0.5 * (x - 0.5));
  return Math.sqrt(2 * Math.PI) * half * (half * Math.exp(-x)) * Math.exp(s * r);
}

/**
 * ln|Γ(x)| for real x (poles give Infinity). Absolute accuracy about 1e-15; relative accuracy near the
 * zeros at x = 1 and x = 2 is kept by series that avoid cancellation.
 */
export function logGamma(x: number): number {
  if (Number.isNaN(x)) return NaN;
  if (x === Infinity) return Infinity;
  if (x <= 0 && Number.isInteger(x)) return Infinity;
  if (x < 0.5) return Math.log(Math.PI / Math.abs(Math.sin(Math.PI * x))) - logGamma(1 - x);
  if (x <= 1.5) return 0 - Math.log1p(recipGamma1pMinus1(x - 1)); // 0 − … keeps lnΓ(1) = +0
  if (x <= 2.5) return Math.log1p(x - 2) - Math.log1p(recipGamma1pMinus1(x - 2));
  if (x < 10) return Math.log(gamma(x));
  return stirlingLogGamma(x);
}

/**
 * K_μ(x), K_{μ+1}(x) for |μ| ≤ ½: Temme's series (x ≤ 2, returned unscaled) or Steed's CF2 (x > 2,
 * returned multiplied by eˣ). Writes into `out` [kmu, kmu1].
 */
function besselKMu(mu: number, x: number, out: Float64Array): void {
  if (x <= 2) {
    const x2 = 0.5 * x;
    const pimu = Math.PI * mu;
    const fact = Math.abs(pimu) < 1e-8 ? 1 + (pimu * pimu) / 6 : pimu / Math.sin(pimu);
    const d = -Math.log(x2);
    const sigma = mu * d;
    const fact2 = Math.abs(sigma) < 1e-8 ? 1 + (sigma * sigma) / 6 : Math.sinh(sigma) / sigma;
    const g = temmeGammas(mu);
    let ff = fact * (g.gam1 * Math.cosh(sigma) + g.gam2 * fact2 * d);
    let sum = ff;
    const es = Math.exp(sigma);
    let p = (0.5 * es) / g.recipGammaPlus;
    let q = 0.5 / (es * g.recipGammaMinus);
    let c = 1;
    const dd = x2 * x2;
    let sum1 = p;
    for (let i = 1; i < 500; i++) {
      ff = (i * ff + p + q) / (i * i - mu * mu);
      c *= dd / i;
      p /= i - mu;
      q /= i + mu;
      const del = c * ff;
      sum += del;
      sum1 += c * (p - i * ff);
      if (Math.abs(del) < Math.abs(sum) * EPS) break;
    }
    out[0] = sum;
    out[1] = sum1 * (2 / x);
    return;
  }
  // Steed's algorithm for CF2 with the Thompson–Barnett sum; everything here is scaled by eˣ.
  let b = 2 * (1 + x);
  let d = 1 / b;
  let delh = d;
  let h = d;
  let q1 = 0;
  let q2 = 1;
  const a1 = 0.25 - mu * mu;
  let q = a1;
  let c = a1;
  let a = -a1;
  let s = 1 + q * delh;
  for (let i = 2; i < 100000; i++) {
    a -= 2 * (i - 1);
    c = (-a * c) / i;
    const qnew = (q1 - b * q2) / a;
    q1 = q2;
    q2 = qnew;
    q += c * qnew;
    b += 2;
    d = 1 / (b + a * d);
    delh = (b * d - 1) * delh;
    h += delh;
    const dels = q * delh;
    s += dels;
    if (Math.abs(dels / s) < EPS) break;
  }
  h *= a1;
  const kmu = Math.sqrt(Math.PI / (2 * x)) / s;
  out[0] = kmu;
  out[1] = (kmu * (mu + x + 0.5 - h)) / x;
}

const pair = new Float64Array(2);
const RESCALE_AT = 1e250;
const LOG_RESCALE = Math.log(RESCALE_AT);

/**
 * K_ν(x) = value · exp(logFactor). value carries the mantissa; logFactor collects −x (for x > 2) and
 * any rescaling done in the recurrence. Shared by the three public variants.
 */
function besselKParts(nu: number, x: number): { value: number; logFactor: number } {
  const n = Math.floor(nu + 0.5);
  const mu = nu - n;
  besselKMu(mu, x, pair);
  let km = pair[0];
  let k1 = pair[1];
  let logFactor = x > 2 ? -x : 0;
  const twoOverX = 2 / x;
  for (let i = 1; i <= n; i++) {
    const next = (mu + i) * twoOverX * k1 + km;
    km = k1;
    k1 = next;
    if (k1 > RESCALE_AT) {
      k1 /= RESCALE_AT;
      km /= RESCALE_AT;
      logFactor += LOG_RESCALE;
    }
  }
  return { value: km, logFactor };
}

function checkArgs(nu: number, x: number): number | undefined {
  if (Number.isNaN(nu) || Number.isNaN(x) || x < 0) return NaN;
  if (!Number.isFinite(nu)) return NaN;
  return undefined;
}

/**
 * Modified Bessel function of the second kind K_ν(x), for real ν (K_{−ν} = K_ν) and x > 0.
 * Returns Infinity at x = 0, 0 where it underflows (x ≳ 700), NaN for x < 0.
 */
export function besselK(nu: number, x: number): number {
  const bad = checkArgs(nu, x);
  if (bad !== undefined) return bad;
  if (x === 0) return Infinity;
  if (x === Infinity) return 0;
  const { value, logFactor } = besselKParts(Math.abs(nu), x);
  if (logFactor === 0) return value;
  if (x > 2 && logFactor === -x) return value * Math.exp(-x);
  return Math.exp(Math.log(value) + logFactor);
}

/**
 * Exponentially scaled K: eˣ·K_ν(x), finite for large x (where K_ν itself underflows).
 */
export function besselKScaled(nu: number, x: number): number {
  const bad = checkArgs(nu, x);
  if (bad !== undefined) return bad;
  if (x === 0) return Infinity;
  if (x === Infinity) return 0;
  const { value, logFactor } = besselKParts(Math.abs(nu), x);
  const rest = logFactor + x; // what is left once eˣ is applied
  if (x > 2 && logFactor === -x) return value;
  if (logFactor === 0) return value * Math.exp(x);
  return Math.exp(Math.log(value) + rest);
}

/**
 * ln K_ν(x), finite where K_ν(x) overflows (large ν, tiny x) or underflows (large x).
 */
export function logBesselK(nu: number, x: number): number {
  const bad = checkArgs(nu, x);
  if (bad !== undefined) return bad;
  if (x === 0) return Infinity;
  if (x === Infinity) return -Infinity;
  const { value, logFactor } = besselKParts(Math.abs(nu), x);
  return Math.log(value) + logFactor;
}
