// Conditional realisations over worker threads, for the CLI (`simulate`, `grid --realisations`,
// `report --realisations`).
//
// The N realisations are split into consecutive parts in whole pairs (the FFT gives fields in pairs):
// core simulationPart gives part i of P, as the app splits them over its Web Workers
// (src/ui/state/engine.ts). Each worker thread runs core simulateConditional on its
// part with `first` and `keepTotals`; every realisation has its own random stream, so the parts
// merged by mergeSimulationParts give the realisations and the area of one run exactly (per-cell
// mean, sd and P(exceed) up to the order of the sums). Each part is a `simulate` request on the
// engine's pool over worker threads (./engine-threads.ts), one part per worker. Each worker repeats
// the set-up (embedding, kriging factor, placement of the samples): cheap beside the realisations.
// One thread (workers = 1, or fewer than 4 realisations) runs in-process without starting workers.
import { availableParallelism } from 'node:os';
import type { Samples } from '../core/shared/samples.ts';
import type { CovarianceModel } from '../core/covariance/model.ts';
import type { Grid } from '../core/geometry/grid.ts';
import { GapwiseError } from '../core/shared/errors.ts';
import {
  MAX_REALISATIONS, mergeSimulationParts, simulateConditional, simulationPart,
  type ConditionalSimulationOptions, type ConditionalSimulationResult,
} from '../core/simulation/conditional-simulation.ts';
import type { SimulateOptions } from '../worker/protocol.ts';
import { planSimulationPath, type SimulationPath } from '../core/simulation/simulation-path.ts';
import type { Tolerance } from '../core/prediction/path-choice.ts';
import { startEngineThreads } from './engine-threads.ts';

/** The options of one part, without the callbacks (plain data, structured-cloned to a worker). */
export type SimulationPartOptions = SimulateOptions;

/** Options of a parallel simulation. */
export interface ParallelSimulationOptions {
  /**
   * Choose exact or local conditioning by cost and tolerance for the whole run before it is shared
   * out (core/simulation/simulation-path.ts), with the user's --exact / --local / --neighbours /
   * --tolerance; the choice and the local path's measured error come back as `path`. Absent: as
   * options.neighbours says (the core default).
   */
  choose?: { force?: 'exact' | 'local'; neighbours?: number; tolerance?: Tolerance };
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
): Promise<ConditionalSimulationResult & { path?: SimulationPath }> {
  const N = options.count;
  const parts = simulationThreads(N, parallel.workers ?? availableParallelism());
  if (!parallel.choose) return simulateInParts(samples, model, grid, options, parallel, parts);
  const request = parallel.choose;
  const path = planSimulationPath(samples, model, grid, {
    realisations: N, threads: parts, ...(options.support ? { support: options.support } : {}),
    ...(options.blockPoints !== undefined ? { blockPoints: options.blockPoints } : {}),
    ...(request.force ? { force: request.force } : {}), ...(request.neighbours !== undefined ? { neighbours: request.neighbours } : {}),
    ...(request.tolerance ? { tolerance: request.tolerance } : {}), ...(options.covariates ? { covariates: options.covariates } : {}),
  });
  const chosen: ConditionalSimulationOptions = { ...options, path: path.choice.path };
  if (path.choice.path === 'local') chosen.neighbours = path.neighbours;
  else delete chosen.neighbours;
  const result = await simulateInParts(samples, model, grid, chosen, parallel, parts);
  return { ...result, warnings: [...path.warnings, ...result.warnings], path };
}

/** The run shared out over `parts` threads (one runs here). */
async function simulateInParts(
  samples: Samples, model: CovarianceModel, grid: Grid, options: ConditionalSimulationOptions, parallel: ParallelSimulationOptions, parts: number,
): Promise<ConditionalSimulationResult> {
  const onProgress = parallel.onProgress ?? options.onProgress;
  const { onProgress: _p, isCancelled, ...plain } = options;
  const N = options.count;
  const start = options.first ?? 0;
  if (parts === 1 || !(Number.isInteger(start) && start >= 0)) {
    return simulateConditional(samples, model, grid, { ...plain, ...(onProgress ? { onProgress } : {}), ...(isCancelled ? { isCancelled } : {}) });
  }

  const results: ConditionalSimulationResult[] = new Array(parts);
  const done = new Float64Array(parts);
  const pool = startEngineThreads(parts);
  const stop = new AbortController();
  try {
    await pool.run(Array.from({ length: parts }, (_, i) => {
      const part = simulationPart(start, N, i, parts);
      const partOptions: SimulationPartOptions = { ...plain, first: part.first, count: part.count, keepTotals: true };
      return { type: 'simulate' as const, payload: { samples, model, grid, options: partOptions } };
    }), {
      name: 'simulation', parts: 'parts', signal: stop.signal,
      onProgress: (i, p) => {
        done[i] = p.done;
        let sum = 0;
        for (let k = 0; k < parts; k++) sum += done[k];
        onProgress?.(sum, N);
        if (isCancelled?.()) stop.abort(new GapwiseError('cancelled', `Simulation stopped after ${sum} of ${N} realisations.`));
      },
      onResult: (i, result) => {
        results[i] = { ...result, grid };
      },
    });
  } finally {
    await pool.dispose();
  }
  const merged = mergeSimulationParts(results, { depth: options.depth });
  if (!options.keepTotals) delete merged.totals;
  return merged;
}
