/**
 * Block kriging: predictions of the average of the noise-free surface over a rectangle (a grid
 * cell), its sd and P(block mean > T).
 *
 * A block B of width w and height h is discretised into k×k points at the centres of its k×k
 * sub-rectangles (default k = 4). With C the noise-free covariance (no nugget: the nugget is
 * measurement error, which a block average of the surface does not contain):
 *   k̄ᵢ = (1/k²)·Σ_p C(p, sᵢ)          block-to-sample covariance
 *   C̄_BB = (1/k⁴)·Σ_p Σ_q C(p, q)      block prior variance (pairs p = q included, C(0) = Σ sills)
 *   x̄ = (1/k²)·Σ_p x(p)               averaged trend columns
 * and then the dual GLS form of ./kriging.ts with k̄, x̄, C̄_BB in place of k₀, x₀, c₀:
 *   mean_B = m₀ + x̄ᵀβ̂ + k̄ᵀα,   var_B = C̄_BB − ‖L⁻¹k̄‖² + ‖Lg⁻¹(x̄ − Wᵀ·L⁻¹k̄)‖²
 * (block kriging: Journel & Huijbregts 1978, ch. V; Cressie 1993 §5.2 — from memory). Simple,
 * ordinary and universal kriging follow model.trend as for points. A covariate trend averages its
 * columns by the same rule: x̄ is the mean of the design rows at the k×k discretisation points, each
 * with the covariates at that point (`BlockPredictOptions.covariates`), so an indicator column
 * becomes the share of the block in that level and a numeric covariate its block average. As the
 * mean is linear in the columns, x̄ᵀβ is exactly the block average of the point means. C̄_BB depends only on the
 * block's shape, so it is computed once from the (2k−1)² distinct lags between discretisation
 * points, each weighted by its count (k − |a|)(k − |b|).
 * P(block mean > T) = 1 − Φ((T − mean_B)/sd_B): the block mean of a Gaussian surface is Gaussian.
 * Not for a log model: the average of a lognormal surface over a block is not lognormal and is not
 * exp of the average of the log surface; those blocks come from conditional simulation
 * (./conditional-simulation.ts), and asking for them here is an error that says so.
 * Units: metres; mean and sd in data units. Cost: the predictor's factor (n³/3 once), then per block
 * k²·n covariances and n² flops for the sd; C̄_BB costs (2k−1)² covariances once.
 */
import type { CovarianceModel } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import { GapwiseError, type Warning } from '../shared/errors.ts';
import { crossCovarianceMatrix, effectiveDistance, surfaceCovariance } from '../covariance/covariance.ts';
import { solveLowerBlock, solveLowerInPlace } from '../linalg/linalg.ts';
import { buildKrigingSystem, type KrigingSystem, type PredictorOptions } from './kriging.ts';
import { checkCovariateRows, covariateColumnCount, designRow, type CoordinateFrame } from '../covariance/trend.ts';
import { exceedanceProbability } from '../shared/normal.ts';
import { cellCentres, type Grid } from '../geometry/grid.ts';
import { checkSurfaceCell, rangeOf, type SurfaceArray, type SurfaceResult } from './surface.ts';

/** Default discretisation: 4×4 points per block (common practice). */
export const DEFAULT_BLOCK_POINTS = 4;
/** Most discretisation points per side accepted (k² covariances per block and sample). */
const MAX_BLOCK_POINTS = 64;

/** Block shape (plain data). */
export interface BlockShape {
  /** East–west extent, metres (> 0). */
  width: number;
  /** North–south extent, metres (> 0); default = width. */
  height?: number;
  /** Discretisation points per side, k; default 4. */
  points?: number;
}

/** Block predictions; one entry per block. */
export interface BlockPrediction {
  /** Kriging estimate of the block average. */
  mean: Float64Array;
  /** Standard deviation of the block average (no nugget). */
  sd: Float64Array;
  /** P(block mean > threshold), when a threshold was given. */
  pExceed?: Float64Array;
  /** C̄_BB: prior variance of the block average. */
  blockVariance: number;
  /** Discretisation points per side used. */
  points: number;
}

