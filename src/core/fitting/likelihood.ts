/**
 * Gaussian log-likelihood of a covariance model, ML or REML, with the sill profiled out.
 *
 * Model: y = Xβ + e, Cov(e) = σ²·R(θ), R = ρ(h; scale, ν) + η·I, where η = nugget / partial sill
 * and ρ is the correlation of the family (covariance.ts). With Q = (y − Xβ̂)ᵀR⁻¹(y − Xβ̂) at the
 * generalised-least-squares β̂, REML (Patterson & Thompson 1971, Biometrika 58:545; Harville 1977,
 * JASA 72:320) profiles σ̂² = Q/(n−p) and gives
 *   ℓ*(θ) = −½[(n−p)(ln σ̂² + 1 + ln 2π) + ln|R| + ln|XᵀR⁻¹X|];
 * ML drops the last term and uses n for n−p. A known mean m gives p = 0 and residuals y − m.
 * X holds 1 (constant trend) or 1, x, y (linear trend) with x, y centred on the sample centroid
 * (metres): β is reported in those centred coordinates, and ln|XᵀR⁻¹X| depends on that choice.
 * A covariate trend adds the encoded covariate columns (samples.covariates) in their own units, each
 * centred on its sample mean (a change of basis of determinant 1, so ln|XᵀR⁻¹X| is that of the raw
 * columns; β of a covariate is per unit of it).
 * Computed via one Cholesky factor R = LLᵀ (never an inverse): ỹ = L⁻¹y, X̃ = L⁻¹X, Q = |ỹ − X̃β̂|².
 * Units: distances and scale in metres, σ² in data units squared. Cost per evaluation: n²/2
 * correlations, n³/3 flops for the factor, (p + 1)·n² for the solves; memory 8n² bytes for R plus
 * 4n² bytes of packed distances, allocated once per `createLikelihood`.
 */
import type { Anisotropy, CovarianceModel, Family, Trend } from '../covariance/model.ts';
import { isKnownTrend } from '../covariance/model.ts';
import { covariateColumnCount, hasCoordinateDrift, trendColumnCount, checkCovariateRows } from '../covariance/trend.ts';
import type { Samples } from '../shared/samples.ts';
import { centroid } from '../shared/samples.ts';
import { choleskyInPlace, solveLowerInPlace } from '../linalg/linalg.ts';
import { correlation, effectiveDistance, sampleCovarianceLowerInto } from '../covariance/covariance.ts';

export type LikelihoodMethod = 'reml' | 'ml';

/** Range searched for a free Matérn smoothness ν. */
export const NU_BOUNDS = { lower: 0.2, upper: 5 } as const;

/** What stays fixed while θ varies. Plain data. */
export interface LikelihoodSetup {
  family: Family;
  /** Matérn smoothness when it is fixed; default 1.5. A `nu` in the parameters overrides it. */
  nu?: number;
  trend: Trend;
  anisotropy?: Anisotropy;
  /** Default 'reml'. */
  method?: LikelihoodMethod;
}

/** The correlation parameters θ the sill is profiled over. */
export interface CorrelationParameters {
  /** Metres (the range for the spherical family). */
  scale: number;
  /** η = nugget / partial sill, ≥ 0. */
  nuggetRatio: number;
  /** Matérn smoothness; only when it is being estimated. */
  nu?: number;
}

export interface LikelihoodValue {
  /** ℓ*(θ) (profiled) or ℓ(σ², θ) (when a sill was given); −∞ when R could not be factorised. */
  logLikelihood: number;
  /** The profiled σ̂² = Q/(n−p) (REML) or Q/n (ML): the partial sill, data units squared. */
  sigma2: number;
  /** GLS trend coefficients, in centred coordinates (constant, then x, y per metre). */
  beta: number[];
  /** ln|R|. */
  logDetR: number;
  /** ln|XᵀR⁻¹X| (0 when p = 0). */
  logDetInformation: number;
  /** Q = (y − Xβ̂)ᵀR⁻¹(y − Xβ̂). */
  quadraticForm: number;
  /** Amount added to R's diagonal to factorise it (only when `allowJitter`); 0 otherwise. */
  jitter: number;
}

