/**
 * Kriging (Gaussian-process posterior) of the noise-free surface: build once, then query in blocks.
 *
 * Method: generalised least squares in its dual form with the Cholesky factor K = L·Lᵀ (never an
 * inverse). With X the trend columns (see ./trend.ts), W = L⁻¹X and G = XᵀK⁻¹X = WᵀW = Lg·Lgᵀ:
 *   β̂ = G⁻¹XᵀK⁻¹y,  α = K⁻¹(y − Xβ̂),  mean(s₀) = x₀ᵀβ̂ + k₀ᵀα,
 *   var(s₀) = c₀ − ‖L⁻¹k₀‖² + ‖Lg⁻¹(x₀ − Wᵀ·L⁻¹k₀)‖²
 * (Rasmussen & Williams 2006, eq. 2.25–2.26 and §2.7 for the explicit basis with a flat prior on β,
 * equation numbers from memory;
 * Cressie 1993 for universal kriging). Simple kriging has no columns and uses y − m. c₀ is the
 * prior variance of the surface without the nugget, so `sd` is the uncertainty of the surface and
 * sdObserved = √(sd² + nugget) that of a new measurement there.
 * Coordinates are centred on the sample centroid before any matrix is built (UTM northings near
 * 6·10⁶ m would otherwise lose digits in the trend columns).
 * Log transform: kriging of ln(value); back on the data scale the mean is exp(Ŷ + σ²/2) and the
 * median exp(Ŷ) (lognormal bias correction); a known mean {known: m} is then the mean of ln(value).
 * Units: coordinates in working-CRS metres; mean and sd in data units.
 * Cost: n³/3 flops once (factor), then per target n covariance evaluations and n² flops for the sd
 * (n flops for the mean alone). Memory: 8n² bytes for the factor plus 8·n·block per query block.
 */
import type { CovarianceModel } from '../covariance/model.ts';
import { numericalFailureAdvice } from '../covariance/numerical-advice.ts';
import { checkModelScale, nonFiniteResult, nuggetOf } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import { GapwiseError, type Warning } from '../shared/errors.ts';
import {
  sampleCovarianceMatrix, crossCovarianceMatrix, surfaceVariance,
} from '../covariance/covariance.ts';
import {
  cholesky, solveLowerInPlace, solveUpperTransposeInPlace, solveLowerBlock, type CholeskyFactor,
} from '../linalg/linalg.ts';
import { crossCovarianceFastInto } from '../linalg/linalg-wasm.ts';
import {
  trendColumnCount, knownMean, centreCoordinates, designMatrix, designRow, trendFrame,
  covariateColumnCount, checkCovariateRows, trendCoefficients, type CoordinateFrame, type TrendCoefficient,
} from '../covariance/trend.ts';
import { logPredictionToDataScale } from '../shared/lognormal.ts';
import { isCovariateTrend } from '../covariance/model.ts';

/** Options for building a predictor (plain data). */
export interface PredictorOptions {
  /** Add a small diagonal jitter (reported as a warning) when K is numerically singular. Default true. */
  jitter?: boolean;
  /**
   * Check that the model is in scale with these samples (model.ts `checkModelScale`). Default true;
   * false only for subsets of samples already checked as a whole (neighbourhoods).
   */
  checkScale?: boolean;
}

/** Options for one prediction call. */
export interface PredictOptions {
  /** Compute sd and sdObserved (n² flops per target). Default true; always true for a log transform. */
  sd?: boolean;
  /** Targets per block; memory is 8·n·blockSize bytes. Default 512. */
  blockSize?: number;
  /** Called after each block with the number of targets done and the total. */
  onProgress?: (done: number, total: number) => void;
  /** Polled after each block; returning true stops the work with GapwiseError('cancelled'). */
  isCancelled?: () => boolean;
  /**
   * Covariate trend only: the targets' encoded covariate columns (targets × q, row-major; see
   * ./covariates.ts). Required when the model's trend has covariates.
   */
  covariates?: ArrayLike<number>;
}

