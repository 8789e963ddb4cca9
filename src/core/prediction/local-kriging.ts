/**
 * Kriging from local neighbourhoods: each target is predicted from its m nearest samples (default
 * 64) instead of all n, so a surface costs O(cells·m³) time and O(n + m²) memory, never n².
 *
 * For a target s₀ with neighbours N, K = C(N, N) + nugget·I = L·Lᵀ, k₀ = C(N, s₀), v = L⁻¹k₀,
 * X the trend columns over N, W = L⁻¹X, G = WᵀW = Lg·Lgᵀ, r = L⁻¹(z − Xβ̂):
 *   mean = x₀ᵀβ̂ + vᵀr,   var = c₀ − vᵀv + ‖Lg⁻¹(x₀ − Wᵀv)‖²
 * (the dual GLS form of kriging.ts applied to the neighbourhood; Cressie 1993 §3.2–3.4 for simple,
 * ordinary and universal kriging). Trend as in the model: {known: m} simple, 'constant' ordinary,
 * 'linear' universal kriging with the drift re-estimated in each neighbourhood. With
 * `globalMean: true` the trend is instead the GLS estimate β̂ from all samples (dense for small n,
 * nearest-neighbour factor of ./vecchia.ts otherwise), computed once and used as a known mean:
 * simple kriging in every neighbourhood (its sd leaves out the small uncertainty of β̂).
 * Neighbours are nearest in effective (anisotropic) distance. Consecutive targets that share their
 * neighbour set share its factor; covariances between samples already in the previous set are
 * copied rather than recomputed. On a grid (`targetSpacing`), when it is cheaper (chooseTile),
 * targets are grouped in square tiles of width w and each tile uses every sample within
 * d_m(c) + √2·w of its centre c: a set holding the m nearest samples of each of its targets, so
 * every target sees at least its own m nearest, one factorisation serves the whole tile, and the
 * answer is closer to exact kriging. Results do not depend on the order of the targets or on how
 * they are split between calls.
 * Log transform as kriging.ts: kriging of ln(value), mean exp(Ŷ + σ²/2), median exp(Ŷ).
 * Units: metres; mean and sd in data units. Cost per target: about m³/3 flops and m²/2 covariances
 * when the set changes, m² flops and m covariances when it does not; with tiles, M³/3 flops per
 * tile of M samples and M² flops plus M covariances per target.
 */
import type { CovarianceModel } from '../covariance/model.ts';
import { checkModelScale, nuggetOf } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import { GapwiseError, type Warning } from '../shared/errors.ts';
import { acrossAxis, alongAxis, anisotropyFrame, covarianceFunction, fromStretched, surfaceVariance, toIsotropicCoordinates } from '../covariance/covariance.ts';
import { choleskyInPlace, solveLowerInPlace } from '../linalg/linalg.ts';
import {
  designRow, knownMean, trendColumnCount, trendFrame, covariateColumnCount, checkCovariateRows, type CoordinateFrame,
} from '../covariance/trend.ts';
import { NeighbourIndex } from '../geometry/neighbours.ts';
import { vecchiaTrend } from '../fitting/vecchia.ts';
import { checkModel, checkPredictionFinite, createPredictor, type PredictOptions, type Prediction } from './kriging.ts';
import { logPredictionToDataScale } from '../shared/lognormal.ts';
import { neighbourhoodFailureAdvice } from '../covariance/numerical-advice.ts';

/** Default neighbourhood size. */
export const DEFAULT_LOCAL_NEIGHBOURS = 64;
/** The most neighbours of a local neighbourhood (an m × m matrix is factorised per neighbourhood). */
export const MAX_LOCAL_NEIGHBOURS = 2000;
/** From this size a neighbourhood is factorised by linalg.ts (its WebAssembly kernel) instead of the row-by-row loop below. */
const LARGE_FACTOR = 96;
/** Up to this many samples the global mean comes from the dense GLS; above, from the nearest-neighbour factor. */
const DENSE_GLOBAL_MEAN_LIMIT = 1000;

/** Options of a local predictor (plain data). */
export interface LocalKrigingOptions {
  /** Samples per neighbourhood, m; default 64 (all samples when there are fewer). */
  neighbours?: number;
  /** Use the GLS trend estimate from all samples as a known mean in each neighbourhood; default false. */
  globalMean?: boolean;
  /** Neighbours per sample in the nearest-neighbour GLS of the global mean; default 30. */
  meanNeighbours?: number;
  /** Add a small diagonal jitter to a neighbourhood matrix that cannot be factorised (reported); default true. */
  jitter?: boolean;
  /**
   * With globalMean: the global trend coefficients when already computed (columns of ./trend.ts, as
   * returned in `beta`), so workers sharing one data set need not each recompute them.
   */
  globalBeta?: number[];
  /**
   * Distance between neighbouring targets when they lie on a grid (the cell size, metres). When set,
   * targets are grouped in square tiles that share one neighbourhood holding every target's m
   * nearest samples, if that is cheaper than one neighbourhood per target (see chooseTile).
   */
  targetSpacing?: number;
}

