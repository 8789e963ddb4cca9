/**
 * Pure helpers of the Structure step's richer fits (a range that depends on direction, two ranges, or
 * both): the choice the two boxes make, the model's semivariance along a compass direction,
 * plain-language rows and notes for the comparison table, and the model's shape in words.
 */
import type { CovarianceModel, CorrelatedStructure } from '../../core/covariance/model.ts';
import type { FitComparisonRow } from '../../core/fitting/fit-anisotropy.ts';
import type { StructureFitChoice, StructureFitResult } from '../../worker/protocol.ts';
import { effectiveDistance, surfaceCovariance, surfaceVariance, practicalRange } from '../../core/covariance/covariance.ts';
import { nuggetOf } from '../../core/covariance/model.ts';
import { formatDistance } from '../../io/format.ts';

/** What the two boxes ask for: a range by direction, two ranges, both at once, or neither. */
export type RichChoice = 'none' | 'anisotropy' | 'nested' | 'both';

/** Whether the choice fits a range by direction. */
export function hasAnisotropy(choice: RichChoice): boolean {
  return choice === 'anisotropy' || choice === 'both';
}

/** Whether the choice fits two ranges. */
export function hasTwoRanges(choice: RichChoice): boolean {
  return choice === 'nested' || choice === 'both';
}

/** The choice after one box is ticked or cleared (the other box stays as it was). */
export function choiceWith(choice: RichChoice, box: 'anisotropy' | 'nested', on: boolean): RichChoice {
  const anisotropy = box === 'anisotropy' ? on : hasAnisotropy(choice);
  const nested = box === 'nested' ? on : hasTwoRanges(choice);
  return anisotropy && nested ? 'both' : anisotropy ? 'anisotropy' : nested ? 'nested' : 'none';
}

/** The worker's request for a choice (core/fitting/fit-structure.ts). */
export function structureChoiceOf(choice: RichChoice): StructureFitChoice {
  return { anisotropy: hasAnisotropy(choice), structures: hasTwoRanges(choice) ? 2 : 1 };
}

/** The fit button's words and the running line's, for a choice. */
export function richFitWords(choice: RichChoice): { button: string; running: string } {
  switch (choice) {
    case 'both': return { button: 'Fit with a range by direction and two ranges', running: 'a range by direction with two ranges' };
    case 'nested': return { button: 'Fit with two ranges', running: 'two ranges' };
    default: return { button: 'Fit with a range by direction', running: 'the range by direction' };
  }
}

/**
 * Effective distance of one metre of separation toward `direction` (degrees clockwise from north),
 * under the model's anisotropy (core/covariance/covariance.ts effectiveDistance holds the rotation): 1 along the
 * long axis, 1/ratio across it, 1 for an isotropic model.
 */
export function distanceFactor(model: CovarianceModel, direction: number): number {
  if (!model.anisotropy) return 1;
  const a = (direction * Math.PI) / 180;
  // The unit separation toward the direction, (east, north).
  return effectiveDistance(Math.sin(a), Math.cos(a), model.anisotropy);
}

/**
 * Semivariance of the model along a compass direction at `count` distances from 0 to maxLag:
 * γ(h) = nugget + C(0) − C(h·k), k = distanceFactor (the direction's range is the long range / k).
 */
export function directionalModelCurve(model: CovarianceModel, direction: number, maxLag: number, count = 80): Array<{ h: number; gamma: number }> {
  const c0 = surfaceVariance(model);
  const nugget = nuggetOf(model);
  const k = distanceFactor(model, direction);
  const out = [{ h: 0, gamma: 0 }];
  for (let i = 1; i <= count; i++) {
    const h = (maxLag * i) / count;
    out.push({ h, gamma: nugget + c0 - surfaceCovariance(model, h * k) });
  }
  return out;
}

/** Plain name of a comparison row. */
export function comparisonLabel(row: FitComparisonRow): string {
  switch (row.label) {
    case 'isotropic': return 'Same range in every direction';
    case 'anisotropic': return 'Range depends on direction';
    case 'one structure': return 'One range';
    case 'two structures': return 'Two ranges (short and long)';
    case 'anisotropic, two structures': return 'Two ranges, both by direction';
    default: return row.label;
  }
}

/** Why two ranges were not kept, in plain words; null when they were kept (or not asked for). */
export function guardNote(result: StructureFitResult): string | null {
  const kept = result.comparison.some((r) => r.label === 'anisotropic, two structures')
    ? 'The one-range model with a range by direction is kept.' : 'The one-range model is kept.';
  switch (result.notIdentifiable) {
    case 'merged': return `Two ranges could not be told apart: the short and the long range came out nearly the same, so the samples show one range. ${kept}`;
    case 'vanishing-sill': return `Two ranges could not be told apart: one of them carries almost none of the variation. ${kept}`;
    case 'no-gain': return `A second range does not improve the fit enough to pay for its extra parameters (higher or equal AIC). ${kept}`;
    default: return null;
  }
}

/** The model behind a comparison row that may be put in use; null for two ranges the guard did not keep. */
export function rowModel(result: StructureFitResult, row: FitComparisonRow): CovarianceModel | null {
  return result.rowModels[row.label] ?? null;
}

/** The model's direction dependence in words: long axis (degrees from north, clockwise) and ratio; '' when isotropic. */
export function anisotropyText(model: CovarianceModel, unit: string): string {
  const a = model.anisotropy;
  if (!a || a.ratio === 1) return '';
  const range = model.practicalRange ?? practicalRange(model);
  const axis = Math.round(a.azimuth * 10) / 10;
  const across = (axis + 90) % 180;
  return `Longest range toward ${axis}° (clockwise from north; ${formatDistance(range, unit)}), shortest toward ${across}° (${formatDistance(range * a.ratio, unit)}); ratio short/long ${a.ratio.toFixed(2)}.`;
}

/** The two ranges of a two-structure model in words (scales and each one's share of the partial sill); '' otherwise. */
export function nestedText(model: CovarianceModel, unit: string): string {
  const corr = model.structures.filter((s) => s.type !== 'nugget') as CorrelatedStructure[];
  if (corr.length !== 2) return '';
  const [a, b] = [...corr].sort((x, y) => x.scale - y.scale);
  const total = a.sill + b.sill;
  const pct = (s: number) => `${Math.round((100 * s) / total)} %`;
  return `Short scale ${formatDistance(a.scale, unit)} (${pct(a.sill)} of the partial sill), long scale ${formatDistance(b.scale, unit)} (${pct(b.sill)}); nugget ${+nuggetOf(model).toPrecision(4)}.`;
}
