import { describe, expect, it } from 'vitest';
import { runDesignRequest, type DesignRequestPayload } from '../../src/worker/design-handler.ts';
import { suggestSites } from '../../src/core/design/design.ts';
import { makeSamples } from '../../src/core/shared/samples.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';

const samples = makeSamples([10, 80, 40, 70, 20, 55], [15, 20, 50, 85, 75, 40], [3, 5, 4, 7, 6, 5]);
const model: CovarianceModel = { structures: [{ type: 'nugget', sill: 0.1 }, { type: 'exponential', sill: 1, scale: 30 }], trend: 'constant', transform: 'none' };
const square = [[[0, 0], [100, 0], [100, 100], [0, 100], [0, 0]]];

describe('runDesignRequest', () => {
  it('runDesignRequest gives the engine\'s result for a payload that went through structured cloning', () => {
    const payload: DesignRequestPayload = { samples, model, options: { count: 3, boundary: [square], cell: 10, threshold: 5 } };
    const steps: number[] = [];
    const result = runDesignRequest(structuredClone(payload), (done, total) => steps.push(done / total));
    const direct = suggestSites(samples, model, payload.options);
    expect(result.suggestions).toEqual(direct.suggestions);
    expect(result.areaDecided).toBe(direct.areaDecided);
    expect(steps.at(-1)).toBe(1);
    // The result is plain data: it survives cloning unchanged.
    expect(structuredClone(result)).toEqual(result);
  });

  it('runDesignRequest runs a coverage design with a null model and rejects a payload without samples', () => {
    const result = runDesignRequest({ samples, model: null, options: { count: 2, boundary: [square], cell: 10 } });
    expect(result.mode).toBe('coverage');
    expect(result.suggestions).toHaveLength(2);
    expect(() => runDesignRequest({ model, options: { count: 2 } } as unknown as DesignRequestPayload)).toThrow(/samples with x, y and value/);
  });

  it('runDesignRequest stops with a cancelled error when asked to', () => {
    expect(() => runDesignRequest({ samples, model, options: { count: 3, boundary: [square], cell: 10 } }, undefined, () => true))
      .toThrow(expect.objectContaining({ code: 'cancelled' }));
  });
});