/** A covariance evaluation (square root, exponential, call) costs about this many multiply-adds. */
const KERNEL_COST = 20;
/** Tile widths tried, in target spacings. */
const TILE_STEPS = [2, 3, 4, 6, 8, 12, 16, 24, 32];

/**
 * The tile width (isotropic metres) for targets `spacing` metres apart, or null when one
 * neighbourhood per target is cheaper. A tile of width w shares the samples within d_m + √2·w of its
 * centre, about M = πρ(d_m + √2·w)² of them (ρ the samples per m² over their bounding box, d_m the
 * radius holding m of them), factorised once (M³/6 multiply-adds, M²/2 covariances) for its (w/spacing)²
 * targets, each then costing M²/2 + M covariances; one neighbourhood per target costs about m³/6 +
 * m²/2 and m²/16 new covariances (neighbouring targets share most samples). The cap (the largest
 * neighbourhood a tile may hold) is max(4m, 256), at most n.
 */
export function chooseTile(n: number, m: number, u: ArrayLike<number>, v: ArrayLike<number>, spacing: number): { width: number; cap: number } | null {
  if (!(Number.isFinite(spacing) && spacing > 0) || n <= m) return null;
  let umin = Infinity, umax = -Infinity, vmin = Infinity, vmax = -Infinity;
  for (let i = 0; i < u.length; i++) {
    umin = Math.min(umin, u[i]); umax = Math.max(umax, u[i]);
    vmin = Math.min(vmin, v[i]); vmax = Math.max(vmax, v[i]);
  }
  const area = (umax - umin) * (vmax - vmin);
  if (!(area > 0)) return null;
  const rho = n / area;
  const d = Math.sqrt(m / (Math.PI * rho));
  const cap = Math.min(n, Math.max(4 * m, 256));
  let bestCost = m ** 3 / 6 + (m * m) / 2 + KERNEL_COST * (m + (m * m) / 16);
  let best: { width: number; cap: number } | null = null;
  for (const k of TILE_STEPS) {
    const width = k * spacing;
    const M = Math.PI * rho * (d + Math.SQRT2 * width) ** 2;
    if (M > 0.75 * cap) break;
    const cost = (M ** 3 / 6 + (KERNEL_COST * M * M) / 2) / (k * k) + (M * M) / 2 + (KERNEL_COST + 1) * M;
    if (cost < bestCost) {
      bestCost = cost;
      best = { width, cap };
    }
  }
  return best;
}

/** Predictions with the warnings met while computing them. */
export type LocalPrediction = Prediction & { warnings: Warning[] };

/** A local-neighbourhood predictor: build once (O(n log n)), then query in blocks or rows. */
export interface LocalPredictor {
  readonly n: number;
  /** Neighbourhood size actually used: min(m, n). */
  readonly neighbours: number;
  readonly model: CovarianceModel;
  /** Problems found so far: while building (jitter of the global GLS) and while predicting (a running jitter total). */
  readonly warnings: Warning[];
  /** The global GLS trend coefficients (globalMean only; empty otherwise), columns of ./trend.ts. */
  readonly beta: Float64Array;
  readonly frame: CoordinateFrame;
  /** Mean and sd at the targets (working-CRS coordinates). */
  predict(tx: ArrayLike<number>, ty: ArrayLike<number>, options?: PredictOptions): LocalPrediction;
}

function checkInputs(samples: Samples, model: CovarianceModel, p: number): void {
  checkModel(model);
  if (!samples || !samples.x || !samples.y || !samples.value) throw new GapwiseError('bad-value', 'Expected samples with x, y and value arrays.');
  const n = samples.x.length;
  if (samples.y.length !== n || samples.value.length !== n) {
    throw new GapwiseError('bad-value', `Expected x, y and value of equal length, got ${n}, ${samples.y.length} and ${samples.value.length}.`);
  }
  if (n < 1) throw new GapwiseError('too-few-samples', 'Expected at least 1 sample, got 0.');
  if (p > 0 && n <= p) {
    throw new GapwiseError('too-few-samples', `Expected more than ${p} samples for ${p === 1 ? 'an unknown constant mean' : 'a linear trend'}, got ${n}.`);
  }
  const log = model.transform === 'log';
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(samples.x[i]) || !Number.isFinite(samples.y[i])) {
      throw new GapwiseError('bad-value', `Sample ${i + 1} has coordinates (${samples.x[i]}, ${samples.y[i]}); expected finite numbers.`);
    }
    const z = samples.value[i];
    if (!Number.isFinite(z)) throw new GapwiseError('bad-value', `Sample ${i + 1} has the value ${z}; expected a finite number.`);
    if (log && !(z > 0)) throw new GapwiseError('bad-value', `Sample ${i + 1} has the value ${z}; a log transform needs values greater than 0.`);
  }
  checkModelScale(model, samples.x, samples.y, samples.value);
}

