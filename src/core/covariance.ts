/**
 * Covariance functions of the model contract, evaluated on typed arrays.
 *
 * C(h) = Σ sill_k · ρ_k(h); the nugget contributes only on the diagonal of a sample covariance
 * matrix (measurement error), never to cross-covariances (predictions are of the noise-free surface).
 * Geometric anisotropy rotates the separation into the long/short axes and divides the short
 * component by the ratio. Matérn: ρ(h) = 2^(1−ν)/Γ(ν)·(√(2ν)h/ℓ)^ν·K_ν(√(2ν)h/ℓ), closed forms for
 * ν = ½, 3/2, 5/2 (Rasmussen & Williams 2006, eq. 4.14–4.17).
 * Units: h and scale in metres; covariance in data units squared. Cost O(n²) for a matrix.
 */
import type { CovarianceModel, CorrelatedStructure, Anisotropy } from './model.ts';
import { maternCorrelation } from './matern.ts';

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

/** Transforms a separation (dx east, dy north) into an effective isotropic distance. */
export function effectiveDistance(dx: number, dy: number, anisotropy?: Anisotropy): number {
  if (!anisotropy || anisotropy.ratio === 1) return Math.hypot(dx, dy);
  const a = (anisotropy.azimuth * Math.PI) / 180;
  // Unit vector of the long axis, clockwise from north: (sin a, cos a).
  const along = dx * Math.sin(a) + dy * Math.cos(a);
  const across = dx * Math.cos(a) - dy * Math.sin(a);
  return Math.hypot(along, across / anisotropy.ratio);
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

/**
 * Covariance matrix K (n×n, row-major Float64Array) of the samples: surface covariance plus the
 * nugget on the diagonal. Coordinates should be centred by the caller.
 */
export function sampleCovarianceMatrix(model: CovarianceModel, x: ArrayLike<number>, y: ArrayLike<number>): Float64Array {
  const n = x.length;
  const K = new Float64Array(n * n);
  const c0 = surfaceVariance(model);
  let nugget = 0;
  for (const s of model.structures) if (s.type === 'nugget') nugget += s.sill;
  for (let i = 0; i < n; i++) {
    K[i * n + i] = c0 + nugget;
    for (let j = 0; j < i; j++) {
      const c = surfaceCovariance(model, effectiveDistance(x[i] - x[j], y[i] - y[j], model.anisotropy));
      K[i * n + j] = c;
      K[j * n + i] = c;
    }
  }
  return K;
}

/**
 * Cross-covariance (m×n, row-major) between m targets and n samples, noise-free.
 */
export function crossCovarianceMatrix(
  model: CovarianceModel,
  tx: ArrayLike<number>, ty: ArrayLike<number>,
  x: ArrayLike<number>, y: ArrayLike<number>,
): Float64Array {
  const m = tx.length;
  const n = x.length;
  const out = new Float64Array(m * n);
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < n; j++) {
      out[i * n + j] = surfaceCovariance(model, effectiveDistance(tx[i] - x[j], ty[i] - y[j], model.anisotropy));
    }
  }
  return out;
}

/**
 * Practical range: the distance (along the long axis) where the surface correlation falls to 5 %.
 * Found by bisection on the summed structures; Infinity when there is no correlated structure.
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
