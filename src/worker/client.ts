/**
 * EngineClient: the caller's handle on one engine worker, over any transport (./transport.ts: a Web
 * Worker in the app, a worker thread in the command line). Each request gets an id and a
 * promise; progress messages go to the request's callback; results and errors settle it; messages
 * for ids no longer waiting (cancelled, or from a worker that was replaced) are dropped.
 *
 * Cancelling terminates the worker (the engine's loops do not yield, so this is the only way to stop
 * them at once), rejects the cancelled request with GapwiseError('cancelled'), starts a fresh worker
 * and posts the other waiting requests to it again (requests are copied on posting, so they are
 * still at hand). A worker that dies rejects everything waiting with EngineError and is replaced.
 */
import { GapwiseError } from '../core/shared/errors.ts';
import {
  EngineError, errorFromData, isEngineResponse,
  type EngineRequest, type RequestPayloads, type RequestType, type ResultPayloads,
} from './protocol.ts';
import { webWorkerTransport, type Transport, type TransportFactory } from './transport.ts';

/** Starts the app's engine worker (Vite bundles it from this exact `new Worker(new URL(...))` form). */
export function createEngineWorker(): Transport {
  return webWorkerTransport(new Worker(new URL('./engine.worker.ts', import.meta.url), { type: 'module', name: 'gapwise-engine' }));
}

export interface Progress {
  done: number;
  total: number;
  fraction: number;
}

export interface RequestOptions {
  onProgress?: (progress: Progress) => void;
  /** Aborting cancels the request (see EngineClient.cancel). */
  signal?: AbortSignal;
}

/** A started request: its id (for cancel) and its promise. */
export interface RunningRequest<K extends RequestType> {
  id: number;
  promise: Promise<ResultPayloads[K]>;
}

interface Pending {
  request: EngineRequest;
  resolve: (value: unknown) => void;
  reject: (reason: unknown) => void;
  onProgress?: (progress: Progress) => void;
  cleanup: () => void;
}

function cancelledError(type: RequestType): GapwiseError {
  return new GapwiseError('cancelled', `The ${type} request was cancelled before it finished.`);
}

export class EngineClient {
  private worker: Transport | null = null;
  /** Workers being terminated (dispose waits for them). */
  private readonly stopping = new Set<Promise<void>>();
  private readonly pending = new Map<number, Pending>();
  private nextId = 1;
  private disposed = false;
  /** Workers started so far (1 + restarts). */
  startedWorkers = 0;
  /** Requests started so far, by type (read by the browser tests to tell what was computed). */
  readonly started: Partial<Record<RequestType, number>> = {};

  constructor(private readonly factory: TransportFactory = createEngineWorker) {}

  /** Requests waiting for an answer. */
  get waiting(): number {
    return this.pending.size;
  }

  /** Sends a request; resolves with its result, rejects with GapwiseError / EngineError. */
  request<K extends RequestType>(type: K, payload: RequestPayloads[K], options: RequestOptions = {}): Promise<ResultPayloads[K]> {
    return this.start(type, payload, options).promise;
  }

  /** Like request, also giving the id for cancel(id). */
  start<K extends RequestType>(type: K, payload: RequestPayloads[K], options: RequestOptions = {}): RunningRequest<K> {
    const id = this.nextId++;
    this.started[type] = (this.started[type] ?? 0) + 1;
    if (this.disposed) return { id, promise: Promise.reject(new EngineError('The engine client was closed.')) };
    if (options.signal?.aborted) return { id, promise: Promise.reject(cancelledError(type)) };
    const request = { id, type, payload } as EngineRequest;
    const promise = new Promise<ResultPayloads[K]>((resolve, reject) => {
      const onAbort = () => this.cancel(id);
      options.signal?.addEventListener('abort', onAbort, { once: true });
      this.pending.set(id, {
        request,
        resolve: resolve as (value: unknown) => void,
        reject,
        onProgress: options.onProgress,
        cleanup: () => options.signal?.removeEventListener('abort', onAbort),
      });
    });
    this.ensureWorker().post(request);
    return { id, promise };
  }

  /**
   * Stops request `id`: terminates the worker, rejects the request with 'cancelled', and restarts
   * the worker for the other waiting requests. Returns false when the id was not waiting.
   */
  cancel(id: number): boolean {
    const p = this.pending.get(id);
    if (!p) return false;
    this.settle(id);
    p.reject(cancelledError(p.request.type));
    this.restart();
    return true;
  }

  /** Cancels everything waiting. */
  cancelAll(): void {
    const all = [...this.pending.entries()];
    for (const [id] of all) this.settle(id);
    this.killWorker();
    for (const [, p] of all) p.reject(cancelledError(p.request.type));
  }

  /**
   * Terminates the worker and rejects whatever is waiting; the client cannot be used afterwards.
   * Resolves when the worker has stopped (at once where the host does not say).
   */
  dispose(): Promise<void> {
    this.disposed = true;
    this.cancelAll();
    return Promise.all(this.stopping).then(() => undefined);
  }

  private ensureWorker(): Transport {
    if (this.worker) return this.worker;
    const worker = this.factory();
    this.startedWorkers++;
    worker.onmessage = (data) => {
      if (this.worker === worker) this.receive(data);
    };
    worker.onerror = (reason) => {
      if (this.worker === worker) this.crash(reason);
    };
    this.worker = worker;
    return worker;
  }

  private killWorker(): void {
    const w = this.worker;
    this.worker = null;
    if (!w) return;
    w.onmessage = null;
    w.onerror = null;
    const stopped = Promise.resolve(w.terminate()).catch(() => undefined);
    this.stopping.add(stopped);
    void stopped.then(() => this.stopping.delete(stopped));
  }

  private restart(): void {
    this.killWorker();
    if (this.pending.size === 0 || this.disposed) return;
    const worker = this.ensureWorker();
    for (const p of this.pending.values()) worker.post(p.request);
  }

  private crash(reason: string): void {
    const all = [...this.pending.entries()];
    for (const [id] of all) this.settle(id);
    this.killWorker();
    for (const [, p] of all) p.reject(new EngineError(`The engine stopped unexpectedly (${reason}); the ${p.request.type} request was lost. Try again.`));
  }

  private settle(id: number): void {
    const p = this.pending.get(id);
    if (!p) return;
    this.pending.delete(id);
    p.cleanup();
  }

  private receive(data: unknown): void {
    if (!isEngineResponse(data)) return;
    const p = this.pending.get(data.id);
    if (!p) return; // stale: cancelled or already answered
    if (data.type === 'progress') {
      p.onProgress?.({ done: data.done, total: data.total, fraction: data.fraction });
      return;
    }
    this.settle(data.id);
    if (data.type === 'result') p.resolve(data.result);
    else p.reject(errorFromData(data.error));
  }
}
