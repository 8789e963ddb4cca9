import { describe, expect, it } from 'vitest';
import { webWorkerTransport } from '../../src/worker/transport.ts';
import { EngineClient } from '../../src/worker/client.ts';
import { EngineError } from '../../src/worker/protocol.ts';
import { createEngineHandler } from '../../src/worker/handler.ts';

/** The part of a Web Worker the adapter touches, answering through the real handler. */
class StubWorker {
  onmessage: ((event: MessageEvent) => void) | null = null;
  onerror: ((event: ErrorEvent) => void) | null = null;
  terminated = false;
  prevented = 0;
  private readonly handle = createEngineHandler();
  postMessage(message: unknown): void {
    setTimeout(() => this.handle(structuredClone(message), (response) => this.onmessage?.({ data: response } as MessageEvent)), 0);
  }
  terminate(): void {
    this.terminated = true;
  }
  fail(message: string): void {
    this.onerror?.({ message, preventDefault: () => { this.prevented++; } } as unknown as ErrorEvent);
  }
}

describe('webWorkerTransport', () => {
  it('webWorkerTransport carries requests and answers between a client and a Web Worker', async () => {
    const worker = new StubWorker();
    const client = new EngineClient(() => webWorkerTransport(worker as unknown as Worker));
    await expect(client.request('ready', {})).resolves.toBe(true);
    await client.dispose();
    expect(worker.terminated).toBe(true);
  });

  it('webWorkerTransport turns the worker\'s error event into the client\'s EngineError and keeps it off the console', async () => {
    const worker = new StubWorker();
    const client = new EngineClient(() => webWorkerTransport(worker as unknown as Worker));
    const waiting = client.request('ready', {});
    worker.fail('script failed to load');
    const error = await waiting.catch((e: unknown) => e);
    expect(error).toBeInstanceOf(EngineError);
    expect((error as Error).message).toMatch(/script failed to load/);
    expect(worker.prevented).toBe(1);
  });
});
