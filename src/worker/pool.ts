/**
 * EnginePool: N engine workers (N = navigator.hardwareConcurrency by default). A surface is split
 * into row bands of about equal numbers of active cells; idle workers take the next band, so bands
 * are computed in parallel and each is handed to `onBand` as soon as it is done (the map repaints
 * band by band). Progress is summed over the bands. Cancelling terminates every busy worker at once
 * (and restarts them), so the work stops within a message round trip.
 * Each worker factorises the kriging system once per surface and reuses it for all its bands
 * (see the predictor cache in ./handler.ts); memory is 8n² bytes per worker.
 */
import { GapwiseError, type Warning } from '../core/shared/errors.ts';
import type { Samples } from '../core/shared/samples.ts';
import type { CovarianceModel } from '../core/covariance/model.ts';
import type { Grid } from '../core/geometry/grid.ts';
import type { SurfaceArray, SurfaceOptions, SurfaceResult, ValueRange } from '../core/prediction/surface.ts';
import type { LocalKrigingOptions } from '../core/prediction/local-kriging.ts';
import type { RequestPayloads, RequestType, ResultPayloads } from './protocol.ts';
import { EngineClient, createEngineWorker, type Progress, type RequestOptions } from './client.ts';
import type { TransportFactory } from './transport.ts';

export interface PoolOptions {
  /** Number of workers (default navigator.hardwareConcurrency, at least 1). */
  size?: number;
  /** Starts one worker (default the app's Web Worker; the command line passes worker threads). */
  factory?: TransportFactory;
  /** Bands per worker for a surface (default 4): more bands give earlier pictures and better balance. */
  bandsPerWorker?: number;
}

export interface SurfaceJobOptions {
  onProgress?: (progress: Progress) => void;
  /** Called with each finished band (rows in whole-grid numbering) and the merged surface so far. */
  onBand?: (band: SurfaceResult, merged: SurfaceResult) => void;
  signal?: AbortSignal;
  /** 'point' (default) or 'block': every cell a block average ('blockSurfaceRows' requests). */
  support?: 'point' | 'block';
  /** Block support: discretisation points per cell side (default 4). */
  blockPoints?: number;
  /** Point support from local neighbourhoods (many samples) rather than all samples. */
  local?: LocalKrigingOptions;
}

/** One request of a queue (EnginePool.run). */
export interface Task<K extends RequestType> {
  type: K;
  payload: RequestPayloads[K];
}

export interface RunOptions<K extends RequestType> {
  /** Aborting cancels the running tasks; a GapwiseError reason is the rejection. */
  signal?: AbortSignal;
  /** Progress of task `index`. */
  onProgress?: (index: number, progress: Progress) => void;
  /** The result of task `index`, as soon as it is done. */
  onResult?: (index: number, result: ResultPayloads[K]) => void;
  /** Task `index` failed with `error`, just before the run rejects with it (to say which task it was). */
  onError?: (index: number, error: unknown) => void;
  /** For the cancelled message: what runs ('surface') and what its tasks are ('bands'). */
  name?: string;
  parts?: string;
}

/**
 * Splits the rows of a grid into at most `parts` contiguous bands [start, end) holding about equal
 * numbers of active cells (each band at least one row; rows with no active cell join a neighbour).
 */
export function splitBands(grid: Grid, parts: number): [number, number][] {
  const { nx, ny, mask } = grid;
  const n = Math.max(1, Math.min(ny, Math.floor(parts)));
  const perRow = new Float64Array(ny);
  let total = 0;
  for (let j = 0; j < ny; j++) {
    let c = nx;
    if (mask) {
      c = 0;
      for (let k = j * nx; k < (j + 1) * nx; k++) c += mask[k];
    }
    perRow[j] = c;
    total += c;
  }
  if (total === 0) return [[0, ny]];
  const bands: [number, number][] = [];
  let start = 0;
  let acc = 0;
  for (let j = 0; j < ny; j++) {
    acc += perRow[j];
    const target = (total * (bands.length + 1)) / n;
    if (acc >= target - 1e-9 && bands.length < n - 1 && j + 1 < ny) {
      bands.push([start, j + 1]);
      start = j + 1;
    }
  }
  bands.push([start, ny]);
  return bands;
}

/** The sub-grid of rows [r0, r1) (its own mask slice), so a band request copies only its rows. */
export function bandGrid(grid: Grid, r0: number, r1: number): Grid {
  const g: Grid = { x0: grid.x0, y0: grid.y0 - r0 * grid.cell, cell: grid.cell, nx: grid.nx, ny: r1 - r0 };
  if (grid.mask) g.mask = grid.mask.slice(r0 * grid.nx, r1 * grid.nx);
  return g;
}

