/**
 * The one thing the engine's client and pool need from a worker, whatever runs it: post a message,
 * hear its answers and its death, and stop it. The app adapts a Web Worker (below); the command line
 * adapts a worker_threads Worker (src/cli/engine-threads.ts); tests use a fake in the same thread.
 * Both faces run the same handler (./handler.ts) behind it, with the same protocol (./protocol.ts).
 */

export interface Transport {
  /** Posts a message; `transfer` lists buffers to move rather than copy. */
  post(message: unknown, transfer?: Transferable[]): void;
  /** Called with each message's data. */
  onmessage: ((data: unknown) => void) | null;
  /** Called once when the worker fails to start or dies, with a plain reason. */
  onerror: ((reason: string) => void) | null;
  /** Stops the worker at once (its loops do not yield); resolves when it has stopped, where the host says. */
  terminate(): void | Promise<void>;
}

export type TransportFactory = () => Transport;

/** A Web Worker as a transport (its errors are handled here, not left to the console). */
export function webWorkerTransport(worker: Worker): Transport {
  const transport: Transport = {
    post: (message, transfer = []) => worker.postMessage(message, transfer),
    onmessage: null,
    onerror: null,
    terminate: () => worker.terminate(),
  };
  worker.onmessage = (event: MessageEvent) => transport.onmessage?.(event.data);
  worker.onerror = (event: ErrorEvent) => {
    event.preventDefault?.();
    transport.onerror?.(event.message || 'the engine worker failed to run');
  };
  return transport;
}