/**
 * Predictions at targets; every array has one entry per target. With a log transform, mean, sd and
 * sdObserved are lognormal moments on the data scale: mean = exp(Ŷ + σ²/2), sd = mean·√(exp(σ²) − 1),
 * and sdObserved the same with σ² + nugget (the nugget is on the log scale).
 */
export interface Prediction {
  /** Kriging estimate of the surface (data scale; bias-corrected mean for a log transform). */
  mean: Float64Array;
  /** Standard deviation of the noise-free surface (NaN when sd was not asked for). */
  sd: Float64Array;
  /** Standard deviation of a new measurement: √(sd² + nugget) (NaN when sd was not asked for). */
  sdObserved: Float64Array;
  /** Log transform only: exp(Ŷ), the median on the data scale. */
  median?: Float64Array;
  /** Log transform only: Ŷ, the kriging estimate of ln(value). */
  logMean?: Float64Array;
  /** Log transform only: the kriging sd of ln(value) (noise-free). */
  logSd?: Float64Array;
}

/** Kriging weights for one target. */
export interface KrigingWeights {
  /** λ: mean = Σ λᵢ·yᵢ (simple kriging: m + Σ λᵢ·(yᵢ − m)); on the log scale for a log transform. */
  weights: Float64Array;
  /**
   * Lagrange multipliers μ of the bordered system [[K, X], [Xᵀ, 0]]·(λ; μ) = (k₀; x₀), one per trend
   * column (1, x̃, ỹ) in the centred and scaled frame of ./trend.ts; empty for simple kriging.
   */
  lagrange: Float64Array;
  /** Kriging estimate (kriging scale: ln(value) for a log transform). */
  mean: number;
  /** Kriging variance of the noise-free surface (kriging scale). */
  variance: number;
}

/**
 * The factorised kriging system shared by prediction and cross-validation. Everything is in
 * centred coordinates; `z` holds the values on the kriging scale (ln for a log transform).
 */
export interface KrigingSystem {
  n: number;
  /** Number of trend columns (0 simple, 1 ordinary, 3 universal kriging). */
  p: number;
  model: CovarianceModel;
  frame: CoordinateFrame;
  /** Centred sample coordinates. */
  u: Float64Array;
  v: Float64Array;
  /** Values on the kriging scale. */
  z: Float64Array;
  /** Known mean (simple kriging) or 0. */
  m0: number;
  /** Trend columns X (n×p, row-major). */
  X: Float64Array;
  factor: CholeskyFactor;
  /** W = L⁻¹X (n×p, row-major). */
  W: Float64Array;
  /** Lower Cholesky factor of G = XᵀK⁻¹X (p×p, row-major). */
  Lg: Float64Array;
  /** GLS trend coefficients β̂ for the columns of X. */
  beta: Float64Array;
  /** α = K⁻¹(z − Xβ̂ − m0). */
  alpha: Float64Array;
  /** Prior variance of the surface (no nugget). */
  c0: number;
  nugget: number;
  log: boolean;
  warnings: Warning[];
}

/** A factorised kriging system that answers predictions. */
export interface Predictor {
  readonly n: number;
  readonly trendColumns: number;
  readonly model: CovarianceModel;
  /** Jitter added, coincident samples, ... */
  readonly warnings: Warning[];
  /** GLS trend coefficients for the columns (1, x̃, ỹ) of the centred, scaled frame. */
  readonly beta: Float64Array;
  readonly frame: CoordinateFrame;
  /** Mean and sd at the targets (working-CRS coordinates). */
  predict(tx: ArrayLike<number>, ty: ArrayLike<number>, options?: PredictOptions): Prediction;
  /** Kriging weights and Lagrange multipliers at one target (its encoded covariates for a covariate trend). */
  weights(tx: number, ty: number, covariates?: ArrayLike<number>): KrigingWeights;
  /** The underlying system (shared with cross-validation). */
  readonly system: KrigingSystem;
}

