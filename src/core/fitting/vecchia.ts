/**
 * Nearest-neighbour (Vecchia) Gaussian likelihood, GLS trend and model fit for many samples.
 *
 * Vecchia (1988, J. R. Stat. Soc. B 50:297) writes the joint density as a product of conditionals
 * p(y₁)·Π p(yᵢ | y₁..yᵢ₋₁) and conditions each yᵢ only on its m nearest earlier samples N(i) in a
 * maxmin order (Guinness 2018, Technometrics 60:415; Datta et al. 2016, JASA 111:800). With
 * R = ρ(h) + η·I (η = nugget / partial sill) and the Cholesky factor of R over N(i) ∪ {i}, the last
 * row gives the whitened value ỹᵢ = (yᵢ − R_iN R_NN⁻¹ y_N)/√dᵢ and dᵢ = R_ii − R_iN R_NN⁻¹ R_Ni,
 * so ln|R| ≈ Σ ln dᵢ, yᵀR⁻¹y ≈ Σ ỹᵢ², and the trend enters through X̃ the same way. The sill is
 * profiled out and β estimated by GLS through that factor, exactly as the dense REML/ML of
 * ./likelihood.ts: σ̂² = Q/(n−p) (ML: Q/n),
 *   ℓ*(θ) = −½[(n−p)(ln σ̂² + 1 + ln 2π) + Σ ln dᵢ + ln|X̃ᵀX̃|]   (ML: n, no last term).
 * With m ≥ n − 1 nothing is dropped and the value equals the dense likelihood.
 * Units: metres for coordinates and scale, data units squared for σ². Cost per evaluation:
 * n·m²/2 correlations and n·m³/3 flops; memory n·m·4 bytes for the neighbour lists.
 */
import type { Anisotropy, CovarianceModel, Family, FitInfo, Structure, Trend } from '../covariance/model.ts';
import type { FitOptions } from './fit-options.ts';
import { NU_BOUNDS } from './likelihood.ts';
import type { ParameterSpace } from '../linalg/optimise.ts';
import type { Samples } from '../shared/samples.ts';
import { pickSamples } from '../shared/samples.ts';
import { numericalFailureAdvice } from '../covariance/numerical-advice.ts';
import { GapwiseError, type Warning } from '../shared/errors.ts';
import type { FitWarning } from '../covariance/fit-warnings.ts';
import { choleskyInPlace, solveLowerInPlace } from '../linalg/linalg.ts';
import { correlationFunction, covarianceFunction, practicalRange, surfaceVariance, toIsotropicCoordinates } from '../covariance/covariance.ts';
import { nuggetOf } from '../covariance/model.ts';
import { maxminOrder, orderedNeighbours, type OrderedNeighbours } from './maxmin-order.ts';
import {
  coordinateFrame, trendColumnCount, knownMean, designRow, covariateColumnCount, trendFrame, checkCovariateRows,
  type CoordinateFrame,
} from '../covariance/trend.ts';
import type { CorrelationParameters, LikelihoodMethod, LikelihoodSetup, LikelihoodValue } from './likelihood.ts';
import { minimiseBounded, newtonRefine } from '../linalg/optimise.ts';
import { createRandom } from '../shared/random.ts';
import { MAX_EXACT_SAMPLES } from '../shared/sizes.ts';

/** Default number of earlier neighbours each sample is conditioned on. */
export const DEFAULT_VECCHIA_NEIGHBOURS = 30;

const LN_2PI = Math.log(2 * Math.PI);

/**
 * 'exact' for fewer than MAX_EXACT_SAMPLES (3,000, core/shared/sizes.ts) samples, otherwise 'nnl' (nearest-neighbour likelihood). An explicit
 * `override` wins. The dense fit costs n³/3 flops and 8n² bytes per evaluation; the nearest-neighbour
 * one n·m³/3 flops and n·m·4 bytes.
 */
export function chooseFitMethod(n: number, override?: 'exact' | 'nnl'): 'exact' | 'nnl' {
  if (override === 'exact' || override === 'nnl') return override;
  return n < MAX_EXACT_SAMPLES ? 'exact' : 'nnl';
}

/** The ordering, neighbour lists and trend columns shared by every evaluation on one data set. */
interface VecchiaContext {
  n: number;
  m: number;
  /** order[k] = original index of the k-th point. */
  order: Uint32Array;
  /** Ordered isotropic coordinates (centred). */
  ou: Float64Array;
  ov: Float64Array;
  nb: OrderedNeighbours;
}

function prepareContext(x: ArrayLike<number>, y: ArrayLike<number>, cx: number, cy: number, anisotropy: Anisotropy | undefined, m: number): VecchiaContext {
  const n = x.length;
  const { u, v } = toIsotropicCoordinates(anisotropy, x, y, cx, cy);
  const order = maxminOrder(u, v);
  const ou = new Float64Array(n);
  const ov = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    ou[k] = u[order[k]];
    ov[k] = v[order[k]];
  }
  const mm = Math.max(1, Math.min(m, Math.max(1, n - 1)));
  const nb = orderedNeighbours(ou, ov, mm);
  return { n, m: mm, order, ou, ov, nb };
}

/** Output of one whitening pass: ỹ and X̃ (n×p, row-major), Σ ln dᵢ, and the jitter used. */
interface Whitened {
  ok: boolean;
  yt: Float64Array;
  Xt: Float64Array;
  logDet: number;
  jitter: number;
}