/** Options of one block prediction call. */
export interface BlockPredictOptions {
  threshold?: number;
  /** Blocks per batch (memory 8·n·batch·k² bytes for the covariances); default so that batch·k² ≈ 2048. */
  batch?: number;
  onProgress?: (done: number, total: number) => void;
  isCancelled?: () => boolean;
  /**
   * Covariate trend only: the encoded covariates at every discretisation point of every block
   * (blocks × k² rows × q columns, row-major; points in the order of `blockOffsets`). Required when
   * the model's trend has covariates.
   */
  covariates?: ArrayLike<number>;
}

function checkShape(shape: BlockShape): { w: number; h: number; k: number } {
  const w = shape.width;
  const h = shape.height ?? shape.width;
  const k = shape.points ?? DEFAULT_BLOCK_POINTS;
  if (!(Number.isFinite(w) && w > 0) || !(Number.isFinite(h) && h > 0)) {
    throw new GapwiseError('bad-option', `Expected a block width and height above 0 m, got ${w} and ${h}.`);
  }
  if (!(Number.isInteger(k) && k >= 1 && k <= MAX_BLOCK_POINTS)) {
    throw new GapwiseError('bad-option', `Expected the block discretisation to be a whole number of points per side from 1 to ${MAX_BLOCK_POINTS}, got ${JSON.stringify(shape.points)}.`);
  }
  return { w, h, k };
}

/**
 * Offsets (east, north) of the k×k discretisation points from the block centre, row by row from the
 * north-west: ((a + ½)/k − ½)·w east and (½ − (b + ½)/k)·h north.
 */
export function blockOffsets(shape: BlockShape): { dx: Float64Array; dy: Float64Array } {
  const { w, h, k } = checkShape(shape);
  const dx = new Float64Array(k * k);
  const dy = new Float64Array(k * k);
  for (let b = 0; b < k; b++) {
    for (let a = 0; a < k; a++) {
      dx[b * k + a] = ((a + 0.5) / k - 0.5) * w;
      dy[b * k + a] = (0.5 - (b + 0.5) / k) * h;
    }
  }
  return { dx, dy };
}

/**
 * C̄_BB: the average noise-free covariance between all pairs of discretisation points of one block
 * (no nugget), from the (2k−1)² distinct lags weighted by (k − |a|)(k − |b|).
 */
export function blockPriorVariance(model: CovarianceModel, shape: BlockShape): number {
  const { w, h, k } = checkShape(shape);
  let s = 0;
  for (let b = -(k - 1); b <= k - 1; b++) {
    for (let a = -(k - 1); a <= k - 1; a++) {
      const count = (k - Math.abs(a)) * (k - Math.abs(b));
      s += count * surfaceCovariance(model, effectiveDistance((a * w) / k, (b * h) / k, model.anisotropy));
    }
  }
  return s / (k * k * k * k);
}

/**
 * Block averages centred at (cx, cy) from a factorised kriging system (./kriging.ts
 * buildKrigingSystem). Throws GapwiseError('bad-option') for a log model, a bad shape or threshold.
 */
