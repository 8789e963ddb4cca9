// Worker-thread entry of the CLI simulation pool (./simulation-pool.ts). One part per worker:
//   parent → worker  { type: 'run', samples, model, grid, options }   options with first, count, keepTotals
//   worker → parent  { type: 'progress', done, total }                realisations of this part done
//                    { type: 'done', result }                          arrays transferred, not copied
//                    { type: 'error', error: { code?, message } }
import { parentPort } from 'node:worker_threads';
import { GapwiseError } from '../core/shared/errors.ts';
import { simulateConditional } from '../core/simulation/conditional-simulation.ts';
import { resultTransfer, type SimulationWorkerReply, type SimulationWorkerRequest } from './simulation-pool.ts';

if (!parentPort) throw new Error('simulation-worker.ts must run as a worker thread.');
const port = parentPort;

function send(message: SimulationWorkerReply, transfer: ArrayBuffer[] = []): void {
  port.postMessage(message, transfer);
}

function errorData(e: unknown): { code?: string; message: string } {
  if (e instanceof GapwiseError) return { code: e.code, message: e.message };
  return { message: e instanceof Error ? `${e.name}: ${e.message}` : String(e) };
}

port.on('message', (message: SimulationWorkerRequest) => {
  if (message.type !== 'run') return;
  try {
    const result = simulateConditional(message.samples, message.model, message.grid, {
      ...message.options,
      onProgress: (done, total) => send({ type: 'progress', done, total }),
    });
    send({ type: 'done', result }, resultTransfer(result));
  } catch (e) {
    send({ type: 'error', error: errorData(e) });
  }
});
