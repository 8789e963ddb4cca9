// A worker_threads pool that computes grid surfaces in row bands, for the CLI.
//
// One worker per available core (os.availableParallelism(), or `workers`); each builds the predictor
// once (exact: kriging.ts, local neighbourhoods: core/prediction/local-kriging.ts) and then takes bands of rows
// from a shared queue until none are left, so fast and slow bands balance out. Every cell is computed
// the same way whichever worker gets it, so the result equals the single-thread one bit for bit.
// Workers run the TypeScript sources through tsx's loader in a checkout (no build step), and the
// compiled JavaScript beside this module in the installed package (see startWorker).
import { Worker } from 'node:worker_threads';
import { availableParallelism } from 'node:os';
import { createRequire } from 'node:module';
import { pathToFileURL } from 'node:url';
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import type { Samples } from '../core/shared/samples.ts';
import type { CovarianceModel } from '../core/covariance/model.ts';
import type { Grid } from '../core/geometry/grid.ts';
import { cellCount } from '../core/geometry/grid.ts';
import { GapwiseError, type ErrorCode, type Warning } from '../core/shared/errors.ts';
import { createPredictor } from '../core/prediction/kriging.ts';
import { createLocalPredictor, globalMeanCoefficients, type LocalKrigingOptions } from '../core/prediction/local-kriging.ts';
import { computeSurfaceWith, type SurfaceOptions, type SurfaceResult, type SurfaceArray, type SurfacePredictor } from '../core/prediction/surface.ts';

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

export type WorkerRequest =
  | { type: 'init'; job: SurfaceJob }
  | { type: 'band'; id: number; rows: [number, number] };

export type WorkerReply =
  | { type: 'ready' }
  | { type: 'band'; id: number; result: SurfaceResult }
  | { type: 'progress'; id: number; done: number; total: number }
  | { type: 'error'; id?: number; error: { code?: string; message: string } };

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
export function buildSurfacePredictor(job: SurfaceJob): SurfacePredictor {
  if (job.path === 'exact') return createPredictor(job.samples, job.model);
  // Grid cells one cell apart may share tile neighbourhoods (core/prediction/local-kriging.ts chooseTile).
  return createLocalPredictor(job.samples, job.model, { ...job.local, targetSpacing: job.local?.targetSpacing ?? job.grid.cell });
}

/** The same surface on this thread (the reference the pool must match). */
export function computeSurfaceSingle(job: SurfaceJob): SurfaceResult {
  return computeSurfaceWith(buildSurfacePredictor(job), job.grid, { ...job.surface });
}

/** File URL of tsx's ESM register API (the "import" condition of its "./esm/api" export). */
function tsxEsmApi(): string {
  const require = createRequire(import.meta.url);
  const manifest = require.resolve('tsx/package.json');
  const pkg = JSON.parse(readFileSync(manifest, 'utf8')) as { exports: Record<string, { import: { default: string } }> };
  return pathToFileURL(join(dirname(manifest), pkg.exports['./esm/api'].import.default)).href;
}

/**
 * True when this module runs from its TypeScript source (through tsx in a checkout); false in the
 * compiled CLI (dist-cli/, written by scripts/build-cli.mjs), where every worker entry sits beside
 * this module's chunk as plain JavaScript under the same name.
 */
const FROM_SOURCE = import.meta.url.endsWith('.ts');

/**
 * Starts a worker thread on a worker entry (file URL of its `.ts` source; default the surface
 * worker). Compiled, the entry is the `.js` file of the same name and starts with no loader at all.
 * From source, Node 20 does not apply loader hooks given by `--import` in a worker's execArgv to the
 * worker's own entry file, so the worker starts from a small script that registers tsx's loader and
 * then imports the TypeScript entry (both resolved from this file, so the CLI works from any directory).
 */
export function startWorker(entry = new URL('./surface-worker.ts', import.meta.url).href): Worker {
  if (!FROM_SOURCE) return new Worker(new URL(entry.replace(/\.ts$/, '.js')));
  const api = tsxEsmApi();
  const boot = `import(${JSON.stringify(api)}).then((m) => { m.register(); return import(${JSON.stringify(entry)}); })` +
    '.catch((e) => { setImmediate(() => { throw e; }); });';
  return new Worker(boot, { eval: true });
}

function toError(error: { code?: string; message: string }): Error {
  return error.code ? new GapwiseError(error.code as ErrorCode, error.message) : new Error(error.message);
}

/**
 * Computes mean, sd (and P(exceed) / median) on every row of the grid with a pool of worker threads,
 * in bands of rows handed out from a queue. Resolves with full-grid arrays (Float32 unless
 * job.surface.precision is 'float64'); rejects with the first worker error (GapwiseError when it was
 * one) after stopping every worker.
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

  const pool: Worker[] = [];
  try {
    await new Promise<void>((resolve, reject) => {
      let next = 0;
      let finished = 0;
      let failed = false;
      const fail = (e: Error) => {
        if (failed) return;
        failed = true;
        reject(e);
      };
      const give = (w: Worker) => {
        if (failed) return;
        if (next >= bands.length) return;
        const id = next++;
        w.postMessage({ type: 'band', id, rows: bands[id] } satisfies WorkerRequest);
      };
      for (let k = 0; k < poolSize; k++) {
        const w = startWorker();
        pool.push(w);
        w.on('message', (reply: WorkerReply) => {
          if (reply.type === 'ready') give(w);
          else if (reply.type === 'progress') {
            doneCells += reply.done - bandDone[reply.id];
            bandDone[reply.id] = reply.done;
            options.onProgress?.(doneCells, totalCells);
          } else if (reply.type === 'band') {
            const r = reply.result;
            const offset = r.rows[0] * grid.nx;
            mean.set(r.mean, offset);
            sd.set(r.sd, offset);
            if (pExceed && r.pExceed) pExceed.set(r.pExceed, offset);
            if (r.median) {
              median ??= make();
              median.set(r.median, offset);
            }
            for (const wn of r.warnings) warnings.set(`${wn.code}:${wn.message.replace(/^\d+ /, '')}`, wn);
            finished++;
            if (finished === bands.length) resolve();
            else give(w);
          } else if (reply.type === 'error') fail(toError(reply.error));
        });
        w.on('error', (e) => fail(e instanceof Error ? e : new Error(String(e))));
        w.on('exit', (code) => {
          if (code !== 0 && finished < bands.length) fail(new Error(`A surface worker stopped with exit code ${code}.`));
        });
        w.postMessage({ type: 'init', job } satisfies WorkerRequest);
      }
    });
  } finally {
    await Promise.all(pool.map((w) => w.terminate()));
  }

  const rangeOf = (a: SurfaceArray) => {
    let min = Infinity;
    let max = -Infinity;
    for (let k = 0; k < a.length; k++) {
      const v = a[k];
      if (v < min) min = v;
      if (v > max) max = v;
    }
    return min <= max ? { min, max } : { min: NaN, max: NaN };
  };
  const result: SurfaceResult = {
    rows: [0, grid.ny], nx: grid.nx, mean, sd,
    range: { mean: rangeOf(mean), sd: rangeOf(sd) },
    cells: totalCells,
    warnings: [...warnings.values()],
  };
  if (pExceed) {
    result.pExceed = pExceed;
    result.threshold = threshold;
    result.range.pExceed = rangeOf(pExceed);
  }
  if (median) result.median = median;
  return result;
}