const DEFAULT_BLOCK = 512;

/** Throws GapwiseError('bad-model') unless the model has structures with non-negative sills adding up to more than 0 and a known transform. */
export function checkModel(model: CovarianceModel): void {
  if (!model || !Array.isArray(model.structures) || model.structures.length === 0) {
    throw new GapwiseError('bad-model', 'Expected the model to have at least one structure, got none.');
  }
  let total = 0;
  for (const s of model.structures) {
    if (!(typeof s.sill === 'number' && Number.isFinite(s.sill) && s.sill >= 0)) {
      throw new GapwiseError('bad-model', `Expected every sill to be a non-negative number, got ${JSON.stringify(s.sill)}.`);
    }
    total += s.sill;
  }
  if (!(total > 0)) throw new GapwiseError('bad-model', `Expected the sills to add up to more than 0, got ${total}.`);
  if (model.transform !== undefined && model.transform !== 'none' && model.transform !== 'log') {
    throw new GapwiseError('bad-model', `Expected the transform to be "none" or "log", got ${JSON.stringify(model.transform)}.`);
  }
}

function checkSamples(samples: Samples, model: CovarianceModel, p: number): void {
  if (!samples || !samples.x || !samples.y || !samples.value) {
    throw new GapwiseError('bad-value', 'Expected samples with x, y and value arrays.');
  }
  const n = samples.x.length;
  if (samples.y.length !== n || samples.value.length !== n) {
    throw new GapwiseError('bad-value',
      `Expected x, y and value of equal length, got ${n}, ${samples.y.length} and ${samples.value.length}.`);
  }
  if (n < 1) throw new GapwiseError('too-few-samples', 'Expected at least 1 sample, got 0.');
  if (p > 0 && n <= p) {
    const what = p === 1 ? 'an unknown constant mean' : isCovariateTrend(model.trend) ? `a trend with ${p} coefficients` : 'a linear trend';
    throw new GapwiseError('too-few-samples', `Expected more than ${p} samples for ${what}, got ${n}.`);
  }
  const log = model.transform === 'log';
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(samples.x[i]) || !Number.isFinite(samples.y[i])) {
      throw new GapwiseError('bad-value',
        `Sample ${i + 1} has coordinates (${samples.x[i]}, ${samples.y[i]}); expected finite numbers.`);
    }
    const z = samples.value[i];
    if (!Number.isFinite(z)) {
      throw new GapwiseError('bad-value', `Sample ${i + 1} has the value ${z}; expected a finite number.`);
    }
    if (log && !(z > 0)) {
      throw new GapwiseError('bad-value',
        `Sample ${i + 1} has the value ${z}; a log transform needs values greater than 0.`);
    }
  }
}

/** Counts samples that share their location with an earlier one (O(n log n)). */
function countCoincident(u: Float64Array, v: Float64Array): number {
  const n = u.length;
  const order = Array.from({ length: n }, (_, i) => i);
  order.sort((a, b) => u[a] - u[b] || v[a] - v[b]);
  let count = 0;
  for (let k = 1; k < n; k++) {
    if (u[order[k]] === u[order[k - 1]] && v[order[k]] === v[order[k - 1]]) count++;
  }
  return count;
}


/**
 * Validates the inputs, centres the coordinates, factorises K and solves the GLS trend.
 * Shared by createPredictor and leaveOneOut. Throws GapwiseError on bad input or a singular system.
 */
