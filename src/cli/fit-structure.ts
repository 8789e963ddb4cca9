/**
 * `fit --anisotropy` and `fit --structures 2` (alone or together): the options, their checks, the fit
 * they choose (core/fitting/fit-structure.ts, which the app's worker calls too, else core/fitting/fit.ts
 * fitModel) and the comparison table printed on stderr (the rows also go into the
 * model's "fit": "comparison").
 */
import type { CovarianceModel } from '../core/covariance/model.ts';
import type { Samples } from '../core/shared/samples.ts';
import type { FitOptions, FitProgress } from '../core/fitting/fit.ts';
import type { FitComparisonRow } from '../core/fitting/fit-anisotropy.ts';
import type { OptionSpec } from './args.ts';
import { MAX_EXACT_SAMPLES } from '../core/shared/sizes.ts';
import { GapwiseError } from '../core/shared/errors.ts';
import { fitModel } from '../core/fitting/fit.ts';
import { fitStructure, type StructureChoice } from '../core/fitting/fit-structure.ts';
import { booleanOption, numberOption } from './args.ts';
import { printNotes, type CliIo, type OptionValues } from './common.ts';

export type { StructureChoice };

export const STRUCTURE_OPTIONS: OptionSpec[] = [
  { name: 'anisotropy', kind: 'boolean', help: 'estimate a geometric anisotropy (azimuth of the long axis, ratio short/long range) with the other parameters by likelihood; the isotropic fit is compared beside it (AIC)' },
  { name: 'structures', kind: 'number', placeholder: 'N', help: '1, or 2 for a short and a long structure plus nugget by likelihood (with --anisotropy, both sharing one fitted anisotropy); when the two are not identifiable (their scales merge, or one sill goes to zero, or the AIC does not improve) the one-structure model is kept with a warning', defaultText: '1' },
];

/** Reads --anisotropy and --structures; refuses them with a method that does not take them. */
export function readStructureChoice(values: OptionValues, method: string): StructureChoice {
  const anisotropy = booleanOption(values, 'anisotropy');
  const given = numberOption(values, 'structures');
  if (given !== undefined && given !== 1 && given !== 2) {
    throw new GapwiseError('bad-option', `Option "--structures" expects 1 or 2, got ${given}.`);
  }
  const structures = (given ?? 1) as 1 | 2;
  if ((anisotropy || structures === 2) && method !== 'reml' && method !== 'ml') {
    const what = anisotropy ? '--anisotropy' : '--structures 2';
    throw new GapwiseError('bad-option',
      `Option "${what}" is fitted by the exact REML or ML likelihood (up to ${MAX_EXACT_SAMPLES.toLocaleString('en-US')} samples); got --method ${method}; `
      + (method === 'nnl' ? `below ${MAX_EXACT_SAMPLES.toLocaleString('en-US')} samples give --method reml or ml, with more thin the samples first.` : 'give --method reml or ml.'));
  }
  return { anisotropy, structures };
}

/** The fit the choice asks for. */
export function fitWithStructure(samples: Samples, options: FitOptions, choice: StructureChoice, onProgress?: FitProgress): CovarianceModel {
  if (choice.anisotropy || choice.structures === 2) return fitStructure(samples, options, choice, onProgress).model;
  return fitModel(samples, options, onProgress);
}

/** The comparison rows as aligned text lines (model, parameters, log-likelihood, AIC, kept). */
export function comparisonLines(rows: readonly FitComparisonRow[]): string[] {
  const head = ['model', 'parameters', 'log-likelihood', 'AIC', ''];
  const body = rows.map((r) => [r.label, String(r.parameters), r.logLikelihood.toFixed(3), r.aic.toFixed(3), r.chosen ? 'kept' : '']);
  const widths = head.map((h, i) => Math.max(h.length, ...body.map((b) => b[i].length)));
  return [head, ...body].map((cells) => cells.map((c, i) => c.padEnd(widths[i])).join('  ').trimEnd());
}

/** Prints the model's comparison table (when it has one) as note lines. */
export function printComparison(io: CliIo, model: CovarianceModel): void {
  const rows = model.fit?.comparison as FitComparisonRow[] | undefined;
  if (!rows) return;
  printNotes(io, ['comparison of fits on the same samples:', ...comparisonLines(rows).map((l) => `  ${l}`)]);
}
