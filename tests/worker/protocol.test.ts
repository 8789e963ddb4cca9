import { describe, expect, it } from 'vitest';
import { EngineError, errorData, errorFromData, isEngineRequest, isEngineResponse, transferablesOf } from '../../src/worker/protocol.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';

describe('isEngineRequest', () => {
  it('isEngineRequest accepts {id, known type, payload} and nothing else', () => {
    expect(isEngineRequest({ id: 1, type: 'fit', payload: {} })).toBe(true);
    expect(isEngineRequest({ id: 1, type: 'surfaceRows', payload: {} })).toBe(true);
    expect(isEngineRequest({ id: 1, type: 'explode', payload: {} })).toBe(false);
    expect(isEngineRequest({ id: '1', type: 'fit', payload: {} })).toBe(false);
    expect(isEngineRequest({ id: 1, type: 'fit' })).toBe(false);
    expect(isEngineRequest(null)).toBe(false);
  });

  it('isEngineResponse accepts progress, result and error messages', () => {
    expect(isEngineResponse({ id: 3, type: 'progress', done: 1, total: 2, fraction: 0.5 })).toBe(true);
    expect(isEngineResponse({ id: 3, type: 'result', request: 'fit', result: {} })).toBe(true);
    expect(isEngineResponse({ id: 3, type: 'done' })).toBe(false);
  });
});

describe('errorData', () => {
  it('errorData keeps a GapwiseError code and place, and errorFromData rebuilds a GapwiseError', () => {
    const e = new GapwiseError('bad-value', '"12,5x" is not a number.', { file: 'a.csv', row: 14, column: 'Pb' });
    const d = errorData(e);
    expect(d).toEqual({ code: 'bad-value', message: '"12,5x" is not a number.', place: { file: 'a.csv', row: 14, column: 'Pb' } });
    const back = errorFromData(structuredClone(d));
    expect(back).toBeInstanceOf(GapwiseError);
    expect((back as GapwiseError).describe()).toBe('a.csv, line 14, column "Pb": "12,5x" is not a number.');
  });

  it('errorData marks anything else as internal (a bug) and errorFromData gives an EngineError', () => {
    const d = errorData(new TypeError('x is undefined'));
    expect(d.code).toBe('internal');
    expect(d.message).toBe('Unexpected failure in the engine (a bug): TypeError: x is undefined');
    expect(errorFromData(d)).toBeInstanceOf(EngineError);
    expect(errorData('plain string').message).toContain('plain string');
  });
});

describe('transferablesOf', () => {
  it('transferablesOf finds each typed-array buffer once, nested in objects and arrays', () => {
    const shared = new Float64Array(8);
    const a = new Float32Array(4);
    const value = { mean: a, sd: shared.subarray(0, 4), more: [{ x: shared.subarray(4) }], n: 3, s: 'x', empty: new Float64Array(0) };
    const found = transferablesOf(value);
    expect(found).toHaveLength(2);
    expect(found).toContain(a.buffer);
    expect(found).toContain(shared.buffer);
  });

  it('transferablesOf skips class instances and primitives', () => {
    class Holder { data = new Float64Array(3); }
    expect(transferablesOf(new Holder())).toEqual([]);
    expect(transferablesOf(42)).toEqual([]);
    expect(transferablesOf(null)).toEqual([]);
  });
});
