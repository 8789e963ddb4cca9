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
import { NeighborIndex } from '../geometry/neighbors.ts';
import { vecchiaTrend } from '../fitting/vecchia.ts';
import { checkModel, checkPredictionFinite, createPredictor, type PredictOptions, type Prediction } from './kriging.ts';
import { logPredictionToDataScale } from '../shared/lognormal.ts';
import { neighbourhoodFailureAdvice } from '../covariance/numerical-advice.ts';

/** Default neighbourhood size. */
export const DEFAULT_LOCAL_NEIGHBORS = 64;
/** The most neighbours of a local neighbourhood (an m × m matrix is factorised per neighbourhood). */
export const MAX_LOCAL_NEIGHBORS = 2000;
/** From this size a neighbourhood is factorised by linalg.ts (its WebAssembly kernel) instead of the row-by-row loop below. */
const LARGE_FACTOR = 96;
/** Up to this many samples the global mean comes from the dense GLS; above, from the nearest-neighbour factor. */
const DENSE_GLOBAL_MEAN_LIMIT = 1000;

/** Options of a local predictor (plain data). */
export interface LocalKrigingOptions {
  /** Samples per neighbourhood, m; default 64 (all samples when there are fewer). */
  neighbors?: number;
  /** Use the GLS trend estimate from all samples as a known mean in each neighbourhood; default false. */
  globalMean?: boolean;
  /** Neighbours per sample in the nearest-neighbour GLS of the global mean; default 30. */
  meanNeighbors?: number;
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
  readonly neighbors: number;
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
  samples: Samples, model: CovarianceModel, options: Pick<LocalKrigingOptions, 'meanNeighbors'> = {},
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
  const t = vecchiaTrend(zSamples, linear, { neighbors: options.meanNeighbors });
  return { beta: Float64Array.from(t.beta), warnings: t.warnings };
}

/**
 * Builds a local-neighbourhood predictor of the noise-free surface. Throws GapwiseError
 * ('bad-model', 'bad-value', 'too-few-samples', 'bad-option', 'not-positive-definite').
 */
