import { describe, expect, it } from 'vitest';
import { fitNested, MERGE_RATIO, MIN_SHARE } from '../../../src/core/fitting/fit-nested.ts';
import { createLikelihood, type CorrelationParameters } from '../../../src/core/fitting/likelihood.ts';
import { simulateField, simulateSamples } from '../../../src/core/simulation/simulate.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import { makeSamples, type Samples } from '../../../src/core/shared/samples.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import type { CorrelatedStructure, CovarianceModel } from '../../../src/core/covariance/model.ts';
import { expectClose } from '../../helpers/tolerance.ts';
import { loadFixture } from '../../helpers/fixtures.ts';

interface NestedCase { shortScale: number; longScale: number; shortShare: number; nuggetRatio: number; logLikelihood: number; sigma2: number }
const fixture = loadFixture<unknown>('structures.json');
const nestedCases = fixture.nested as NestedCase[];

/** Invented clustered survey: 75 places in a 1 km square, 4 samples within 30 m of each (seeded). */
function clustered(seed: number): { x: number[]; y: number[] } {
  const rnd = createRandom(seed);
  const x: number[] = [];
  const y: number[] = [];
  for (let c = 0; c < 75; c++) {
    const cx = 1000 * rnd.uniform();
    const cy = 1000 * rnd.uniform();
    for (let k = 0; k < 4; k++) {
      x.push(cx + 30 * (rnd.uniform() - 0.5));
      y.push(cy + 30 * (rnd.uniform() - 0.5));
    }
  }
  return { x, y };
}

function correlated(m: CovarianceModel): CorrelatedStructure[] {
  return m.structures.filter((s) => s.type !== 'nugget') as CorrelatedStructure[];
}

describe('nested likelihood', () => {
  it('createLikelihood with two structures gives the REML of numpy (structures.json, numpy)', () => {
    const samples = makeSamples(fixture.x as number[], fixture.y as number[], fixture.value as number[]);
    const lik = createLikelihood(samples, { family: 'matern', nu: 1.5, trend: 'constant', method: 'reml' }, (theta: CorrelationParameters) => {
      const t = theta as CorrelationParameters & NestedCase;
      return {
        structures: [{ type: 'nugget', sill: t.nuggetRatio }, { type: 'matern', sill: t.shortShare, scale: t.shortScale, nu: 1.5 },
          { type: 'matern', sill: 1 - t.shortShare, scale: t.longScale, nu: 1.5 }],
        trend: 'constant', transform: 'none',
      };
    });
    for (const c of nestedCases) {
      const v = lik.evaluate({ scale: c.shortScale, ...c } as CorrelationParameters);
      expectClose(v.logLikelihood, c.logLikelihood, fixture.tolerance, `logLikelihood at ${JSON.stringify(c)}`);
      expectClose(v.sigma2, c.sigma2, fixture.tolerance, 'sigma2');
    }
  });
});

describe('fitNested', () => {
  it('fitNested keeps two structures on a two-structure field, with likelihood ≥ the one-structure fit\'s', () => {
    // Invented field (simulate.ts, seeds 1, 2): exponential 15 m and 250 m, sills 1 and 1, nugget 0.01,
    // sampled in clusters so that short separations are seen.
    for (const seed of [1, 2]) {
      const { x, y } = clustered(seed);
      const truth: CovarianceModel = {
        structures: [{ type: 'nugget', sill: 0.01 }, { type: 'exponential', sill: 1, scale: 15 }, { type: 'exponential', sill: 1, scale: 250 }],
        trend: 'constant', transform: 'none',
      };
      const samples: Samples = makeSamples(x, y, simulateField(truth, x, y, { seed }).values);
      const r = fitNested(samples, { family: 'exponential' });
      expect(r.notIdentifiable, `seed ${seed}: ${JSON.stringify(r.model.fit!.warnings)}`).toBeUndefined();
      expect(r.model).toBe(r.nested);
      const [a, b] = correlated(r.model);
      expect(b.scale / a.scale).toBeGreaterThan(MERGE_RATIO);
      expect(a.scale).toBeLessThan(40);
      expect(b.scale).toBeGreaterThan(100);
      expect(r.nested.fit!.logLikelihood!).toBeGreaterThanOrEqual(r.single.fit!.logLikelihood!);
      expect(r.comparison.map((c) => [c.label, c.chosen])).toEqual([['one structure', false], ['two structures', true]]);
      expect(r.comparison[1].parameters).toBe(r.comparison[0].parameters + 2);
      expect(r.comparison[1].aic).toBeLessThan(r.comparison[0].aic);
    }
  }, 300_000);

  it('fitNested: the guard fires on a one-structure field and keeps the simpler model', () => {
    // Invented field (simulate.ts, seed 2): one exponential structure, scale 150 m, sill 1, nugget 0.05.
    const truth: CovarianceModel = {
      structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 1, scale: 150 }], trend: 'constant', transform: 'none',
    };
    const samples = simulateSamples(truth, { count: 200, extent: { xmin: 0, ymin: 0, xmax: 1000, ymax: 1000 }, seed: 2 });
    const r = fitNested(samples, { family: 'exponential' });
    expect(r.notIdentifiable).toBeDefined();
    expect(correlated(r.model).length).toBe(1);
    expect(r.model.structures).toEqual(r.single.structures);
    expect(r.model.fit!.warnings!.some((w) => w.code === 'nested-not-identifiable'
      && /Two structures are not identifiable from these samples: .*; the one-structure model is kept\./.test(w.message))).toBe(true);
    // Its nested optimum still does not fall below the one-structure likelihood (the anchor).
    expect(r.nested.fit!.logLikelihood!).toBeGreaterThanOrEqual(r.single.fit!.logLikelihood! - 1e-9 * Math.abs(r.single.fit!.logLikelihood!));
    const [a, b] = correlated(r.nested);
    const reasons = { merged: b.scale / a.scale < MERGE_RATIO, 'vanishing-sill': Math.min(a.sill, b.sill) / (a.sill + b.sill) < MIN_SHARE };
    if (r.notIdentifiable !== 'no-gain') expect(reasons[r.notIdentifiable!]).toBe(true);
    expect(r.comparison.map((c) => c.chosen)).toEqual([true, false]);
  }, 300_000);

  it('fitNested refuses wls and a free ν', () => {
    const samples = makeSamples([0, 1, 2, 3], [0, 1, 0, 1], [1, 2, 3, 5]);
    expect(() => fitNested(samples, { family: 'exponential', method: 'wls' })).toThrow(GapwiseError);
    expect(() => fitNested(samples, { family: 'matern', nu: 'free' })).toThrow(/fixed Matérn ν/);
  });
});
