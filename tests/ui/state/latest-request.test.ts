import { describe, expect, it } from 'vitest';
import { LatestRequest } from '../../../src/ui/state/latest-request.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';

/** A promise the test settles by hand. */
function deferred<T>(): { promise: Promise<T>; resolve: (v: T) => void; reject: (e: unknown) => void } {
  let resolve!: (v: T) => void, reject!: (e: unknown) => void;
  const promise = new Promise<T>((res, rej) => { resolve = res; reject = rej; });
  return { promise, resolve, reject };
}

describe('LatestRequest', () => {
  it('LatestRequest.begin aborts the previous request, which is then no longer current', () => {
    const requests = new LatestRequest();
    const first = requests.begin();
    expect(first.current()).toBe(true);
    const second = requests.begin();
    expect(first.signal.aborted).toBe(true);
    expect(first.current()).toBe(false);
    expect(() => first.check()).toThrow(GapwiseError);
    expect(second.current()).toBe(true);
    expect(second.signal.aborted).toBe(false);
    expect(() => second.check()).not.toThrow();
  });

  it('LatestRequest.run drops the late answer of an earlier request and keeps the newer one', async () => {
    const requests = new LatestRequest();
    const early = deferred<number>();
    const late = deferred<number>();
    let earlySignal: AbortSignal | null = null;
    const a = requests.run((run) => { earlySignal = run.signal; return early.promise; });
    const b = requests.run(() => late.promise);
    expect(earlySignal!.aborted).toBe(true);
    late.resolve(2);
    expect(await b).toEqual({ status: 'done', value: 2 });
    // The earlier engine call answers after all (it did not honour the abort): dropped.
    early.resolve(1);
    expect(await a).toEqual({ status: 'stale' });
    expect(requests.active).toBe(true);
  });

  it('LatestRequest.cancel aborts the request in progress; its answer, even an error, is dropped', async () => {
    const requests = new LatestRequest();
    const d = deferred<string>();
    let signal: AbortSignal | null = null;
    const a = requests.run((run) => { signal = run.signal; return d.promise; });
    requests.cancel();
    expect(signal!.aborted).toBe(true);
    expect(requests.active).toBe(false);
    d.reject(new GapwiseError('numbers-failed' as never, 'Late failure.'));
    expect(await a).toEqual({ status: 'stale' });
  });

  it('LatestRequest.run returns errors as data: the message shown, and status cancelled for a cancelled code', async () => {
    const requests = new LatestRequest();
    const failed = await requests.run(async () => { throw new GapwiseError('bad-option', 'Expected at least 3 samples, got 2.'); });
    expect(failed.status).toBe('error');
    expect(failed.status === 'error' && failed.error.code).toBe('bad-option');
    expect(failed.status === 'error' && failed.error.message).toContain('Expected at least 3 samples, got 2.');
    const thrown = await requests.run(() => { throw { code: 'fit-failed', message: 'No fit.' }; });
    expect(thrown).toEqual({ status: 'error', error: { code: 'fit-failed', message: 'No fit.' } });
    const cancelled = await requests.run(async () => { throw new GapwiseError('cancelled', 'The surface was cancelled after 2 of 8 bands.'); });
    expect(cancelled.status).toBe('cancelled');
  });

  it('LatestRequest.run reports work stopped by check() after a newer request as stale, and its later steps do not run', async () => {
    const requests = new LatestRequest();
    const first = deferred<void>();
    const steps: string[] = [];
    const a = requests.run(async (run) => {
      await first.promise;
      run.check();
      steps.push('second step');
      return 1;
    });
    const b = requests.run(async () => 2);
    first.resolve();
    expect(await a).toEqual({ status: 'stale' });
    expect(await b).toEqual({ status: 'done', value: 2 });
    expect(steps).toEqual([]);
  });
});