export function predictBlocksWithSystem(
  sys: KrigingSystem, cx: ArrayLike<number>, cy: ArrayLike<number>, shape: BlockShape, options: BlockPredictOptions = {},
): BlockPrediction {
  if (sys.log) {
    throw new GapwiseError('bad-option',
      'Block averages of a log model are not lognormal and cannot be kriged in closed form; expected point support, or block support computed from conditional simulations (realisations).');
  }
  if (cx.length !== cy.length) throw new GapwiseError('bad-value', `Expected block x and y of equal length, got ${cx.length} and ${cy.length}.`);
  const threshold = options.threshold;
  if (threshold !== undefined && !Number.isFinite(threshold)) {
    throw new GapwiseError('bad-option', `Expected the threshold to be a finite number, got ${String(threshold)}.`);
  }
  const { k } = checkShape(shape);
  const { dx, dy } = blockOffsets(shape);
  const kk = k * k;
  const cbb = blockPriorVariance(sys.model, shape);
  const { n, p, model, frame, u, v, W, Lg, beta, alpha, m0 } = sys;
  const L = sys.factor.L;
  const total = cx.length;
  const batch = Math.max(1, Math.floor(options.batch ?? Math.max(1, Math.floor(2048 / kk))));
  const mean = new Float64Array(total);
  const sd = new Float64Array(total);
  const pExceed = threshold !== undefined ? new Float64Array(total) : undefined;
  // Keep the covariate centres and scales of the frame: only the coordinates are already centred.
  const centred: CoordinateFrame = { ...frame, cx: 0, cy: 0 };
  const q = covariateColumnCount(model.trend);
  if (q > 0) checkCovariateRows(model.trend, total * kk, options.covariates, 'block point');
  const tc = options.covariates;
  const row = new Float64Array(Math.max(1, p));
  const xbar = new Float64Array(batch * p);
  const t = new Float64Array(p);

  for (let j0 = 0; j0 < total; j0 += batch) {
    const m = Math.min(batch, total - j0);
    const pu = new Float64Array(m * kk);
    const pv = new Float64Array(m * kk);
    xbar.fill(0);
    for (let j = 0; j < m; j++) {
      const bu = cx[j0 + j] - frame.cx;
      const bv = cy[j0 + j] - frame.cy;
      if (!Number.isFinite(bu) || !Number.isFinite(bv)) {
        throw new GapwiseError('bad-value', `Block ${j0 + j + 1} has the centre (${cx[j0 + j]}, ${cy[j0 + j]}); expected finite numbers.`);
      }
      for (let s = 0; s < kk; s++) {
        pu[j * kk + s] = bu + dx[s];
        pv[j * kk + s] = bv + dy[s];
        if (p > 0) {
          designRow(model.trend, pu[j * kk + s], pv[j * kk + s], centred, row, 0, tc, ((j0 + j) * kk + s) * q);
          for (let a = 0; a < p; a++) xbar[j * p + a] += row[a] / kk;
        }
      }
    }
    // n × (m·k²) point covariances, averaged into n × m block covariances.
    const C = crossCovarianceMatrix(model, u, v, pu, pv);
    const B = new Float64Array(n * m);
    for (let i = 0; i < n; i++) {
      const ci = i * m * kk;
      for (let j = 0; j < m; j++) {
        let s = 0;
        const cj = ci + j * kk;
        for (let r = 0; r < kk; r++) s += C[cj + r];
        B[i * m + j] = s / kk;
      }
    }
    for (let j = 0; j < m; j++) {
      let s = m0;
      for (let a = 0; a < p; a++) s += xbar[j * p + a] * beta[a];
      mean[j0 + j] = s;
    }
    for (let i = 0; i < n; i++) {
      const ai = alpha[i];
      for (let j = 0; j < m; j++) mean[j0 + j] += ai * B[i * m + j];
    }
    solveLowerBlock(L, n, B, m);
    for (let j = 0; j < m; j++) {
      let ss = 0;
      for (let i = 0; i < n; i++) ss += B[i * m + j] * B[i * m + j];
      let variance = cbb - ss;
      if (p > 0) {
        for (let a = 0; a < p; a++) {
          let s = xbar[j * p + a];
          for (let i = 0; i < n; i++) s -= W[i * p + a] * B[i * m + j];
          t[a] = s;
        }
        solveLowerInPlace(Lg, p, t);
        for (let a = 0; a < p; a++) variance += t[a] * t[a];
      }
      const s = Math.sqrt(Math.max(0, variance));
      sd[j0 + j] = s;
      if (pExceed) pExceed[j0 + j] = exceedanceProbability(mean[j0 + j], s, threshold as number);
    }
    options.onProgress?.(j0 + m, total);
    if (options.isCancelled?.()) throw new GapwiseError('cancelled', `Block prediction stopped after ${j0 + m} of ${total} blocks.`);
  }
  const out: BlockPrediction = { mean, sd, blockVariance: cbb, points: k };
  if (pExceed) out.pExceed = pExceed;
  return out;
}

/** A factorised system answering block predictions. */
export interface BlockPredictor {
  readonly system: KrigingSystem;
  readonly warnings: Warning[];
  predict(cx: ArrayLike<number>, cy: ArrayLike<number>, shape: BlockShape, options?: BlockPredictOptions): BlockPrediction;
}

/**
 * Factorises the kriging system once (as createPredictor does) and returns a block predictor.
 * Throws what buildKrigingSystem throws, and GapwiseError('bad-option') for a log model.
 */
export function createBlockPredictor(samples: Samples, model: CovarianceModel, options: PredictorOptions = {}): BlockPredictor {
  if (model.transform === 'log') {
    throw new GapwiseError('bad-option',
      'Block averages of a log model are not lognormal and cannot be kriged in closed form; expected point support, or block support computed from conditional simulations (realisations).');
  }
  const system = buildKrigingSystem(samples, model, options);
  return {
    system,
    warnings: system.warnings,
    predict: (cx, cy, shape, opts) => predictBlocksWithSystem(system, cx, cy, shape, opts),
  };
}

