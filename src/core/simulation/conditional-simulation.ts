/**
 * Conditional simulation on a grid: N realisations of the noise-free surface given the samples,
 * per-cell P(exceed), and the area above an action level with its spread.
 *
 * Method: conditioning by kriging (Journel & Huijbregts 1978, ch. VII; Chilès & Delfiner 2012 §7.3 —
 * from memory). With G an unconditional zero-mean field of the model's surface covariance, S its
 * values at the samples and ε ~ N(0, τ²) independent noise (τ² = nugget),
 *   Z_c(x) = G(x) + K[r](x),   r = z − S − ε,
 * where K[r] is the kriging predictor (simple, ordinary or universal as in model.trend) applied to r
 * as if it were data. Z_c has exactly the kriging mean and the kriging (posterior) covariance,
 * trend uncertainty included, when (G, S) are jointly drawn from the prior. G comes from circulant
 * embedding on a lattice (./circulant-embedding.ts). For a log model everything runs on ln(value)
 * and each realisation is back-transformed node by node, exp(Z_c).
 * Samples off the lattice (the exactness question): we draw
 *   S_d = w_dᵀ G(N_d) + E_d,
 * where N_d is the 6 × 6 block of lattice nodes around sample d, w_d = C(N, N)⁻¹C(N, d) its
 * simple-kriging weights, and the residuals E = (E_d) are drawn jointly from their exact covariance
 *   R_de = C(d, e) − w_dᵀC(N_d, e) − w_eᵀC(N_e, d) + w_dᵀC(N_d, N_e)w_e
 * for all samples whose blocks lie within 12 nodes of each other (connected groups, each factorised
 * by Cholesky; residuals of samples farther apart are independent). This reproduces exactly the
 * covariance of the samples among themselves and with every node of their own 6 × 6 block; the
 * one approximation is Cov(E_d, G(g)) = 0 for nodes g outside the block, whose true value
 * C(d, g) − w_dᵀC(N_d, g) is the screening residual of kriging from the block. Its largest value over
 * the nodes within 12 of each sample, relative to the sill, is reported as `placementError` (warned
 * above 1 %). A sample on a lattice node (within 1e-9 of the spacing) takes that node's value: exact.
 * With a zero nugget the realisations then honour data at nodes exactly.
 * The lattice has spacing cell/k (k = 1 for point support: the nodes are the cell centres; k ≥ 2
 * for block support: the k × k nodes of each cell are averaged, on the data scale). It covers the
 * grid and every sample's block, so the whole covariance between data and grid is simulated.
 * Large n: kriging of the residuals from all samples (the kriging.ts factor, n³/3 once and n² per
 * realisation) up to `DENSE_LIMIT` samples; beyond it (or with `neighbours`), from the m nearest
 * samples of each node (m = 64 by default), with weights reused across realisations. Local
 * neighbourhoods are an approximation of the global posterior, as in local kriging.
 * Covariates in the mean (kriging with external drift): K[r] is universal kriging with the covariate
 * columns, the nodes' covariates given in `options.covariates`. We condition the zero-mean residual
 * field on the samples under the universal-kriging mean rather than add residual realisations to the
 * fitted GLS mean: the realisations then have exactly the kriged mean and the kriging variance,
 * uncertainty of the coefficients included (a fixed GLS mean would leave that uncertainty out and
 * make the spread too narrow away from the samples). With local neighbourhoods a covariate trend is
 * estimated once from all samples for each residual vector (β̂_r = G⁻¹XᵀK⁻¹r, as local kriging uses
 * the global GLS mean) and the rest kriged from the neighbours with a known zero mean: the
 * realisations' mean is then the local kriging mean around the global GLS trend. Block support
 * averages the nodes' trend rows, each with its own covariates (the rule of ./block-kriging.ts).
 * Units: metres; values in data units (realisations of the surface, not of new measurements).
 * Cost (dense): n³/3 + N·(n² + 30·M·log₂M / 2) + nodes·n·(cov + 2N) flops, M the torus size;
 * memory 8·N·cells bytes for the realisations (Float32 bands: 4·N·cells).
 */
import type { CovarianceModel } from '../covariance/model.ts';
import { checkModelScale, isKnownTrend, nuggetOf } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import { GapwiseError, checkCount, type Warning } from '../shared/errors.ts';
import { acrossAxis, alongAxis, anisotropyFrame, crossCovarianceMatrix, effectiveDistance, surfaceCovariance, surfaceVariance } from '../covariance/covariance.ts';
import { cholesky, choleskyInPlace, solveLowerBlock, solveLowerInPlace, solveUpperTransposeInPlace, solveUpperTransposeMultiple } from '../linalg/linalg.ts';
import { buildKrigingSystem, checkModel, trendGap, type KrigingSystem } from '../prediction/kriging.ts';
import { MAX_LOCAL_NEIGHBOURS, createLocalPredictor } from '../prediction/local-kriging.ts';
import { checkCovariateRows, covariateColumnCount, designRow, trendColumnCount, type CoordinateFrame } from '../covariance/trend.ts';
import { createCirculantEmbedding, createFieldSampler, type EmbeddingOptions } from './circulant-embedding.ts';
import { createRandom } from '../shared/random.ts';
import { NeighbourIndex } from '../geometry/neighbours.ts';
import { neighbourhoodFailureAdvice } from '../covariance/numerical-advice.ts';
import type { Grid } from '../geometry/grid.ts';
import { MAX_DEPTH, summariseExceedanceCounts, type ExceedanceAreaSummary } from '../prediction/exceedance-area.ts';

/** Up to this many samples the residuals are kriged from all samples. */
const DENSE_LIMIT = 2000;
/** Default neighbourhood for local kriging of the residuals. */
export const DEFAULT_SIMULATION_NEIGHBOURS = 64;
/** Most realisations in one call. */
export const MAX_REALISATIONS = 10_000;
/** The most values (realisations × grid cells) kept as Float32 maps: 1 GB. */
export const MAX_KEPT_VALUES = 250_000_000;
/** Lattice nodes per side of the block that places a sample. */
const STENCIL = 6;
/** Samples whose blocks are within this many nodes get jointly drawn residuals. */
const COUPLING = 2 * STENCIL;
/** Largest group of coupled samples factorised jointly. */
const MAX_GROUP = 2000;
/** Bytes of lattice values kept per batch of realisations (log model with block support). */
const BATCH_BYTES = 128 * 1024 * 1024;

/** Options (plain data). */
export interface ConditionalSimulationOptions {
  /** Number of realisations N (1 .. 10,000). */
  count: number;
  /** Seed of the random streams; default 1. Results do not depend on batching. */
  seed?: number;
  /**
   * Index of the first realisation (default 0): a run of `count` from `first` gives realisations
   * first … first + count − 1 of the full set, each from its own random stream, so parts computed
   * apart (in several workers) and merged with mergeSimulationParts equal one run.
   */
  first?: number;
  /** Keep the per-cell sums and the per-realisation counts (`totals`) for mergeSimulationParts. */
  keepTotals?: boolean;
  /** 'point' (cell centres, default) or 'block' (cell averages). */
  support?: 'point' | 'block';
  /** Block support: lattice nodes per cell side, k (default 4). */
  blockPoints?: number;
  /** Action level (data units): adds pExceed and the area summary. */
  threshold?: number;
  /** Depth in metres for the volume above the action level. */
  depth?: number;
  /** Krige the residuals from the m nearest samples (default: all samples up to 2,000, else 64). */
  neighbours?: number;
  /**
   * 'exact': krige the residuals from all samples whatever `neighbours` says; 'local': from the
   * `neighbours` nearest (default 64). Absent: the rule of `neighbours` above. ./simulation-path.ts
   * chooses it by cost and tolerance.
   */
  path?: 'exact' | 'local';
  /** Keep every realisation (Float32, NaN outside the area); default true. */
  keepRealisations?: boolean;
  /** Passed to the circulant embedding (size cap, accepted truncation). */
  embedding?: EmbeddingOptions;
  /**
   * Covariate trend only: the encoded covariates at every lattice node of every grid cell (nx·ny
   * cells row-major from the top, each k² nodes row by row from the north-west — the order of
   * ./block-kriging.ts `blockOffsets` — × q columns; k = 1 for point support: one row per cell).
   * Required when the model's trend has covariates; masked cells' rows are never read.
   */
  covariates?: Float64Array;
  onProgress?: (done: number, total: number) => void;
  isCancelled?: () => boolean;
}