export interface Likelihood {
  readonly n: number;
  /** Number of trend coefficients (0 known mean, 1 constant, 3 linear, 1 (+2) + q with covariates). */
  readonly p: number;
  readonly method: LikelihoodMethod;
  /** Sample centroid subtracted from the coordinates (metres). */
  readonly centre: { cx: number; cy: number };
  /** Largest distance between two samples (effective distance under the anisotropy), metres. */
  readonly maxDistance: number;
  /**
   * ℓ at θ. With `sigma2` the sill is not profiled: the full (restricted) log-likelihood at that σ².
   * `allowJitter` adds up to 1e-6 to R's diagonal when it cannot be factorised (reported in `jitter`).
   */
  evaluate(theta: CorrelationParameters, options?: { sigma2?: number; allowJitter?: boolean }): LikelihoodValue;
}

const LN_2PI = Math.log(2 * Math.PI);

/**
 * The correlation model at θ for likelihoods whose parameters go beyond one structure's (a fitted
 * anisotropy, nested structures): a model with partial sills summing to 1 and the nugget η, in the
 * units of CorrelationParameters. θ may carry the caller's extra fields.
 */
export type CorrelationModelAt = (theta: CorrelationParameters) => CovarianceModel;

/** Coordinates centred on the sample centroid and the packed pairwise (effective) distances. */
interface PairGeometry {
  cx: number;
  cy: number;
  xs: Float64Array;
  ys: Float64Array;
  /** Packed strict lower triangle, row by row: pair (i, j), j < i, at i(i−1)/2 + j. */
  dist: Float64Array;
  maxDistance: number;
}

function pairGeometry(samples: Samples, anisotropy?: Anisotropy): PairGeometry {
  const n = samples.value.length;
  const { cx, cy } = centroid(samples.x, samples.y);
  const xs = new Float64Array(n);
  const ys = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    xs[i] = samples.x[i] - cx;
    ys[i] = samples.y[i] - cy;
  }
  const dist = new Float64Array((n * (n - 1)) / 2);
  let maxDistance = 0;
  for (let i = 1, k = 0; i < n; i++) {
    for (let j = 0; j < i; j++, k++) {
      const h = effectiveDistance(xs[i] - xs[j], ys[i] - ys[j], anisotropy);
      dist[k] = h;
      if (h > maxDistance) maxDistance = h;
    }
  }
  return { cx, cy, xs, ys, dist, maxDistance };
}

/** The values less a known mean (y0) and the trend's columns of X: 1, centred x and y, centred covariates. */
function trendDesign(samples: Samples, trend: Trend, xs: Float64Array, ys: Float64Array): { y0: Float64Array; columns: Float64Array[] } {
  const n = samples.value.length;
  const known = isKnownTrend(trend);
  const p = trendColumnCount(trend);
  const y0 = new Float64Array(n);
  for (let i = 0; i < n; i++) y0[i] = known ? samples.value[i] - trend.known : samples.value[i];
  const columns: Float64Array[] = [];
  if (p >= 1) columns.push(new Float64Array(n).fill(1));
  if (hasCoordinateDrift(trend)) columns.push(Float64Array.from(xs), Float64Array.from(ys));
  const q = covariateColumnCount(trend);
  if (q > 0) {
    checkCovariateRows(trend, n, samples.covariates, 'sample');
    const c = samples.covariates!;
    for (let k = 0; k < q; k++) {
      const col = new Float64Array(n);
      let mean = 0;
      for (let i = 0; i < n; i++) mean += c[i * q + k];
      mean /= n;
      for (let i = 0; i < n; i++) col[i] = c[i * q + k] - mean;
      columns.push(col);
    }
  }
  return { y0, columns };
}

/** Writes R(θ) (+ extraDiagonal on the diagonal) into the lower triangle of the n×n work matrix. */
type CorrelationFill = (theta: CorrelationParameters, extraDiagonal: number) => void;

/**
 * The fill of setup's one family from the packed distances. Only the lower triangle is filled:
 * choleskyInPlace reads no more. The closed forms are inlined (the same formulas as covariance.ts
 * `correlation`, about 3× faster than a call per pair).
 */
