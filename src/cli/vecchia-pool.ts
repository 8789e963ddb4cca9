// Splits the passes of the nearest-neighbour likelihood (core/fitting/vecchia.ts) over worker threads, for
// the CLI's fits of many samples.
//
// The pass arrays live in SharedArrayBuffers handed to every worker once (`attach`). A pass is then
// started and finished through shared memory only: the main thread writes the parameters, bumps a
// generation counter and wakes the workers (Atomics.notify), runs its own part, and waits
// (Atomics.wait) until every worker has counted itself done. So the likelihood stays a synchronous
// function and the optimiser in core needs no change; each of T threads runs a contiguous n/T of the
// points. Workers block in Atomics.wait between passes and return to their event loop only to take
// a new attachment or to stop.
import type { Worker } from 'node:worker_threads';
import { availableParallelism } from 'node:os';
import { GapwiseError } from '../core/shared/errors.ts';
import { runVecchiaPass, type VecchiaPassData, type VecchiaPassJob, type VecchiaPassPart, type VecchiaThreads } from '../core/fitting/vecchia.ts';
import { startWorker } from './parallel.ts';

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

export type VecchiaWorkerRequest = {
  type: 'attach';
  data: VecchiaPassData;
  control: Int32Array;
  parameters: Float64Array;
  results: Float64Array;
  /** This worker's part (1 .. parts − 1; the main thread runs part 0) and the number of parts. */
  part: number;
  parts: number;
  /** Generation at attach time: a pass is pending when the counter differs. */
  generation: number;
};

export type VecchiaWorkerReply = { type: 'ready' } | { type: 'attached' } | { type: 'error'; message: string };

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

/** A started pool: `threads` goes to vecchiaFit / createVecchiaLikelihood; close it when done. */
export interface VecchiaPool {
  /** Threads in all, the main one included. */
  readonly size: number;
  readonly threads: VecchiaThreads;
  close(): Promise<void>;
}

/**
 * Starts `threads − 1` workers (default: one per available core, less the main thread) and waits
 * until each is ready. With one thread no worker starts and passes run on the main thread.
 * `stallSeconds`: a pass waits at most this long for a worker beyond the main thread's own part
 * (default 600) before failing with 'fit-failed'.
 */
export async function startVecchiaPool(options: { threads?: number; stallSeconds?: number } = {}): Promise<VecchiaPool> {
  const size = Math.max(1, Math.floor(options.threads ?? availableParallelism()));
  const stallMs = 1000 * (options.stallSeconds ?? 600);
  const workers: Worker[] = [];
  const entry = new URL('./vecchia-worker.ts', import.meta.url).href;
  try {
    await Promise.all(Array.from({ length: size - 1 }, () => new Promise<void>((resolve, reject) => {
      const w = startWorker(entry);
      workers.push(w);
      w.once('message', (m: VecchiaWorkerReply) => (m.type === 'ready' ? resolve() : reject(new Error(m.type === 'error' ? m.message : 'unexpected reply'))));
      w.once('error', reject);
    })));
  } catch (e) {
    await Promise.all(workers.map((w) => w.terminate()));
    throw e;
  }
  let current: { control: Int32Array } | null = null;

  const leave = () => {
    if (!current) return;
    Atomics.store(current.control, COMMAND, LEAVE);
    Atomics.add(current.control, GENERATION, 1);
    Atomics.notify(current.control, GENERATION);
    current = null;
  };

  const threads: VecchiaThreads = {
    buffer: (bytes) => new SharedArrayBuffer(bytes),
    attach(data) {
      leave();
      const parts = size;
      const control = new Int32Array(new SharedArrayBuffer(16));
      const parameters = new Float64Array(new SharedArrayBuffer(8 * PARAMETERS));
      const results = new Float64Array(new SharedArrayBuffer(8 * RESULT * parts));
      workers.forEach((w, k) => w.postMessage({ type: 'attach', data, control, parameters, results, part: k + 1, parts, generation: 0 } satisfies VecchiaWorkerRequest));
      current = { control };
      const mine = partRange(data.n, 0, parts);
      return (job: VecchiaPassJob): VecchiaPassPart => {
        if (parts === 1) return runVecchiaPass(data, job, 0, data.n);
        writeJob(parameters, job);
        Atomics.store(control, FINISHED, 0);
        Atomics.store(control, COMMAND, RUN);
        Atomics.add(control, GENERATION, 1);
        Atomics.notify(control, GENERATION);
        const t0 = performance.now();
        const own = runVecchiaPass(data, job, mine[0], mine[1]);
        const ownMs = performance.now() - t0;
        const deadline = performance.now() + Math.max(stallMs, 50 * ownMs);
        for (;;) {
          const done = Atomics.load(control, FINISHED);
          if (done >= parts - 1) break;
          const left = deadline - performance.now();
          if (left <= 0) throw new GapwiseError('fit-failed', `A likelihood worker thread did not finish its part within ${Math.round((deadline - t0) / 1000)} s; run again with fewer threads.`);
          Atomics.wait(control, FINISHED, done, Math.min(left, 1000));
        }
        let ok = own.ok;
        let logDet = own.logDet;
        let jitter = own.jitter;
        for (let k = 1; k < parts; k++) {
          const r = results.subarray(k * RESULT, (k + 1) * RESULT);
          if (r[3] === 1) throw new GapwiseError('fit-failed', 'A likelihood worker thread failed while computing its part of the likelihood.');
          ok = ok && r[0] === 1;
          logDet += r[1];
          jitter = Math.max(jitter, r[2]);
        }
        return { ok, logDet: ok ? logDet : NaN, jitter };
      };
    },
  };

  return {
    size,
    threads,
    async close() {
      leave();
      await Promise.all(workers.map((w) => w.terminate()));
    },
  };
}
