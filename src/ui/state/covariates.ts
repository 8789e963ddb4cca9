/**
 * Covariates of the mean in the app: which sample columns can be chosen, the samples with their
 * encoded covariate columns for a chosen list (fits, variogram of residuals) or for a model's own trend
 * (cross-validation, surfaces), and the residuals the Structure step's variogram is computed from.
 */
import type { CovariateTrend, CovarianceModel, Trend } from '../../core/covariance/model.ts';
import { isCovariateTrend } from '../../core/covariance/model.ts';
import type { Samples } from '../../core/shared/samples.ts';
import { GapwiseError } from '../../core/shared/errors.ts';
import { encodeCovariates, resolveCovariateTrend } from '../../core/covariance/covariates.ts';
import { leastSquaresResiduals } from '../../core/fitting/covariate-fit.ts';
import { covariateColumns, sourceColumn, type SourceColumn } from '../../io/sample-columns.ts';
import type { IntakeResult } from '../../io/types.ts';

/** The file's columns that can be covariates: every column but coordinates, value and name. */
export function covariateCandidates(intake: IntakeResult): string[] {
  const r = intake.report;
  const taken = new Set([r.xColumn, r.yColumn, r.valueColumn, r.idColumn ?? '']);
  return r.columns.filter((c) => !taken.has(c));
}

/** A column as read, for the chooser (numbers or text codes); null when no sample has it. */
export function previewColumn(intake: IntakeResult, name: string): SourceColumn | null {
  try {
    return sourceColumn(intake, name);
  } catch {
    return null;
  }
}

/** The trend a list of chosen covariate columns gives (constant + those columns), or null for none. */
function chosenTrend(names: readonly string[]): CovariateTrend | null {
  return names.length > 0 ? { covariates: [...names] } : null;
}

/**
 * The samples (data units) with the encoded covariate columns of the chosen columns, and the trend
 * with its categorical levels recorded. Throws GapwiseError naming the column and line of a bad cell.
 */
export function withChosenCovariates(intake: IntakeResult, names: readonly string[]): { samples: Samples; trend: CovariateTrend } | null {
  const trend = chosenTrend(names);
  if (!trend) return null;
  const { columns, source } = covariateColumns(intake, trend, 'sample', false);
  const resolved = resolveCovariateTrend(trend, columns, source);
  const covariates = encodeCovariates(resolved, columns, intake.samples.value.length, source);
  return { samples: { ...intake.samples, covariates }, trend: resolved };
}

/** The samples a model is used with: with the encoded covariates of its own trend when it has one. */
export function samplesForModel(intake: IntakeResult, model: CovarianceModel | null): Samples {
  if (!model || !isCovariateTrend(model.trend)) return intake.samples;
  return withModelCovariates(intake, model).samples;
}

/**
 * The samples with the encoded covariates of a covariate model's own trend, and that trend with its
 * categorical levels recorded (kept as the model records them). Throws GapwiseError naming the
 * column and line of a bad cell, and 'bad-option' for a model without covariates.
 */
export function withModelCovariates(intake: IntakeResult, model: CovarianceModel): { samples: Samples; trend: CovariateTrend } {
  const trend = model.trend;
  if (!isCovariateTrend(trend)) throw new GapwiseError('bad-option', 'Expected a model with covariates in its mean; this one has none.');
  const { columns, source } = covariateColumns(intake, trend, 'sample', true);
  const resolved = resolveCovariateTrend(trend, columns, source);
  return { samples: { ...intake.samples, covariates: encodeCovariates(resolved, columns, intake.samples.value.length, source) }, trend: resolved };
}

/**
 * The least-squares residuals of the values (on the modelling scale: ln values when `log`) on the
 * trend's columns: what the variogram of a covariate model is computed from.
 */
export function residualSamples(samples: Samples, trend: Trend, log: boolean): Samples {
  const value = log ? Float64Array.from(samples.value, Math.log) : samples.value;
  const scaled: Samples = { ...samples, value };
  return { x: samples.x, y: samples.y, value: leastSquaresResiduals(scaled, trend) };
}