function widen(r: ValueRange | undefined, s: ValueRange | undefined): ValueRange | undefined {
  if (!s) return r;
  if (!r || Number.isNaN(r.min)) return { ...s };
  if (Number.isNaN(s.min)) return r;
  return { min: Math.min(r.min, s.min), max: Math.max(r.max, s.max) };
}

/** Surface options for the rows r0..r1: a covariate grid's rows of those cells only (a copy, so the post is small). */
export function bandOptions(options: Omit<SurfaceOptions, 'rows'>, grid: Grid, r0: number, r1: number): Omit<SurfaceOptions, 'rows'> {
  if (!options.covariates) return { ...options };
  const q = options.covariates.length / (grid.nx * grid.ny);
  return { ...options, covariates: options.covariates.slice(r0 * grid.nx * q, r1 * grid.nx * q) };
}

/** An empty whole-grid surface (all NaN) to merge bands into. */
export function emptySurface(grid: Grid, options: SurfaceOptions, log: boolean): SurfaceResult {
  const size = grid.nx * grid.ny;
  const make = (): SurfaceArray => (options.precision === 'float64' ? new Float64Array(size) : new Float32Array(size)).fill(NaN);
  const out: SurfaceResult = {
    rows: [0, grid.ny], nx: grid.nx, mean: make(), sd: make(),
    range: { mean: { min: NaN, max: NaN }, sd: { min: NaN, max: NaN } },
    cells: 0, warnings: [],
  };
  if (options.threshold !== undefined) {
    out.pExceed = make();
    out.threshold = options.threshold;
    out.range.pExceed = { min: NaN, max: NaN };
  }
  if (log) out.median = make();
  return out;
}

/** Copies a band (rows in whole-grid numbering) into the whole surface and widens its ranges. */
export function mergeBand(whole: SurfaceResult, band: SurfaceResult): void {
  const offset = band.rows[0] * whole.nx;
  whole.mean.set(band.mean, offset);
  whole.sd.set(band.sd, offset);
  if (whole.pExceed && band.pExceed) whole.pExceed.set(band.pExceed, offset);
  if (whole.median && band.median) whole.median.set(band.median, offset);
  whole.range.mean = widen(whole.range.mean, band.range.mean)!;
  whole.range.sd = widen(whole.range.sd, band.range.sd)!;
  if (whole.range.pExceed) whole.range.pExceed = widen(whole.range.pExceed, band.range.pExceed);
  whole.cells += band.cells;
  const seen = new Set(whole.warnings.map((w) => `${w.code}\n${w.message}`));
  for (const w of band.warnings as Warning[]) {
    const key = `${w.code}\n${w.message}`;
    if (!seen.has(key)) {
      seen.add(key);
      whole.warnings.push(w);
    }
  }
}

function defaultSize(): number {
  const n = (globalThis as { navigator?: { hardwareConcurrency?: number } }).navigator?.hardwareConcurrency;
  return Math.max(1, Math.floor(n ?? 2));
}

export class EnginePool {
  readonly size: number;
  private readonly clients: EngineClient[];
  private readonly bandsPerWorker: number;

  constructor(options: PoolOptions = {}) {
    this.size = Math.max(1, Math.floor(options.size ?? defaultSize()));
    const factory = options.factory ?? createEngineWorker;
    this.clients = Array.from({ length: this.size }, () => new EngineClient(factory));
    this.bandsPerWorker = Math.max(1, Math.floor(options.bandsPerWorker ?? 4));
  }

  /** Workers started so far across the pool (restarts after cancelling included). */
  get startedWorkers(): number {
    return this.clients.reduce((s, c) => s + c.startedWorkers, 0);
  }

  /** Requests started so far across the pool, by type (surfaces count one per band). */
  get startedRequests(): Partial<Record<RequestType, number>> {
    const out: Partial<Record<RequestType, number>> = {};
    for (const c of this.clients) {
      for (const [type, n] of Object.entries(c.started) as [RequestType, number][]) out[type] = (out[type] ?? 0) + n;
    }
    return out;
  }

  /** Runs one request on the least busy worker. */
  request<K extends RequestType>(type: K, payload: RequestPayloads[K], options: RequestOptions = {}): Promise<ResultPayloads[K]> {
    let best = this.clients[0];
    for (const c of this.clients) if (c.waiting < best.waiting) best = c;
    return best.request(type, payload, options);
  }