/**
 * One pass over the ordered points: for each, the Cholesky factor of its conditioning set's matrix
 * (neighbours first, the point last) computed row by row together with the forward solves of the
 * values and trend columns; the last components are the whitened values. `offDiagonal(h)` gives
 * the matrix entry at effective distance h, `diagonal` the variance. `limit` caps the neighbours
 * used (the nearest ones). yo: ordered values; Xo: ordered trend columns (n×p row-major).
 */
function whiten(
  ctx: VecchiaContext, yo: Float64Array, Xo: Float64Array, p: number,
  offDiagonal: (h: number) => number, diagonal: number, allowJitter: boolean, limit: number,
  out: { yt: Float64Array; Xt: Float64Array }, start = 0, end = ctx.n,
): Whitened {
  const { m, ou, ov, nb } = ctx;
  const s1 = m + 1;
  const r = p + 1; // right-hand sides: values, then trend columns
  const C = new Float64Array(s1 * s1);
  const W = new Float64Array(s1 * r);
  const px = new Float64Array(s1);
  const py = new Float64Array(s1);
  const idx = new Uint32Array(s1);
  const invDiag = new Float64Array(s1);
  const { yt, Xt } = out;
  let logDet = 0;
  let maxJitter = 0;
  for (let i = start; i < end; i++) {
    const q = Math.min(nb.count[i], limit);
    const s = q + 1;
    const base = i * m;
    for (let a = 0; a < q; a++) {
      const j = nb.ids[base + a];
      idx[a] = j;
      px[a] = ou[j];
      py[a] = ov[j];
    }
    idx[q] = i;
    px[q] = ou[i];
    py[q] = ov[i];
    let extra = 0;
    for (let attempt = 0; ; attempt++) {
      let ok = true;
      for (let a = 0; a < s && ok; a++) {
        const row = a * s;
        const xa = px[a];
        const ya = py[a];
        for (let b = 0; b < a; b++) {
          const dx = xa - px[b];
          const dy = ya - py[b];
          C[row + b] = offDiagonal(Math.sqrt(dx * dx + dy * dy));
        }
        // Row a of L from rows above (Cholesky–Banachiewicz), then row a of the forward solves.
        for (let b = 0; b < a; b++) {
          const rowB = b * s;
          let t = C[row + b];
          for (let k = 0; k < b; k++) t -= C[row + k] * C[rowB + k];
          C[row + b] = t * invDiag[b];
        }
        let d = diagonal + extra;
        for (let k = 0; k < a; k++) {
          const v = C[row + k];
          d -= v * v;
        }
        if (!(d > 0)) {
          ok = false;
          break;
        }
        const l = Math.sqrt(d);
        C[row + a] = l;
        const il = 1 / l;
        invDiag[a] = il;
        const src = idx[a];
        for (let c = 0; c < r; c++) {
          let t = c === 0 ? yo[src] : Xo[src * p + c - 1];
          for (let k = 0; k < a; k++) t -= C[row + k] * W[k * r + c];
          W[a * r + c] = t * il;
        }
      }
      if (ok) break;
      if (!allowJitter || attempt >= 5) return { ok: false, yt, Xt, logDet: NaN, jitter: maxJitter };
      extra = diagonal * 1e-10 * 10 ** attempt;
      if (extra > maxJitter) maxJitter = extra;
    }
    logDet += 2 * Math.log(C[q * s + q]);
    yt[i] = W[q * r];
    for (let c = 0; c < p; c++) Xt[i * p + c] = W[q * r + 1 + c];
  }
  return { ok: true, yt, Xt, logDet, jitter: maxJitter };
}

/** Families by number, so a pass's parameters travel between threads as numbers. */
const PASS_FAMILIES: readonly Family[] = ['matern', 'exponential', 'spherical', 'gaussian'];

/**
 * Everything one whitening pass reads (ordered centred coordinates, earlier-neighbour lists, ordered
 * values and trend columns) and writes (whitened values ỹ and columns X̃), as typed arrays so that
 * threads sharing their memory can each run a part of the pass.
 */
export interface VecchiaPassData {
  n: number;
  /** Neighbour list stride (largest neighbour count). */
  m: number;
  /** Trend columns. */
  p: number;
  ou: Float64Array;
  ov: Float64Array;
  nbIds: Uint32Array;
  nbCount: Uint16Array;
  yo: Float64Array;
  Xo: Float64Array;
  yt: Float64Array;
  Xt: Float64Array;
}

/** The parameters of one pass over the correlation ρ of a single family (plain numbers). */
export interface VecchiaPassJob {
  /** Index into PASS_FAMILIES. */
  family: number;
  scale: number;
  nu: number;
  /** Diagonal of the correlation matrix: 1 + nugget ratio. */
  diagonal: number;
  allowJitter: boolean;
  /** Neighbours used per point (the nearest `limit` of each list). */
  limit: number;
}

/** The result of (a part of) a pass: Σ ln dᵢ over its points and the largest jitter added. */
export interface VecchiaPassPart {
  ok: boolean;
  logDet: number;
  jitter: number;
}

/**
 * Runs the points [start, end) of one whitening pass: writes ỹ and X̃ there and returns their
 * Σ ln dᵢ. Parts are independent (each point reads only inputs), so a pass may be split anywhere.
 */