export interface ConditionalSimulationResult {
  grid: Grid;
  support: 'point' | 'block';
  /** Lattice nodes per cell side (1 for point support). */
  points: number;
  count: number;
  /** Realisations on the data scale, one Float32Array of nx·ny cells each (NaN outside the area). */
  realisations?: Float32Array[];
  /** Per-cell mean and sd across realisations (NaN outside). */
  mean: Float64Array;
  sd: Float64Array;
  /** Per-cell share of realisations above the threshold. */
  pExceed?: Float64Array;
  threshold?: number;
  /** Cells, area (m²), volume (m³) above the threshold: median, 5 %, 95 %, mean. */
  area?: ExceedanceAreaSummary;
  /** The simulation lattice and its embedding. */
  lattice: { nx: number; ny: number; spacing: number; torus: [number, number]; paddingSteps: number; negativeFraction: number };
  /** Largest neglected covariance between a sample's residual and a lattice node, relative to the sill. */
  placementError: number;
  /** Samples per kriging neighbourhood, or 'all'. */
  neighbours: number | 'all';
  warnings: Warning[];
  /** First realisation index of this run (0 unless a part). */
  first: number;
  /** With keepTotals: per-cell Σv, Σv² and realisations above T, and each realisation's cells above T. */
  totals?: SimulationTotals;
}

/** What a part of a simulation run adds up (for mergeSimulationParts). */
export interface SimulationTotals {
  sum: Float64Array;
  sumSq: Float64Array;
  above?: Float64Array;
  /** Cells above the threshold in each realisation of the part (empty without a threshold). */
  counts: Float64Array;
  /** Cells inside the area. */
  activeCells: number;
}

function mixSeed(seed: number, stream: number, index: number): number {
  let h = Math.imul(seed ^ 0x9e3779b9, 0x85ebca6b) ^ Math.imul(stream + 1, 0xc2b2ae35) ^ Math.imul(index + 1, 0x27d4eb2f);
  h ^= h >>> 15;
  h = Math.imul(h, 0x2c1b3c6d);
  h ^= h >>> 12;
  return h >>> 0;
}

/**
 * Posterior covariance of the noise-free surface between points a and b (kriging scale) from a
 * factorised system: C(a, b) − k_aᵀK⁻¹k_b + (x_a − Wᵀ·L⁻¹k_a)ᵀ G⁻¹ (x_b − Wᵀ·L⁻¹k_b)
 * (Rasmussen & Williams 2006 §2.7, from memory). Used to check simulations.
 */
export function posteriorCovariance(
  sys: KrigingSystem, ax: number, ay: number, bx: number, by: number, covariatesA?: ArrayLike<number>, covariatesB?: ArrayLike<number>,
): number {
  const { n, p, model, frame, u, v, W, Lg } = sys;
  const L = sys.factor.L;
  const centred: CoordinateFrame = { ...frame, cx: 0, cy: 0 };
  const one = (x: number, y: number, c?: ArrayLike<number>): { w: Float64Array; t: Float64Array } => {
    const tu = x - frame.cx, tv = y - frame.cy;
    const w = crossCovarianceMatrix(model, [tu], [tv], u, v);
    solveLowerInPlace(L, n, w);
    const x0 = new Float64Array(p);
    designRow(model.trend, tu, tv, centred, x0, 0, c);
    return { w, t: trendGap(W, w, x0, n, p, Lg) };
  };
  const A = one(ax, ay, covariatesA);
  const B = one(bx, by, covariatesB);
  let c = surfaceCovariance(model, effectiveDistance(ax - bx, ay - by, model.anisotropy));
  for (let i = 0; i < n; i++) c -= A.w[i] * B.w[i];
  for (let a = 0; a < p; a++) c += A.t[a] * B.t[a];
  return c;
}

/** Kriging of residual vectors: the part that depends on the samples. */
interface ResidualKriger {
  /**
   * Prepares B residual vectors r (n × B row-major). Afterwards `apply` adds K[r_b](node) for
   * nodes (working-CRS x, y; a covariate trend also reads the nodes' encoded covariates, nodes × q)
   * into out (nodes × B row-major).
   */
  prepare(r: Float64Array, B: number): void;
  apply(tx: Float64Array, ty: Float64Array, out: Float64Array, covariates?: Float64Array): void;
}

/**
 * GLS trend coefficients of B residual vectors (alpha: n × B row-major, the known mean already taken
 * off) through the factorised system: β̂ = G⁻¹WᵀL⁻¹r (p × B row-major). With `subtract`, alpha
 * becomes r − Xβ̂ in place.
 */
function glsCoefficients(sys: KrigingSystem, alpha: Float64Array, B: number, subtract: boolean): Float64Array {
  const { n, p, X, W, Lg } = sys;
  const beta = new Float64Array(p * B);
  if (p === 0) return beta;
  const y = Float64Array.from(alpha);
  solveLowerBlock(sys.factor.L, n, y, B);
  const t = new Float64Array(p);
  for (let b = 0; b < B; b++) {
    for (let a = 0; a < p; a++) {
      let s = 0;
      for (let i = 0; i < n; i++) s += W[i * p + a] * y[i * B + b];
      t[a] = s;
    }
    solveLowerInPlace(Lg, p, t);
    solveUpperTransposeInPlace(Lg, p, t);
    for (let a = 0; a < p; a++) beta[a * B + b] = t[a];
  }
  if (subtract) {
    for (let i = 0; i < n; i++) {
      for (let b = 0; b < B; b++) {
        let s = 0;
        for (let a = 0; a < p; a++) s += X[i * p + a] * beta[a * B + b];
        alpha[i * B + b] -= s;
      }
    }
  }
  return beta;
}

/** out[node, b] += x(node)ᵀβ̂_b for nodes given in centred coordinates (tu, tv). */
function addTrend(sys: KrigingSystem, tu: Float64Array, tv: Float64Array, beta: Float64Array, B: number, out: Float64Array, covariates?: Float64Array): void {
  const { p, model, frame } = sys;
  if (p === 0) return;
  const centred: CoordinateFrame = { ...frame, cx: 0, cy: 0 };
  const q = covariateColumnCount(model.trend);
  const row = new Float64Array(p);
  for (let j = 0; j < tu.length; j++) {
    designRow(model.trend, tu[j], tv[j], centred, row, 0, covariates, j * q);
    for (let b = 0; b < B; b++) {
      let s = 0;
      for (let a = 0; a < p; a++) s += row[a] * beta[a * B + b];
      out[j * B + b] += s;
    }
  }
}

