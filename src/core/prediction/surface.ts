/**
 * Surfaces on a grid: kriging mean, sd of the noise-free surface and the chance of exceeding a
 * threshold, for all rows of a grid or a band of them (the unit a worker computes).
 *
 * Cells are predicted row block by row block through one factorised predictor (./kriging.ts), so
 * at most one block of cross-covariances (8·n·blockCells bytes) exists at a time.
 * P(exceed) = P(Z > T) = 1 − Φ((T − mean)/sd) on the noise-free surface; for a log transform it is
 * computed on the log scale, 1 − Φ((ln T − Ŷ)/σ), since P(Z > T) = P(ln Z > ln T) (exact for a
 * monotone transform, no bias correction needed). Φ from ./normal.ts.
 * Masked-out cells hold NaN. Units: mean and sd in data units; pExceed in [0, 1].
 * Cost: n³/3 flops to factor (once per predictor), then about n² flops per cell (see
 * estimateSurfaceCost in ./grid.ts).
 */
import { nonFiniteResult, type CovarianceModel } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import type { Warning } from '../shared/errors.ts';
import { GapwiseError } from '../shared/errors.ts';
import { createPredictor, type Predictor } from './kriging.ts';
import { cellCentres, type Grid } from '../geometry/grid.ts';
import { exceedanceProbability } from '../shared/normal.ts';

/** Options for a surface (plain data, postMessage-safe). */
export interface SurfaceOptions {
  /** Action level in data units; when given, pExceed is computed. */
  threshold?: number;
  /** Rows [start, end) to compute; default all rows. */
  rows?: [number, number];
  /** Cells per block handed to the predictor (default 2048; memory 8·n·blockCells bytes). */
  blockCells?: number;
  /** 'float32' (default: display, GeoTIFF) or 'float64' (full precision, e.g. CSV output). */
  precision?: 'float32' | 'float64';
  /**
   * Covariate trend only: encoded covariates of every grid cell (nx·ny rows × q columns, row-major
   * from the top row, q = covariateColumnCount(trend)); masked-out cells are never read.
   */
  covariates?: Float64Array;
}

export type SurfaceArray = Float32Array | Float64Array;

/** Smallest and largest finite value, or NaN for both when there is none. */
export interface ValueRange {
  min: number;
  max: number;
}

/** Surfaces over rows [rows[0], rows[1]) of the grid; each array has (rows[1] − rows[0])·nx cells. */
export interface SurfaceResult {
  rows: [number, number];
  nx: number;
  mean: SurfaceArray;
  sd: SurfaceArray;
  /** P(value > threshold), when a threshold was given. */
  pExceed?: SurfaceArray;
  /** Log transform only: the median exp(Ŷ) on the data scale. */
  median?: SurfaceArray;
  threshold?: number;
  range: { mean: ValueRange; sd: ValueRange; pExceed?: ValueRange };
  /** Active (computed) cells in the band. */
  cells: number;
  warnings: Warning[];
}

/** Progress: cells done and cells in total for this call. */
export type SurfaceProgress = (done: number, total: number) => void;

function checkRows(grid: Grid, rows?: [number, number]): [number, number] {
  if (!grid || !(grid.nx >= 1) || !(grid.ny >= 1) || !(grid.cell > 0)) {
    throw new GapwiseError('bad-option', `Expected a grid with at least one cell and a positive cell size, got ${JSON.stringify(grid && { nx: grid.nx, ny: grid.ny, cell: grid.cell })}.`);
  }
  if (grid.mask && grid.mask.length !== grid.nx * grid.ny) {
    throw new GapwiseError('bad-option', `Expected a mask of ${grid.nx * grid.ny} cells (nx × ny), got ${grid.mask.length}.`);
  }
  if (!rows) return [0, grid.ny];
  const [a, b] = rows;
  if (!Number.isInteger(a) || !Number.isInteger(b) || a < 0 || b > grid.ny || a >= b) {
    throw new GapwiseError('bad-option', `Expected rows [start, end) with 0 ≤ start < end ≤ ${grid.ny}, got [${a}, ${b}].`);
  }
  return [a, b];
}

/** Smallest and largest value of a surface array (NaN cells left out; both NaN when none is a number). */
export function rangeOf(a: ArrayLike<number>): ValueRange {
  let min = Infinity, max = -Infinity;
  for (let k = 0; k < a.length; k++) {
    const v = a[k];
    if (v < min) min = v;
    if (v > max) max = v;
  }
  return min <= max ? { min, max } : { min: NaN, max: NaN };
}

/**
 * Throws GapwiseError 'non-finite' (model.ts `nonFiniteResult`) when a stored cell value is not finite:
 * each entry is [name, stored value, value before storing] (they differ when Float32 storage overflowed).
 */
export function checkSurfaceCell(model: CovarianceModel, index: number, nx: number, values: Array<[string, number, number]>): void {
  for (const [what, stored, computed] of values) {
    if (Number.isFinite(stored)) continue;
    const where = `the cell in column ${index % nx}, row ${Math.floor(index / nx)}`;
    throw nonFiniteResult(model, what, where, Number.isFinite(computed) ? computed : stored, Number.isFinite(computed));
  }
}