/**
 * Cholesky factor of a small SPD matrix in place, reading and writing only the lower triangle
 * (row by row: each row from the rows above it; two accumulators for the short dot products).
 * Returns false when a pivot is not positive. q³/6 multiply-adds.
 */
function factorLower(a: Float64Array, q: number): boolean {
  // Large neighbourhoods (growth, the accuracy reference) go through linalg.ts: the WebAssembly
  // kernel when present (several times faster from about 100 rows), the blocked TypeScript otherwise.
  if (q >= LARGE_FACTOR) return choleskyInPlace(a, q);
  for (let i = 0; i < q; i++) {
    const rowI = i * q;
    for (let j = 0; j < i; j++) {
      const rowJ = j * q;
      let s0 = a[rowI + j];
      let s1 = 0;
      let k = 0;
      for (; k + 1 < j; k += 2) {
        s0 -= a[rowI + k] * a[rowJ + k];
        s1 -= a[rowI + k + 1] * a[rowJ + k + 1];
      }
      if (k < j) s0 -= a[rowI + k] * a[rowJ + k];
      a[rowI + j] = (s0 + s1) / a[rowJ + j];
    }
    let d = a[rowI + i];
    for (let k = 0; k < i; k++) d -= a[rowI + k] * a[rowI + k];
    if (!(d > 0)) return false;
    a[rowI + i] = Math.sqrt(d);
  }
  return true;
}

/**
 * The GLS trend coefficients β̂ from all samples (columns of ./trend.ts; on the log scale for a log
 * transform): dense up to 1,000 samples, through the nearest-neighbour factor of ./vecchia.ts above.
 */
export function globalMeanCoefficients(
  samples: Samples, model: CovarianceModel, options: Pick<LocalKrigingOptions, 'meanNeighbours'> = {},
): { beta: Float64Array; warnings: Warning[] } {
  const n = samples.value.length;
  const log = model.transform === 'log';
  const value = log ? Float64Array.from(samples.value, Math.log) : samples.value;
  const zSamples: Samples = { x: samples.x, y: samples.y, value, covariates: samples.covariates };
  const linear: CovarianceModel = { ...model, transform: 'none' };
  if (n <= DENSE_GLOBAL_MEAN_LIMIT) {
    const exact = createPredictor(zSamples, linear);
    return { beta: Float64Array.from(exact.beta), warnings: [...exact.warnings] };
  }
  const t = vecchiaTrend(zSamples, linear, { neighbours: options.meanNeighbours });
  return { beta: Float64Array.from(t.beta), warnings: t.warnings };
}


/** The samples as the neighbourhood systems see them: kriging-scale values, centred and isotropic coordinates, the index. */
interface LocalSamples {
  n: number;
  frame: CoordinateFrame;
  /** Values on the kriging scale (log for a log model). */
  z: Float64Array;
  /** Isotropic (rotated, stretched) coordinates: distances for the covariance and the search. */
  iu: Float64Array;
  iv: Float64Array;
  /** Centred working coordinates: the local trend frame. */
  cu: Float64Array;
  cv: Float64Array;
  index: NeighbourIndex;
}

function prepareLocalSamples(samples: Samples, model: CovarianceModel): LocalSamples {
  const trend = model.trend ?? 'constant';
  const n = samples.x.length;
  const log = model.transform === 'log';
  const frame = trendFrame(trend, samples.x, samples.y, samples.covariates);
  const z = new Float64Array(n);
  for (let i = 0; i < n; i++) z[i] = log ? Math.log(samples.value[i]) : samples.value[i];
  const { u: iu, v: iv } = toIsotropicCoordinates(model.anisotropy, samples.x, samples.y, frame.cx, frame.cy);
  const cu = new Float64Array(n);
  const cv = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    cu[i] = samples.x[i] - frame.cx;
    cv[i] = samples.y[i] - frame.cy;
  }
  return { n, frame, z, iu, iv, cu, cv, index: new NeighbourIndex(iu, iv) };
}

/** The mean the neighbourhoods krige around and the values they see. */
interface LocalMean {
  /** The global GLS trend is used as a known mean (globalMean, or a covariate trend). */
  globalMean: boolean;
  /** Global trend coefficients (globalMean only; empty otherwise). */
  beta: Float64Array;
  /** Trend columns estimated in each neighbourhood (0: known or global mean). */
  p: number;
  /** The known mean (simple kriging), 0 otherwise. */
  m0: number;
  /** Values the neighbourhood systems see: residuals from the known or global mean, else z. */
  zr: Float64Array;
}