export function runVecchiaPass(data: VecchiaPassData, job: VecchiaPassJob, start: number, end: number): VecchiaPassPart {
  const family = PASS_FAMILIES[job.family];
  if (family === undefined) throw new GapwiseError('bad-option', `Expected a family number from 0 to ${PASS_FAMILIES.length - 1}, got ${job.family}.`);
  const ctx: VecchiaContext = {
    n: data.n, m: data.m, order: new Uint32Array(0), ou: data.ou, ov: data.ov,
    nb: { n: data.n, m: data.m, count: data.nbCount, ids: data.nbIds },
  };
  const rho = correlationFunction(family, job.scale, job.nu);
  const wh = whiten(ctx, data.yo, data.Xo, data.p, rho, job.diagonal, job.allowJitter, job.limit, data, start, end);
  return { ok: wh.ok, logDet: wh.ok ? wh.logDet : NaN, jitter: wh.jitter };
}

/**
 * Splits whitening passes over threads (the CLI gives one over worker_threads; see
 * src/cli/vecchia-pool.ts). `buffer` allocates the memory of the pass arrays (shared between the
 * threads); `attach` receives the prepared data once and returns a function that runs a whole pass,
 * every thread a contiguous part, and combines the parts (logDet summed, jitter the largest).
 */
export interface VecchiaThreads {
  buffer(bytes: number): ArrayBufferLike;
  attach(data: VecchiaPassData): (job: VecchiaPassJob) => VecchiaPassPart;
}

/** Copies the context and ordered inputs into memory from `threads.buffer` and attaches them. */
function attachThreads(ctx: VecchiaContext, yo: Float64Array, Xo: Float64Array, p: number, threads: VecchiaThreads): { data: VecchiaPassData; pass: (job: VecchiaPassJob) => VecchiaPassPart } {
  const f64 = (src: Float64Array | number) => {
    const len = typeof src === 'number' ? src : src.length;
    const a = new Float64Array(threads.buffer(8 * Math.max(1, len)), 0, len);
    if (typeof src !== 'number') a.set(src);
    return a;
  };
  const ids = new Uint32Array(threads.buffer(4 * Math.max(1, ctx.nb.ids.length)), 0, ctx.nb.ids.length);
  ids.set(ctx.nb.ids);
  const count = new Uint16Array(threads.buffer(2 * Math.max(1, ctx.nb.count.length)), 0, ctx.nb.count.length);
  count.set(ctx.nb.count);
  const data: VecchiaPassData = {
    n: ctx.n, m: ctx.m, p, ou: f64(ctx.ou), ov: f64(ctx.ov), nbIds: ids, nbCount: count,
    yo: f64(yo), Xo: f64(Xo), yt: f64(ctx.n), Xt: f64(ctx.n * p),
  };
  return { data, pass: threads.attach(data) };
}

/** GLS on whitened data: β̂ = (X̃ᵀX̃)⁻¹X̃ᵀỹ, Q = ‖ỹ − X̃β̂‖², ln|X̃ᵀX̃|. */
function whitenedGls(yt: Float64Array, Xt: Float64Array, n: number, p: number): { ok: boolean; beta: Float64Array; Q: number; logDetInformation: number; information: Float64Array } {
  const A = new Float64Array(p * p);
  const b = new Float64Array(p);
  for (let i = 0; i < n; i++) {
    const yi = yt[i];
    for (let r = 0; r < p; r++) {
      const xr = Xt[i * p + r];
      b[r] += xr * yi;
      for (let c = 0; c <= r; c++) A[r * p + c] += xr * Xt[i * p + c];
    }
  }
  for (let r = 0; r < p; r++) for (let c = 0; c < r; c++) A[c * p + r] = A[r * p + c];
  const information = Float64Array.from(A);
  const beta = new Float64Array(p);
  let logDetInformation = 0;
  if (p > 0) {
    if (!choleskyInPlace(A, p)) return { ok: false, beta, Q: NaN, logDetInformation: NaN, information };
    for (let i = 0; i < p; i++) logDetInformation += 2 * Math.log(A[i * p + i]);
    beta.set(b);
    solveLowerInPlace(A, p, beta);
    for (let i = p - 1; i >= 0; i--) {
      let s = beta[i];
      for (let k = i + 1; k < p; k++) s -= A[k * p + i] * beta[k];
      beta[i] = s / A[i * p + i];
    }
  }
  let Q = 0;
  for (let i = 0; i < n; i++) {
    let r = yt[i];
    for (let c = 0; c < p; c++) r -= Xt[i * p + c] * beta[c];
    Q += r * r;
  }
  return { ok: true, beta, Q, logDetInformation, information };
}

/** Options of the nearest-neighbour likelihood: the dense setup plus the neighbour count. */
export interface VecchiaSetup extends LikelihoodSetup {
  /** Earlier neighbours per sample, m; default 30. */
  neighbours?: number;
}