/** Options of a block surface (plain data). */
export interface BlockSurfaceOptions {
  /** Discretisation points per side; default 4. */
  points?: number;
  threshold?: number;
  /** Rows [start, end); default all. */
  rows?: [number, number];
  precision?: 'float32' | 'float64';
  /**
   * Covariate trend only: the encoded covariates at the k×k discretisation points of every grid cell
   * (nx·ny cells row-major from the top, each k² rows in the order of `blockOffsets`, × q columns).
   */
  covariates?: Float64Array;
}

/**
 * Block-average surfaces on a grid: every cell is a block of cell × cell metres. Same shape as
 * computeSurface's result (./surface.ts): mean and sd of the cell average, P(cell average > T);
 * masked cells NaN. Throws GapwiseError as createBlockPredictor and for bad rows.
 */
export function computeBlockSurfaceWith(
  predictor: BlockPredictor, grid: Grid, options: BlockSurfaceOptions = {}, onProgress?: (done: number, total: number) => void,
): SurfaceResult & { support: 'block'; points: number; blockVariance: number } {
  const r0 = options.rows?.[0] ?? 0;
  const r1 = options.rows?.[1] ?? grid.ny;
  if (!Number.isInteger(r0) || !Number.isInteger(r1) || r0 < 0 || r1 > grid.ny || r0 >= r1) {
    throw new GapwiseError('bad-option', `Expected rows [start, end) with 0 ≤ start < end ≤ ${grid.ny}, got [${r0}, ${r1}].`);
  }
  const { nx } = grid;
  const centres = cellCentres(grid, r0, r1);
  const shape: BlockShape = { width: grid.cell, height: grid.cell, points: options.points ?? DEFAULT_BLOCK_POINTS };
  let covariates: Float64Array | undefined;
  if (options.covariates) {
    // The active cells' rows, in the order of the centres.
    const per = options.covariates.length / (grid.nx * grid.ny);
    covariates = new Float64Array(centres.index.length * per);
    for (let c = 0; c < centres.index.length; c++) covariates.set(options.covariates.subarray(centres.index[c] * per, centres.index[c] * per + per), c * per);
  }
  const p = predictor.predict(centres.x, centres.y, shape, { threshold: options.threshold, onProgress, ...(covariates ? { covariates } : {}) });
  const size = (r1 - r0) * nx;
  const make = (): SurfaceArray => (options.precision === 'float64' ? new Float64Array(size) : new Float32Array(size)).fill(NaN);
  const mean = make();
  const sd = make();
  const pExceed = p.pExceed ? make() : undefined;
  const offset = r0 * nx;
  for (let c = 0; c < centres.index.length; c++) {
    const k = centres.index[c] - offset;
    mean[k] = p.mean[c];
    sd[k] = p.sd[c];
    if (pExceed && p.pExceed) pExceed[k] = p.pExceed[c];
    checkSurfaceCell(predictor.system.model, centres.index[c], nx, [['block mean', mean[k], p.mean[c]], ['block sd', sd[k], p.sd[c]],
      ['P(exceed)', pExceed ? pExceed[k] : 0, pExceed ? pExceed[k] : 0]]);
  }
  const result: SurfaceResult & { support: 'block'; points: number; blockVariance: number } = {
    rows: [r0, r1], nx, mean, sd,
    range: { mean: rangeOf(mean), sd: rangeOf(sd) },
    cells: centres.index.length,
    warnings: [...predictor.warnings],
    support: 'block',
    points: p.points,
    blockVariance: p.blockVariance,
  };
  if (pExceed) {
    result.pExceed = pExceed;
    result.threshold = options.threshold;
    result.range.pExceed = rangeOf(pExceed);
  }
  return result;
}

/** One-shot block surface: factorises, then predicts every active cell as a block. */
export function computeBlockSurface(
  samples: Samples, model: CovarianceModel, grid: Grid, options: BlockSurfaceOptions = {}, onProgress?: (done: number, total: number) => void,
): SurfaceResult & { support: 'block'; points: number; blockVariance: number } {
  return computeBlockSurfaceWith(createBlockPredictor(samples, model), grid, options, onProgress);
}
