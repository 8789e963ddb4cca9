// Worker-thread entry of the nearest-neighbour likelihood pool (./vecchia-pool.ts). Protocol:
//   parent → worker  { type: 'attach', data, control, parameters, results, part, parts, generation }
//   worker → parent  { type: 'ready' } once started
// After an attachment the worker blocks in Atomics.wait on the generation counter; for each new
// generation it runs its part of the pass (command RUN) or returns to its event loop (LEAVE).
import { parentPort } from 'node:worker_threads';
import { runVecchiaPass } from '../core/fitting/vecchia.ts';
import { COMMAND, FINISHED, GENERATION, LEAVE, RESULT, partRange, readJob, type VecchiaWorkerRequest, type VecchiaWorkerReply } from './vecchia-pool.ts';

if (!parentPort) throw new Error('vecchia-worker.ts must run as a worker thread.');
const port = parentPort;

port.on('message', (message: VecchiaWorkerRequest) => {
  if (message.type !== 'attach') return;
  const { data, control, parameters, results, part, parts } = message;
  const [start, end] = partRange(data.n, part, parts);
  const out = results.subarray(part * RESULT, (part + 1) * RESULT);
  let seen = message.generation;
  for (;;) {
    Atomics.wait(control, GENERATION, seen);
    seen = Atomics.load(control, GENERATION);
    if (Atomics.load(control, COMMAND) === LEAVE) return;
    try {
      const r = runVecchiaPass(data, readJob(parameters), start, end);
      out[0] = r.ok ? 1 : 0;
      out[1] = r.logDet;
      out[2] = r.jitter;
      out[3] = 0;
    } catch {
      out[3] = 1;
    }
    Atomics.add(control, FINISHED, 1);
    Atomics.notify(control, FINISHED);
  }
});

port.postMessage({ type: 'ready' } satisfies VecchiaWorkerReply);