/**
 * Global mean: β̂ from all samples, then residuals for simple kriging. A covariate trend always takes
 * the global GLS trend (regression kriging of the residuals): the neighbourhood systems hold only the
 * constant and x, y columns.
 */
function localMean(samples: Samples, model: CovarianceModel, options: LocalKrigingOptions, s: LocalSamples, warnings: Warning[]): LocalMean {
  const trend = model.trend ?? 'constant';
  const pModel = trendColumnCount(trend);
  const covariateCount = covariateColumnCount(trend);
  const globalMean = (options.globalMean === true || covariateCount > 0) && pModel > 0;
  let beta: Float64Array = new Float64Array(0);
  if (globalMean) {
    if (options.globalBeta !== undefined) {
      if (options.globalBeta.length !== pModel || !options.globalBeta.every(Number.isFinite)) {
        throw new GapwiseError('bad-option', `Expected ${pModel} finite global trend coefficients, got ${JSON.stringify(options.globalBeta)}.`);
      }
      beta = Float64Array.from(options.globalBeta);
    } else {
      const g = globalMeanCoefficients(samples, model, options);
      beta = g.beta;
      warnings.push(...g.warnings);
    }
  }
  const p = globalMean ? 0 : pModel;
  const m0 = knownMean(trend) ?? 0;
  const { n, z, frame } = s;
  const zr = new Float64Array(n);
  const row = new Float64Array(Math.max(3, pModel));
  for (let i = 0; i < n; i++) {
    if (globalMean) {
      designRow(trend, samples.x[i], samples.y[i], frame, row, 0, samples.covariates, i * covariateCount);
      let mu = 0;
      for (let a = 0; a < pModel; a++) mu += row[a] * beta[a];
      zr[i] = z[i] - mu;
    } else {
      zr[i] = pModel === 0 ? z[i] - m0 : z[i];
    }
  }
  return { globalMean, beta, p, m0, zr };
}

/** One target in working (centred: pu, pv) and isotropic (qu, qv) coordinates, at position j of a call. */
interface TargetPoint {
  j: number;
  x: number;
  y: number;
  pu: number;
  pv: number;
  qu: number;
  qv: number;
}

/** A call's outputs and settings, written by Neighbourhood.predictAt. */
interface TargetOutputs {
  mean: Float64Array;
  sd: Float64Array;
  sdObserved: Float64Array;
  wantSd: boolean;
  /** The targets' encoded covariates (covariate trends). */
  covariates?: ArrayLike<number>;
}

/**
 * The current neighbourhood and its factor, with the work buffers every call reuses. Matrices are
 * size × size with stride size (size ≤ cap). Covariances of samples already in the previous set are
 * copied rather than recomputed; a set equal to the current one keeps its factor.
 */
class Neighbourhood {
  ids: Uint32Array;
  prevIds: Uint32Array;
  /** Samples in the current neighbourhood, and in the previous one. */
  size = 0;
  prevSize = 0;
  /** Unfactored covariances (lower triangle) of the current set, and of the previous one. */
  K: Float64Array;
  Kprev: Float64Array;
  readonly L: Float64Array;
  readonly map: Int32Array;
  readonly W: Float64Array;
  readonly Lg = new Float64Array(9);
  readonly r: Float64Array;
  readonly betaLocal = new Float64Array(3);
  readonly kv: Float64Array;
  readonly w: Float64Array;
  readonly x0: Float64Array;
  readonly t = new Float64Array(3);
  /** A factor for `ids` is ready. */
  have = false;
  /** The local trend frame: centre and scale. */
  frameX = 0;
  frameY = 0;
  frameS = 1;
  jitterCount = 0;
  maxJitter = 0;

  constructor(
    readonly samples: Samples, readonly model: CovarianceModel, readonly s: LocalSamples, readonly mean: LocalMean,
    readonly cov: (h: number) => number, readonly allowJitter: boolean, cap: number,
  ) {
    this.ids = new Uint32Array(cap);
    this.prevIds = new Uint32Array(cap);
    this.K = new Float64Array(cap * cap);
    this.Kprev = new Float64Array(cap * cap);
    this.L = new Float64Array(cap * cap);
    this.map = new Int32Array(cap);
    this.W = new Float64Array(cap * 3);
    this.r = new Float64Array(cap);
    this.kv = new Float64Array(cap);
    this.w = new Float64Array(cap);
    this.pModel = trendColumnCount(model.trend ?? 'constant');
    this.covariateCount = covariateColumnCount(model.trend ?? 'constant');
    this.x0 = new Float64Array(Math.max(3, this.pModel));
    this.c0 = surfaceVariance(model);
    this.nugget = nuggetOf(model);
  }