export function createLocalPredictor(samples: Samples, model: CovarianceModel, options: LocalKrigingOptions = {}): LocalPredictor {
  const trend = model.trend ?? 'constant';
  const pModel = trendColumnCount(trend);
  checkInputs(samples, model, pModel);
  const m = options.neighbors ?? DEFAULT_LOCAL_NEIGHBORS;
  if (!(Number.isInteger(m) && m >= 1 && m <= MAX_LOCAL_NEIGHBORS)) {
    throw new GapwiseError('bad-option', `Expected the neighbourhood size to be a whole number from 1 to ${MAX_LOCAL_NEIGHBORS}, got ${JSON.stringify(options.neighbors)}.`);
  }
  const n = samples.x.length;
  const log = model.transform === 'log';
  const warnings: Warning[] = [];
  const frame = trendFrame(trend, samples.x, samples.y, samples.covariates);
  const covariateCount = covariateColumnCount(trend);
  const z = new Float64Array(n);
  for (let i = 0; i < n; i++) z[i] = log ? Math.log(samples.value[i]) : samples.value[i];
  const { u: iu, v: iv } = toIsotropicCoordinates(model.anisotropy, samples.x, samples.y, frame.cx, frame.cy);
  const cu = new Float64Array(n);
  const cv = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    cu[i] = samples.x[i] - frame.cx;
    cv[i] = samples.y[i] - frame.cy;
  }
  const index = new NeighborIndex(iu, iv);
  const q = Math.min(m, n);
  if (pModel > 0 && q <= pModel) {
    throw new GapwiseError('bad-option', `Expected more than ${pModel} samples per neighbourhood for this trend, got ${q}.`);
  }

  // Global mean: β̂ from all samples, then residuals for simple kriging.
  // A covariate trend always takes the global GLS trend (regression kriging of the residuals): the
  // neighbourhood systems below hold only the constant and x, y columns.
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
  // Values the neighbourhood systems see: residuals from the known or global mean, else z.
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

  const cov = covarianceFunction(model);
  const c0 = surfaceVariance(model);
  const nugget = nuggetOf(model);
  const diagonal = c0 + nugget;
  const allowJitter = options.jitter ?? true;
  // Targets go through the same rotation and stretch as the samples (toIsotropicCoordinates).
  const rotation = anisotropyFrame(model.anisotropy);

  // Tiles: targets in one square tile of side w (isotropic coordinates) share one neighbourhood.
  const tile = options.targetSpacing !== undefined ? chooseTile(n, q, iu, iv, options.targetSpacing) : null;
  // Largest neighbourhood a tile may have; a denser tile falls back to per-target neighbourhoods.
  const cap = tile ? tile.cap : q;

  // Work buffers, reused by every call. Matrices are size × size with stride size (size ≤ cap).
  const found32 = new Uint32Array(q);
  const tileFound = new Uint32Array(tile ? n : 0);
  let ids = new Uint32Array(cap);
  let prevIds = new Uint32Array(cap);
  let size = 0; // samples in the current neighbourhood
  let prevSize = 0;
  let K = new Float64Array(cap * cap); // unfactored covariances (lower triangle) of the current set
  let Kprev = new Float64Array(cap * cap);
  const L = new Float64Array(cap * cap);
  const map = new Int32Array(cap);
  const W = new Float64Array(cap * 3);
  const Lg = new Float64Array(9);
  const r = new Float64Array(cap);
  const betaLocal = new Float64Array(3);
  const kv = new Float64Array(cap);
  const w = new Float64Array(cap);
  const x0 = new Float64Array(Math.max(3, pModel));
  const t = new Float64Array(3);
  /** The targets' encoded covariates of the current predict call (covariate trends). */
  let targetCovariates: ArrayLike<number> | undefined;
  let have = false; // a factor for `ids` is ready
  let frameX = 0;
  let frameY = 0;
  let frameS = 1;
  let jitterCount = 0;
  let maxJitter = 0;

  /** Covariances of the new set, copying those of samples already in the previous set. */
  const fillK = (reuse: boolean): void => {
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
    const spare = Kprev;
    Kprev = K;
    K = spare;
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
  };

  /** Factorises K (jitter if needed) and solves the neighbourhood's trend; (px, py) centres the local trend frame. */
  const factor = (px: number, py: number): void => {
    const q = size;
    const Lq = L.subarray(0, q * q);
    Lq.set(K.subarray(0, q * q));
    if (!factorLower(Lq, q)) {
      let ok = false;
      if (allowJitter) {
        for (let rel = 1e-10; rel <= 1.0001e-4 && !ok; rel *= 10) {
          Lq.set(K.subarray(0, q * q));
          const add = rel * diagonal;
          for (let a = 0; a < q; a++) Lq[a * q + a] += add;
          ok = factorLower(Lq, q);
          if (ok) {
            jitterCount++;
            maxJitter = Math.max(maxJitter, add);
          }
        }
      }
      if (!ok) {
        throw new GapwiseError('not-positive-definite',
          `The covariance matrix of a ${q}-sample neighbourhood is not positive definite: ${neighbourhoodFailureAdvice(ids, q, samples.x, samples.y, z, model)}.`);
      }
    }
    for (let a = 0; a < q; a++) r[a] = zr[ids[a]];
    solveLowerInPlace(Lq, q, r);
    if (p === 0) return;
    // Local trend frame: centred on (px, py), scaled by the farthest neighbour.
    frameX = px;
    frameY = py;
    let far = 0;
    for (let a = 0; a < q; a++) far = Math.max(far, Math.hypot(cu[ids[a]] - px, cv[ids[a]] - py));
    frameS = far > 0 ? far : 1;
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
    // β̂ local = G⁻¹ Wᵀr, then r ← r − Wβ̂ (= L⁻¹(z − Xβ̂)).
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
  };

  /** Makes the sorted sample set `found` the current neighbourhood (refactorising unless it already is). */
  const useSet = (found: Uint32Array, px: number, py: number): void => {
    const count = found.length;
    if (have && count === size) {
      let same = true;
      for (let a = 0; a < count; a++) if (found[a] !== ids[a]) { same = false; break; }
      if (same) return;
    }
    const spare = prevIds;
    prevIds = ids;
    ids = spare;
    prevSize = size;
    ids.set(found);
    size = count;
    fillK(have);
    factor(px, py);
    have = true;
  };

  /** Mean and sd of one target from the current neighbourhood, written at position j. */
  const predictAt = (
    j: number, xj: number, yj: number, pu: number, pv: number, qu: number, qv: number, wantSd: boolean,
    mean: Float64Array, sd: Float64Array, sdObserved: Float64Array,
  ): void => {
    const q = size;
    // k₀ and v = L⁻¹k₀.
    for (let a = 0; a < q; a++) {
      const id = ids[a];
      const dx = qu - iu[id];
      const dy = qv - iv[id];
      kv[a] = cov(Math.sqrt(dx * dx + dy * dy));
    }
    solveLowerInPlace(L.subarray(0, q * q), q, kv.subarray(0, q));
    let mu: number;
    if (globalMean) {
      designRow(trend, xj, yj, frame, x0, 0, targetCovariates, j * covariateCount);
      mu = 0;
      for (let a = 0; a < pModel; a++) mu += x0[a] * beta[a];
    } else if (p === 0) {
      mu = m0;
    } else {
      x0[0] = 1;
      if (p === 3) {
        x0[1] = (pu - frameX) / frameS;
        x0[2] = (pv - frameY) / frameS;
      }
      mu = 0;
      for (let c = 0; c < p; c++) mu += x0[c] * betaLocal[c];
    }
    let s = mu;
    for (let a = 0; a < q; a++) s += kv[a] * r[a];
    mean[j] = s;
    if (wantSd) {
      let variance = c0;
      for (let a = 0; a < q; a++) variance -= kv[a] * kv[a];
      if (p > 0) {
        for (let c = 0; c < p; c++) {
          let e = x0[c];
          for (let a = 0; a < q; a++) e -= W[a * p + c] * kv[a];
          t[c] = e;
        }
        solveLowerInPlace(Lg, p, t);
        for (let c = 0; c < p; c++) variance += t[c] * t[c];
      }
      const sj = Math.sqrt(Math.max(0, variance));
      sd[j] = sj;
      sdObserved[j] = Math.sqrt(sj * sj + nugget);
    } else {
      sd[j] = NaN;
      sdObserved[j] = NaN;
    }
  };

  /** The m nearest samples of a target (isotropic coordinates), sorted by id, as the current set. */
  const useNearest = (qu: number, qv: number, pu: number, pv: number): void => {
    const found = index.nearest(qu, qv, q, found32);
    found.sort();
    useSet(found, pu, pv);
  };

  /**
   * The neighbourhood of a tile: every sample within d_m(c) + √2·w of its centre c, which holds the
   * m nearest samples of every point of the tile (a point t of the tile is within w/√2 of c, so its
   * m-th nearest sample is within d_m(c) + w/√2 of t, hence within d_m(c) + √2·w of c). False when
   * that set is larger than the cap (the tile's targets then take their own m nearest).
   */
  const useTile = (tu: number, tv: number, width: number): boolean => {
    const dist2 = tileDist2;
    const nearest = index.nearest(tu, tv, q, found32, dist2);
    const radius = Math.sqrt(dist2[nearest.length - 1]) + Math.SQRT2 * width;
    const count = index.withinInto(tu, tv, radius, tileFound);
    if (count > cap) return false;
    const found = tileFound.subarray(0, count);
    found.sort();
    // The local trend frame is centred on the tile centre (in centred working coordinates).
    const back = rotation ? fromStretched(rotation, tu, tv) : { dx: tu, dy: tv };
    useSet(found, back.dx, back.dy);
    return true;
  };
  const tileDist2 = new Float64Array(q);

  const predict = (tx: ArrayLike<number>, ty: ArrayLike<number>, popts: PredictOptions = {}): LocalPrediction => {
    if (tx.length !== ty.length) throw new GapwiseError('bad-value', `Expected target x and y of equal length, got ${tx.length} and ${ty.length}.`);
    const total = tx.length;
    if (covariateCount > 0) checkCovariateRows(trend, total, popts.covariates, 'target');
    targetCovariates = popts.covariates;
    const wantSd = log || popts.sd !== false;
    const mean = new Float64Array(total);
    const sd = new Float64Array(total);
    const sdObserved = new Float64Array(total);
    const jitterBefore = jitterCount;
    const progressEvery = Math.max(1, Math.floor(popts.blockSize ?? 512));
    // Targets in working and isotropic coordinates (and, with tiles, their tile).
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
    let done = 0;
    const step = (): void => {
      done++;
      if (done % progressEvery === 0 || done === total) {
        popts.onProgress?.(done, total);
        if (popts.isCancelled?.()) throw new GapwiseError('cancelled', `Prediction stopped after ${done} of ${total} targets.`);
      }
    };
    const one = (j: number): void => {
      useNearest(QU[j], QV[j], PU[j], PV[j]);
      predictAt(j, tx[j], ty[j], PU[j], PV[j], QU[j], QV[j], wantSd, mean, sd, sdObserved);
      step();
    };
    if (!tile) {
      for (let j = 0; j < total; j++) one(j);
    } else {
      // Group the targets by tile (sorted by tile, then by position), one neighbourhood per tile.
      const width = tile.width;
      const ti = new Float64Array(total);
      const tj = new Float64Array(total);
      for (let j = 0; j < total; j++) {
        ti[j] = Math.floor(QU[j] / width);
        tj[j] = Math.floor(QV[j] / width);
      }
      const orderT = Uint32Array.from({ length: total }, (_, j) => j);
      orderT.sort((a, b) => tj[a] - tj[b] || ti[a] - ti[b] || a - b);
      for (let g = 0; g < total;) {
        let e = g + 1;
        while (e < total && ti[orderT[e]] === ti[orderT[g]] && tj[orderT[e]] === tj[orderT[g]]) e++;
        const first = orderT[g];
        if (useTile((ti[first] + 0.5) * width, (tj[first] + 0.5) * width, width)) {
          for (let k = g; k < e; k++) {
            const j = orderT[k];
            predictAt(j, tx[j], ty[j], PU[j], PV[j], QU[j], QV[j], wantSd, mean, sd, sdObserved);
            step();
          }
        } else {
          for (let k = g; k < e; k++) one(orderT[k]);
        }
        g = e;
      }
    }
    const callWarnings: Warning[] = [];
    if (jitterCount > jitterBefore) {
      callWarnings.push({
        code: 'jitter',
        message: `${jitterCount - jitterBefore} neighbourhood covariance matrices were not numerically positive definite; added up to ${maxJitter.toPrecision(3)} to their diagonal.`,
      });
      // The predictor's own list keeps one running total (surfaces report predictor.warnings).
      const total: Warning = {
        code: 'jitter',
        message: `${jitterCount} neighbourhood covariance matrices were not numerically positive definite; added up to ${maxJitter.toPrecision(3)} to their diagonal.`,
      };
      const at = warnings.findIndex((w) => w.code === 'jitter' && w.message.includes('neighbourhood covariance'));
      if (at >= 0) warnings[at] = total;
      else warnings.push(total);
    }
    if (!log) return { mean, sd, sdObserved, warnings: callWarnings };
    // Lognormal back-transform, as kriging.ts: mean exp(Ŷ + σ²/2), median exp(Ŷ).
    return { ...logPredictionToDataScale(mean, sd, nugget), logMean: mean, logSd: sd, warnings: callWarnings };
  };

  const checked = (tx: ArrayLike<number>, ty: ArrayLike<number>, popts: PredictOptions = {}): LocalPrediction =>
    checkPredictionFinite(model, predict(tx, ty, popts), tx, ty, popts.sd !== false || log);
  return { n, neighbors: q, model, warnings, beta, frame, predict: checked };
}