/** The nearest-neighbour likelihood of one data set, evaluated at many θ (same shape as likelihood.ts). */
export interface VecchiaLikelihood {
  readonly n: number;
  readonly p: number;
  readonly method: LikelihoodMethod;
  /** Neighbours per sample actually used (min(m, n − 1)). */
  readonly neighbours: number;
  readonly centre: { cx: number; cy: number };
  /** Diagonal of the samples' bounding box in effective distance (an upper bound on the largest pair distance), metres. */
  readonly maxDistance: number;
  /** Shortest distance from a sample to its nearest other sample, median over samples, metres. */
  readonly medianSpacing: number;
  /** ℓ at θ; with `sigma2` the full (restricted) log-likelihood at that σ² instead of the profiled one. */
  evaluate(theta: CorrelationParameters, options?: VecchiaEvaluateOptions): LikelihoodValue;
}

export interface VecchiaEvaluateOptions {
  /** Full (not profiled) likelihood at this σ². */
  sigma2?: number;
  /** Add up to 1e-5 (relative) to a neighbourhood's diagonal when it cannot be factorised. */
  allowJitter?: boolean;
  /** Use only the nearest `neighbours` ≤ m of each list (a cheaper, coarser approximation). */
  neighbours?: number;
}

/**
 * Prepares the nearest-neighbour likelihood: centres the coordinates, orders the samples by maxmin
 * and finds each one's m nearest earlier neighbours (once); each `evaluate` is then one pass of
 * n small Cholesky factors. Trend columns as in ./likelihood.ts: 1, and x, y centred (metres).
 */
export function createVecchiaLikelihood(samples: Samples, setup: VecchiaSetup, threads?: VecchiaThreads): VecchiaLikelihood {
  const n = samples.value.length;
  const method: LikelihoodMethod = setup.method ?? 'reml';
  const m = setup.neighbours ?? DEFAULT_VECCHIA_NEIGHBOURS;
  if (!(Number.isInteger(m) && m >= 1)) throw new GapwiseError('bad-option', `Expected the neighbour count to be a whole number of at least 1, got ${String(m)}.`);
  let cx = 0;
  let cy = 0;
  for (let i = 0; i < n; i++) {
    cx += samples.x[i];
    cy += samples.y[i];
  }
  cx /= Math.max(1, n);
  cy /= Math.max(1, n);
  const ctx = prepareContext(samples.x, samples.y, cx, cy, setup.anisotropy, m);
  const trend = setup.trend;
  const p = trendColumnCount(trend);
  const known = knownMean(trend) ?? 0;
  const yo = new Float64Array(n);
  const Xo = new Float64Array(n * p);
  // Columns as the exact likelihood has them: 1, x, y centred (metres), covariates centred only.
  const q = covariateColumnCount(trend);
  if (q > 0) checkCovariateRows(trend, n, samples.covariates, 'sample');
  const tf = q > 0 ? trendFrame(trend, samples.x, samples.y, samples.covariates) : null;
  const columnFrame: CoordinateFrame = { cx, cy, scale: 1, covariateCentre: tf?.covariateCentre, covariateScale: q > 0 ? new Float64Array(q).fill(1) : undefined };
  for (let k = 0; k < n; k++) {
    const i = ctx.order[k];
    yo[k] = samples.value[i] - known;
    designRow(trend, samples.x[i], samples.y[i], columnFrame, Xo, k * p, samples.covariates, i * q);
  }
  let umin = Infinity, umax = -Infinity, vmin = Infinity, vmax = -Infinity;
  for (let k = 0; k < n; k++) {
    umin = Math.min(umin, ctx.ou[k]); umax = Math.max(umax, ctx.ou[k]);
    vmin = Math.min(vmin, ctx.ov[k]); vmax = Math.max(vmax, ctx.ov[k]);
  }
  const maxDistance = n > 1 ? Math.hypot(umax - umin, vmax - vmin) : 0;
  const spacing: number[] = [];
  for (let k = 1; k < n; k++) {
    if (ctx.nb.count[k] === 0) continue;
    const j = ctx.nb.ids[k * ctx.m];
    spacing.push(Math.hypot(ctx.ou[k] - ctx.ou[j], ctx.ov[k] - ctx.ov[j]));
  }
  spacing.sort((a, b) => a - b);
  const medianSpacing = spacing.length ? spacing[spacing.length >> 1] : 0;
  const shared = threads && PASS_FAMILIES.includes(setup.family) ? attachThreads(ctx, yo, Xo, p, threads) : null;
  const buffers = shared ? shared.data : { yt: new Float64Array(n), Xt: new Float64Array(n * p) };

  const evaluate = (theta: CorrelationParameters, options: VecchiaEvaluateOptions = {}): LikelihoodValue => {
    const fail = (jitter: number, logDetR = NaN): LikelihoodValue => ({
      logLikelihood: -Infinity, sigma2: NaN, beta: [], logDetR, logDetInformation: NaN, quadraticForm: NaN, jitter,
    });
    const nu = theta.nu ?? setup.nu ?? 1.5;
    const limit = Math.min(ctx.m, options.neighbours ?? ctx.m);
    const allowJitter = options.allowJitter ?? false;
    const wh = shared
      ? shared.pass({ family: PASS_FAMILIES.indexOf(setup.family), scale: theta.scale, nu, diagonal: 1 + theta.nuggetRatio, allowJitter, limit })
      : whiten(ctx, yo, Xo, p, correlationFunction(setup.family, theta.scale, nu), 1 + theta.nuggetRatio, allowJitter, limit, buffers);
    if (!wh.ok) return fail(wh.jitter);
    const gls = whitenedGls(buffers.yt, buffers.Xt, n, p);
    if (!gls.ok) return fail(wh.jitter, wh.logDet);
    const dof = method === 'reml' ? n - p : n;
    const sigma2Hat = gls.Q / dof;
    const extra = method === 'reml' ? gls.logDetInformation : 0;
    let logLikelihood: number;
    if (options.sigma2 === undefined) {
      logLikelihood = -0.5 * (dof * (Math.log(sigma2Hat) + 1 + LN_2PI) + wh.logDet + extra);
    } else {
      const s2 = options.sigma2;
      logLikelihood = -0.5 * (dof * (LN_2PI + Math.log(s2)) + wh.logDet + extra + gls.Q / s2);
    }
    if (!Number.isFinite(logLikelihood)) logLikelihood = -Infinity;
    return {
      logLikelihood, sigma2: sigma2Hat, beta: Array.from(gls.beta), logDetR: wh.logDet,
      logDetInformation: gls.logDetInformation, quadraticForm: gls.Q, jitter: wh.jitter,
    };
  };
  return { n, p, method, neighbours: ctx.m, centre: { cx, cy }, maxDistance, medianSpacing, evaluate };
}

