import { describe, expect, it } from 'vitest';
import { fitAnisotropicNested } from '../../../src/core/fitting/fit-anisotropic-nested.ts';
import { MERGE_RATIO, fitNested } from '../../../src/core/fitting/fit-nested.ts';
import { fitAnisotropic } from '../../../src/core/fitting/fit-anisotropy.ts';
import { fitModel } from '../../../src/core/fitting/fit.ts';
import { simulateField, simulateSamples } from '../../../src/core/simulation/simulate.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import { makeSamples } from '../../../src/core/shared/samples.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import type { CorrelatedStructure, CovarianceModel } from '../../../src/core/covariance/model.ts';

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

/** |a − b| between two axes, degrees in [0, 90]. */
function axisGap(a: number, b: number): number {
  const d = Math.abs(a - b) % 180;
  return Math.min(d, 180 - d);
}

describe('fitAnisotropicNested', () => {
  it('fitAnisotropicNested on an anisotropic two-structure field: likelihood ≥ both simpler fits, two structures kept along the true axis', () => {
    // Invented field (simulate.ts, seed 3): exponential 15 m and 400 m along the long axis, sills 1
    // and 1, nugget 0.01, one anisotropy (azimuth 60°, ratio 0.35), sampled in clusters.
    const { x, y } = clustered(3);
    const truth: CovarianceModel = {
      structures: [{ type: 'nugget', sill: 0.01 }, { type: 'exponential', sill: 1, scale: 15 }, { type: 'exponential', sill: 1, scale: 400 }],
      trend: 'constant', transform: 'none', anisotropy: { azimuth: 60, ratio: 0.35 },
    };
    const samples = makeSamples(x, y, simulateField(truth, x, y, { seed: 3 }).values);
    const r = fitAnisotropicNested(samples, { family: 'exponential' });
    const l = r.nested.fit!.logLikelihood!;
    const slack = 1e-9 * Math.abs(l);
    expect(l).toBeGreaterThanOrEqual(r.anisotropic.fit!.logLikelihood! - slack);
    expect(l).toBeGreaterThanOrEqual(r.nestedIsotropic.fit!.logLikelihood! - slack);
    expect(r.notIdentifiable, JSON.stringify(r.model.fit!.warnings)).toBeUndefined();
    expect(r.model).toBe(r.nested);
    const [a, b] = correlated(r.model);
    expect(b.scale / a.scale).toBeGreaterThan(MERGE_RATIO);
    expect(axisGap(r.model.anisotropy!.azimuth, 60)).toBeLessThan(15);
    expect(r.model.anisotropy!.ratio).toBeLessThan(0.7);
    expect(r.comparison.map((c) => [c.label, c.chosen])).toEqual([
      ['isotropic', false], ['anisotropic', false], ['two structures', false], ['anisotropic, two structures', true]]);
    expect(r.comparison[3].parameters).toBe(r.comparison[1].parameters + 2);
    expect(r.comparison[3].aic).toBeLessThan(r.comparison[1].aic);
  }, 300_000);

  it('fitAnisotropicNested: the guard keeps one anisotropic structure on a one-structure field, never below either simpler fit', () => {
    // Invented field (simulate.ts, seed 5): one exponential structure, scale 200 m along azimuth 120°,
    // ratio 0.4, sill 1, nugget 0.05.
    const truth: CovarianceModel = {
      structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 1, scale: 200 }],
      trend: 'constant', transform: 'none', anisotropy: { azimuth: 120, ratio: 0.4 },
    };
    const samples = simulateSamples(truth, { count: 200, extent: { xmin: 0, ymin: 0, xmax: 1000, ymax: 1000 }, seed: 5 });
    const r = fitAnisotropicNested(samples, { family: 'exponential' });
    expect(r.notIdentifiable).toBeDefined();
    expect(correlated(r.model).length).toBe(1);
    expect(r.model.structures).toEqual(r.anisotropic.structures);
    expect(r.model.anisotropy).toEqual(r.anisotropic.anisotropy);
    expect(r.model.fit!.warnings!.some((w) => w.code === 'nested-not-identifiable'
      && /Two structures are not identifiable from these samples: .*; the one-structure anisotropic model is kept\./.test(w.message))).toBe(true);
    const l = r.nested.fit!.logLikelihood!;
    const slack = 1e-9 * Math.abs(l);
    expect(l).toBeGreaterThanOrEqual(r.anisotropic.fit!.logLikelihood! - slack);
    expect(l).toBeGreaterThanOrEqual(r.nestedIsotropic.fit!.logLikelihood! - slack);
    expect(r.comparison.map((c) => c.chosen)).toEqual([false, true, false, false]);
  }, 300_000);

  it('fitAnisotropic and fitNested given the isotropic fit answer as when they fit it themselves, bit for bit', () => {
    // Invented field (simulate.ts, seed 8): Matérn ν 1.3 (no closed form, so the tabulated ρ is used
    // by the search), scale 150 m along azimuth 40°, ratio 0.5, 80 samples.
    const truth: CovarianceModel = {
      structures: [{ type: 'nugget', sill: 0.05 }, { type: 'matern', sill: 1, scale: 150, nu: 1.3 }],
      trend: 'constant', transform: 'none', anisotropy: { azimuth: 40, ratio: 0.5 },
    };
    const samples = simulateSamples(truth, { count: 80, extent: { xmin: 0, ymin: 0, xmax: 1000, ymax: 1000 }, seed: 8 });
    const options = { family: 'matern' as const, nu: 1.3 };
    const isotropic = fitModel(samples, options);
    expect(fitAnisotropic(samples, options, undefined, structuredClone(isotropic))).toEqual(fitAnisotropic(samples, options));
    expect(fitNested(samples, options, undefined, structuredClone(isotropic))).toEqual(fitNested(samples, options));
  }, 300_000);

  it('fitAnisotropicNested refuses wls, a free ν and a fixed anisotropy', () => {
    const samples = makeSamples([0, 1, 2, 3], [0, 1, 0, 1], [1, 2, 3, 5]);
    expect(() => fitAnisotropicNested(samples, { family: 'exponential', method: 'wls' })).toThrow(GapwiseError);
    expect(() => fitAnisotropicNested(samples, { family: 'matern', nu: 'free' })).toThrow(/fixed Matérn ν/);
    expect(() => fitAnisotropicNested(samples, { family: 'exponential', anisotropy: { azimuth: 0, ratio: 0.5 } })).toThrow(/no fixed anisotropy/);
  });
});