  readonly c0: number;
  readonly nugget: number;
  /** Trend columns of the model, and covariate columns among them. */
  readonly pModel: number;
  readonly covariateCount: number;

  /** Covariances of the new set, copying those of samples already in the previous set. */
  fillK(reuse: boolean): void {
    const { ids, prevIds, size, prevSize, map, cov } = this;
    const { iu, iv } = this.s;
    const diagonal = this.c0 + this.nugget;
    if (reuse) {
      // Both lists are sorted: merge to map each new position to its old one (or −1).
      let a = 0;
      let b = 0;
      while (a < size) {
        if (b >= prevSize || ids[a] < prevIds[b]) map[a++] = -1;
        else if (ids[a] === prevIds[b]) map[a++] = b++;
        else b++;
      }
    }
    // The current matrix becomes the previous one; the new one is written over the old previous.
    const Kprev = this.K;
    const K = this.Kprev;
    this.Kprev = Kprev;
    this.K = K;
    for (let a = 0; a < size; a++) {
      const ia = ids[a];
      const xa = iu[ia];
      const ya = iv[ia];
      const rowA = a * size;
      const ma = reuse ? map[a] : -1;
      for (let b = 0; b < a; b++) {
        const mb = reuse ? map[b] : -1;
        let c: number;
        if (ma >= 0 && mb >= 0) c = Kprev[ma * prevSize + mb];
        else {
          const ib = ids[b];
          const dx = xa - iu[ib];
          const dy = ya - iv[ib];
          c = cov(Math.sqrt(dx * dx + dy * dy));
        }
        K[rowA + b] = c; // lower triangle only: the merge keeps the order, so old b < old a too
      }
      K[rowA + a] = diagonal;
    }
  }

  /** Factorises K into L, adding a reported jitter to the diagonal when it is needed and allowed. */
  factorK(): void {
    const q = this.size;
    const Lq = this.L.subarray(0, q * q);
    const K = this.K;
    Lq.set(K.subarray(0, q * q));
    if (factorLower(Lq, q)) return;
    const diagonal = this.c0 + this.nugget;
    let ok = false;
    if (this.allowJitter) {
      for (let rel = 1e-10; rel <= 1.0001e-4 && !ok; rel *= 10) {
        Lq.set(K.subarray(0, q * q));
        const add = rel * diagonal;
        for (let a = 0; a < q; a++) Lq[a * q + a] += add;
        ok = factorLower(Lq, q);
        if (ok) {
          this.jitterCount++;
          this.maxJitter = Math.max(this.maxJitter, add);
        }
      }
    }
    if (!ok) {
      throw new GapwiseError('not-positive-definite',
        `The covariance matrix of a ${q}-sample neighbourhood is not positive definite: ${neighbourhoodFailureAdvice(this.ids, q, this.samples.x, this.samples.y, this.s.z, this.model)}.`);
    }
  }

  /** Factorises K (jitter if needed) and solves the neighbourhood's trend; (px, py) centres the local trend frame. */
  factor(px: number, py: number): void {
    const q = this.size;
    this.factorK();
    const Lq = this.L.subarray(0, q * q);
    const { ids, r } = this;
    const { zr, p } = this.mean;
    for (let a = 0; a < q; a++) r[a] = zr[ids[a]];
    solveLowerInPlace(Lq, q, r);
    if (p === 0) return;
    this.solveLocalTrend(px, py);
  }