/** The GLS trend of a full model through the nearest-neighbour factor. */
export interface VecchiaTrend {
  /** β̂ for the trend columns of ./trend.ts (1, then (x − cx)/scale, (y − cy)/scale); empty for a known mean. */
  beta: Float64Array;
  /** The frame those columns use. */
  frame: CoordinateFrame;
  /** Covariance of β̂: (X̃ᵀX̃)⁻¹ (p×p, row-major). */
  betaCovariance: Float64Array;
  warnings: Warning[];
}

/**
 * Generalised-least-squares trend coefficients of `model` (all its structures, nugget and anisotropy)
 * with the covariance replaced by its nearest-neighbour approximation: β̂ = (X̃ᵀX̃)⁻¹X̃ᵀỹ.
 * Values are used as given (the caller applies any log transform). Cost O(n·m³).
 */
export function vecchiaTrend(samples: Samples, model: CovarianceModel, options: { neighbours?: number } = {}): VecchiaTrend {
  const n = samples.value.length;
  const p = trendColumnCount(model.trend);
  const q = covariateColumnCount(model.trend);
  const frame = q > 0 ? trendFrame(model.trend, samples.x, samples.y, samples.covariates) : coordinateFrame(samples.x, samples.y);
  if (p === 0 || n === 0) return { beta: new Float64Array(0), frame, betaCovariance: new Float64Array(0), warnings: [] };
  const ctx = prepareContext(samples.x, samples.y, frame.cx, frame.cy, model.anisotropy, options.neighbours ?? DEFAULT_VECCHIA_NEIGHBOURS);
  const yo = new Float64Array(n);
  const Xo = new Float64Array(n * p);
  for (let k = 0; k < n; k++) {
    const i = ctx.order[k];
    yo[k] = samples.value[i];
    designRow(model.trend, samples.x[i], samples.y[i], frame, Xo, k * p, samples.covariates, i * q);
  }
  const cov = covarianceFunction(model);
  const diagonal = surfaceVariance(model) + nuggetOf(model);
  const wh = whiten(ctx, yo, Xo, p, cov, diagonal, true, ctx.m, { yt: new Float64Array(n), Xt: new Float64Array(n * p) });
  if (!wh.ok) {
    throw new GapwiseError('not-positive-definite',
      `The covariance of neighbouring samples is not positive definite: ${numericalFailureAdvice(samples.x, samples.y, samples.value, model)}.`);
  }
  const gls = whitenedGls(wh.yt, wh.Xt, n, p);
  if (!gls.ok) {
    throw new GapwiseError('not-positive-definite', p === 3
      ? 'The linear trend cannot be estimated: the samples lie on a line (or nearly so); use a constant trend or add samples off that line.'
      : 'The trend cannot be estimated from these samples; use a known mean or check the samples.');
  }
  // (X̃ᵀX̃)⁻¹ column by column through its Cholesky factor.
  const L = Float64Array.from(gls.information);
  choleskyInPlace(L, p);
  const betaCovariance = new Float64Array(p * p);
  const e = new Float64Array(p);
  for (let c = 0; c < p; c++) {
    e.fill(0);
    e[c] = 1;
    solveLowerInPlace(L, p, e);
    for (let i = p - 1; i >= 0; i--) {
      let s = e[i];
      for (let k = i + 1; k < p; k++) s -= L[k * p + i] * e[k];
      e[i] = s / L[i * p + i];
    }
    for (let r = 0; r < p; r++) betaCovariance[r * p + c] = e[r];
  }
  const warnings: Warning[] = [];
  if (wh.jitter > 0) {
    warnings.push({ code: 'jitter', message: `Some neighbourhood covariance matrices were not numerically positive definite; added up to ${wh.jitter.toPrecision(3)} to their diagonal.` });
  }
  return { beta: gls.beta, frame, betaCovariance, warnings };
}