function denseKriger(sys: KrigingSystem): ResidualKriger {
  const { n, model, frame, u, v, m0 } = sys;
  const L = sys.factor.L;
  let alpha = new Float64Array(0);
  let alphaT = new Float64Array(0);
  let beta: Float64Array = new Float64Array(0);
  let B = 0;
  return {
    prepare(r: Float64Array, count: number): void {
      B = count;
      alpha = Float64Array.from(r);
      for (let k = 0; k < alpha.length; k++) alpha[k] -= m0;
      beta = glsCoefficients(sys, alpha, B, true);
      solveLowerBlock(L, n, alpha, B);
      solveUpperTransposeMultiple(L, n, alpha, B);
      // Transposed (B × n) so each node's sum over samples is a contiguous dot product.
      alphaT = new Float64Array(B * n);
      for (let i = 0; i < n; i++) for (let b = 0; b < B; b++) alphaT[b * n + i] = alpha[i * B + b];
    },
    apply(tx: Float64Array, ty: Float64Array, out: Float64Array, covariates?: Float64Array): void {
      const m = tx.length;
      const tu = new Float64Array(m);
      const tv = new Float64Array(m);
      for (let q = 0; q < m; q++) {
        tu[q] = tx[q] - frame.cx;
        tv[q] = ty[q] - frame.cy;
      }
      const C = crossCovarianceMatrix(model, tu, tv, u, v); // m × n
      if (m0 !== 0) for (let k = 0; k < m * B; k++) out[k] += m0;
      addTrend(sys, tu, tv, beta, B, out, covariates);
      // out[q, b] += Σᵢ C[q, i]·α[i, b]: dot products over contiguous rows, two nodes × two realisations at a time.
      let q = 0;
      for (; q + 1 < m; q += 2) {
        const c0 = q * n, c1 = c0 + n;
        let b = 0;
        for (; b + 1 < B; b += 2) {
          const a0 = b * n, a1 = a0 + n;
          let s00 = 0, s01 = 0, s10 = 0, s11 = 0;
          for (let i = 0; i < n; i++) {
            const x0 = C[c0 + i], x1 = C[c1 + i], y0 = alphaT[a0 + i], y1 = alphaT[a1 + i];
            s00 += x0 * y0; s01 += x0 * y1; s10 += x1 * y0; s11 += x1 * y1;
          }
          out[q * B + b] += s00; out[q * B + b + 1] += s01;
          out[(q + 1) * B + b] += s10; out[(q + 1) * B + b + 1] += s11;
        }
        for (; b < B; b++) {
          const a0 = b * n;
          let s0 = 0, s1 = 0;
          for (let i = 0; i < n; i++) { s0 += C[c0 + i] * alphaT[a0 + i]; s1 += C[c1 + i] * alphaT[a0 + i]; }
          out[q * B + b] += s0; out[(q + 1) * B + b] += s1;
        }
      }
      for (; q < m; q++) {
        const c0 = q * n;
        for (let b = 0; b < B; b++) {
          const a0 = b * n;
          let s0 = 0;
          for (let i = 0; i < n; i++) s0 += C[c0 + i] * alphaT[a0 + i];
          out[q * B + b] += s0;
        }
      }
    },
  };
}

/** One kriging neighbourhood of q samples (isotropic search) and its factorised system, reused while the neighbours stay the same. */
interface Neighbourhood {
  samples: Samples;
  model: CovarianceModel;
  q: number;
  p: number;
  frame: CoordinateFrame;
  ids: Uint32Array;
  /** q × q Cholesky factor of the neighbours' covariance (nugget on the diagonal). */
  L: Float64Array;
  /** L⁻¹X (q × p) and the factor of WᵀW (p × p). */
  Wl: Float64Array;
  Lg: Float64Array;
  cov: (x1: number, y1: number, x2: number, y2: number) => number;
  /** Neighbourhoods that needed a diagonal jitter since the last report. */
  jittered: number;
}

/** Fills L with the neighbours' covariance, the diagonal scaled by 1 + rel. */
function fillNeighbourhood(h: Neighbourhood, diagonal: number): void {
  const { q, ids, L, samples, cov } = h;
  for (let a = 0; a < q; a++) {
    const ia = ids[a];
    for (let b = 0; b < a; b++) L[a * q + b] = cov(samples.x[ia], samples.y[ia], samples.x[ids[b]], samples.y[ids[b]]);
    L[a * q + a] = diagonal;
    for (let b = a + 1; b < q; b++) L[a * q + b] = 0;
  }
}

/** Factorises the neighbourhood's covariance (with a growing jitter when needed) and its trend's G = WᵀW. */
function factorNeighbourhood(h: Neighbourhood, c0: number, nugget: number): void {
  const { q, p, ids, L, Wl, Lg, samples, model, frame } = h;
  fillNeighbourhood(h, c0 + nugget);
  if (!choleskyInPlace(L, q)) {
    let ok = false;
    for (let rel = 1e-10; rel <= 1.0001e-4 && !ok; rel *= 10) {
      fillNeighbourhood(h, (c0 + nugget) * (1 + rel));
      ok = choleskyInPlace(L, q);
    }
    if (!ok) throw new GapwiseError('not-positive-definite', `A kriging neighbourhood of ${q} samples could not be factorised: ${neighbourhoodFailureAdvice(ids, q, samples.x, samples.y, samples.value, model)}.`);
    h.jittered++;
  }
  if (p > 0) {
    for (let a = 0; a < q; a++) designRow(model.trend, samples.x[ids[a]], samples.y[ids[a]], frame, Wl, a * p);
    solveLowerBlock(L, q, Wl, p);
    Lg.fill(0);
    for (let a = 0; a < p; a++) for (let b = 0; b <= a; b++) {
      let s = 0;
      for (let i = 0; i < q; i++) s += Wl[i * p + a] * Wl[i * p + b];
      Lg[a * p + b] = s;
    }
    if (!choleskyInPlace(Lg, p)) throw new GapwiseError('not-positive-definite', 'The trend cannot be estimated in a kriging neighbourhood (its samples lie on a line); use more neighbours or a constant trend.');
  }
}

/** Kriging weights λ of the neighbourhood at (x, y): λ = L⁻ᵀ(v + W·t), v = L⁻¹k₀, t = G⁻¹(x₀ − Wᵀv) (as kriging.ts weightsWithSystem). */
function neighbourhoodWeights(h: Neighbourhood, x: number, y: number, lambda: Float64Array, row: Float64Array, t: Float64Array): void {
  const { q, p, ids, L, Wl, Lg, samples, model, frame, cov } = h;
  for (let a = 0; a < q; a++) lambda[a] = cov(x, y, samples.x[ids[a]], samples.y[ids[a]]);
  solveLowerInPlace(L, q, lambda);
  if (p > 0) {
    designRow(model.trend, x, y, frame, row);
    for (let a = 0; a < p; a++) {
      let s = row[a];
      for (let i = 0; i < q; i++) s -= Wl[i * p + a] * lambda[i];
      t[a] = s;
    }
    solveLowerInPlace(Lg, p, t);
    solveUpperTransposeInPlace(Lg, p, t);
    for (let i = 0; i < q; i++) {
      let s = 0;
      for (let a = 0; a < p; a++) s += Wl[i * p + a] * t[a];
      lambda[i] += s;
    }
  }
  solveUpperTransposeInPlace(L, q, lambda);
}

function localKriger(samples: Samples, model: CovarianceModel, neighbours: number, warnings: Warning[]): ResidualKriger {
  const n = samples.x.length;
  const trend = model.trend;
  const p = trendColumnCount(trend);
  const m0 = isKnownTrend(trend) ? trend.known : 0;
  const q = Math.min(neighbours, n);
  if (p > 0 && q <= p) throw new GapwiseError('bad-option', `Expected more than ${p} samples per neighbourhood for this trend, got ${q}.`);
  // Neighbours by effective distance: search in coordinates where the model is isotropic.
  const an = model.anisotropy;
  const rotation = anisotropyFrame(an);
  const rot = (x: number, y: number): [number, number] => (rotation ? [alongAxis(rotation, x, y), acrossAxis(rotation, x, y)] : [x, y]);
  let cx = 0, cy = 0;
  for (let i = 0; i < n; i++) { cx += samples.x[i]; cy += samples.y[i]; }
  cx /= n; cy /= n;
  let ss = 0;
  for (let i = 0; i < n; i++) ss += (samples.x[i] - cx) ** 2 + (samples.y[i] - cy) ** 2;
  const frame: CoordinateFrame = { cx, cy, scale: Math.sqrt(ss / n) || 1 };
  const ix = new Float64Array(n), iy = new Float64Array(n);
  for (let i = 0; i < n; i++) [ix[i], iy[i]] = rot(samples.x[i] - cx, samples.y[i] - cy);
  const index = new NeighbourIndex(ix, iy);
  const nugget = nuggetOf(model);
  const c0 = surfaceVariance(model);
  const hood: Neighbourhood = {
    samples, model, q, p, frame, ids: new Uint32Array(q), L: new Float64Array(q * q), Wl: new Float64Array(q * p), Lg: new Float64Array(p * p),
    cov: (x1, y1, x2, y2) => surfaceCovariance(model, effectiveDistance(x1 - x2, y1 - y2, an)),
    jittered: 0,
  };
  const { ids } = hood;
  const prev = new Uint32Array(q);
  let have = false;
  const lambda = new Float64Array(q);
  const row = new Float64Array(Math.max(1, p));
  const t = new Float64Array(p);
  let r: Float64Array = new Float64Array(0);
  let B = 0;

  return {
    prepare(res: Float64Array, count: number): void {
      r = res;
      B = count;
    },
    apply(tx: Float64Array, ty: Float64Array, out: Float64Array): void {
      for (let j = 0; j < tx.length; j++) {
        const [px, py] = rot(tx[j] - cx, ty[j] - cy);
        const found = index.nearest(px, py, q);
        ids.set(found);
        ids.sort();
        let same = have;
        if (same) for (let a = 0; a < q; a++) if (ids[a] !== prev[a]) { same = false; break; }
        if (!same) {
          factorNeighbourhood(hood, c0, nugget);
          prev.set(ids);
          have = true;
        }
        neighbourhoodWeights(hood, tx[j], ty[j], lambda, row, t);
        const o = j * B;
        let sum = 0;
        for (let a = 0; a < q; a++) sum += lambda[a];
        // Simple kriging: m₀ + Σλ(r − m₀); otherwise Σλr.
        if (p === 0) for (let b = 0; b < B; b++) out[o + b] += m0 * (1 - sum);
        for (let a = 0; a < q; a++) {
          const l = lambda[a];
          const ri = ids[a] * B;
          for (let b = 0; b < B; b++) out[o + b] += l * r[ri + b];
        }
      }
      if (hood.jittered > 0) {
        warnings.push({ code: 'jitter', message: `${hood.jittered} kriging neighbourhood${hood.jittered === 1 ? ' was' : 's were'} not numerically positive definite and got a small diagonal jitter.` });
        hood.jittered = 0;
      }
    },
  };
}