  /** The neighbourhood's own trend: W = L⁻¹X, G = WᵀW = Lg·Lgᵀ, β̂ local = G⁻¹Wᵀr, then r ← r − Wβ̂ (= L⁻¹(z − Xβ̂)). */
  solveLocalTrend(px: number, py: number): void {
    const q = this.size;
    const Lq = this.L.subarray(0, q * q);
    const { ids, r, W, Lg, w, betaLocal } = this;
    const { cu, cv } = this.s;
    const p = this.mean.p;
    // Local trend frame: centred on (px, py), scaled by the farthest neighbour.
    this.frameX = px;
    this.frameY = py;
    let far = 0;
    for (let a = 0; a < q; a++) far = Math.max(far, Math.hypot(cu[ids[a]] - px, cv[ids[a]] - py));
    this.frameS = far > 0 ? far : 1;
    const { frameX, frameY, frameS } = this;
    for (let c = 0; c < p; c++) {
      for (let a = 0; a < q; a++) {
        const id = ids[a];
        w[a] = c === 0 ? 1 : c === 1 ? (cu[id] - frameX) / frameS : (cv[id] - frameY) / frameS;
      }
      solveLowerInPlace(Lq, q, w);
      for (let a = 0; a < q; a++) W[a * p + c] = w[a];
    }
    Lg.fill(0);
    for (let a = 0; a < q; a++) {
      for (let c1 = 0; c1 < p; c1++) {
        const wc = W[a * p + c1];
        for (let c2 = 0; c2 <= c1; c2++) Lg[c1 * p + c2] += wc * W[a * p + c2];
      }
    }
    for (let c1 = 0; c1 < p; c1++) for (let c2 = 0; c2 < c1; c2++) Lg[c2 * p + c1] = Lg[c1 * p + c2];
    if (!choleskyInPlace(Lg, p)) {
      throw new GapwiseError('not-positive-definite', p === 3
        ? `The linear trend cannot be estimated in a ${q}-sample neighbourhood: its samples lie on a line; use a constant trend, the global mean, or more neighbours.`
        : 'The trend cannot be estimated in a neighbourhood; use a known mean or check the samples.');
    }
    for (let c = 0; c < p; c++) {
      let s = 0;
      for (let a = 0; a < q; a++) s += W[a * p + c] * r[a];
      betaLocal[c] = s;
    }
    solveLowerInPlace(Lg, p, betaLocal);
    for (let i = p - 1; i >= 0; i--) {
      let s = betaLocal[i];
      for (let k = i + 1; k < p; k++) s -= Lg[k * p + i] * betaLocal[k];
      betaLocal[i] = s / Lg[i * p + i];
    }
    for (let a = 0; a < q; a++) {
      let s = r[a];
      for (let c = 0; c < p; c++) s -= W[a * p + c] * betaLocal[c];
      r[a] = s;
    }
  }

  /** Makes the sorted sample set `found` the current neighbourhood (refactorising unless it already is). */
  useSet(found: Uint32Array, px: number, py: number): void {
    const count = found.length;
    if (this.have && count === this.size) {
      let same = true;
      for (let a = 0; a < count; a++) if (found[a] !== this.ids[a]) { same = false; break; }
      if (same) return;
    }
    const spare = this.prevIds;
    this.prevIds = this.ids;
    this.ids = spare;
    this.prevSize = this.size;
    this.ids.set(found);
    this.size = count;
    this.fillK(this.have);
    this.factor(px, py);
    this.have = true;
  }

  /** The trend part of target t's mean: global, known or the neighbourhood's own (x0 holds its trend row). */
  trendAt(t: TargetPoint, covariates: ArrayLike<number> | undefined): number {
    const { globalMean, beta, p, m0 } = this.mean;
    const x0 = this.x0;
    const trend = this.model.trend ?? 'constant';
    if (globalMean) {
      designRow(trend, t.x, t.y, this.s.frame, x0, 0, covariates, t.j * this.covariateCount);
      let mu = 0;
      for (let a = 0; a < this.pModel; a++) mu += x0[a] * beta[a];
      return mu;
    }
    if (p === 0) return m0;
    x0[0] = 1;
    if (p === 3) {
      x0[1] = (t.pu - this.frameX) / this.frameS;
      x0[2] = (t.pv - this.frameY) / this.frameS;
    }
    let mu = 0;
    for (let c = 0; c < p; c++) mu += x0[c] * this.betaLocal[c];
    return mu;
  }

  /** Mean and sd of one target from the current neighbourhood, written at its position. */
  predictAt(t: TargetPoint, out: TargetOutputs): void {
    const q = this.size;
    const { ids, kv, r, W, x0, cov } = this;
    const { iu, iv } = this.s;
    const p = this.mean.p;
    // k₀ and v = L⁻¹k₀.
    for (let a = 0; a < q; a++) {
      const id = ids[a];
      const dx = t.qu - iu[id];
      const dy = t.qv - iv[id];
      kv[a] = cov(Math.sqrt(dx * dx + dy * dy));
    }
    solveLowerInPlace(this.L.subarray(0, q * q), q, kv.subarray(0, q));
    let s = this.trendAt(t, out.covariates);
    for (let a = 0; a < q; a++) s += kv[a] * r[a];
    const j = t.j;
    out.mean[j] = s;
    if (!out.wantSd) {
      out.sd[j] = NaN;
      out.sdObserved[j] = NaN;
      return;
    }
    let variance = this.c0;
    for (let a = 0; a < q; a++) variance -= kv[a] * kv[a];
    if (p > 0) {
      const tt = this.t;
      for (let c = 0; c < p; c++) {
        let e = x0[c];
        for (let a = 0; a < q; a++) e -= W[a * p + c] * kv[a];
        tt[c] = e;
      }
      solveLowerInPlace(this.Lg, p, tt);
      for (let c = 0; c < p; c++) variance += tt[c] * tt[c];
    }
    const sj = Math.sqrt(Math.max(0, variance));
    out.sd[j] = sj;
    out.sdObserved[j] = Math.sqrt(sj * sj + this.nugget);
  }
}