export function buildKrigingSystem(samples: Samples, model: CovarianceModel, options: PredictorOptions = {}): KrigingSystem {
  checkModel(model);
  const p = trendColumnCount(model.trend);
  checkSamples(samples, model, p);
  if (options.checkScale !== false) checkModelScale(model, samples.x, samples.y, samples.value);
  const n = samples.x.length;
  const log = model.transform === 'log';
  const warnings: Warning[] = [];

  const frame = trendFrame(model.trend, samples.x, samples.y, samples.covariates);
  const { u, v } = centreCoordinates(samples.x, samples.y, frame);
  const z = new Float64Array(n);
  for (let i = 0; i < n; i++) z[i] = log ? Math.log(samples.value[i]) : samples.value[i];

  const nugget = nuggetOf(model);
  const coincident = countCoincident(u, v);
  if (coincident > 0) {
    warnings.push({
      code: 'coincident-samples',
      message: `${coincident} sample${coincident === 1 ? ' shares its' : 's share their'} location with another sample${nugget > 0 ? '' : '; with no nugget the covariance matrix is singular, so merge duplicates or add a nugget'}.`,
    });
  }

  const K = sampleCovarianceMatrix(model, u, v);
  let factor: ReturnType<typeof cholesky>;
  try {
    factor = cholesky(K, n, { jitter: options.jitter ?? true });
  } catch (e) {
    if (!(e instanceof GapwiseError) || e.code !== 'not-positive-definite') throw e;
    throw new GapwiseError('not-positive-definite',
      `The ${n}×${n} covariance matrix is not positive definite: ${numericalFailureAdvice(samples.x, samples.y, z, model)}.`);
  }
  warnings.push(...factor.warnings);
  const L = factor.L;

  const m0 = knownMean(model.trend) ?? 0;
  const centredFrame: CoordinateFrame = { ...frame, cx: 0, cy: 0 };
  const X = designMatrix(model.trend, u, v, centredFrame, samples.covariates);
  const W = new Float64Array(n * p);
  const Lg = new Float64Array(p * p);
  const beta = new Float64Array(p);
  const resid = new Float64Array(n);
  if (p === 0) {
    for (let i = 0; i < n; i++) resid[i] = z[i] - m0;
  } else {
    W.set(X);
    solveLowerBlock(L, n, W, p);
    const zw = Float64Array.from(z);
    solveLowerInPlace(L, n, zw);
    // G = WᵀW and Wᵀ(L⁻¹z), then β̂ = G⁻¹·Wᵀ(L⁻¹z) through G's own Cholesky factor.
    const G = new Float64Array(p * p);
    const rhs = new Float64Array(p);
    for (let i = 0; i < n; i++) {
      for (let a = 0; a < p; a++) {
        const wa = W[i * p + a];
        rhs[a] += wa * zw[i];
        for (let b = 0; b <= a; b++) G[a * p + b] += wa * W[i * p + b];
      }
    }
    for (let a = 0; a < p; a++) for (let b = 0; b < a; b++) G[b * p + a] = G[a * p + b];
    let gFactor: CholeskyFactor | null = null;
    try {
      gFactor = cholesky(G, p);
    } catch {
      gFactor = null;
    }
    let worst = Infinity;
    if (gFactor) for (let a = 0; a < p; a++) worst = Math.min(worst, gFactor.L[a * p + a] ** 2 / G[a * p + a]);
    if (!gFactor || !(worst > 1e-12)) {
      throw new GapwiseError('not-positive-definite', isCovariateTrend(model.trend)
        ? `The trend coefficients cannot be estimated: a covariate is constant over the samples, a level has no sample, or a covariate is a combination of the others (${p} columns); drop that covariate or add samples.`
        : p === 3
        ? 'The linear trend cannot be estimated: the samples lie on a line (or nearly so); use a constant trend or add samples off that line.'
        : 'The trend cannot be estimated from these samples; use a known mean or check the samples.');
    }
    Lg.set(gFactor.L);
    beta.set(rhs);
    solveLowerInPlace(Lg, p, beta);
    solveUpperTransposeInPlace(Lg, p, beta);
    for (let i = 0; i < n; i++) {
      let s = z[i];
      for (let a = 0; a < p; a++) s -= X[i * p + a] * beta[a];
      resid[i] = s;
    }
  }
  const alpha = resid;
  solveLowerInPlace(L, n, alpha);
  solveUpperTransposeInPlace(L, n, alpha);

  return {
    n, p, model, frame, u, v, z, m0, X, factor, W, Lg, beta, alpha,
    c0: surfaceVariance(model), nugget, log, warnings,
  };
}

