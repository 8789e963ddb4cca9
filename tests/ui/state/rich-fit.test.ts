import { describe, expect, it } from 'vitest';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import type { StructureFitResult } from '../../../src/worker/protocol.ts';
import {
  anisotropyText, choiceWith, comparisonLabel, directionalModelCurve, distanceFactor, guardNote, nestedText, richFitWords, rowModel, structureChoiceOf,
  type RichChoice,
} from '../../../src/ui/state/rich-fit.ts';
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
    expect(['isotropic', 'anisotropic', 'one structure', 'two structures', 'anisotropic, two structures'].map((l) => comparisonLabel(row(l)))).toEqual([
      'Same range in every direction', 'Range depends on direction', 'One range', 'Two ranges (short and long)', 'Two ranges, both by direction',
    ]);
  });

  it('guardNote says one range is kept for each reason, and nothing when two are kept', () => {
    const r = (notIdentifiable?: StructureFitResult['notIdentifiable']): StructureFitResult => ({ model: iso, simpler: iso, comparison: [], notIdentifiable, rowModels: {} });
    expect(guardNote(r('merged'))).toMatch(/could not be told apart.*one-range model is kept/);
    expect(guardNote(r('vanishing-sill'))).toMatch(/almost none of the variation.*one-range model is kept/);
    expect(guardNote(r('no-gain'))).toMatch(/AIC.*one-range model is kept/);
    expect(guardNote(r())).toBeNull();
    const both: StructureFitResult = { ...r('no-gain'), comparison: [{ label: 'anisotropic, two structures', logLikelihood: 0, aic: 0, parameters: 8, chosen: false }] };
    expect(guardNote(both)).toMatch(/one-range model with a range by direction is kept\.$/);
  });

  it('rowModel gives the model behind each row, and none for a row the fit left out', () => {
    const result: StructureFitResult = {
      model: aniso, simpler: iso, notIdentifiable: 'no-gain', rowModels: { isotropic: iso, anisotropic: aniso },
      comparison: ['isotropic', 'anisotropic', 'anisotropic, two structures'].map((label) => ({ label, logLikelihood: 0, aic: 0, parameters: 4, chosen: label === 'anisotropic' })),
    };
    expect(result.comparison.map((row) => rowModel(result, row))).toEqual([iso, aniso, null]);
  });
});

describe('the two boxes', () => {
  it('choiceWith ticks and clears one box, keeping the other: both boxes ticked is the combined fit', () => {
    expect(choiceWith('none', 'anisotropy', true)).toBe('anisotropy');
    expect(choiceWith('anisotropy', 'nested', true)).toBe('both');
    expect(choiceWith('nested', 'anisotropy', true)).toBe('both');
    expect(choiceWith('both', 'anisotropy', false)).toBe('nested');
    expect(choiceWith('both', 'nested', false)).toBe('anisotropy');
    expect(choiceWith('nested', 'nested', false)).toBe('none');
  });

  it('structureChoiceOf asks the worker for what the boxes say; richFitWords names it', () => {
    const choices: RichChoice[] = ['anisotropy', 'nested', 'both'];
    expect(choices.map(structureChoiceOf)).toEqual([
      { anisotropy: true, structures: 1 }, { anisotropy: false, structures: 2 }, { anisotropy: true, structures: 2 },
    ]);
    expect(choices.map((c) => richFitWords(c).button)).toEqual([
      'Fit with a range by direction', 'Fit with two ranges', 'Fit with a range by direction and two ranges',
    ]);
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
    expect(richFitOptions('matern-free', 'both', fitted)).toEqual({ family: 'matern', method: 'reml', nu: 0.8 });
    expect(() => richFitOptions('', 'nested', null)).toThrow(/Fit the candidate models first/);
  });
});
