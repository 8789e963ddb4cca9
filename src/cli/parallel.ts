// Grid surfaces in row bands over worker threads, for the CLI.
//
// One worker per available core (os.availableParallelism(), or `workers`), on the engine's pool
// (./engine-threads.ts): each band is a `surfaceRows` request of the whole grid with its `rows`, and
// idle workers take the next band from the queue, so fast and slow bands balance out. Each worker
// builds the predictor once (exact: kriging.ts, local neighbourhoods: core/prediction/local-kriging.ts; the
// handler keeps it for the next band). Every cell is computed the same way whichever worker gets it,
// so the result equals the single-thread one bit for bit.
import { availableParallelism } from 'node:os';
import type { Samples } from '../core/shared/samples.ts';
import type { CovarianceModel } from '../core/covariance/model.ts';
import type { Grid } from '../core/geometry/grid.ts';
import { cellCount } from '../core/geometry/grid.ts';
import { GapwiseError, type Warning } from '../core/shared/errors.ts';
import { createPredictor } from '../core/prediction/kriging.ts';
import { createLocalPredictor, globalMeanCoefficients, type LocalKrigingOptions } from '../core/prediction/local-kriging.ts';
import { computeSurfaceWith, surfaceResult, type SurfaceOptions, type SurfaceResult, type SurfaceArray, type SurfacePredictor } from '../core/prediction/surface.ts';
import { startEngineThreads } from './engine-threads.ts';

export type SurfacePath = 'exact' | 'local';

/** What every worker needs (plain data, structured-cloned once per worker). */
export interface SurfaceJob {
  samples: Samples;
  model: CovarianceModel;
  grid: Grid;
  path: SurfacePath;
  /** Options of the local path (neighbours, globalMean). */
  local?: LocalKrigingOptions;
  /** Threshold and precision; `rows` is set per band. */
  surface?: Omit<SurfaceOptions, 'rows'>;
}

/** Options of a parallel surface computation. */
export interface ParallelSurfaceOptions {
  /** Worker threads; default os.availableParallelism(). */
  workers?: number;
  /** Rows per band; default about four bands per worker (at least 1 row). */
  bandRows?: number;
  /** Cells done so far and in total. */
  onProgress?: (done: number, total: number) => void;
}

/** Largest estimated flop count (n³/3 + cells·n²) for which 'auto' picks the exact path. */
const EXACT_FLOP_LIMIT = 2e9;

/**
 * 'exact' when the dense path costs at most about 2·10⁹ flops (n³/3 to factor plus n² per cell),
 * otherwise 'local' (m nearest samples per cell).
 */
export function chooseSurfacePath(n: number, cells: number): SurfacePath {
  return n ** 3 / 3 + cells * n * n <= EXACT_FLOP_LIMIT ? 'exact' : 'local';
}

/** The predictor a job asks for (used by the workers and by the single-thread path). */
function buildSurfacePredictor(job: SurfaceJob): SurfacePredictor {
  if (job.path === 'exact') return createPredictor(job.samples, job.model);
  // Grid cells one cell apart may share tile neighbourhoods (core/prediction/local-kriging.ts chooseTile).
  return createLocalPredictor(job.samples, job.model, { ...job.local, targetSpacing: job.local?.targetSpacing ?? job.grid.cell });
}

/** The same surface on this thread (the reference the pool must match). */
export function computeSurfaceSingle(job: SurfaceJob): SurfaceResult {
  return computeSurfaceWith(buildSurfacePredictor(job), job.grid, { ...job.surface });
}

/**
 * Computes mean, sd (and P(exceed) / median) on every row of the grid with a pool of worker threads,
 * in bands of rows handed out from a queue. Resolves with full-grid arrays (Float32 unless
 * job.surface.precision is 'float64'); rejects with the first worker error (GapwiseError when it was
 * one, EngineError for a bug) after stopping every worker.
 */
export async function computeSurfaceParallel(job: SurfaceJob, options: ParallelSurfaceOptions = {}): Promise<SurfaceResult> {
  const { grid } = job;
  const globalWarnings: Warning[] = [];
  if (job.path === 'local' && job.local?.globalMean && job.local.globalBeta === undefined) {
    // The global GLS mean is the same for every band: compute it once here, not in every worker.
    const { beta, warnings } = globalMeanCoefficients(job.samples, job.model, job.local);
    job = { ...job, local: { ...job.local, globalBeta: Array.from(beta) } };
    for (const w of warnings) globalWarnings.push(w);
  }
  const workers = Math.max(1, Math.floor(options.workers ?? availableParallelism()));
  if (!(grid.ny >= 1 && grid.nx >= 1)) throw new GapwiseError('bad-option', `Expected a grid with at least one row and column, got ${grid.nx} × ${grid.ny}.`);
  const bandRows = Math.max(1, Math.floor(options.bandRows ?? Math.ceil(grid.ny / (4 * workers))));
  const bands: [number, number][] = [];
  for (let r = 0; r < grid.ny; r += bandRows) bands.push([r, Math.min(grid.ny, r + bandRows)]);
  const poolSize = Math.min(workers, bands.length);

  const size = grid.nx * grid.ny;
  const float64 = job.surface?.precision === 'float64';
  const make = (): SurfaceArray => (float64 ? new Float64Array(size) : new Float32Array(size)).fill(NaN);
  const mean = make();
  const sd = make();
  const threshold = job.surface?.threshold;
  const pExceed = threshold !== undefined ? make() : undefined;
  let median: SurfaceArray | undefined;
  const totalCells = cellCount(grid);
  const bandDone = new Float64Array(bands.length);
  let doneCells = 0;
  const warnings = new Map<string, Warning>();
  for (const w of globalWarnings) warnings.set(`${w.code}:${w.message}`, w);

  const pool = startEngineThreads(poolSize);
  const local = job.path === 'local' ? job.local ?? {} : undefined;
  try {
    await pool.run(bands.map((rows) => ({
      type: 'surfaceRows' as const,
      payload: { samples: job.samples, model: job.model, grid, options: { ...job.surface, rows }, ...(local ? { local } : {}) },
    })), {
      name: 'surface', parts: 'bands',
      onProgress: (b, p) => {
        doneCells += p.done - bandDone[b];
        bandDone[b] = p.done;
        options.onProgress?.(doneCells, totalCells);
      },
      onResult: (_b, r) => {
        const offset = r.rows[0] * grid.nx;
        mean.set(r.mean, offset);
        sd.set(r.sd, offset);
        if (pExceed && r.pExceed) pExceed.set(r.pExceed, offset);
        if (r.median) {
          median ??= make();
          median.set(r.median, offset);
        }
        for (const wn of r.warnings) warnings.set(`${wn.code}:${wn.message.replace(/^\d+ /, '')}`, wn);
      },
    });
  } finally {
    await pool.dispose();
  }

  return surfaceResult({ rows: [0, grid.ny], nx: grid.nx, mean, sd, pExceed, median, threshold, cells: totalCells, warnings: [...warnings.values()] });
}