function checkTargets(tx: ArrayLike<number>, ty: ArrayLike<number>): void {
  if (tx.length !== ty.length) {
    throw new GapwiseError('bad-value', `Expected target x and y of equal length, got ${tx.length} and ${ty.length}.`);
  }
  for (let j = 0; j < tx.length; j++) {
    if (!Number.isFinite(tx[j]) || !Number.isFinite(ty[j])) {
      throw new GapwiseError('bad-value', `Target ${j + 1} has coordinates (${tx[j]}, ${ty[j]}); expected finite numbers.`);
    }
  }
}

/** Predicts at targets from a factorised system (see Predictor.predict). */
export function predictWithSystem(
  sys: KrigingSystem, tx: ArrayLike<number>, ty: ArrayLike<number>, options: PredictOptions = {},
): Prediction {
  checkTargets(tx, ty);
  const { n, p, model, frame, u, v, W, Lg, beta, alpha, c0, nugget, m0, log } = sys;
  const L = sys.factor.L;
  const total = tx.length;
  const wantSd = log || options.sd !== false;
  const block = Math.max(1, Math.floor(options.blockSize ?? DEFAULT_BLOCK));
  const mean = new Float64Array(total);
  const sd = new Float64Array(total);
  const sdObserved = new Float64Array(total);
  const centredFrame: CoordinateFrame = { ...frame, cx: 0, cy: 0 };
  const q = covariateColumnCount(model.trend);
  if (q > 0) checkCovariateRows(model.trend, total, options.covariates, 'target');
  const tc = options.covariates;
  const x0 = new Float64Array(Math.min(block, total) * p);
  const cross = new Float64Array(Math.min(block, total) * p);
  const qq = new Float64Array(Math.min(block, total));
  const t = new Float64Array(p);
  const buffer = new Float64Array(n * Math.min(block, total));

  for (let j0 = 0; j0 < total; j0 += block) {
    const m = Math.min(block, total - j0);
    const tu = new Float64Array(m);
    const tv = new Float64Array(m);
    for (let j = 0; j < m; j++) {
      tu[j] = tx[j0 + j] - frame.cx;
      tv[j] = ty[j0 + j] - frame.cy;
      designRow(model.trend, tu[j], tv[j], centredFrame, x0, j * p, tc, (j0 + j) * q);
    }
    // n×m: row i holds the covariances of sample i with the block's targets (C is symmetric in the pair).
    const B = m * n === buffer.length ? buffer : buffer.subarray(0, n * m);
    crossCovarianceFastInto(model, u, v, tu, tv, B);

    // mean = m0 + x₀ᵀβ̂ + k₀ᵀα
    for (let j = 0; j < m; j++) {
      let s = m0;
      for (let a = 0; a < p; a++) s += x0[j * p + a] * beta[a];
      mean[j0 + j] = s;
    }
    for (let i = 0; i < n; i++) {
      const ai = alpha[i];
      const bi = i * m;
      for (let j = 0; j < m; j++) mean[j0 + j] += ai * B[bi + j];
    }

    if (wantSd) {
      solveLowerBlock(L, n, B, m);
      qq.fill(0, 0, m);
      cross.fill(0, 0, m * p);
      for (let i = 0; i < n; i++) {
        const bi = i * m;
        for (let j = 0; j < m; j++) qq[j] += B[bi + j] * B[bi + j];
        for (let a = 0; a < p; a++) {
          const wia = W[i * p + a];
          const ca = a * m;
          for (let j = 0; j < m; j++) cross[ca + j] += wia * B[bi + j];
        }
      }
      for (let j = 0; j < m; j++) {
        let variance = c0 - qq[j];
        if (p > 0) {
          for (let a = 0; a < p; a++) t[a] = x0[j * p + a] - cross[a * m + j];
          solveLowerInPlace(Lg, p, t);
          for (let a = 0; a < p; a++) variance += t[a] * t[a];
        }
        const s = Math.sqrt(Math.max(0, variance));
        sd[j0 + j] = s;
        sdObserved[j0 + j] = Math.sqrt(s * s + nugget);
      }
    } else {
      sd.fill(NaN, j0, j0 + m);
      sdObserved.fill(NaN, j0, j0 + m);
    }
    options.onProgress?.(j0 + m, total);
    if (options.isCancelled?.()) throw new GapwiseError('cancelled', `Prediction stopped after ${j0 + m} of ${total} targets.`);
  }

  if (!log) return { mean, sd, sdObserved };
  // Lognormal back-transform. The bias correction exp(Ŷ + σ²/2) is exact for simple kriging; for
  // ordinary and universal kriging a Lagrange term also enters (Journel 1980, from memory). We use
  // the simple form for every trend.
  return { ...logPredictionToDataScale(mean, sd, nugget), logMean: mean, logSd: sd };
}