/** Options of the nearest-neighbour fit: those of fit.ts `fitModel` (likelihood methods) plus m. */
export interface VecchiaFitOptions extends Omit<FitOptions, 'method' | 'variogram'> {
  /** 'reml' (default) or 'ml'. */
  method?: LikelihoodMethod;
  /** Earlier neighbours per sample, m; default 30. */
  neighbours?: number;
  /** Optimiser runs from the best grid starts; default 1 (each run costs n·m³ per evaluation). */
  starts?: number;
  /** Seed of the subsample that screens the starting values; default 20240611. */
  seed?: number;
}

/** Samples above which starting values are screened on a seeded subsample. */
const SCREEN_ABOVE = 4000;
const SCREEN_SIZE = 2000;
/** Neighbours used while searching; the final refinement uses all m. */
const COARSE_NEIGHBOURS = 10;
const NUGGET_RATIO_BOUNDS = { lower: 1e-6, upper: 1e3 };

function subsample(samples: Samples, size: number, seed: number): Samples {
  const n = samples.value.length;
  const idx = Uint32Array.from({ length: n }, (_, i) => i);
  const rng = createRandom(seed);
  for (let i = 0; i < size; i++) {
    const j = i + Math.floor(rng.uniform() * (n - i));
    const t = idx[i];
    idx[i] = idx[j];
    idx[j] = t;
  }
  const pick = idx.subarray(0, size);
  pick.sort();
  return pickSamples(samples, pick);
}

/**
 * Fits the covariance model by maximising the nearest-neighbour REML (or ML) likelihood, the sill
 * profiled out, over log scale, log nugget ratio (and ν when 'free'): starts screened on a grid (on a
 * seeded 2,000-sample subsample above 4,000 samples) and searched by Nelder–Mead there, all with the
 * 10 nearest neighbours; then (subsampled) Newton steps on all samples with 10 neighbours; finally
 * Newton steps on all samples with m neighbours (Nelder–Mead when a Newton stage fails). Returns the model with fit.method 'nnl' and a note naming the sample
 * and neighbour counts. `hooks.threads` splits each all-sample pass over threads (same values up to
 * the order of one sum); `hooks.onPass`, when given, is called after each likelihood pass over all
 * samples (for a progress line; the number of passes is not known ahead). Throws GapwiseError
 * ('bad-option', 'too-few-samples', 'constant-values', 'bad-value', 'fit-failed').
 */
/** The options of a nearest-neighbour fit, checked, with their defaults. */
interface VecchiaResolved {
  family: Family;
  method: 'reml' | 'ml';
  nuFree: boolean;
  nuFixed?: number;
  trend: Trend;
  p: number;
  fitNugget: boolean;
  m: number;
  starts: number;
  n: number;
}

/** Checks the options and the samples (GapwiseError 'bad-option', 'bad-value', 'too-few-samples', 'constant-values'). */
function resolveVecchiaFit(samples: Samples, options: VecchiaFitOptions): VecchiaResolved {
  if (typeof options !== 'object' || options === null) throw new GapwiseError('bad-option', 'Expected fit options as an object.');
  const family: Family = options.family;
  if (!['matern', 'exponential', 'spherical', 'gaussian'].includes(family)) {
    throw new GapwiseError('bad-option', `Expected the family to be matern, exponential, spherical or gaussian, got ${JSON.stringify(family)}.`);
  }
  const method = options.method ?? 'reml';
  if (method !== 'reml' && method !== 'ml') {
    throw new GapwiseError('bad-option', `Expected the method of a nearest-neighbour fit to be reml or ml, got ${JSON.stringify(method)}.`);
  }
  const nuFree = family === 'matern' && options.nu === 'free';
  let nuFixed: number | undefined;
  if (family === 'matern' && !nuFree) {
    nuFixed = options.nu === undefined ? 1.5 : options.nu as number;
    if (!(typeof nuFixed === 'number' && Number.isFinite(nuFixed) && nuFixed > 0)) {
      throw new GapwiseError('bad-option', `Expected nu to be a positive number or "free", got ${JSON.stringify(options.nu)}.`);
    }
  }
  const trend: Trend = options.trend ?? 'constant';
  const p = trendColumnCount(trend);
  const fitNugget = options.nugget ?? true;
  const m = options.neighbours ?? DEFAULT_VECCHIA_NEIGHBOURS;
  if (!(Number.isInteger(m) && m >= 1 && m <= 1000)) {
    throw new GapwiseError('bad-option', `Expected the neighbour count to be a whole number from 1 to 1000, got ${JSON.stringify(options.neighbours)}.`);
  }
  const starts = options.starts ?? 1;
  if (!(Number.isInteger(starts) && starts >= 1 && starts <= 27)) {
    throw new GapwiseError('bad-option', `Expected starts to be a whole number from 1 to 27, got ${JSON.stringify(options.starts)}.`);
  }
  const n = samples.value.length;
  if (samples.x.length !== n || samples.y.length !== n) {
    throw new GapwiseError('bad-value', `Expected x, y and value of equal length, got ${samples.x.length}, ${samples.y.length} and ${n}.`);
  }
  const minimum = Math.max(3, p + 2);
  if (n < minimum) throw new GapwiseError('too-few-samples', `Expected at least ${minimum} samples to fit a model, got ${n}.`);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(samples.value[i]) || !Number.isFinite(samples.x[i]) || !Number.isFinite(samples.y[i])) {
      throw new GapwiseError('bad-value', `Expected finite coordinates and values, got ${samples.x[i]}, ${samples.y[i]}, ${samples.value[i]} at sample ${i + 1}.`);
    }
  }
  let same = true;
  for (let i = 1; i < n && same; i++) same = samples.value[i] === samples.value[0];
  if (same) throw new GapwiseError('constant-values', `All ${n} values equal ${samples.value[0]}: there is no variation to model; expected at least two different values.`);

  return { family, method, nuFree, nuFixed, trend, p, fitNugget, m, starts, n };
}

