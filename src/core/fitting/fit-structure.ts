/**
 * The richer fits chosen by two switches — a fitted anisotropy, two structures, or both — in one call
 * with one answer shape, for the app's worker and the command line alike: the model kept, the simpler
 * model beside it, the comparison rows (log-likelihood, AIC) and the model behind each row that may be
 * put in use. The fits themselves are ./fit-anisotropy.ts, ./fit-nested.ts and
 * ./fit-anisotropic-nested.ts; this file only chooses and shapes.
 */
import type { CovarianceModel } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import type { FitOptions } from './fit-options.ts';
import type { FitProgress } from './fit.ts';
import { GapwiseError } from '../shared/errors.ts';
import { fitAnisotropic, type FitComparisonRow } from './fit-anisotropy.ts';
import { fitNested } from './fit-nested.ts';
import { fitAnisotropicNested } from './fit-anisotropic-nested.ts';

/** Which richer fit: a fitted anisotropy, two structures (short and long range), or both at once. */
export interface StructureChoice {
  anisotropy: boolean;
  structures: 1 | 2;
}

export interface StructureFit {
  /** The model the fit keeps (the richest one the guard allows). */
  model: CovarianceModel;
  /** The simpler model fitted beside it (one structure; isotropic for a fitted anisotropy alone). */
  simpler: CovarianceModel;
  comparison: FitComparisonRow[];
  /** For two structures: why they were not kept; absent when they were. */
  notIdentifiable?: 'merged' | 'vanishing-sill' | 'no-gain';
  /**
   * The model behind each comparison row that may be put in use, by the row's label; a row left out is
   * two structures the guard did not keep.
   */
  rowModels: Record<string, CovarianceModel>;
}

/**
 * Fits the richer model the choice asks for (REML or ML, as the options say) with its simpler ones.
 * Throws GapwiseError 'bad-option' when the choice asks for neither, and as the fits do.
 */
export function fitStructure(samples: Samples, options: FitOptions, choice: StructureChoice, onProgress?: FitProgress): StructureFit {
  if (choice.anisotropy && choice.structures === 2) {
    const r = fitAnisotropicNested(samples, options, onProgress);
    const rowModels: Record<string, CovarianceModel> = {
      isotropic: r.isotropic,
      anisotropic: r.notIdentifiable ? r.model : r.anisotropic,
    };
    if (!r.nestedIsotropicNotIdentifiable) rowModels['two structures'] = r.nestedIsotropic;
    if (!r.notIdentifiable) rowModels['anisotropic, two structures'] = r.model;
    return withReason({ model: r.model, simpler: r.anisotropic, comparison: r.comparison, rowModels }, r.notIdentifiable);
  }
  if (choice.anisotropy) {
    const r = fitAnisotropic(samples, options, onProgress);
    return { model: r.model, simpler: r.isotropic, comparison: r.comparison, rowModels: { isotropic: r.isotropic, anisotropic: r.model } };
  }
  if (choice.structures === 2) {
    const r = fitNested(samples, options, onProgress);
    const rowModels: Record<string, CovarianceModel> = { 'one structure': r.notIdentifiable ? r.model : r.single };
    if (!r.notIdentifiable) rowModels['two structures'] = r.model;
    return withReason({ model: r.model, simpler: r.single, comparison: r.comparison, rowModels }, r.notIdentifiable);
  }
  throw new GapwiseError('bad-option', 'Expected a fitted anisotropy, two structures or both; got neither (fit the candidate models instead).');
}

function withReason(fit: StructureFit, notIdentifiable: StructureFit['notIdentifiable']): StructureFit {
  if (notIdentifiable) fit.notIdentifiable = notIdentifiable;
  return fit;
}