/** Kriging weights at one target from a factorised system (see Predictor.weights). */
export function weightsWithSystem(sys: KrigingSystem, tx: number, ty: number, covariates?: ArrayLike<number>): KrigingWeights {
  checkTargets([tx], [ty]);
  if (covariateColumnCount(sys.model.trend) > 0) checkCovariateRows(sys.model.trend, 1, covariates, 'target');
  const { n, p, model, frame, u, v, W, Lg, beta, alpha, c0, m0 } = sys;
  const L = sys.factor.L;
  const tu = tx - frame.cx;
  const tv = ty - frame.cy;
  const x0 = new Float64Array(p);
  designRow(model.trend, tu, tv, { ...frame, cx: 0, cy: 0 }, x0, 0, covariates);
  const k0 = crossCovarianceMatrix(model, [tu], [tv], u, v);
  let mean = m0;
  for (let a = 0; a < p; a++) mean += x0[a] * beta[a];
  for (let i = 0; i < n; i++) mean += alpha[i] * k0[i];
  // w = L⁻¹k₀; t = G⁻¹(x₀ − Wᵀw); λ = L⁻ᵀ(w + W·t); Kλ = k₀ + X·t, so μ = −t.
  const w = Float64Array.from(k0);
  solveLowerInPlace(L, n, w);
  let variance = c0;
  for (let i = 0; i < n; i++) variance -= w[i] * w[i];
  const t = trendGap(W, w, x0, n, p, Lg);
  for (let a = 0; a < p; a++) variance += t[a] * t[a];
  solveUpperTransposeInPlace(Lg, p, t);
  const lambda = Float64Array.from(w);
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let a = 0; a < p; a++) s += W[i * p + a] * t[a];
    lambda[i] += s;
  }
  solveUpperTransposeInPlace(L, n, lambda);
  const lagrange = new Float64Array(p);
  for (let a = 0; a < p; a++) lagrange[a] = -t[a];
  return { weights: lambda, lagrange, mean, variance: Math.max(0, variance) };
}

/**
 * Factorises the kriging system of the samples under the model once and returns a predictor.
 * Trend from model.trend: {known: m} simple, 'constant' ordinary, 'linear' universal kriging.
 * Throws GapwiseError: 'too-few-samples', 'bad-value' (non-finite, or ≤ 0 with a log transform),
 * 'bad-model', 'not-positive-definite'.
 */
export function createPredictor(samples: Samples, model: CovarianceModel, options: PredictorOptions = {}): Predictor {
  const system = buildKrigingSystem(samples, model, options);
  return {
    n: system.n,
    trendColumns: system.p,
    model,
    warnings: system.warnings,
    beta: system.beta,
    frame: system.frame,
    system,
    predict: (tx, ty, opts) => checkPredictionFinite(model, predictWithSystem(system, tx, ty, opts), tx, ty, opts?.sd !== false || model.transform === 'log'),
    weights: (tx, ty, covariates) => weightsWithSystem(system, tx, ty, covariates),
  };
}

