/**
 * Pure helpers of the Structure step's richer fits (a range that depends on direction, or two
 * ranges): the model's semivariance along a compass direction, plain-language rows and notes for the
 * comparison table, and the model's shape in words.
 */
import type { CovarianceModel, CorrelatedStructure } from '../../core/covariance/model.ts';
import type { FitComparisonRow } from '../../core/fitting/fit-anisotropy.ts';
import type { StructureFitResult } from '../../worker/protocol.ts';
import { effectiveDistance, surfaceCovariance, surfaceVariance, practicalRange } from '../../core/covariance/covariance.ts';
import { nuggetOf } from '../../core/covariance/model.ts';
import { formatDistance } from '../../io/format.ts';

export type RichChoice = 'none' | 'anisotropy' | 'nested';

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
    default: return row.label;
  }
}

/** Why two ranges were not kept, in plain words; null when they were kept (or not asked for). */
export function guardNote(result: StructureFitResult): string | null {
  switch (result.notIdentifiable) {
    case 'merged': return 'Two ranges could not be told apart: the short and the long range came out nearly the same, so the samples show one range. The one-range model is kept.';
    case 'vanishing-sill': return 'Two ranges could not be told apart: one of them carries almost none of the variation. The one-range model is kept.';
    case 'no-gain': return 'A second range does not improve the fit enough to pay for its extra parameters (higher or equal AIC). The one-range model is kept.';
    default: return null;
  }
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
