/**
 * Several analytes' surfaces on one grid through one pool of worker threads.
 *
 * `computeSurfaceParallel` (./parallel.ts) starts a pool per surface; starting a worker costs about
 * as much CPU as a 500-sample analyte on a 200 × 200 grid (from source it loads tsx and compiles the
 * engine), so several analytes would pay it once per analyte. Here the engine threads start once and
 * every analyte's bands go through one `EnginePool.run` queue, job by job, so no worker waits for the
 * others between analytes (each worker builds an analyte's predictor once and keeps it for its bands). Every band is computed exactly as a one-analyte run computes it (same predictor,
 * same bands: `bandRows` as there), so each analyte's arrays equal that run's bit for bit.
 */
import { availableParallelism } from 'node:os';
import { cellCount } from '../core/geometry/grid.ts';
import { GapwiseError, type Warning } from '../core/shared/errors.ts';
import { globalMeanCoefficients } from '../core/prediction/local-kriging.ts';
import { rangeOf, type SurfaceArray, type SurfaceResult } from '../core/prediction/surface.ts';
import type { SurfaceJob } from './parallel.ts';
import { startEngineThreads } from './engine-threads.ts';

/** Options of a several-analyte computation. */
export interface SharedSurfaceOptions {
  /** Worker threads; default os.availableParallelism(). */
  workers?: number;
  /** Cells done so far and in total, for job `job`. */
  onProgress?: (job: number, done: number, total: number) => void;
}

interface JobState {
  job: SurfaceJob;
  bands: [number, number][];
  bandDone: Float64Array;
  doneCells: number;
  totalCells: number;
  mean: SurfaceArray;
  sd: SurfaceArray;
  pExceed?: SurfaceArray;
  median?: SurfaceArray;
  make: () => SurfaceArray;
  warnings: Map<string, Warning>;
}

/** The state of one job: its bands (as computeSurfaceParallel cuts them for `workers`) and arrays. */
function prepare(jobGiven: SurfaceJob, workers: number): JobState {
  let job = jobGiven;
  const warnings = new Map<string, Warning>();
  if (job.path === 'local' && job.local?.globalMean && job.local.globalBeta === undefined) {
    // The global GLS mean is the same for every band: once here, not in every worker.
    const { beta, warnings: w } = globalMeanCoefficients(job.samples, job.model, job.local);
    job = { ...job, local: { ...job.local, globalBeta: Array.from(beta) } };
    for (const x of w) warnings.set(`${x.code}:${x.message}`, x);
  }
  const { grid } = job;
  if (!(grid.ny >= 1 && grid.nx >= 1)) throw new GapwiseError('bad-option', `Expected a grid with at least one row and column, got ${grid.nx} × ${grid.ny}.`);
  const bandRows = Math.max(1, Math.ceil(grid.ny / (4 * workers)));
  const bands: [number, number][] = [];
  for (let r = 0; r < grid.ny; r += bandRows) bands.push([r, Math.min(grid.ny, r + bandRows)]);
  const size = grid.nx * grid.ny;
  const float64 = job.surface?.precision === 'float64';
  const make = (): SurfaceArray => (float64 ? new Float64Array(size) : new Float32Array(size)).fill(NaN);
  return {
    job, bands, bandDone: new Float64Array(bands.length), doneCells: 0, totalCells: cellCount(grid),
    mean: make(), sd: make(), ...(job.surface?.threshold !== undefined ? { pExceed: make() } : {}), make, warnings,
  };
}

function resultOf(s: JobState): SurfaceResult {
  const { grid } = s.job;
  const result: SurfaceResult = {
    rows: [0, grid.ny], nx: grid.nx, mean: s.mean, sd: s.sd,
    range: { mean: rangeOf(s.mean), sd: rangeOf(s.sd) },
    cells: s.totalCells,
    warnings: [...s.warnings.values()],
  };
  if (s.pExceed) {
    result.pExceed = s.pExceed;
    result.threshold = s.job.surface?.threshold;
    result.range.pExceed = rangeOf(s.pExceed);
  }
  if (s.median) result.median = s.median;
  return result;
}

/**
 * The surfaces of every job (one per analyte, usually on one grid) through one pool of engine threads.
 * Resolves with one SurfaceResult per job, each equal to `computeSurfaceParallel(job, { workers })`;
 * rejects with the first band's error, its `job` set to the failing job, after stopping every worker.
 */
export async function computeSurfacesShared(jobs: readonly SurfaceJob[], options: SharedSurfaceOptions = {}): Promise<SurfaceResult[]> {
  const workers = Math.max(1, Math.floor(options.workers ?? availableParallelism()));
  const states = jobs.map((j) => prepare(j, workers));
  if (states.length === 0) return [];
  // Every job's bands in one queue, job by job: a worker moves on to the next job's bands as soon as
  // the current job has none left (its predictor is rebuilt once per job and worker, then cached).
  const parts = states.flatMap((s, j) => s.bands.map((rows, b) => ({ j, b, rows })));
  const pool = startEngineThreads(Math.min(workers, parts.length));
  try {
    await pool.run(parts.map(({ j, rows }) => {
      const { job } = states[j];
      const local = job.path === 'local' ? job.local ?? {} : undefined;
      return {
        type: 'surfaceRows' as const,
        payload: { samples: job.samples, model: job.model, grid: job.grid, options: { ...job.surface, rows }, ...(local ? { local } : {}) },
      };
    }), {
      name: 'surfaces', parts: 'bands',
      onProgress: (i, p) => {
        const { j, b } = parts[i];
        const s = states[j];
        s.doneCells += p.done - s.bandDone[b];
        s.bandDone[b] = p.done;
        options.onProgress?.(j, s.doneCells, s.totalCells);
      },
      onResult: (i, r) => {
        const s = states[parts[i].j];
        const offset = r.rows[0] * s.job.grid.nx;
        s.mean.set(r.mean, offset);
        s.sd.set(r.sd, offset);
        if (s.pExceed && r.pExceed) s.pExceed.set(r.pExceed, offset);
        if (r.median) {
          s.median ??= s.make();
          s.median.set(r.median, offset);
        }
        for (const wn of r.warnings) s.warnings.set(`${wn.code}:${wn.message.replace(/^\d+ /, '')}`, wn);
      },
      onError: (i, e) => {
        if (e && typeof e === 'object') (e as { job?: number }).job = parts[i].j;
      },
    });
  } finally {
    await pool.dispose();
  }
  return states.map(resultOf);
}
