// A stand-in for a worker transport in Node: messages are structured-cloned both ways (transfer lists
// honoured, so transferred buffers are detached on the sending side), handled by the real engine
// handler on a later tick, and nothing is delivered after terminate().
import { createEngineHandler, type EngineOperations } from '../../src/worker/handler.ts';
import { ENGINE_OPERATIONS } from '../../src/worker/operations.ts';
import type { Transport } from '../../src/worker/transport.ts';

export class FakeWorker implements Transport {
  onmessage: ((data: unknown) => void) | null = null;
  onerror: ((reason: string) => void) | null = null;
  terminated = false;
  readonly received: unknown[] = [];
  private readonly handle;

  constructor(ops: EngineOperations = ENGINE_OPERATIONS, private readonly delay = 0) {
    this.handle = createEngineHandler(ops);
  }

  post(message: unknown): void {
    const copy = structuredClone(message);
    this.received.push(copy);
    setTimeout(() => {
      if (this.terminated) return;
      this.handle(copy, (response, transfer) => {
        const out = structuredClone(response, { transfer });
        setTimeout(() => {
          if (!this.terminated) this.onmessage?.(out);
        }, 0);
      });
    }, this.delay);
  }

  terminate(): void {
    this.terminated = true;
  }

  /** Simulates the worker dying. */
  crash(message: string): void {
    this.onerror?.(message);
  }
}

/** A factory that records every worker it makes. */
export function fakeFactory(ops?: EngineOperations, delay = 0): { factory: () => FakeWorker; made: FakeWorker[] } {
  const made: FakeWorker[] = [];
  return {
    made,
    factory: () => {
      const w = new FakeWorker(ops, delay);
      made.push(w);
      return w;
    },
  };
}
