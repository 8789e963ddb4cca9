// Fit warnings as coded data (src/core/covariance/fit-warnings.ts): filtering by code, and models
// written before the codes (plain-string warnings) still read.
import { describe, expect, it } from 'vitest';
import { fitWarning, fitWarnings, hasFitWarning, withoutFitWarnings, type FitWarning } from '../../../src/core/covariance/fit-warnings.ts';
import { parseModel } from '../../../src/core/covariance/model.ts';
import { fitNested } from '../../../src/core/fitting/fit-nested.ts';
import { simulateSamples } from '../../../src/core/simulation/simulate.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';

const stopped: FitWarning = { code: 'optimiser-stopped', message: 'The optimiser stopped before meeting its tolerance (40 likelihood evaluations).' };
const merged: FitWarning = { code: 'nested-not-identifiable', message: 'Two structures are not identifiable from these samples: merged; the one-structure model is kept.' };
const bound: FitWarning = { code: 'scale-at-bound', message: 'The scale reached its upper limit.' };

describe('fit warnings with codes', () => {
  it('withoutFitWarnings drops by code, whatever the wording, and keeps the order of the rest', () => {
    const reworded: FitWarning = { code: 'nested-not-identifiable', message: 'Some other sentence entirely.' };
    expect(withoutFitWarnings([stopped, merged, bound, reworded], 'nested-not-identifiable')).toEqual([stopped, bound]);
    expect(withoutFitWarnings([stopped, merged, bound], 'optimiser-stopped', 'scale-at-bound')).toEqual([merged]);
    expect(withoutFitWarnings(undefined, 'jitter')).toEqual([]);
  });

  it('hasFitWarning tests the code, not the message', () => {
    const fit = { warnings: [{ code: 'jitter', message: 'optimiser stopped' } as FitWarning] };
    expect(hasFitWarning(fit, 'optimiser-stopped')).toBe(false);
    expect(hasFitWarning(fit, 'jitter')).toBe(true);
    expect(hasFitWarning(undefined, 'jitter')).toBe(false);
  });

  it('fitWarning reads a string of an old model: the filtered kinds get their code, the rest "unclassified", messages unchanged', () => {
    expect(fitWarning('Two structures are not identifiable from these samples: x; the one-structure model is kept.').code).toBe('nested-not-identifiable');
    expect(fitWarning('The exponential candidate could not be fitted: boom').code).toBe('candidate-failed');
    expect(fitWarning('The optimiser stopped before meeting its tolerance (12 likelihood evaluations).').code).toBe('optimiser-stopped');
    expect(fitWarning('The weighted least-squares search stopped before meeting its tolerance.').code).toBe('optimiser-stopped');
    expect(fitWarning('The nugget reached 1,000 × the partial sill.')).toEqual({ code: 'unclassified', message: 'The nugget reached 1,000 × the partial sill.' });
    expect(fitWarning(bound)).toBe(bound);
    // Entries that are neither: kept as text, never dropped.
    expect(fitWarning({ message: 'no code' } as unknown as FitWarning)).toEqual({ code: 'unclassified', message: 'no code' });
    expect(fitWarning(42 as unknown as FitWarning)).toEqual({ code: 'unclassified', message: '42' });
  });

  it('parseModel reads a model JSON written before the codes (string warnings) as coded objects', () => {
    const old = {
      structures: [{ type: 'nugget', sill: 0.1 }, { type: 'exponential', sill: 1, scale: 100 }], trend: 'constant', transform: 'none',
      fit: { method: 'reml', converged: false, logLikelihood: -10, warnings: [stopped.message, merged.message, 'The scale reached its upper limit.'] },
    };
    const m = parseModel(JSON.parse(JSON.stringify(old)));
    expect(m.fit!.warnings).toEqual([stopped, merged, { code: 'unclassified', message: 'The scale reached its upper limit.' }]);
    expect(m.fit!.logLikelihood).toBe(-10);
    // A new model's objects pass through parseModel unchanged.
    const now = parseModel(JSON.parse(JSON.stringify({ ...old, fit: { ...old.fit, warnings: [stopped, bound] } })));
    expect(now.fit!.warnings).toEqual([stopped, bound]);
    expect(fitWarnings(now.fit).map((w) => w.code)).toEqual(['optimiser-stopped', 'scale-at-bound']);
  });

  it('fitNested on a one-structure field carries the guard\'s warning as code nested-not-identifiable, and the JSON keeps objects', () => {
    // Invented field (simulate.ts, seed 5): one exponential structure, scale 200 m, sill 1, nugget 0.05, 80 samples.
    const truth: CovarianceModel = { structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 1, scale: 200 }], trend: 'constant', transform: 'none' };
    const samples = simulateSamples(truth, { count: 80, extent: { xmin: 0, ymin: 0, xmax: 1000, ymax: 1000 }, seed: 5 });
    const r = fitNested(samples, { family: 'exponential' });
    expect(r.notIdentifiable).toBeDefined();
    const json = JSON.parse(JSON.stringify(r.model));
    expect(json.fit.warnings.filter((w: FitWarning) => w.code === 'nested-not-identifiable').length).toBe(1);
    expect(withoutFitWarnings(parseModel(json).fit!.warnings, 'nested-not-identifiable').every((w) => !w.message.startsWith('Two structures'))).toBe(true);
  }, 120_000);
});
