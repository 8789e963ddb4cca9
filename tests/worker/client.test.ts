import { describe, expect, it } from 'vitest';
import { EngineClient } from '../../src/worker/client.ts';
import { EngineError } from '../../src/worker/protocol.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';
import { computeSurface } from '../../src/core/prediction/surface.ts';
import { makeSamples } from '../../src/core/shared/samples.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';
import type { Grid } from '../../src/core/geometry/grid.ts';
import { fakeFactory } from './fake-worker.ts';
import { loadFixture } from '../helpers/fixtures.ts';

const fx = loadFixture<{ values: number[]; model: CovarianceModel }>('surface.json');
const samples = makeSamples(fx.x as number[], fx.y as number[], fx.cases[1].values);
const model = fx.cases[1].model;
const grid: Grid = { ...(fx.grid as Omit<Grid, 'mask'>), mask: Uint8Array.from(fx.mask as number[]) };

describe('EngineClient', () => {
  it('EngineClient.request resolves with the result and reports progress in order', async () => {
    const { factory, made } = fakeFactory();
    const client = new EngineClient(factory);
    const fractions: number[] = [];
    const r = await client.request('surfaceRows', { samples, model, grid, options: { blockCells: 15 } }, { onProgress: (p) => fractions.push(p.fraction) });
    expect(Array.from(r.mean)).toEqual(Array.from(computeSurface(samples, model, grid).mean));
    expect(fractions.length).toBeGreaterThan(3);
    expect(fractions.at(-1)).toBe(1);
    expect(made).toHaveLength(1);
    expect(client.waiting).toBe(0);
    // The main thread keeps its samples: requests are copied, not transferred.
    expect(samples.x.length).toBe(30);
  });

  it('EngineClient.request rejects with a GapwiseError carrying the engine\'s code and place', async () => {
    const { factory } = fakeFactory();
    const client = new EngineClient(factory);
    const err = await client.request('readSamples', { text: '', options: { fileName: 'empty.csv' } }).catch((e) => e);
    expect(err).toBeInstanceOf(GapwiseError);
    expect(err.code).toBe('bad-file');
    expect(err.place.file).toBe('empty.csv');
  });

  it('EngineClient.cancel rejects with code cancelled, terminates the worker and re-posts the other waiting requests', async () => {
    const { factory, made } = fakeFactory(undefined, 5);
    const client = new EngineClient(factory);
    const a = client.start('variogram', { samples });
    const b = client.request('crossValidate', { samples, model });
    expect(client.cancel(a.id)).toBe(true);
    const err = await a.promise.catch((e) => e);
    expect(err).toBeInstanceOf(GapwiseError);
    expect(err.code).toBe('cancelled');
    expect(made).toHaveLength(2);
    expect(made[0].terminated).toBe(true);
    expect((made[1].received as { type: string }[]).map((m) => m.type)).toEqual(['crossValidate']);
    const cv = await b;
    expect(cv.summary.n).toBe(30);
    expect(client.cancel(a.id)).toBe(false);
    expect(client.startedWorkers).toBe(2);
  });

  it('EngineClient honours an AbortSignal, before and during a request', async () => {
    const { factory, made } = fakeFactory(undefined, 5);
    const client = new EngineClient(factory);
    const early = new AbortController();
    early.abort();
    await expect(client.request('variogram', { samples }, { signal: early.signal })).rejects.toMatchObject({ code: 'cancelled' });
    const ctl = new AbortController();
    const p = client.request('variogram', { samples }, { signal: ctl.signal });
    ctl.abort();
    await expect(p).rejects.toMatchObject({ code: 'cancelled' });
    expect(made[0].terminated).toBe(true);
    expect(made).toHaveLength(1); // nothing else waiting: no restart until the next request
  });

  it('EngineClient drops responses for ids it is not waiting for', async () => {
    const { factory, made } = fakeFactory();
    const client = new EngineClient(factory);
    const p = client.request('variogram', { samples, options: { lagCount: 4 } });
    // A stale answer (an id long settled or never sent) and junk must change nothing.
    made[0].onmessage?.({ id: 999, type: 'result', request: 'fit', result: {} });
    made[0].onmessage?.({ nonsense: true });
    const v = await p;
    expect(v.lags.length).toBeGreaterThan(0);
    expect(client.waiting).toBe(0);
  });

  it('EngineClient rejects everything waiting with EngineError when the worker dies, then starts a new one', async () => {
    const { factory, made } = fakeFactory(undefined, 20);
    const client = new EngineClient(factory);
    const a = client.request('variogram', { samples });
    const b = client.request('crossValidate', { samples, model });
    made[0].crash('out of memory');
    const [ea, eb] = await Promise.all([a.catch((e) => e), b.catch((e) => e)]);
    expect(ea).toBeInstanceOf(EngineError);
    expect(ea.message).toContain('out of memory');
    expect(eb).toBeInstanceOf(EngineError);
    expect(made[0].terminated).toBe(true);
    const v = await client.request('variogram', { samples, options: { lagCount: 4 } });
    expect(v.n).toBe(30);
    expect(made).toHaveLength(2);
  });

  it('EngineClient.dispose rejects waiting requests and refuses new ones', async () => {
    const { factory } = fakeFactory(undefined, 5);
    const client = new EngineClient(factory);
    const p = client.request('variogram', { samples });
    client.dispose();
    await expect(p).rejects.toMatchObject({ code: 'cancelled' });
    await expect(client.request('variogram', { samples })).rejects.toBeInstanceOf(EngineError);
  });
});
