/**
 * The warnings a fitted model carries in `fit.warnings`: plain data with a code from a fixed list and
 * one sentence for people, the shape of every other result's warnings (core/shared/errors.ts
 * `Warning`). Code that treats a warning differently (drops it from a list, or adds a line when it is
 * missing) tests the code, never the wording.
 *
 * In the model JSON each warning is an object `{"code": "...", "message": "..."}`. Models written
 * before the codes carry plain strings; `fitWarnings` reads both, giving an old string the code of
 * the few kinds whose handling depends on it (recognised by their old opening words, here only) and
 * 'unclassified' otherwise, with the message unchanged.
 */
import type { Warning } from '../shared/errors.ts';

export type FitWarningCode =
  /** An optimiser (likelihood or least-squares) stopped before meeting its tolerance. */
  | 'optimiser-stopped'
  /** A scale (the one scale, the long-axis scale, or the long one of two) ended at a bound of its search. */
  | 'scale-at-bound'
  /** The nugget ended at its upper bound (almost no spatial structure). */
  | 'nugget-at-bound'
  /** A free Matérn smoothness ended at a bound. */
  | 'smoothness-at-bound'
  /** The anisotropy ratio ended at its lower bound. */
  | 'ratio-at-bound'
  /** Values were added to a correlation matrix's diagonal to factorise it. */
  | 'jitter'
  /** A weighted least-squares fit reports no likelihood (near-singular correlations, or too many samples). */
  | 'no-likelihood'
  /** One of the standard candidates could not be fitted (fitCandidates). */
  | 'candidate-failed'
  /** The anisotropic search ended below the isotropic fit, whose point is kept. */
  | 'anisotropy-search-below'
  /** The isotropic model has the lower AIC. */
  | 'anisotropy-not-supported'
  /** Two structures are not identifiable; the one-structure model is kept. */
  | 'nested-not-identifiable'
  /** The empirical variogram's own warnings, passed on by a least-squares fit (core/fitting/variogram.ts). */
  | 'pairs-subsampled' | 'few-samples' | 'few-pairs'
  /** A plain-string warning of a model written before the codes. */
  | 'unclassified';

export interface FitWarning extends Warning {
  code: FitWarningCode;
}

/** Old plain-string warnings whose handling depends on their kind: opening words → code. */
const OLD_WORDING: ReadonlyArray<[RegExp, FitWarningCode]> = [
  [/^Two structures are not identifiable/, 'nested-not-identifiable'],
  [/candidate could not be fitted/, 'candidate-failed'],
  [/optimiser stopped|search stopped before meeting its tolerance/i, 'optimiser-stopped'],
];

/**
 * One warning of `fit.warnings` as read from any model: an object with a message as it is (a code
 * missing or not text becomes 'unclassified'), an old string coded, anything else as its text.
 */
export function fitWarning(entry: FitWarning | string): FitWarning {
  if (typeof entry === 'string') {
    const known = OLD_WORDING.find(([pattern]) => pattern.test(entry));
    return { code: known ? known[1] : 'unclassified', message: entry };
  }
  const o = entry as unknown as Record<string, unknown> | null;
  if (typeof o === 'object' && o !== null && typeof o.message === 'string') {
    return typeof o.code === 'string' ? entry : { code: 'unclassified', message: o.message };
  }
  return { code: 'unclassified', message: JSON.stringify(entry) ?? String(entry) };
}

/** The warnings of a model's fit (none when it has no fit), old string warnings included (see fitWarning). */
export function fitWarnings(fit: { warnings?: ReadonlyArray<FitWarning | string> } | undefined): FitWarning[] {
  return (fit?.warnings ?? []).map(fitWarning);
}

/** Whether the fit carries a warning with this code. */
export function hasFitWarning(fit: { warnings?: ReadonlyArray<FitWarning | string> } | undefined, code: FitWarningCode): boolean {
  return fitWarnings(fit).some((w) => w.code === code);
}

/** The warnings without those of the given codes. */
export function withoutFitWarnings(warnings: ReadonlyArray<FitWarning | string> | undefined, ...codes: FitWarningCode[]): FitWarning[] {
  return (warnings ?? []).map(fitWarning).filter((w) => !codes.includes(w.code));
}