export function vecchiaFit(samples: Samples, options: VecchiaFitOptions, hooks: { threads?: VecchiaThreads; onPass?: () => void } = {}): VecchiaFitResult {
  const r = resolveVecchiaFit(samples, options);
  const { family, method, nuFree, nuFixed, trend, p, fitNugget, m, starts, n } = r;
  const setup: VecchiaSetup = { family, nu: nuFixed, trend, method, anisotropy: options.anisotropy, neighbours: m };
  const full = createVecchiaLikelihood(samples, setup, hooks.threads);
  if (!(full.maxDistance > 0)) throw new GapwiseError('too-few-samples', `Expected samples at two or more distinct places, got all ${n} at one place.`);
  const D = full.maxDistance;
  const spaces: ParameterSpace[] = [{ log: true, lower: D * 1e-4, upper: D * 10 }];
  if (fitNugget) spaces.push({ log: true, ...NUGGET_RATIO_BOUNDS });
  if (nuFree) spaces.push({ log: true, ...NU_BOUNDS });
  const d = spaces.length;
  const toTheta = (x: number[]): CorrelationParameters => ({
    scale: x[0], nuggetRatio: fitNugget ? x[1] : 0, nu: nuFree ? x[d - 1] : undefined,
  });
  const allowJitter = !fitNugget;
  const onPass = hooks.onPass;
  const objective = (lik: VecchiaLikelihood, neighbours?: number) => (onPass && lik === full
    ? (x: number[]) => {
      const v = -lik.evaluate(toTheta(x), { allowJitter, neighbours }).logLikelihood;
      onPass();
      return v;
    }
    : (x: number[]) => -lik.evaluate(toTheta(x), { allowJitter, neighbours }).logLikelihood);
  // Absolute tolerance on ℓ of about 1e-4 (the approximation itself is coarser), relative to its size.
  const tolerance = (v: number) => 1e-4 / Math.max(1, Math.abs(v));
  let iterations = 0;
  let evaluations = 0;
  let screenEvaluations = 0;
  let coarseEvaluations = 0;

  // 1. Starting grid and searches from the best starts, with the nearest 10 neighbours, on a seeded
  //    subsample above 4,000 samples (on all samples otherwise).
  const screening = n > SCREEN_ABOVE;
  const coarse = Math.min(m, COARSE_NEIGHBOURS);
  const screen = screening ? createVecchiaLikelihood(subsample(samples, SCREEN_SIZE, options.seed ?? 20240611), setup) : full;
  const fScreen = objective(screen, coarse);
  const count = (k: number) => {
    if (screening) screenEvaluations += k;
    else coarseEvaluations += k;
  };
  const grid: { x: number[]; value: number }[] = [];
  const fractions = family === 'spherical' ? [0.15, 0.45, 1.2] : [0.05, 0.15, 0.4];
  for (const f of fractions) {
    for (const eta of fitNugget ? [0.01, 0.1, 0.5] : [0]) {
      for (const nu of nuFree ? [0.5, 1.5, 2.5] : [undefined]) {
        const x = [f * D];
        if (fitNugget) x.push(eta);
        if (nu !== undefined) x.push(nu);
        grid.push({ x, value: fScreen(x) });
      }
    }
  }
  count(grid.length);
  grid.sort((a, b) => a.value - b.value);
  if (!Number.isFinite(grid[0].value)) {
    throw new GapwiseError('fit-failed', `No starting value gave a finite likelihood for the ${family} model (${n} samples): ${numericalFailureAdvice(samples.x, samples.y, samples.value)}.`);
  }
  let x = grid[0].x;
  let xValue = grid[0].value;
  for (const start of grid.slice(0, starts)) {
    if (!Number.isFinite(start.value)) break;
    const res = minimiseBounded(fScreen, start.x, spaces, {
      step: 0.7, restarts: 0, xTolerance: 0.02, fTolerance: 1e-3 / Math.max(1, Math.abs(start.value)), maxEvaluations: 100 * d,
    });
    iterations += res.iterations;
    count(res.evaluations);
    if (res.value <= xValue) {
      x = res.x;
      xValue = res.value;
    }
  }
  // 2. Subsampled: Newton steps on all samples, still with 10 neighbours (cheap), Nelder–Mead if
  //    those fail.
  if (screening && coarse < m) {
    const fCoarse = objective(full, coarse);
    const step = newtonRefine(fCoarse, x, spaces);
    iterations += step.iterations;
    coarseEvaluations += step.evaluations;
    x = step.x;
    if (!step.converged) {
      const res = minimiseBounded(fCoarse, x, spaces, { step: 0.3, restarts: 0, xTolerance: 0.02, fTolerance: 1e-3 / Math.max(1, Math.abs(step.value)), maxEvaluations: 40 * d });
      iterations += res.iterations;
      coarseEvaluations += res.evaluations;
      if (res.value <= step.value) x = res.x;
    }
  }
  // 3. All samples, m neighbours: Newton steps on a quadratic fitted through 2d + 1 + d(d−1)/2
  //    nearby values (the optimum moves little from 10 to m neighbours), Nelder–Mead if that fails.
  const fFull = objective(full);
  const refined = newtonRefine(fFull, x, spaces);
  evaluations += refined.evaluations;
  iterations += refined.iterations;
  let best = { x: refined.x, value: refined.value, converged: refined.converged };
  if (!refined.converged) {
    const res = minimiseBounded(fFull, refined.x, spaces, { step: 0.1, restarts: 0, xTolerance: 0.01, fTolerance: tolerance(refined.value), maxEvaluations: 25 * d });
    iterations += res.iterations;
    evaluations += res.evaluations;
    if (res.value <= best.value) best = { x: res.x, value: res.value, converged: res.converged };
  }
  if (!Number.isFinite(best.value)) {
    throw new GapwiseError('fit-failed', `The optimiser found no finite nearest-neighbour likelihood for the ${family} model (${n} samples): ${numericalFailureAdvice(samples.x, samples.y, samples.value)}.`);
  }

  const theta = toTheta(best.x);
  const final = full.evaluate(theta, { allowJitter });
  const warnings = vecchiaWarnings(theta, spaces[0], fitNugget, best.converged, evaluations, final.jitter);
  return vecchiaModel(r, theta, final, options.anisotropy, {
    converged: best.converged, iterations, n, warnings, evaluations, coarseEvaluations, screenEvaluations,
    neighbours: full.neighbours, centre: full.centre,
  });
}

