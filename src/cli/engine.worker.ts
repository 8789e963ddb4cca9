// The command line's engine worker: the worker-thread face of src/worker/engine.worker.ts. It runs
// the same handler on the same protocol (src/worker/protocol.ts); ./engine-threads.ts starts it and
// adapts it to the transport the engine's pool uses. Cancelling is done by terminating the thread.
import { parentPort } from 'node:worker_threads';
import { createEngineHandler } from '../worker/handler.ts';

if (!parentPort) throw new Error('engine.worker.ts must run as a worker thread.');
const port = parentPort;
const handle = createEngineHandler();

port.on('message', (message: unknown) => {
  handle(message, (response, transfer) => port.postMessage(response, transfer));
});