/**
 * Local kriging of residuals around the global GLS trend (covariate trends): β̂_r from all samples
 * through the dense system, then the neighbours krige r − Xβ̂_r with a known zero mean.
 */
function globalTrendLocalKriger(sys: KrigingSystem, samples: Samples, model: CovarianceModel, neighbours: number, warnings: Warning[]): ResidualKriger {
  const local = localKriger(samples, { ...model, trend: { known: 0 }, transform: 'none' }, neighbours, warnings);
  const { frame } = sys;
  let beta: Float64Array = new Float64Array(0);
  let B = 0;
  return {
    prepare(r: Float64Array, count: number): void {
      B = count;
      const alpha = Float64Array.from(r);
      beta = glsCoefficients(sys, alpha, B, true);
      local.prepare(alpha, B);
    },
    apply(tx: Float64Array, ty: Float64Array, out: Float64Array, covariates?: Float64Array): void {
      const tu = Float64Array.from(tx, (x) => x - frame.cx);
      const tv = Float64Array.from(ty, (y) => y - frame.cy);
      addTrend(sys, tu, tv, beta, B, out, covariates);
      local.apply(tx, ty, out);
    },
  };
}

/** Union–find over sample indices. */
function groups(n: number, near: (i: number, j: number) => boolean, candidates: (i: number) => number[]): number[][] {
  const parent = Int32Array.from({ length: n }, (_, i) => i);
  const find = (i: number): number => {
    while (parent[i] !== i) {
      parent[i] = parent[parent[i]];
      i = parent[i];
    }
    return i;
  };
  for (let i = 0; i < n; i++) {
    for (const j of candidates(i)) {
      if (j > i && near(i, j)) {
        const a = find(i), b = find(j);
        if (a !== b) parent[a] = b;
      }
    }
  }
  const byRoot = new Map<number, number[]>();
  for (let i = 0; i < n; i++) {
    const r = find(i);
    const g = byRoot.get(r);
    if (g) g.push(i);
    else byRoot.set(r, [i]);
  }
  return [...byRoot.values()];
}

function checkOptions(options: ConditionalSimulationOptions, log: boolean): void {
  const { count } = options;
  if (!(Number.isInteger(count) && count >= 1 && count <= MAX_REALISATIONS)) {
    throw new GapwiseError('bad-option', `Expected the number of realisations to be a whole number from 1 to ${MAX_REALISATIONS.toLocaleString('en')}, got ${JSON.stringify(count)}.`);
  }
  if (options.seed !== undefined && !Number.isInteger(options.seed)) {
    throw new GapwiseError('bad-option', `Expected the seed to be a whole number, got ${JSON.stringify(options.seed)}.`);
  }
  const first = options.first;
  if (first !== undefined && !(Number.isInteger(first) && first >= 0 && first + count <= MAX_REALISATIONS)) {
    throw new GapwiseError('bad-option', `Expected the first realisation to be a whole number from 0 with first + count at most ${MAX_REALISATIONS.toLocaleString('en')}, got ${JSON.stringify(first)}.`);
  }
  if (options.support !== undefined && options.support !== 'point' && options.support !== 'block') {
    throw new GapwiseError('bad-option', `Expected the support to be "point" or "block", got ${JSON.stringify(options.support)}.`);
  }
  const k = options.blockPoints;
  if (k !== undefined && !(Number.isInteger(k) && k >= 1 && k <= 16)) {
    throw new GapwiseError('bad-option', `Expected the block discretisation to be a whole number of points per side from 1 to 16, got ${JSON.stringify(k)}.`);
  }
  const t = options.threshold;
  if (t !== undefined && !Number.isFinite(t)) throw new GapwiseError('bad-option', `Expected the threshold to be a finite number, got ${String(t)}.`);
  if (log && t !== undefined && !(t > 0)) throw new GapwiseError('bad-option', `Expected a threshold above 0 with a log transform, got ${t}.`);
  const d = options.depth;
  if (d !== undefined && !(Number.isFinite(d) && d > 0 && d <= MAX_DEPTH)) {
    throw new GapwiseError('bad-option', `Expected the depth to be a positive number of metres up to ${MAX_DEPTH.toLocaleString('en')}, got ${String(d)}.`);
  }
  if (d !== undefined && t === undefined) throw new GapwiseError('bad-option', 'A depth gives the volume above the action level: expected a threshold with it.');
  const m = options.neighbours;
  if (m !== undefined && !(Number.isInteger(m) && m >= 1 && m <= MAX_LOCAL_NEIGHBOURS)) {
    throw new GapwiseError('bad-option', `Expected the neighbourhood size to be a whole number from 1 to ${MAX_LOCAL_NEIGHBOURS}, got ${JSON.stringify(m)}.`);
  }
}

/** Refuses a grid without cells and more kept values than MAX_KEPT_VALUES. */
function checkGrid(grid: Grid, options: ConditionalSimulationOptions): void {
  if (!grid || !(grid.nx >= 1) || !(grid.ny >= 1) || !(grid.cell > 0)) {
    throw new GapwiseError('bad-option', `Expected a grid with at least one cell and a positive cell size, got ${JSON.stringify(grid && { nx: grid.nx, ny: grid.ny, cell: grid.cell })}.`);
  }
  const N = options.count;
  if (options.keepRealisations !== false) {
    checkCount(N * grid.nx * grid.ny, MAX_KEPT_VALUES,
      `The realisations to keep (${N.toLocaleString('en')} × ${(grid.nx * grid.ny).toLocaleString('en')} cells)`,
      `draw fewer realisations, use a larger cell, or keep only the summaries (the limit is ${(MAX_KEPT_VALUES * 4 / 1e9).toFixed(0)} GB of 32-bit floats)`);
  }
}

/** Whether the residuals are kriged from neighbourhoods, and of how many samples. */
function neighbourhoodOf(options: ConditionalSimulationOptions, n: number): { useLocal: boolean; neighbours: number } {
  const useLocal = options.path === 'exact' ? false
    : options.path === 'local' ? (options.neighbours ?? DEFAULT_SIMULATION_NEIGHBOURS) < n
      : options.neighbours !== undefined ? options.neighbours < n : n > DENSE_LIMIT;
  return { useLocal, neighbours: useLocal ? options.neighbours ?? DEFAULT_SIMULATION_NEIGHBOURS : n };
}

/**
 * The kriger of the residuals and the data on the kriging scale. The dense system is built when the
 * residuals are kriged from all samples or a covariate trend needs its GLS estimate; otherwise the
 * samples and model are checked as local kriging checks them and no n × n matrix is made.
 */