function familyFill(setup: LikelihoodSetup, dist: Float64Array, n: number, R: Float64Array): CorrelationFill {
  return (theta, extraDiagonal) => {
    const nu = theta.nu ?? setup.nu ?? 1.5;
    const family = setup.family;
    const diag = 1 + theta.nuggetRatio + extraDiagonal;
    const inv = 1 / theta.scale;
    const kind = family === 'matern' ? (nu === 0.5 ? 'exponential' : nu === 1.5 ? 'm32' : nu === 2.5 ? 'm52' : 'general') : family;
    const s = { type: family, sill: 1, scale: theta.scale, nu };
    for (let i = 0, k = 0; i < n; i++) {
      const row = i * n;
      switch (kind) {
        case 'exponential':
          for (let j = 0; j < i; j++, k++) R[row + j] = Math.exp(-dist[k] * inv);
          break;
        case 'm32': {
          const a = Math.sqrt(3) * inv;
          for (let j = 0; j < i; j++, k++) {
            const z = a * dist[k];
            R[row + j] = (1 + z) * Math.exp(-z);
          }
          break;
        }
        case 'm52': {
          const a = Math.sqrt(5) * inv;
          for (let j = 0; j < i; j++, k++) {
            const z = a * dist[k];
            R[row + j] = (1 + z + (z * z) / 3) * Math.exp(-z);
          }
          break;
        }
        case 'gaussian':
          for (let j = 0; j < i; j++, k++) {
            const r = dist[k] * inv;
            R[row + j] = Math.exp(-0.5 * r * r);
          }
          break;
        case 'spherical':
          for (let j = 0; j < i; j++, k++) {
            const r = dist[k] * inv;
            R[row + j] = r < 1 ? 1 - 1.5 * r + 0.5 * r * r * r : 0;
          }
          break;
        default:
          for (let j = 0; j < i; j++, k++) R[row + j] = correlation(s, dist[k]);
      }
      R[row + i] = diag;
    }
  };
}

/**
 * The fill of a richer correlation model (covariance.ts). A fixed ν (none in θ) is the same for every
 * evaluation: the general-ν Matérn then comes from its table (built once), not from one K_ν per
 * pair; a ν searched over changes at every evaluation.
 */
function modelFill(correlationAt: CorrelationModelAt, xs: Float64Array, ys: Float64Array, n: number, R: Float64Array): CorrelationFill {
  return (theta, extraDiagonal) => {
    sampleCovarianceLowerInto(correlationAt(theta), xs, ys, R, { tabulate: theta.nu === undefined });
    if (extraDiagonal !== 0) for (let i = 0; i < n; i++) R[i * n + i] += extraDiagonal;
  };
}

/**
 * Fills and factorises R = LLᵀ in place; with `allowJitter`, when it cannot be factorised, adds 1e-10,
 * 1e-9, … up to 1e-6 to its diagonal until it can. Returns whether it was factorised and what was added.
 */
function factorCorrelation(fill: CorrelationFill, R: Float64Array, n: number, theta: CorrelationParameters, allowJitter?: boolean): { ok: boolean; jitter: number } {
  let jitter = 0;
  fill(theta, 0);
  let ok = choleskyInPlace(R, n);
  if (!ok && allowJitter) {
    for (let add = 1e-10; add <= 1.0001e-6 && !ok; add *= 10) {
      fill(theta, add);
      ok = choleskyInPlace(R, n);
      jitter = add;
    }
  }
  return { ok, jitter };
}

/** Work arrays of the generalised least squares, allocated once per likelihood. */
interface GlsWork {
  yt: Float64Array;
  Xt: Float64Array[];
  A: Float64Array;
  b: Float64Array;
}

/**
 * Generalised least squares through the factor L of R: ỹ = L⁻¹y, X̃ = L⁻¹X, β̂ from A = X̃ᵀX̃,
 * b = X̃ᵀỹ by A's own (p×p) Cholesky factor, ln|XᵀR⁻¹X| = ln|A| and Q = |ỹ − X̃β̂|² (summed directly
 * rather than as ỹᵀỹ − bᵀβ̂: no cancellation). Null when A cannot be factorised.
 */
function generalisedLeastSquares(
  R: Float64Array, n: number, y0: Float64Array, columns: Float64Array[], w: GlsWork,
): { beta: number[]; logDetInformation: number; quadraticForm: number } | null {
  const p = columns.length;
  const { yt, Xt, A, b } = w;
  yt.set(y0);
  solveLowerInPlace(R, n, yt);
  for (let c = 0; c < p; c++) {
    Xt[c].set(columns[c]);
    solveLowerInPlace(R, n, Xt[c]);
  }
  for (let r = 0; r < p; r++) {
    let sb = 0;
    for (let i = 0; i < n; i++) sb += Xt[r][i] * yt[i];
    b[r] = sb;
    for (let c = 0; c <= r; c++) {
      let sa = 0;
      for (let i = 0; i < n; i++) sa += Xt[r][i] * Xt[c][i];
      A[r * p + c] = sa;
      A[c * p + r] = sa;
    }
  }
  let logDetInformation = 0;
  const beta: number[] = [];
  if (p > 0) {
    if (!choleskyInPlace(A, p)) return null;
    for (let i = 0; i < p; i++) logDetInformation += 2 * Math.log(A[i * p + i]);
    const z = Float64Array.from(b);
    solveLowerInPlace(A, p, z);
    for (let i = p - 1; i >= 0; i--) {
      let s = z[i];
      for (let k = i + 1; k < p; k++) s -= A[k * p + i] * z[k];
      z[i] = s / A[i * p + i];
    }
    beta.push(...z);
  }
  let Q = 0;
  for (let i = 0; i < n; i++) {
    let r = yt[i];
    for (let c = 0; c < p; c++) r -= Xt[c][i] * beta[c];
    Q += r * r;
  }
  return { beta, logDetInformation, quadraticForm: Q };
}

