import { describe, expect, it } from 'vitest';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import type { StructureFitResult } from '../../../src/worker/protocol.ts';
import { anisotropyText, comparisonLabel, directionalModelCurve, distanceFactor, guardNote, nestedText } from '../../../src/ui/state/rich-fit.ts';
import { richFitOptions } from '../../../src/ui/state/rich-fit.svelte.ts';
import { modelCurve, modelName } from '../../../src/ui/state/structure.ts';
import { expectClose } from '../../helpers/tolerance.ts';

const aniso: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.5 }, { type: 'exponential', sill: 2, scale: 100 }],
  trend: 'constant', transform: 'none', anisotropy: { azimuth: 30, ratio: 0.5 }, practicalRange: 300,
};
const iso: CovarianceModel = { ...aniso, anisotropy: undefined };
const nested: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'spherical', sill: 0.3, scale: 40 }, { type: 'spherical', sill: 0.9, scale: 400 }],
  trend: 'constant', transform: 'none',
};

describe('distanceFactor', () => {
  it('distanceFactor is 1 along the long axis (either way), 1/ratio across it, √(cos²θ + sin²θ/ratio²) between (geometric anisotropy, analytic)', () => {
    expectClose(distanceFactor(aniso, 30), 1, { rel: 1e-12 });
    expectClose(distanceFactor(aniso, 210), 1, { rel: 1e-12 });
    expectClose(distanceFactor(aniso, 120), 2, { rel: 1e-12 });
    expectClose(distanceFactor(aniso, 75), Math.sqrt(0.5 + 0.5 / 0.25), { rel: 1e-12 });
    expect(distanceFactor(iso, 77)).toBe(1);
  });
});

describe('directionalModelCurve', () => {
  it('directionalModelCurve gives nugget + sill·(1 − e^(−h·k/scale)) along each direction (exponential, analytic) and the isotropic curve without anisotropy', () => {
    const across = directionalModelCurve(aniso, 120, 300, 3);
    expect(across[0]).toEqual({ h: 0, gamma: 0 });
    for (const p of across.slice(1)) expectClose(p.gamma, 0.5 + 2 * (1 - Math.exp(-p.h / 50)), { rel: 1e-12 });
    const along = directionalModelCurve(aniso, 30, 300, 3);
    for (const p of along.slice(1)) expectClose(p.gamma, 0.5 + 2 * (1 - Math.exp(-p.h / 100)), { rel: 1e-12 });
    expect(directionalModelCurve(iso, 45, 300, 10)).toEqual(modelCurve(iso, 300, 10));
  });
});

describe('rich-fit words', () => {
  it('comparisonLabel names the engine rows in plain words', () => {
    const row = (label: string) => ({ label, logLikelihood: 0, aic: 0, parameters: 3, chosen: false });
    expect(['isotropic', 'anisotropic', 'one structure', 'two structures'].map((l) => comparisonLabel(row(l)))).toEqual([
      'Same range in every direction', 'Range depends on direction', 'One range', 'Two ranges (short and long)',
    ]);
  });

  it('guardNote says one range is kept for each reason, and nothing when two are kept', () => {
    const r = (notIdentifiable?: StructureFitResult['notIdentifiable']): StructureFitResult => ({ model: iso, simpler: iso, comparison: [], notIdentifiable });
    expect(guardNote(r('merged'))).toMatch(/could not be told apart.*one-range model is kept/);
    expect(guardNote(r('vanishing-sill'))).toMatch(/almost none of the variation.*one-range model is kept/);
    expect(guardNote(r('no-gain'))).toMatch(/AIC.*one-range model is kept/);
    expect(guardNote(r())).toBeNull();
  });

  it('anisotropyText gives the long axis in degrees from north, the range along it and across it, and the ratio', () => {
    expect(anisotropyText(aniso, 'm')).toBe('Longest range toward 30° (clockwise from north; 300 m), shortest toward 120° (150 m); ratio short/long 0.50.');
    expect(anisotropyText(iso, 'm')).toBe('');
  });

  it('nestedText lists the short and long scales with their shares; modelName names two ranges and a range by direction', () => {
    expect(nestedText(nested, 'm')).toBe('Short scale 40 m (25 % of the partial sill), long scale 400 m (75 %); nugget 0.1.');
    expect(nestedText(iso, 'm')).toBe('');
    expect(modelName(nested)).toBe('Spherical, two ranges + nugget');
    expect(modelName(aniso)).toBe('Exponential, range by direction + nugget');
  });
});

describe('richFitOptions', () => {
  it('richFitOptions refits the chosen candidate by REML; two ranges take the fitted ν of a free-ν Matérn', () => {
    expect(richFitOptions('spherical', 'anisotropy', null)).toEqual({ family: 'spherical', method: 'reml' });
    expect(richFitOptions('matern-free', 'anisotropy', null)).toEqual({ family: 'matern', method: 'reml', nu: 'free' });
    const fitted: CovarianceModel = { structures: [{ type: 'matern', sill: 1, scale: 10, nu: 0.8 }], trend: 'constant', transform: 'none' };
    expect(richFitOptions('matern-free', 'nested', fitted)).toEqual({ family: 'matern', method: 'reml', nu: 0.8 });
    expect(() => richFitOptions('', 'nested', null)).toThrow(/Fit the candidate models first/);
  });
});
