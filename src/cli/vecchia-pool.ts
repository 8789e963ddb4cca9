// Splits the passes of the nearest-neighbour likelihood (core/fitting/vecchia.ts) over worker threads, for
// the CLI's fits of many samples.
//
// The pass arrays live in SharedArrayBuffers handed to every worker once, as a `likelihoodPart`
// request on the engine's pool over worker threads (./engine-threads.ts; the worker's side is
// src/worker/likelihood-part.ts). A pass is then started and finished through shared memory only:
// the main thread writes the parameters, bumps a generation counter and wakes the workers
// (Atomics.notify), runs its own part, and waits (Atomics.wait) until every worker has counted itself
// done. So the likelihood stays a synchronous function and the optimiser in core needs no change;
// each of T threads runs a contiguous n/T of the points. Workers block in Atomics.wait between passes
// and return to their event loop only when told to leave (a new attachment, or the end).
import { availableParallelism } from 'node:os';
import { GapwiseError } from '../core/shared/errors.ts';
import { runVecchiaPass, type VecchiaPassJob, type VecchiaPassPart, type VecchiaThreads } from '../core/fitting/vecchia.ts';
import {
  COMMAND, FINISHED, GENERATION, LEAVE, PARAMETERS, RESULT, RUN, partRange, readJob, writeJob,
} from '../worker/likelihood-part.ts';
import { startEngineThreads } from './engine-threads.ts';

export { partRange, readJob, writeJob };

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
  const pool = size > 1 ? startEngineThreads(size - 1) : null;
  if (pool) {
    // Every worker answers once before the first pass blocks this thread (a worker that fails to
    // start fails here, not as a stalled pass).
    try {
      await pool.run(Array.from({ length: size - 1 }, () => ({ type: 'ready' as const, payload: {} })), { name: 'start of the likelihood threads' });
    } catch (e) {
      await pool.dispose();
      throw e;
    }
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
      // One part per worker (as many tasks as workers); the answer comes when the workers leave.
      pool?.run(Array.from({ length: parts - 1 }, (_, k) => ({
        type: 'likelihoodPart' as const, payload: { data, control, parameters, results, part: k + 1, parts, generation: 0 },
      }))).catch(() => {}); // a worker lost mid-fit shows as a stalled pass; closing cancels what is left
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
      await pool?.dispose();
    },
  };
}