function residualKriger(samples: Samples, model: CovarianceModel, useLocal: boolean, neighbours: number, warnings: Warning[]): { kriger: ResidualKriger; z: Float64Array } {
  const q = covariateColumnCount(model.trend);
  if (useLocal && q === 0) {
    checkModel(model);
    createLocalPredictor(samples, model, { neighbours: Math.min(neighbours, MAX_LOCAL_NEIGHBOURS) });
    checkModelScale(model, samples.x, samples.y, samples.value);
    const log = model.transform === 'log';
    const z = Float64Array.from(samples.value, (v) => (log ? Math.log(v) : v));
    return { kriger: localKriger({ x: samples.x, y: samples.y, value: z }, { ...model, transform: 'none' }, neighbours, warnings), z };
  }
  // The dense system also validates samples and model (values > 0 for a log model, ...).
  const sys = buildKrigingSystem(samples, model);
  warnings.push(...sys.warnings);
  const z = sys.z;
  const kriger = !useLocal ? denseKriger(sys) : globalTrendLocalKriger(sys, { x: samples.x, y: samples.y, value: z }, model, neighbours, warnings);
  return { kriger, z };
}

/** The simulation lattice: node (I, J) at (baseX + (I − I0)·h, baseY − (J − J0)·h), covering the grid and every sample's block. */
interface Lattice {
  h: number;
  baseX: number;
  baseY: number;
  I0: number;
  J0: number;
  lnx: number;
  lny: number;
  /** Samples' fractional lattice positions (relative to the grid's first node). */
  fI: Float64Array;
  fJ: Float64Array;
}

/** Lays the lattice over the grid (spacing cell/k) and every sample's 6 × 6 block; refuses one whose torus exceeds the cap. */
function layLattice(samples: Samples, grid: Grid, k: number, embedding: EmbeddingOptions | undefined): Lattice {
  const n = samples.x.length;
  // The grid's sub-node (i·k + a, j·k + b) is node (I0 + i·k + a, J0 + j·k + b).
  const h = grid.cell / k;
  const half = STENCIL / 2;
  let minI = 0, minJ = 0, maxI = grid.nx * k - 1, maxJ = grid.ny * k - 1;
  const baseX = grid.x0 + h / 2;
  const baseY = grid.y0 - h / 2;
  const fI = new Float64Array(n), fJ = new Float64Array(n);
  for (let d = 0; d < n; d++) {
    fI[d] = (samples.x[d] - baseX) / h;
    fJ[d] = (baseY - samples.y[d]) / h;
    minI = Math.min(minI, Math.floor(fI[d]) - half + 1);
    maxI = Math.max(maxI, Math.floor(fI[d]) + half);
    minJ = Math.min(minJ, Math.floor(fJ[d]) - half + 1);
    maxJ = Math.max(maxJ, Math.floor(fJ[d]) + half);
  }
  const I0 = -minI, J0 = -minJ;
  const lnx = maxI - minI + 1, lny = maxJ - minJ + 1;
  const cap = embedding?.maxCells ?? (1 << 22);
  if (4 * lnx * lny > cap) {
    throw new GapwiseError('bad-option',
      `The simulation lattice covering the grid and the samples would have ${lnx} × ${lny} nodes at ${h.toPrecision(3)} m; the torus for it exceeds ${cap.toLocaleString('en')} nodes: choose a larger cell, fewer block points, or a boundary closer to the samples.`);
  }
  return { h, baseX, baseY, I0, J0, lnx, lny, fI, fJ };
}

/** Each sample's 6 × 6 block of lattice nodes and its simple-kriging weights from the block (one weight of 1 on a node). */
interface Placement {
  originI: Int32Array;
  originJ: Int32Array;
  /** n × 36 weights. */
  weights: Float64Array;
  /** The block node a sample sits on, or −1. */
  onNode: Int32Array;
  /** C(sample d, node (I, J)). */
  sampleNodeCov: (d: number, I: number, J: number) => number;
}

/** Places the samples between lattice nodes: one 6 × 6 stencil, its covariance matrix factorised once. */
function placeSamples(samples: Samples, lattice: Lattice, cov: (dx: number, dy: number) => number, c0: number, warnings: Warning[]): Placement {
  const n = samples.x.length;
  const { h, baseX, baseY, I0, J0, fI, fJ } = lattice;
  const half = STENCIL / 2;
  const S2 = STENCIL * STENCIL;
  const Kst = new Float64Array(S2 * S2);
  for (let p = 0; p < S2; p++) for (let q = 0; q < S2; q++) {
    Kst[p * S2 + q] = cov(((p % STENCIL) - (q % STENCIL)) * h, -(Math.floor(p / STENCIL) - Math.floor(q / STENCIL)) * h);
  }
  const stencilFactor = cholesky(Kst, S2, { jitter: true, maxJitter: 1e-6 });
  if (stencilFactor.jitter > 0) {
    warnings.push({ code: 'placement-jitter', message: `The covariance of a ${STENCIL} × ${STENCIL} block of lattice nodes is nearly singular (a smooth model with a long range); a jitter of ${(stencilFactor.jitter / c0).toExponential(1)} of the sill was added to place samples between nodes.` });
  }
  const originI = new Int32Array(n), originJ = new Int32Array(n);
  const weights = new Float64Array(n * S2);
  const onNode = new Int32Array(n).fill(-1);
  const kd = new Float64Array(S2);
  const sampleNodeCov = (d: number, I: number, J: number): number => cov(samples.x[d] - (baseX + (I - I0) * h), samples.y[d] - (baseY - (J - J0) * h));
  for (let d = 0; d < n; d++) {
    originI[d] = Math.floor(fI[d]) - half + 1 + I0;
    originJ[d] = Math.floor(fJ[d]) - half + 1 + J0;
    const ri = Math.round(fI[d]), rj = Math.round(fJ[d]);
    if (Math.abs(fI[d] - ri) < 1e-9 && Math.abs(fJ[d] - rj) < 1e-9) {
      const s = (rj + J0 - originJ[d]) * STENCIL + (ri + I0 - originI[d]);
      onNode[d] = s;
      weights[d * S2 + s] = 1;
      continue;
    }
    for (let s = 0; s < S2; s++) kd[s] = sampleNodeCov(d, originI[d] + (s % STENCIL), originJ[d] + Math.floor(s / STENCIL));
    solveLowerInPlace(stencilFactor.L, S2, kd);
    solveUpperTransposeInPlace(stencilFactor.L, S2, kd);
    weights.set(kd, d * S2);
  }
  return { originI, originJ, weights, onNode, sampleNodeCov };
}

/** Node-to-node covariances by lag, looked up: lagCov(dI, dJ) = C(dI·h east, −dJ·h north). */
function lagCovariances(lattice: Lattice, cov: (dx: number, dy: number) => number): (dI: number, dJ: number) => number {
  const { lnx, lny, h } = lattice;
  const spanI = lnx + STENCIL + 2 * COUPLING, spanJ = lny + STENCIL + 2 * COUPLING;
  const lagWidth = 2 * spanI + 1;
  const lagTable = new Float64Array(lagWidth * (2 * spanJ + 1));
  for (let dJ = -spanJ; dJ <= spanJ; dJ++) for (let dI = -spanI; dI <= spanI; dI++) lagTable[(dJ + spanJ) * lagWidth + dI + spanI] = cov(dI * h, -dJ * h);
  return (dI: number, dJ: number): number => lagTable[(dJ + spanJ) * lagWidth + dI + spanI];
}

/** The residual covariance R_de = C(d, e) − w_dᵀC(N_d, e) − w_eᵀC(N_e, d) + w_dᵀC(N_d, N_e)w_e. */
function residualCovariance(samples: Samples, placement: Placement, cov: (dx: number, dy: number) => number, lagCov: (dI: number, dJ: number) => number): (d: number, e: number) => number {
  const { originI, originJ, weights, sampleNodeCov } = placement;
  const S2 = STENCIL * STENCIL;
  return (d: number, e: number): number => {
    let c = cov(samples.x[d] - samples.x[e], samples.y[d] - samples.y[e]);
    const wd = d * S2, we = e * S2;
    for (let s = 0; s < S2; s++) {
      const sI = s % STENCIL, sJ = Math.floor(s / STENCIL);
      if (weights[wd + s] !== 0) c -= weights[wd + s] * sampleNodeCov(e, originI[d] + sI, originJ[d] + sJ);
      if (weights[we + s] !== 0) c -= weights[we + s] * sampleNodeCov(d, originI[e] + sI, originJ[e] + sJ);
    }
    const oI = originI[d] - originI[e], oJ = originJ[d] - originJ[e];
    for (let s = 0; s < S2; s++) {
      const a = weights[wd + s];
      if (a === 0) continue;
      const dI = oI + (s % STENCIL), dJ = oJ + Math.floor(s / STENCIL);
      let inner = 0;
      for (let t = 0; t < S2; t++) {
        const b = weights[we + t];
        if (b !== 0) inner += b * lagCov(dI - (t % STENCIL), dJ - Math.floor(t / STENCIL));
      }
      c += a * inner;
    }
    return c;
  };
}