/**
 * Returns the prediction when every value asked for is finite, else throws GapwiseError 'non-finite'
 * naming the result, the target and the likely model parameter (model.ts `nonFiniteResult`).
 */
export function checkPredictionFinite<P extends Prediction>(model: CovarianceModel, p: P, tx: ArrayLike<number>, ty: ArrayLike<number>, withSd: boolean): P {
  const parts: Array<[string, Float64Array | undefined]> = [['kriging mean', p.mean], ['median', p.median]];
  if (withSd) parts.push(['sd', p.sd], ['sd of a new measurement', p.sdObserved]);
  for (const [what, values] of parts) {
    if (!values) continue;
    for (let i = 0; i < values.length; i++) {
      if (!Number.isFinite(values[i])) throw nonFiniteResult(model, what, `target ${i + 1} (${tx[i]}, ${ty[i]})`, values[i]);
    }
  }
  return p;
}

/**
 * Covariance of the GLS trend coefficients, (XᵀK⁻¹X)⁻¹ = Lg⁻ᵀLg⁻¹ in the system's columns (p×p,
 * row-major); on the kriging scale (ln for a log model).
 */
function trendCovariance(sys: KrigingSystem): Float64Array {
  const p = sys.p;
  const V = new Float64Array(p * p);
  const e = new Float64Array(p);
  for (let c = 0; c < p; c++) {
    e.fill(0);
    e[c] = 1;
    solveLowerInPlace(sys.Lg, p, e);
    solveUpperTransposeInPlace(sys.Lg, p, e);
    for (let a = 0; a < p; a++) V[a * p + c] = e[a];
  }
  return V;
}

/**
 * The GLS trend coefficients with their standard errors in the columns' own units (./trend.ts
 * `trendCoefficients`): the covariance model is taken as known, so Cov(β̂) = (XᵀK⁻¹X)⁻¹.
 */
export function systemTrendCoefficients(sys: KrigingSystem): TrendCoefficient[] {
  return trendCoefficients(sys.model.trend, sys.frame, sys.beta, trendCovariance(sys));
}

/** One-shot convenience: builds a predictor and predicts mean and sd at the targets. */
export function predictAt(
  samples: Samples, model: CovarianceModel, tx: ArrayLike<number>, ty: ArrayLike<number>,
  options: PredictOptions = {},
): Prediction & { warnings: Warning[] } {
  const predictor = createPredictor(samples, model);
  return { ...predictor.predict(tx, ty, options), warnings: predictor.warnings };
}

/** Kriging weights λ (and Lagrange multipliers) for one target; ordinary-kriging weights sum to one. */
export function krigingWeights(samples: Samples, model: CovarianceModel, tx: number, ty: number): KrigingWeights {
  return createPredictor(samples, model).weights(tx, ty);
}

/**
 * t = G⁻¹ᐟ²(x₀ − Wᵀw) of universal kriging: how far the target's trend row x₀ is from what the
 * whitened sample trend W (n × p, row-major) reproduces through w = L⁻¹k₀, through the factor Lg of
 * G = WᵀW (p × p). Its squared length adds to the kriging variance; Lg⁻ᵀt is −μ.
 */
export function trendGap(W: ArrayLike<number>, w: ArrayLike<number>, x0: ArrayLike<number>, n: number, p: number, Lg: Float64Array): Float64Array {
  const t = new Float64Array(p);
  for (let a = 0; a < p; a++) {
    let s = x0[a];
    for (let i = 0; i < n; i++) s -= W[i * p + a] * w[i];
    t[a] = s;
  }
  solveLowerInPlace(Lg, p, t);
  return t;
}