  /**
   * Runs `tasks` as a queue over the workers: each idle worker takes the next task, so fast and slow
   * tasks balance out (with as many tasks as workers, each worker takes one). `onResult` gets each
   * result as it arrives (in the order they finish) and may abort. Resolves when every task is done;
   * rejects with the first task's error (GapwiseError or EngineError), or when `signal` aborts with
   * its reason when that is a GapwiseError, else GapwiseError('cancelled'); the running tasks are then
   * cancelled (their workers terminated and restarted only when something else waits on them).
   */
  run<K extends RequestType>(tasks: readonly Task<K>[], options: RunOptions<K> = {}): Promise<void> {
    const { signal } = options;
    const what = options.name ?? 'work';
    const cancelled = (finished: number | null): GapwiseError => (signal?.reason instanceof GapwiseError ? signal.reason
      : new GapwiseError('cancelled', finished === null
        ? `The ${what} was cancelled before it started.`
        : `The ${what} was cancelled after ${finished} of ${tasks.length} ${options.parts ?? 'parts'}.`));
    return new Promise<void>((resolve, reject) => {
      if (signal?.aborted) {
        reject(cancelled(null));
        return;
      }
      let next = 0;
      let finished = 0;
      let stopped = false;
      const running = new Map<EngineClient, number>();

      const stop = (error: unknown) => {
        if (stopped) return;
        stopped = true;
        signal?.removeEventListener('abort', onAbort);
        for (const [client, id] of running) client.cancel(id);
        running.clear();
        reject(error);
      };
      const onAbort = () => stop(cancelled(finished));
      signal?.addEventListener('abort', onAbort, { once: true });

      const feed = (client: EngineClient) => {
        if (stopped || next >= tasks.length) return;
        const index = next++;
        const task = tasks[index];
        const onProgress = options.onProgress && ((p: Progress) => {
          if (!stopped) options.onProgress!(index, p);
        });
        const { id, promise } = client.start(task.type, task.payload, { onProgress });
        running.set(client, id);
        promise.then((result) => {
          if (stopped) return;
          running.delete(client);
          finished++;
          options.onResult?.(index, result);
          if (stopped) return; // onResult may have aborted
          if (finished === tasks.length) {
            stopped = true;
            signal?.removeEventListener('abort', onAbort);
            resolve();
          } else {
            feed(client);
          }
        }, (error) => {
          running.delete(client);
          if (!stopped) options.onError?.(index, error);
          stop(error);
        });
      };
      if (tasks.length === 0) {
        stopped = true;
        signal?.removeEventListener('abort', onAbort);
        resolve();
        return;
      }
      for (const c of this.clients) feed(c);
    });
  }

  /**
   * Computes mean, sd (and P(exceed)) on the whole grid in parallel row bands, at points (cell
   * centres) or, with job.support 'block', as cell averages. Resolves with the
   * merged surface; rejects with GapwiseError('cancelled') when aborted, or with the first band's error.
   */
  async surface(
    samples: Samples, model: CovarianceModel, grid: Grid, options: Omit<SurfaceOptions, 'rows'> = {}, job: SurfaceJobOptions = {},
  ): Promise<SurfaceResult> {
    const bands = splitBands(grid, this.size * this.bandsPerWorker);
    const merged = emptySurface(grid, options, model.transform === 'log');
    let total = 0;
    if (grid.mask) { for (let k = 0; k < grid.mask.length; k++) total += grid.mask[k]; } else total = grid.nx * grid.ny;
    const doneByBand = new Float64Array(bands.length);
    let doneAll = 0;
    const report = () => job.onProgress?.({ done: doneAll, total, fraction: total > 0 ? doneAll / total : 1 });
    const run = {
      name: 'surface', parts: 'bands', signal: job.signal,
      onProgress: (b: number, p: Progress) => {
        doneAll += p.done - doneByBand[b];
        doneByBand[b] = p.done;
        report();
      },
      onResult: (b: number, band: SurfaceResult) => {
        const [r0, r1] = bands[b];
        const placed: SurfaceResult = { ...band, rows: [r0, r1] };
        mergeBand(merged, placed);
        doneAll += band.cells - doneByBand[b];
        doneByBand[b] = band.cells;
        report();
        job.onBand?.(placed, merged);
      },
    };
    if (!job.signal?.aborted) report();
    if (job.support === 'block') {
      const blockOptions = { threshold: options.threshold, precision: options.precision, points: job.blockPoints };
      await this.run(bands.map(([r0, r1]) => ({
        type: 'blockSurfaceRows' as const, payload: {
          samples, model, grid: bandGrid(grid, r0, r1),
          // A covariate model's block points (k² rows per cell): the band's rows, as for points.
          options: { ...blockOptions, ...(options.covariates ? { covariates: bandOptions(options, grid, r0, r1).covariates } : {}) },
        },
      })), run);
    } else {
      await this.run(bands.map(([r0, r1]) => ({
        type: 'surfaceRows' as const, payload: { samples, model, grid: bandGrid(grid, r0, r1), options: bandOptions(options, grid, r0, r1), local: job.local },
      })), run);
    }
    return merged;
  }

  /** Cancels everything running on every worker. */
  cancelAll(): void {
    for (const c of this.clients) c.cancelAll();
  }

  /** Terminates every worker; resolves when they have stopped (at once where the host does not say). */
  async dispose(): Promise<void> {
    await Promise.all(this.clients.map((c) => c.dispose()));
  }
}