/** A group of samples whose residuals are drawn jointly (Cholesky factor) or independently (sds). */
type ResidualGroup = { members: number[]; L: Float64Array } | { members: number[]; sd: Float64Array };

/**
 * Groups the samples whose blocks lie within COUPLING nodes of each other and factorises each group's
 * residual covariance (pairs farther apart left uncorrelated); groups too large or not factorisable
 * are drawn independently, with a warning.
 */
function residualGroups(n: number, placement: Placement, residualCov: (d: number, e: number) => number, warnings: Warning[]): ResidualGroup[] {
  const { originI, originJ, onNode } = placement;
  const near = (i: number, j: number): boolean => Math.abs(originI[i] - originI[j]) <= COUPLING && Math.abs(originJ[i] - originJ[j]) <= COUPLING;
  const cellIndex = new NeighbourIndex(Float64Array.from(originI), Float64Array.from(originJ));
  const sampleGroups = groups(n, near, (i) => cellIndex.within(originI[i], originJ[i], COUPLING * Math.SQRT2 + 1e-9));
  const groupFactors: ResidualGroup[] = [];
  let uncoupled = 0;
  const independent = (g: number[]) => ({ members: g, sd: Float64Array.from(g, (d) => Math.sqrt(Math.max(0, residualCov(d, d)))) });
  for (const g of sampleGroups) {
    const size = g.length;
    let anyResidual = false;
    for (const d of g) if (onNode[d] < 0) anyResidual = true;
    if (!anyResidual) continue; // all on nodes: no residual
    if (size === 1) {
      groupFactors.push(independent(g));
      continue;
    }
    if (size > MAX_GROUP) {
      uncoupled += size;
      groupFactors.push(independent(g));
      continue;
    }
    // Pairs farther apart than the coupling distance are left uncorrelated (their residuals are local).
    const R = new Float64Array(size * size);
    for (let a = 0; a < size; a++) {
      for (let b = 0; b <= a; b++) {
        const c = a === b || near(g[a], g[b]) ? residualCov(g[a], g[b]) : 0;
        R[a * size + b] = c;
        R[b * size + a] = c;
      }
    }
    try {
      groupFactors.push({ members: g, L: cholesky(R, size, { jitter: true, maxJitter: 1e-3 }).L });
    } catch {
      uncoupled += size;
      groupFactors.push(independent(g));
    }
  }
  if (uncoupled > 0) {
    warnings.push({ code: 'placement-uncoupled', message: `${uncoupled} samples lie so densely that their sub-cell residuals were drawn independently (a group above ${MAX_GROUP} samples, or one whose residual covariance could not be factorised); a smaller cell places them more exactly.` });
  }
  return groupFactors;
}

/** The largest neglected covariance between a sample's residual and the nodes near its block, relative to the sill (warned above 1 %). */
function placementErrorOf(n: number, placement: Placement, lagCov: (dI: number, dJ: number) => number, c0: number, warnings: Warning[]): number {
  const { originI, originJ, onNode, weights, sampleNodeCov } = placement;
  const S2 = STENCIL * STENCIL;
  let placementError = 0;
  const step = Math.max(1, Math.floor(n / 400));
  for (let d = 0; d < n; d += step) {
    if (onNode[d] >= 0) continue;
    for (let J = originJ[d] - COUPLING; J < originJ[d] + STENCIL + COUPLING; J++) {
      for (let I = originI[d] - COUPLING; I < originI[d] + STENCIL + COUPLING; I++) {
        if (I >= originI[d] && I < originI[d] + STENCIL && J >= originJ[d] && J < originJ[d] + STENCIL) continue;
        let c = sampleNodeCov(d, I, J);
        for (let s = 0; s < S2; s++) {
          const w = weights[d * S2 + s];
          if (w !== 0) c -= w * lagCov(originI[d] + (s % STENCIL) - I, originJ[d] + Math.floor(s / STENCIL) - J);
        }
        placementError = Math.max(placementError, Math.abs(c) / c0);
      }
    }
  }
  if (placementError > 0.01) {
    warnings.push({ code: 'placement-error', message: `Samples between lattice nodes are placed with covariances off by up to ${(100 * placementError).toPrecision(2)} % of the sill; a smaller cell (or block points) reduces this.` });
  }
  return placementError;
}

/** The nodes kriged for the output: active cells row-major, each its k × k sub-nodes or (averaged first) its centre. */
interface OutputNodes {
  active: number[];
  nActive: number;
  k: number;
  kk: number;
  /** A linear model with block support: the cell average commutes with the kriging, so average first. */
  averageFirst: boolean;
  perCell: number;
  nodesOut: number;
  outX: Float64Array;
  outY: Float64Array;
  /** Offsets of a cell's sub-nodes from its centre (averaged first only). */
  blockShape: { dx: Float64Array; dy: Float64Array } | null;
  /** Covariate trend: the covariates of every kriged node (active cells, k² nodes each) × q. */
  nodeCovariates?: Float64Array;
  cellsTotal: number;
}

function outputNodes(grid: Grid, lattice: Lattice, k: number, log: boolean, model: CovarianceModel, options: ConditionalSimulationOptions): OutputNodes {
  const { h, baseX, baseY } = lattice;
  const q = covariateColumnCount(model.trend);
  const cellsTotal = grid.nx * grid.ny;
  const active: number[] = [];
  for (let c = 0; c < cellsTotal; c++) if (!grid.mask || grid.mask[c] === 1) active.push(c);
  const nActive = active.length;
  const kk = k * k;
  const averageFirst = !log && k > 1;
  const perCell = averageFirst ? 1 : kk;
  const nodesOut = nActive * perCell;
  let nodeCovariates: Float64Array | undefined;
  if (q > 0) {
    checkCovariateRows(model.trend, cellsTotal * kk, options.covariates?.length === cellsTotal * kk * q ? options.covariates : undefined, 'lattice node');
    nodeCovariates = new Float64Array(nActive * kk * q);
    const c = options.covariates as Float64Array;
    for (let a = 0; a < nActive; a++) nodeCovariates.set(c.subarray(active[a] * kk * q, (active[a] + 1) * kk * q), a * kk * q);
  }
  const outX = new Float64Array(nodesOut), outY = new Float64Array(nodesOut);
  for (let a = 0; a < nActive; a++) {
    const c = active[a];
    const i = c % grid.nx, j = Math.floor(c / grid.nx);
    if (averageFirst) {
      outX[a] = grid.x0 + (i + 0.5) * grid.cell;
      outY[a] = grid.y0 - (j + 0.5) * grid.cell;
      continue;
    }
    for (let s = 0; s < kk; s++) {
      outX[a * kk + s] = baseX + (i * k + (s % k)) * h;
      outY[a * kk + s] = baseY - (j * k + Math.floor(s / k)) * h;
    }
  }
  const blockShape = averageFirst ? { dx: new Float64Array(kk), dy: new Float64Array(kk) } : null;
  if (blockShape) for (let s = 0; s < kk; s++) {
    blockShape.dx[s] = ((s % k) + 0.5 - k / 2) * h;
    blockShape.dy[s] = -(Math.floor(s / k) + 0.5 - k / 2) * h;
  }
  return { active, nActive, k, kk, averageFirst, perCell, nodesOut, outX, outY, blockShape, ...(nodeCovariates ? { nodeCovariates } : {}), cellsTotal };
}

/** What every batch of realisations reads: the field sampler, the lattice, the placement and the residual groups. */
interface Draw {
  sampler: ReturnType<typeof createFieldSampler>;
  lattice: Lattice;
  placement: Placement;
  groups: ResidualGroup[];
  z: Float64Array;
  nugget: number;
  seed: number;
  first: number;
}