/** ℓ from its parts: profiled over σ² (σ̂² = Q/dof), or at a given σ²; −∞ when not finite. */
function logLikelihoodFromParts(
  method: LikelihoodMethod, n: number, p: number, logDetR: number, logDetInformation: number, Q: number, sigma2?: number,
): { logLikelihood: number; sigma2Hat: number } {
  const dof = method === 'reml' ? n - p : n;
  const sigma2Hat = Q / dof;
  const extra = method === 'reml' ? logDetInformation : 0;
  let logLikelihood: number;
  if (sigma2 === undefined) {
    logLikelihood = -0.5 * (dof * (Math.log(sigma2Hat) + 1 + LN_2PI) + logDetR + extra);
  } else {
    logLikelihood = -0.5 * (dof * (LN_2PI + Math.log(sigma2)) + logDetR + extra + Q / sigma2);
  }
  if (!Number.isFinite(logLikelihood)) logLikelihood = -Infinity;
  return { logLikelihood, sigma2Hat };
}

/**
 * Prepares the likelihood of `samples` under `setup`: centres the coordinates, packs the pairwise
 * distances and allocates the n×n work matrix once, so each `evaluate` is one fill and one Cholesky.
 * With `correlationAt` the matrix R is that model's sample covariance (covariance.ts) at each θ
 * instead of setup's one family: the same profiled likelihood for richer correlation models.
 */
export function createLikelihood(samples: Samples, setup: LikelihoodSetup, correlationAt?: CorrelationModelAt): Likelihood {
  const n = samples.value.length;
  const method: LikelihoodMethod = setup.method ?? 'reml';
  const { cx, cy, xs, ys, dist, maxDistance } = pairGeometry(samples, setup.anisotropy);
  const p = trendColumnCount(setup.trend);
  const { y0, columns } = trendDesign(samples, setup.trend, xs, ys);
  const R = new Float64Array(n * n);
  const work: GlsWork = { yt: new Float64Array(n), Xt: columns.map(() => new Float64Array(n)), A: new Float64Array(p * p), b: new Float64Array(p) };
  const fill = correlationAt ? modelFill(correlationAt, xs, ys, n, R) : familyFill(setup, dist, n, R);

  const evaluate = (theta: CorrelationParameters, options: { sigma2?: number; allowJitter?: boolean } = {}): LikelihoodValue => {
    const { ok, jitter } = factorCorrelation(fill, R, n, theta, options.allowJitter);
    if (!ok) {
      return { logLikelihood: -Infinity, sigma2: NaN, beta: [], logDetR: NaN, logDetInformation: NaN, quadraticForm: NaN, jitter };
    }
    let logDetR = 0;
    for (let i = 0; i < n; i++) logDetR += Math.log(R[i * n + i]);
    logDetR *= 2;
    const gls = generalisedLeastSquares(R, n, y0, columns, work);
    if (!gls) {
      return { logLikelihood: -Infinity, sigma2: NaN, beta: [], logDetR, logDetInformation: NaN, quadraticForm: NaN, jitter };
    }
    const { logDetInformation, quadraticForm, beta } = gls;
    const { logLikelihood, sigma2Hat } = logLikelihoodFromParts(method, n, p, logDetR, logDetInformation, quadraticForm, options.sigma2);
    return { logLikelihood, sigma2: sigma2Hat, beta, logDetR, logDetInformation, quadraticForm, jitter };
  };

  return { n, p, method, centre: { cx, cy }, maxDistance, evaluate };
}

/** One-off ℓ at θ (profiled over the sill unless `sigma2` is given); for repeated use call createLikelihood. */
export function logLikelihood(
  samples: Samples,
  setup: LikelihoodSetup,
  theta: CorrelationParameters,
  sigma2?: number,
): LikelihoodValue {
  return createLikelihood(samples, setup).evaluate(theta, { sigma2 });
}
