/**
 * One thread's part of the nearest-neighbour likelihood passes (core/fitting/vecchia.ts runVecchiaPass),
 * driven through shared memory so the optimiser on the calling thread stays synchronous.
 *
 * The caller (src/cli/vecchia-pool.ts) sends each worker one `likelihoodPart` request holding the
 * pass arrays and three small arrays, all over SharedArrayBuffers: `control` (Int32: generation,
 * finished count, command), `parameters` (Float64: the pass's family, scale, nu, diagonal,
 * allowJitter, limit) and `results` (Float64, RESULT words per part: ok, logDet, jitter, failed).
 * A pass: the caller writes the parameters, sets the command to RUN, bumps the generation and wakes
 * the workers; each runs its contiguous n/parts of the points, writes its result and counts itself
 * finished. The command LEAVE ends the request, whose answer is the number of passes run; the
 * worker then takes its next message. Blocking waits (Atomics.wait) are allowed in workers only.
 */
import { runVecchiaPass, type VecchiaPassData, type VecchiaPassJob } from '../core/fitting/vecchia.ts';

/** Control words (Int32Array over a SharedArrayBuffer). */
export const GENERATION = 0;
export const FINISHED = 1;
export const COMMAND = 2;
export const RUN = 1;
export const LEAVE = 2;
/** Parameters of a pass (Float64Array): family, scale, nu, diagonal, allowJitter, limit. */
export const PARAMETERS = 6;
/** Result of one part (Float64Array, per thread): ok, logDet, jitter, failed. */
export const RESULT = 4;

/** What a worker needs for its part of every pass on one set of pass arrays. */
export interface LikelihoodPartPayload {
  data: VecchiaPassData;
  control: Int32Array;
  parameters: Float64Array;
  results: Float64Array;
  /** This worker's part (1 .. parts − 1; the calling thread runs part 0) and the number of parts. */
  part: number;
  parts: number;
  /** Generation at attach time: a pass is pending when the counter differs. */
  generation: number;
}

/** Points [start, end) of part k of n points in `parts` contiguous parts. */
export function partRange(n: number, k: number, parts: number): [number, number] {
  return [Math.floor((k * n) / parts), Math.floor(((k + 1) * n) / parts)];
}

/** Writes a job into the shared parameters. */
export function writeJob(parameters: Float64Array, job: VecchiaPassJob): void {
  parameters[0] = job.family;
  parameters[1] = job.scale;
  parameters[2] = job.nu;
  parameters[3] = job.diagonal;
  parameters[4] = job.allowJitter ? 1 : 0;
  parameters[5] = job.limit;
}

/** Reads a job from the shared parameters. */
export function readJob(parameters: Float64Array): VecchiaPassJob {
  return {
    family: parameters[0], scale: parameters[1], nu: parameters[2], diagonal: parameters[3],
    allowJitter: parameters[4] === 1, limit: parameters[5],
  };
}

/**
 * Runs this worker's part of each pass until the caller says LEAVE; returns the passes run. A pass
 * that throws is marked failed in its result words (the caller turns that into 'fit-failed').
 */
export function runLikelihoodPart(payload: LikelihoodPartPayload): { passes: number } {
  const { data, control, parameters, results, part, parts } = payload;
  const [start, end] = partRange(data.n, part, parts);
  const out = results.subarray(part * RESULT, (part + 1) * RESULT);
  let seen = payload.generation;
  let passes = 0;
  for (;;) {
    Atomics.wait(control, GENERATION, seen);
    seen = Atomics.load(control, GENERATION);
    if (Atomics.load(control, COMMAND) === LEAVE) return { passes };
    try {
      const r = runVecchiaPass(data, readJob(parameters), start, end);
      out[0] = r.ok ? 1 : 0;
      out[1] = r.logDet;
      out[2] = r.jitter;
      out[3] = 0;
    } catch {
      out[3] = 1;
    }
    passes++;
    Atomics.add(control, FINISHED, 1);
    Atomics.notify(control, FINISHED);
  }
}