/** What a surface needs of a predictor: the exact one (kriging.ts) and the local one both fit. */
export type SurfacePredictor = Pick<Predictor, 'model' | 'predict' | 'warnings'>;

/**
 * Mean, sd and (with a threshold) P(exceed) on the grid rows, through an already factorised
 * predictor (workers keep one per model and samples and reuse it across bands).
 */
export function computeSurfaceWith(
  predictor: SurfacePredictor, grid: Grid, options: SurfaceOptions = {}, onProgress?: SurfaceProgress,
): SurfaceResult {
  const [r0, r1] = checkRows(grid, options.rows);
  const threshold = options.threshold;
  if (threshold !== undefined && !Number.isFinite(threshold)) {
    throw new GapwiseError('bad-option', `Expected the threshold to be a finite number, got ${String(threshold)}.`);
  }
  const log = predictor.model.transform === 'log';
  if (log && threshold !== undefined && !(threshold > 0)) {
    throw new GapwiseError('bad-option', `Expected a threshold above 0 with a log transform, got ${threshold}.`);
  }
  const { nx } = grid;
  const size = (r1 - r0) * nx;
  const make = (): SurfaceArray => (options.precision === 'float64' ? new Float64Array(size) : new Float32Array(size)).fill(NaN);
  const mean = make();
  const sd = make();
  const pExceed = threshold !== undefined ? make() : undefined;
  const median = log ? make() : undefined;
  const logThreshold = log && threshold !== undefined ? Math.log(threshold) : NaN;

  const blockCells = Math.max(1, Math.floor(options.blockCells ?? 2048));
  const rowsPerBlock = Math.max(1, Math.floor(blockCells / nx));
  let total = 0;
  if (grid.mask) { for (let k = r0 * nx; k < r1 * nx; k++) total += grid.mask[k]; } else total = size;
  let done = 0;
  onProgress?.(0, total);
  for (let j = r0; j < r1; j += rowsPerBlock) {
    const centres = cellCentres(grid, j, Math.min(r1, j + rowsPerBlock));
    const m = centres.index.length;
    if (m === 0) continue;
    let covariates: Float64Array | undefined;
    if (options.covariates) {
      const q = options.covariates.length / (grid.nx * grid.ny);
      covariates = new Float64Array(m * q);
      for (let c = 0; c < m; c++) covariates.set(options.covariates.subarray(centres.index[c] * q, centres.index[c] * q + q), c * q);
    }
    const p = predictor.predict(centres.x, centres.y, { blockSize: Math.min(m, 512), covariates });
    const offset = r0 * nx;
    for (let c = 0; c < m; c++) {
      const k = centres.index[c] - offset;
      mean[k] = p.mean[c];
      sd[k] = p.sd[c];
      if (median && p.median) median[k] = p.median[c];
      if (pExceed) {
        pExceed[k] = log && p.logMean && p.logSd
          ? exceedanceProbability(p.logMean[c], p.logSd[c], logThreshold)
          : exceedanceProbability(p.mean[c], p.sd[c], threshold as number);
      }
      checkSurfaceCell(predictor.model, centres.index[c], nx, [['kriging mean', mean[k], p.mean[c]], ['sd', sd[k], p.sd[c]],
        ['P(exceed)', pExceed ? pExceed[k] : 0, pExceed ? pExceed[k] : 0], ['median', median ? median[k] : 0, median && p.median ? p.median[c] : 0]]);
    }
    done += m;
    onProgress?.(done, total);
  }
  return surfaceResult({ rows: [r0, r1], nx, mean, sd, pExceed, median, threshold, cells: total, warnings: [...predictor.warnings] });
}

/** The layers of a band as a SurfaceResult, with each layer's range; P(exceed) and the median only when computed. */
export function surfaceResult(band: {
  rows: [number, number]; nx: number; mean: SurfaceArray; sd: SurfaceArray;
  pExceed?: SurfaceArray | null; median?: SurfaceArray | null; threshold?: number;
  cells: number; warnings: Warning[];
}): SurfaceResult {
  const { rows, nx, mean, sd, pExceed, median, threshold, cells, warnings } = band;
  const result: SurfaceResult = { rows, nx, mean, sd, range: { mean: rangeOf(mean), sd: rangeOf(sd) }, cells, warnings };
  if (pExceed) {
    result.pExceed = pExceed;
    result.threshold = threshold;
    result.range.pExceed = rangeOf(pExceed);
  }
  if (median) result.median = median;
  return result;
}

/**
 * Kriging surfaces of the samples under the model on the grid (or on `options.rows` of it):
 * factorises once, then streams the cells row block by row block. Masked cells are NaN.
 * Throws GapwiseError for bad options and whatever createPredictor throws.
 */
export function computeSurface(
  samples: Samples, model: CovarianceModel, grid: Grid, options: SurfaceOptions = {}, onProgress?: SurfaceProgress,
): SurfaceResult {
  checkRows(grid, options.rows);
  return computeSurfaceWith(createPredictor(samples, model), grid, options, onProgress);
}