/**
 * Unconditional values of B realisations from r0: G at the output nodes (nodes × B) and the residuals
 * r = z − S − ε at the samples (n × B).
 */
function drawBatch(draw: Draw, out: OutputNodes, grid: Grid, r0: number, B: number, fields: { lat: Float64Array; lat2: Float64Array; eps: Float64Array; noise: Float64Array }): { G: Float64Array; resid: Float64Array } {
  const { sampler, lattice, placement, z, nugget, seed, first } = draw;
  const { lnx, I0, J0 } = lattice;
  const { originI, originJ, weights } = placement;
  const { active, nActive, k, kk, averageFirst, nodesOut } = out;
  const { lat, lat2, eps, noise } = fields;
  const n = z.length;
  const S2 = STENCIL * STENCIL;
  const G = new Float64Array(nodesOut * B);
  const resid = new Float64Array(n * B);
  for (let b = 0; b < B; b++) {
    const rIndex = first + r0 + b;
    // Fields come in pairs from one FFT; pair p gives realisations 2p and 2p + 1 whatever the batching.
    const pairIndex = Math.floor(rIndex / 2);
    if (rIndex % 2 === 0 || b === 0) sampler.pair(createRandom(mixSeed(seed, 0, pairIndex)), lat, lat2);
    const field = rIndex % 2 === 0 ? lat : lat2;
    for (let a = 0; a < nActive; a++) {
      const c = active[a];
      const i = c % grid.nx, j = Math.floor(c / grid.nx);
      if (averageFirst) {
        let s = 0;
        for (let q = 0; q < kk; q++) s += field[(J0 + j * k + Math.floor(q / k)) * lnx + I0 + i * k + (q % k)];
        G[a * B + b] = s / kk;
      } else {
        for (let q = 0; q < kk; q++) G[(a * kk + q) * B + b] = field[(J0 + j * k + Math.floor(q / k)) * lnx + I0 + i * k + (q % k)];
      }
    }
    // Unconditional values at the samples, plus measurement noise: r = z − S − ε.
    const rng = createRandom(mixSeed(seed, 1, rIndex));
    eps.fill(0);
    for (const g of draw.groups) {
      const size = g.members.length;
      for (let a = 0; a < size; a++) noise[a] = rng.normal();
      if ('L' in g) {
        for (let a = 0; a < size; a++) {
          let s = 0;
          for (let c = 0; c <= a; c++) s += g.L[a * size + c] * noise[c];
          eps[g.members[a]] = s;
        }
      } else {
        for (let a = 0; a < size; a++) eps[g.members[a]] = g.sd[a] * noise[a];
      }
    }
    const tau = Math.sqrt(nugget);
    for (let d = 0; d < n; d++) {
      let s = eps[d];
      for (let q = 0; q < S2; q++) {
        const w = weights[d * S2 + q];
        if (w !== 0) s += w * field[(originJ[d] + Math.floor(q / STENCIL)) * lnx + originI[d] + (q % STENCIL)];
      }
      resid[d * B + b] = z[d] - s - (tau > 0 ? tau * rng.normal() : 0);
    }
  }
  return { G, resid };
}

/**
 * Adds the kriged residuals of a prepared batch to G at the output nodes, in chunks of nodes,
 * reporting progress (whole realisations) and polling cancellation.
 */
function krigeBatch(kriger: ResidualKriger, out: OutputNodes, G: Float64Array, r0: number, B: number, N: number, options: ConditionalSimulationOptions, progress: { reported: number }): void {
  const { kk, averageFirst, blockShape, nodesOut, outX, outY, nodeCovariates } = out;
  const q = nodeCovariates ? nodeCovariates.length / (out.nActive * kk) : 0;
  const chunk = Math.max(1, Math.floor(4096 / (averageFirst ? kk : 1)));
  for (let q0 = 0; q0 < nodesOut; q0 += chunk) {
    const m = Math.min(chunk, nodesOut - q0);
    const Y = new Float64Array(m * B);
    if (averageFirst && blockShape) {
      const px = new Float64Array(m * kk), py = new Float64Array(m * kk);
      for (let t = 0; t < m; t++) for (let s = 0; s < kk; s++) {
        px[t * kk + s] = outX[q0 + t] + blockShape.dx[s];
        py[t * kk + s] = outY[q0 + t] + blockShape.dy[s];
      }
      const Ysub = new Float64Array(m * kk * B);
      kriger.apply(px, py, Ysub, nodeCovariates?.subarray(q0 * kk * q, (q0 + m) * kk * q));
      for (let t = 0; t < m; t++) for (let s = 0; s < kk; s++) for (let b = 0; b < B; b++) Y[t * B + b] += Ysub[(t * kk + s) * B + b] / kk;
    } else {
      kriger.apply(outX.subarray(q0, q0 + m), outY.subarray(q0, q0 + m), Y, nodeCovariates?.subarray(q0 * q, (q0 + m) * q));
    }
    for (let t = 0; t < m; t++) for (let b = 0; b < B; b++) G[(q0 + t) * B + b] += Y[t * B + b];
    // A batch may hold every realisation: report the share of its kriging done (whole realisations).
    const part = r0 + Math.min(B - 1, Math.floor((B * (q0 + m)) / nodesOut));
    if (part > progress.reported) {
      progress.reported = part;
      options.onProgress?.(part, N);
    }
    if (options.isCancelled?.()) throw new GapwiseError('cancelled', `Simulation stopped after ${r0} of ${N} realisations.`);
  }
}

/** Per-cell sums over realisations and the cells above the threshold in each. */
interface Accumulated {
  realisations?: Float32Array[];
  sum: Float64Array;
  sumSq: Float64Array;
  above?: Float64Array;
  counts: Float64Array;
}

/** Back-transforms a batch, averages it to cells and adds it to the sums (and keeps the realisations). */
function accumulateBatch(acc: Accumulated, out: OutputNodes, G: Float64Array, r0: number, B: number, log: boolean, threshold: number | undefined): void {
  const { active, nActive, kk, perCell, cellsTotal } = out;
  const { realisations, sum, sumSq, above, counts } = acc;
  for (let b = 0; b < B; b++) {
    const values = realisations ? new Float32Array(cellsTotal).fill(NaN) : null;
    let count = 0;
    for (let a = 0; a < nActive; a++) {
      let v: number;
      if (perCell === 1) v = log ? Math.exp(G[a * B + b]) : G[a * B + b];
      else {
        let s = 0;
        for (let q = 0; q < kk; q++) {
          const g = G[(a * kk + q) * B + b];
          s += log ? Math.exp(g) : g;
        }
        v = s / kk;
      }
      const c = active[a];
      if (values) values[c] = v;
      sum[c] += v;
      sumSq[c] += v * v;
      if (above && v > (threshold as number)) {
        above[c]++;
        count++;
      }
    }
    counts[r0 + b] = count;
    if (realisations && values) realisations.push(values);
  }
}

/** Per-cell mean, sd and P(exceed) of the accumulated realisations, and the area summary. */
function summarise(
  acc: Accumulated, out: OutputNodes, N: number, grid: Grid, options: ConditionalSimulationOptions,
  head: Omit<ConditionalSimulationResult, 'mean' | 'sd' | 'count' | 'grid'>,
): ConditionalSimulationResult {
  const { sum, sumSq, above, counts, realisations } = acc;
  const { active, nActive, cellsTotal } = out;
  const threshold = options.threshold;
  const mean = new Float64Array(cellsTotal).fill(NaN);
  const sd = new Float64Array(cellsTotal).fill(NaN);
  const pExceed = above ? new Float64Array(cellsTotal).fill(NaN) : undefined;
  for (const c of active) {
    const m = sum[c] / N;
    mean[c] = m;
    sd[c] = N > 1 ? Math.sqrt(Math.max(0, (sumSq[c] - N * m * m) / (N - 1))) : 0;
    if (pExceed && above) pExceed[c] = above[c] / N;
  }
  const result: ConditionalSimulationResult = {
    grid, support: head.support, points: head.points, count: N, mean, sd,
    lattice: head.lattice, placementError: head.placementError, neighbours: head.neighbours, warnings: head.warnings, first: head.first,
  };
  if (options.keepTotals) result.totals = { sum, sumSq, above, counts: threshold !== undefined ? counts : new Float64Array(0), activeCells: nActive };
  if (realisations) result.realisations = realisations;
  if (pExceed && threshold !== undefined) {
    result.pExceed = pExceed;
    result.threshold = threshold;
    result.area = summariseExceedanceCounts(counts, { threshold, cell: grid.cell, activeCells: nActive, depth: options.depth });
  }
  return result;
}