/** The targets of a call in working (centred) and isotropic coordinates; throws on a coordinate that is not finite. */
function targetCoordinates(tx: ArrayLike<number>, ty: ArrayLike<number>, frame: CoordinateFrame, rotation: ReturnType<typeof anisotropyFrame>) {
  const total = tx.length;
  const PU = new Float64Array(total);
  const PV = new Float64Array(total);
  const QU = new Float64Array(total);
  const QV = new Float64Array(total);
  for (let j = 0; j < total; j++) {
    const xj = tx[j];
    const yj = ty[j];
    if (!Number.isFinite(xj) || !Number.isFinite(yj)) {
      throw new GapwiseError('bad-value', `Target ${j + 1} has coordinates (${xj}, ${yj}); expected finite numbers.`);
    }
    const pu = xj - frame.cx;
    const pv = yj - frame.cy;
    PU[j] = pu;
    PV[j] = pv;
    QU[j] = rotation ? alongAxis(rotation, pu, pv) : pu;
    QV[j] = rotation ? acrossAxis(rotation, pu, pv) : pv;
  }
  return { PU, PV, QU, QV };
}

/** Targets grouped by tile of width `width` (isotropic): sorted by tile, then by position. */
function tileOrder(QU: Float64Array, QV: Float64Array, width: number): { order: Uint32Array; ti: Float64Array; tj: Float64Array } {
  const total = QU.length;
  const ti = new Float64Array(total);
  const tj = new Float64Array(total);
  for (let j = 0; j < total; j++) {
    ti[j] = Math.floor(QU[j] / width);
    tj[j] = Math.floor(QV[j] / width);
  }
  const order = Uint32Array.from({ length: total }, (_, j) => j);
  order.sort((a, b) => tj[a] - tj[b] || ti[a] - ti[b] || a - b);
  return { order, ti, tj };
}

/** The call's jitter warning, and the predictor's running total in `warnings` (surfaces report predictor.warnings). */
function jitterWarnings(h: Neighbourhood, jitterBefore: number, warnings: Warning[]): Warning[] {
  if (h.jitterCount <= jitterBefore) return [];
  const said = (count: number): Warning => ({
    code: 'jitter',
    message: `${count} neighbourhood covariance matrices were not numerically positive definite; added up to ${h.maxJitter.toPrecision(3)} to their diagonal.`,
  });
  const total = said(h.jitterCount);
  const at = warnings.findIndex((w) => w.code === 'jitter' && w.message.includes('neighbourhood covariance'));
  if (at >= 0) warnings[at] = total;
  else warnings.push(total);
  return [said(h.jitterCount - jitterBefore)];
}

/**
 * Builds a local-neighbourhood predictor of the noise-free surface. Throws GapwiseError
 * ('bad-model', 'bad-value', 'too-few-samples', 'bad-option', 'not-positive-definite').
 */