/** The warnings of a nearest-neighbour fit: not converged, the scale or the nugget at a bound, jitter added. */
function vecchiaWarnings(
  theta: CorrelationParameters, scaleSpace: ParameterSpace, fitNugget: boolean, converged: boolean, evaluations: number, jitter: number,
): FitWarning[] {
  const warnings: FitWarning[] = [];
  if (!converged) warnings.push({ code: 'optimiser-stopped', message: `The optimiser stopped before meeting its tolerance (${evaluations} likelihood evaluations on all samples).` });
  const near = (v: number, b: number | undefined) => b !== undefined && b > 0 && Math.abs(Math.log(v / b)) < 0.01;
  if (near(theta.scale, scaleSpace.upper)) warnings.push({ code: 'scale-at-bound', message: `The scale reached its upper limit (${theta.scale.toPrecision(4)} m, 10 × the extent of the samples): the data may hold a trend; consider a linear trend.` });
  if (near(theta.scale, scaleSpace.lower)) warnings.push({ code: 'scale-at-bound', message: `The scale reached its lower limit (${theta.scale.toPrecision(4)} m): the samples show no spatial correlation at their spacing.` });
  if (fitNugget && near(theta.nuggetRatio, NUGGET_RATIO_BOUNDS.upper)) warnings.push({ code: 'nugget-at-bound', message: 'The nugget reached 1,000 × the partial sill: the samples show almost no spatial structure.' });
  if (jitter > 0) warnings.push({ code: 'jitter', message: `Some neighbourhood correlation matrices were not numerically positive definite; up to ${jitter.toExponential(0)} was added to their diagonal (consider a nugget).` });
  return warnings;
}

/** The fitted model of a nearest-neighbour fit at θ, with its fit details (method 'nnl'). */
function vecchiaModel(
  r: VecchiaResolved, theta: CorrelationParameters, final: { sigma2: number; logLikelihood: number; beta: number[] }, anisotropy: Anisotropy | undefined,
  details: { converged: boolean; iterations: number; n: number; warnings: FitWarning[]; evaluations: number; coarseEvaluations: number; screenEvaluations: number; neighbours: number; centre: { cx: number; cy: number } },
): VecchiaFitResult {
  const sigma2 = final.sigma2;
  const k = 2 + (r.fitNugget ? 1 : 0) + (r.nuFree ? 1 : 0) + r.p;
  const structures: Structure[] = [];
  if (r.fitNugget) structures.push({ type: 'nugget', sill: theta.nuggetRatio * sigma2 });
  const main: Structure = { type: r.family, sill: sigma2, scale: theta.scale };
  if (r.family === 'matern') main.nu = theta.nu ?? r.nuFixed ?? 1.5;
  structures.push(main);
  const d = details;
  const model: CovarianceModel = {
    structures, trend: r.trend, transform: 'none',
    fit: {
      method: 'nnl', likelihood: r.method, logLikelihood: final.logLikelihood, aic: 2 * k - 2 * final.logLikelihood,
      converged: d.converged, iterations: d.iterations, n: d.n, warnings: d.warnings, parameters: k, evaluations: d.evaluations,
      coarseEvaluations: d.coarseEvaluations, screenEvaluations: d.screenEvaluations,
      neighbours: d.neighbours, trendCoefficients: final.beta, centre: d.centre,
      note: `fitted with a nearest-neighbour likelihood on ${d.n.toLocaleString('en-US')} samples (${d.neighbours} neighbours)`,
    },
  };
  if (anisotropy) model.anisotropy = { ...anisotropy };
  model.practicalRange = practicalRange(model);
  return model as VecchiaFitResult;
}

/** A fitted model with its fit details (method 'nnl'). */
export type VecchiaFitResult = CovarianceModel & { fit: FitInfo };
