// Conditional realisations over worker threads, for the CLI (`simulate`, `grid --realizations`,
// `report --realizations`).
//
// The N realisations are split into consecutive parts in whole pairs (the FFT gives fields in pairs):
// core simulationPart gives part i of P, as the app splits them over its Web Workers
// (src/ui/state/engine.ts). Each worker thread runs core simulateConditional on its
// part with `first` and `keepTotals`; every realisation has its own random stream, so the parts
// merged by mergeSimulationParts give the realisations and the area of one run exactly (per-cell
// mean, sd and P(exceed) up to the order of the sums). Each worker repeats the set-up (embedding,
// kriging factor, placement of the samples): cheap beside the realisations.
// One thread (workers = 1, or fewer than 4 realisations) runs in-process without starting workers.
import type { Worker } from 'node:worker_threads';
import { availableParallelism } from 'node:os';
import type { Samples } from '../core/shared/samples.ts';
import type { CovarianceModel } from '../core/covariance/model.ts';
import type { Grid } from '../core/geometry/grid.ts';
import { GapwiseError, type ErrorCode } from '../core/shared/errors.ts';
import {
  MAX_REALISATIONS, mergeSimulationParts, simulateConditional, simulationPart,
  type ConditionalSimulationOptions, type ConditionalSimulationResult,
} from '../core/simulation/conditional-simulation.ts';
import { startWorker } from './parallel.ts';

/** The options of one part, without the callbacks (plain data, structured-cloned to a worker). */
export type SimulationPartOptions = Omit<ConditionalSimulationOptions, 'onProgress' | 'isCancelled'>;

export type SimulationWorkerRequest = {
  type: 'run';
  samples: Samples;
  model: CovarianceModel;
  grid: Grid;
  options: SimulationPartOptions;
};

export type SimulationWorkerReply =
  | { type: 'progress'; done: number; total: number }
  | { type: 'done'; result: ConditionalSimulationResult }
  | { type: 'error'; error: { code?: string; message: string } };

/** Options of a parallel simulation. */
export interface ParallelSimulationOptions {
  /** Worker threads; default os.availableParallelism(). */
  workers?: number;
  /** Realisations done so far (summed over the parts) and in total; default options.onProgress. */
  onProgress?: (done: number, total: number) => void;
}

/** Fewest realisations worth splitting (two parts of one pair each). */
const MIN_SPLIT = 4;

/**
 * Threads a simulation of `count` realisations uses with `workers` available: 1 below 4 realisations
 * (or for a count the core call refuses), else min(workers, ⌊count/2⌋) (each part at least one pair).
 */
export function simulationThreads(count: number, workers = availableParallelism()): number {
  const w = Math.max(1, Math.floor(workers));
  if (!(Number.isInteger(count) && count >= MIN_SPLIT && count <= MAX_REALISATIONS)) return 1;
  return Math.max(1, Math.min(w, Math.floor(count / 2)));
}

function toError(error: { code?: string; message: string }): Error {
  return error.code ? new GapwiseError(error.code as ErrorCode, error.message) : new Error(error.message);
}

/** The buffers of a part's result, moved rather than copied back to the main thread. */
export function resultTransfer(r: ConditionalSimulationResult): ArrayBuffer[] {
  const list: ArrayBuffer[] = [r.mean.buffer as ArrayBuffer, r.sd.buffer as ArrayBuffer];
  if (r.pExceed) list.push(r.pExceed.buffer as ArrayBuffer);
  if (r.totals) {
    list.push(r.totals.sum.buffer as ArrayBuffer, r.totals.sumSq.buffer as ArrayBuffer, r.totals.counts.buffer as ArrayBuffer);
    if (r.totals.above) list.push(r.totals.above.buffer as ArrayBuffer);
  }
  if (r.realisations) for (const v of r.realisations) list.push(v.buffer as ArrayBuffer);
  return [...new Set(list)];
}

/**
 * simulateConditional(samples, model, grid, options) over worker threads: the same realisations
 * (bit for bit, only when options.keepRealisations is not false), counts and area summary, and
 * per-cell mean, sd and P(exceed) up to the order of the sums. One thread (workers = 1 or fewer than
 * 4 realisations) runs on this thread. Progress is the realisations done over all parts;
 * options.isCancelled is polled at each progress report. Rejects with the first worker error
 * (GapwiseError when it was one) after stopping every worker.
 */
export async function simulateParallel(
  samples: Samples, model: CovarianceModel, grid: Grid, options: ConditionalSimulationOptions, parallel: ParallelSimulationOptions = {},
): Promise<ConditionalSimulationResult> {
  const onProgress = parallel.onProgress ?? options.onProgress;
  const { onProgress: _p, isCancelled, ...plain } = options;
  const N = options.count;
  const start = options.first ?? 0;
  const parts = simulationThreads(N, parallel.workers ?? availableParallelism());
  if (parts === 1 || !(Number.isInteger(start) && start >= 0)) {
    return simulateConditional(samples, model, grid, { ...plain, ...(onProgress ? { onProgress } : {}), ...(isCancelled ? { isCancelled } : {}) });
  }

  const results: ConditionalSimulationResult[] = new Array(parts);
  const done = new Float64Array(parts);
  const pool: Worker[] = [];
  try {
    await new Promise<void>((resolve, reject) => {
      let finished = 0;
      let failed = false;
      const fail = (e: Error) => {
        if (failed) return;
        failed = true;
        reject(e);
      };
      for (let i = 0; i < parts; i++) {
        const part = simulationPart(start, N, i, parts);
        const w = startWorker(new URL('./simulation-worker.ts', import.meta.url).href);
        pool.push(w);
        w.on('message', (reply: SimulationWorkerReply) => {
          if (failed) return;
          if (reply.type === 'progress') {
            done[i] = reply.done;
            let sum = 0;
            for (let k = 0; k < parts; k++) sum += done[k];
            onProgress?.(sum, N);
            if (isCancelled?.()) fail(new GapwiseError('cancelled', `Simulation stopped after ${sum} of ${N} realisations.`));
          } else if (reply.type === 'done') {
            results[i] = { ...reply.result, grid };
            finished++;
            if (finished === parts) resolve();
          } else if (reply.type === 'error') fail(toError(reply.error));
        });
        w.on('error', (e) => fail(e instanceof Error ? e : new Error(String(e))));
        w.on('exit', (code) => {
          if (results[i] === undefined) fail(new Error(`A simulation worker stopped with exit code ${code} before its realisations were done.`));
        });
        const partOptions: SimulationPartOptions = { ...plain, first: part.first, count: part.count, keepTotals: true };
        w.postMessage({ type: 'run', samples, model, grid, options: partOptions } satisfies SimulationWorkerRequest);
      }
    });
  } finally {
    await Promise.all(pool.map((w) => w.terminate()));
  }
  const merged = mergeSimulationParts(results, { depth: options.depth });
  if (!options.keepTotals) delete merged.totals;
  return merged;
}