export function createLocalPredictor(samples: Samples, model: CovarianceModel, options: LocalKrigingOptions = {}): LocalPredictor {
  const trend = model.trend ?? 'constant';
  const pModel = trendColumnCount(trend);
  checkInputs(samples, model, pModel);
  const m = options.neighbours ?? DEFAULT_LOCAL_NEIGHBOURS;
  if (!(Number.isInteger(m) && m >= 1 && m <= MAX_LOCAL_NEIGHBOURS)) {
    throw new GapwiseError('bad-option', `Expected the neighbourhood size to be a whole number from 1 to ${MAX_LOCAL_NEIGHBOURS}, got ${JSON.stringify(options.neighbours)}.`);
  }
  const s = prepareLocalSamples(samples, model);
  const { n, frame, iu, iv, index } = s;
  const log = model.transform === 'log';
  const warnings: Warning[] = [];
  const covariateCount = covariateColumnCount(trend);
  const q = Math.min(m, n);
  if (pModel > 0 && q <= pModel) {
    throw new GapwiseError('bad-option', `Expected more than ${pModel} samples per neighbourhood for this trend, got ${q}.`);
  }
  const mean = localMean(samples, model, options, s, warnings);
  // Targets go through the same rotation and stretch as the samples (toIsotropicCoordinates).
  const rotation = anisotropyFrame(model.anisotropy);
  // Tiles: targets in one square tile of side w (isotropic coordinates) share one neighbourhood.
  const tile = options.targetSpacing !== undefined ? chooseTile(n, q, iu, iv, options.targetSpacing) : null;
  // Largest neighbourhood a tile may have; a denser tile falls back to per-target neighbourhoods.
  const cap = tile ? tile.cap : q;
  const h = new Neighbourhood(samples, model, s, mean, covarianceFunction(model), options.jitter ?? true, cap);
  const found32 = new Uint32Array(q);
  const tileFound = new Uint32Array(tile ? n : 0);
  const tileDist2 = new Float64Array(q);

  /** The m nearest samples of a target (isotropic coordinates), sorted by id, as the current set. */
  const useNearest = (t: TargetPoint): void => {
    const found = index.nearest(t.qu, t.qv, q, found32);
    found.sort();
    h.useSet(found, t.pu, t.pv);
  };

  /**
   * The neighbourhood of a tile: every sample within d_m(c) + √2·w of its centre c, which holds the
   * m nearest samples of every point of the tile (a point t of the tile is within w/√2 of c, so its
   * m-th nearest sample is within d_m(c) + w/√2 of t, hence within d_m(c) + √2·w of c). False when
   * that set is larger than the cap (the tile's targets then take their own m nearest).
   */
  const useTile = (tu: number, tv: number, width: number): boolean => {
    const nearest = index.nearest(tu, tv, q, found32, tileDist2);
    const radius = Math.sqrt(tileDist2[nearest.length - 1]) + Math.SQRT2 * width;
    const count = index.withinInto(tu, tv, radius, tileFound);
    if (count > cap) return false;
    const found = tileFound.subarray(0, count);
    found.sort();
    // The local trend frame is centred on the tile centre (in centred working coordinates).
    const back = rotation ? fromStretched(rotation, tu, tv) : { dx: tu, dy: tv };
    h.useSet(found, back.dx, back.dy);
    return true;
  };

  const predict = (tx: ArrayLike<number>, ty: ArrayLike<number>, popts: PredictOptions = {}): LocalPrediction => {
    if (tx.length !== ty.length) throw new GapwiseError('bad-value', `Expected target x and y of equal length, got ${tx.length} and ${ty.length}.`);
    const total = tx.length;
    if (covariateCount > 0) checkCovariateRows(trend, total, popts.covariates, 'target');
    const out: TargetOutputs = {
      mean: new Float64Array(total), sd: new Float64Array(total), sdObserved: new Float64Array(total),
      wantSd: log || popts.sd !== false, covariates: popts.covariates,
    };
    const jitterBefore = h.jitterCount;
    const progressEvery = Math.max(1, Math.floor(popts.blockSize ?? 512));
    const { PU, PV, QU, QV } = targetCoordinates(tx, ty, frame, rotation);
    const point = (j: number): TargetPoint => ({ j, x: tx[j], y: ty[j], pu: PU[j], pv: PV[j], qu: QU[j], qv: QV[j] });
    let done = 0;
    const step = (): void => {
      done++;
      if (done % progressEvery === 0 || done === total) {
        popts.onProgress?.(done, total);
        if (popts.isCancelled?.()) throw new GapwiseError('cancelled', `Prediction stopped after ${done} of ${total} targets.`);
      }
    };
    const one = (j: number): void => {
      const t = point(j);
      useNearest(t);
      h.predictAt(t, out);
      step();
    };
    if (!tile) {
      for (let j = 0; j < total; j++) one(j);
    } else {
      // One neighbourhood per tile (targets sorted by tile, then by position).
      const width = tile.width;
      const { order, ti, tj } = tileOrder(QU, QV, width);
      for (let g = 0; g < total;) {
        let e = g + 1;
        while (e < total && ti[order[e]] === ti[order[g]] && tj[order[e]] === tj[order[g]]) e++;
        const first = order[g];
        if (useTile((ti[first] + 0.5) * width, (tj[first] + 0.5) * width, width)) {
          for (let k = g; k < e; k++) {
            h.predictAt(point(order[k]), out);
            step();
          }
        } else {
          for (let k = g; k < e; k++) one(order[k]);
        }
        g = e;
      }
    }
    const callWarnings = jitterWarnings(h, jitterBefore, warnings);
    if (!log) return { mean: out.mean, sd: out.sd, sdObserved: out.sdObserved, warnings: callWarnings };
    // Lognormal back-transform, as kriging.ts: mean exp(Ŷ + σ²/2), median exp(Ŷ).
    return { ...logPredictionToDataScale(out.mean, out.sd, h.nugget), logMean: out.mean, logSd: out.sd, warnings: callWarnings };
  };

  const checked = (tx: ArrayLike<number>, ty: ArrayLike<number>, popts: PredictOptions = {}): LocalPrediction =>
    checkPredictionFinite(model, predict(tx, ty, popts), tx, ty, popts.sd !== false || log);
  return { n, neighbours: q, model, warnings, beta: mean.beta, frame, predict: checked };
}
