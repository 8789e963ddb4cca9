/**
 * The engine worker entry: receives request messages, runs them through the handler (core and io
 * functions), and posts progress, results (buffers transferred) and errors back. Cancelling is done
 * by the main thread terminating this worker (see ./client.ts).
 */
import { createEngineHandler } from './handler.ts';
import { ENGINE_OPERATIONS } from './operations.ts';

const scope = globalThis as unknown as DedicatedWorkerGlobalScope;
const handle = createEngineHandler(ENGINE_OPERATIONS);

scope.onmessage = (event: MessageEvent<unknown>) => {
  handle(event.data, (message, transfer) => scope.postMessage(message, transfer));
};
