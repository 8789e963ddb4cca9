// Worker-thread entry of the CLI surface pool (./parallel.ts). Protocol (tagged unions, ids on bands):
//   parent → worker  { type: 'init', job }                 build the predictor once
//                    { type: 'band', id, rows: [a, b] }     compute grid rows [a, b)
//   worker → parent  { type: 'ready' } | { type: 'band', id, result } (arrays transferred)
//                    { type: 'progress', id, done, total } | { type: 'error', id?, error }
import { parentPort } from 'node:worker_threads';
import { GapwiseError } from '../core/shared/errors.ts';
import { computeSurfaceWith, type SurfaceResult } from '../core/prediction/surface.ts';
import { buildSurfacePredictor, type SurfaceJob, type WorkerReply, type WorkerRequest } from './parallel.ts';

if (!parentPort) throw new Error('surface-worker.ts must run as a worker thread.');
const port = parentPort;
let job: SurfaceJob | null = null;
let predictor: ReturnType<typeof buildSurfacePredictor> | null = null;

function send(message: WorkerReply, transfer: ArrayBuffer[] = []): void {
  port.postMessage(message, transfer);
}

function errorData(e: unknown): { code?: string; message: string } {
  if (e instanceof GapwiseError) return { code: e.code, message: e.message };
  return { message: e instanceof Error ? `${e.name}: ${e.message}` : String(e) };
}

port.on('message', (message: WorkerRequest) => {
  try {
    if (message.type === 'init') {
      job = message.job;
      predictor = buildSurfacePredictor(job);
      send({ type: 'ready' });
      return;
    }
    if (message.type === 'band') {
      if (!job || !predictor) throw new Error('Received a band before the job.');
      const id = message.id;
      const result: SurfaceResult = computeSurfaceWith(predictor, job.grid, { ...job.surface, rows: message.rows },
        (done, total) => send({ type: 'progress', id, done, total }));
      const transfer: ArrayBuffer[] = [result.mean.buffer as ArrayBuffer, result.sd.buffer as ArrayBuffer];
      if (result.pExceed) transfer.push(result.pExceed.buffer as ArrayBuffer);
      if (result.median) transfer.push(result.median.buffer as ArrayBuffer);
      send({ type: 'band', id, result }, transfer);
    }
  } catch (e) {
    send({ type: 'error', id: message.type === 'band' ? message.id : undefined, error: errorData(e) });
  }
});