/**
 * N conditional realisations of the surface on the grid's active cells (see the file header), with
 * per-cell mean, sd, P(exceed) and the area (volume) above the threshold. Deterministic for a seed.
 * Throws GapwiseError for bad options and whatever kriging and the embedding throw.
 */
export function simulateConditional(
  samples: Samples, model: CovarianceModel, grid: Grid, options: ConditionalSimulationOptions,
): ConditionalSimulationResult {
  const log = model.transform === 'log';
  checkOptions(options, log);
  checkGrid(grid, options);
  const N = options.count;
  const seed = options.seed ?? 1;
  const first = options.first ?? 0;
  const support = options.support ?? 'point';
  const k = support === 'block' ? options.blockPoints ?? 4 : 1;
  const warnings: Warning[] = [];
  const n = samples.x.length;
  const { useLocal, neighbours } = neighbourhoodOf(options, n);

  // The kriger of the residuals; then the lattice, its embedding and the samples placed on it.
  const { kriger, z } = residualKriger(samples, model, useLocal, neighbours, warnings);
  const c0 = surfaceVariance(model);
  const nugget = nuggetOf(model);
  const an = model.anisotropy;
  const cov = (dx: number, dy: number) => surfaceCovariance(model, effectiveDistance(dx, dy, an));
  const lattice = layLattice(samples, grid, k, options.embedding);
  const emb = createCirculantEmbedding(model, { nx: lattice.lnx, ny: lattice.lny, spacing: lattice.h }, options.embedding);
  warnings.push(...emb.warnings);
  const sampler = createFieldSampler(emb);
  const placement = placeSamples(samples, lattice, cov, c0, warnings);
  const lagCov = lagCovariances(lattice, cov);
  const residualGroupsDrawn = residualGroups(n, placement, residualCovariance(samples, placement, cov, lagCov), warnings);
  const placementError = placementErrorOf(n, placement, lagCov, c0, warnings);

  // Realisations in batches: draw, krige the residuals, back-transform and accumulate.
  const out = outputNodes(grid, lattice, k, log, model, options);
  const batch = Math.max(2, Math.min(N, Math.floor(BATCH_BYTES / (8 * Math.max(1, out.nodesOut)))));
  const acc: Accumulated = {
    ...(options.keepRealisations === false ? {} : { realisations: [] }),
    sum: new Float64Array(out.cellsTotal),
    sumSq: new Float64Array(out.cellsTotal),
    ...(options.threshold !== undefined ? { above: new Float64Array(out.cellsTotal) } : {}),
    counts: new Float64Array(N),
  };
  const draw: Draw = { sampler, lattice, placement, groups: residualGroupsDrawn, z, nugget, seed, first };
  const fields = {
    lat: new Float64Array(lattice.lnx * lattice.lny), lat2: new Float64Array(lattice.lnx * lattice.lny),
    eps: new Float64Array(n), noise: new Float64Array(MAX_GROUP),
  };
  const progress = { reported: 0 };
  for (let r0 = 0; r0 < N; r0 += batch) {
    const B = Math.min(batch, N - r0);
    const { G, resid } = drawBatch(draw, out, grid, r0, B, fields);
    kriger.prepare(resid, B);
    krigeBatch(kriger, out, G, r0, B, N, options, progress);
    accumulateBatch(acc, out, G, r0, B, log, options.threshold);
    progress.reported = r0 + B;
    options.onProgress?.(r0 + B, N);
    if (options.isCancelled?.()) throw new GapwiseError('cancelled', `Simulation stopped after ${r0 + B} of ${N} realisations.`);
  }
  return summarise(acc, out, N, grid, options, {
    support, points: k,
    lattice: { nx: lattice.lnx, ny: lattice.lny, spacing: lattice.h, torus: [emb.mx, emb.my], paddingSteps: emb.paddingSteps, negativeFraction: emb.negativeFraction },
    placementError, neighbours: useLocal ? neighbours : 'all', warnings, first,
  });
}

/**
 * Realisations of part i of `parts` of a run of `count` from `start`: consecutive, in whole pairs
 * (the FFT gives fields in pairs), part i starting at start + 2·⌊i·pairs/parts⌋ with pairs = ⌈count/2⌉.
 * How the app's workers and the command line's threads split a run for mergeSimulationParts.
 */
export function simulationPart(start: number, count: number, i: number, parts: number): { first: number; count: number } {
  const pairs = Math.ceil(count / 2);
  const a = 2 * Math.floor((i * pairs) / parts);
  const b = Math.min(count, 2 * Math.floor(((i + 1) * pairs) / parts));
  return { first: start + a, count: b - a };
}

/**
 * Merges parts of one simulation run (same samples, model, grid and options, consecutive `first`
 * ranges, each computed with keepTotals) into the result one run of all their realisations gives:
 * realisations, counts and the area summary exactly; per-cell mean, sd and P(exceed) up to the order
 * of the sums. Throws GapwiseError 'bad-option' when the parts do not fit together.
 */
export function mergeSimulationParts(parts: ConditionalSimulationResult[], options: { depth?: number } = {}): ConditionalSimulationResult {
  if (parts.length === 0) throw new GapwiseError('bad-option', 'Expected at least one simulation part to merge, got none.');
  const sorted = [...parts].sort((a, b) => a.first - b.first);
  const head = sorted[0];
  let next = head.first;
  for (const p of sorted) {
    if (!p.totals) throw new GapwiseError('bad-option', 'Expected simulation parts computed with keepTotals.');
    if (p.first !== next) throw new GapwiseError('bad-option', `Expected simulation parts to follow each other: a part starts at realisation ${p.first}, expected ${next}.`);
    if (p.mean.length !== head.mean.length || p.support !== head.support || p.points !== head.points || p.threshold !== head.threshold) {
      throw new GapwiseError('bad-option', 'Expected simulation parts of one run (same grid, support and threshold).');
    }
    next += p.count;
  }
  const N = next - head.first;
  const cells = head.mean.length;
  const sum = new Float64Array(cells);
  const sumSq = new Float64Array(cells);
  const above = head.totals!.above ? new Float64Array(cells) : undefined;
  const counts: number[] = [];
  const realisations: Float32Array[] = [];
  const warnings = new Map<string, Warning>();
  let placementError = 0;
  for (const p of sorted) {
    const t = p.totals!;
    for (let c = 0; c < cells; c++) {
      sum[c] += t.sum[c];
      sumSq[c] += t.sumSq[c];
      if (above && t.above) above[c] += t.above[c];
    }
    for (const v of t.counts) counts.push(v);
    if (p.realisations) realisations.push(...p.realisations);
    for (const w of p.warnings) warnings.set(`${w.code}:${w.message}`, w);
    placementError = Math.max(placementError, p.placementError);
  }
  const mean = new Float64Array(cells).fill(NaN);
  const sd = new Float64Array(cells).fill(NaN);
  const pExceed = above ? new Float64Array(cells).fill(NaN) : undefined;
  for (let c = 0; c < cells; c++) {
    if (Number.isNaN(head.mean[c])) continue;
    const m = sum[c] / N;
    mean[c] = m;
    sd[c] = N > 1 ? Math.sqrt(Math.max(0, (sumSq[c] - N * m * m) / (N - 1))) : 0;
    if (pExceed && above) pExceed[c] = above[c] / N;
  }
  const result: ConditionalSimulationResult = {
    ...head, count: N, mean, sd, placementError, warnings: [...warnings.values()],
    totals: { sum, sumSq, above, counts: Float64Array.from(counts), activeCells: head.totals!.activeCells },
  };
  delete result.realisations;
  if (sorted.some((p) => p.realisations)) result.realisations = realisations;
  if (pExceed && head.threshold !== undefined) {
    result.pExceed = pExceed;
    result.area = summariseExceedanceCounts(counts, { threshold: head.threshold, cell: head.grid.cell, activeCells: head.totals!.activeCells, depth: options.depth ?? head.area?.volume?.depth });
  }
  return result;
}
