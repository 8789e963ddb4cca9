/**
 * `gapwise cv`: leave-one-out cross-validation with a given model. The JSON summary (me, rmse,
 * msse, coverage95, n) goes to stdout; the per-sample table to --out as CSV.
 *
 * Up to REFERENCE_EXACT_LIMIT samples (or with --exact) the closed form of core/cross-validation.ts: one
 * factorisation of all samples, n³/3 flops. Above (or with --local; core/path-choice.ts chooseLeaveOneOutPath) each sample is
 * left out and predicted from its M nearest other samples (core/local-cross-validation.ts): the same
 * kriging as the local path of predict and grid, m³/3 flops per sample. With M ≥ n − 1 it is the
 * closed form's answer.
 */
import { SOFTWARE } from '../../core/version.ts';
import { GapwiseError, type Warning } from '../../core/errors.ts';
import { leaveOneOut, type LeaveOneOutResult } from '../../core/cross-validation.ts';
import { localLeaveOneOut } from '../../core/local-cross-validation.ts';
import { createPredictor } from '../../core/kriging.ts';
import { globalMeanCoefficients } from '../../core/local-kriging.ts';
import type { CovarianceModel } from '../../core/model.ts';
import { NeighborIndex } from '../../core/neighbors.ts';
import type { Samples } from '../../core/samples.ts';
import { coordinateFrame, designRow, trendColumnCount } from '../../core/trend.ts';
import { isotropicCoordinates } from '../../core/vecchia.ts';
import { REFERENCE_EXACT_LIMIT } from '../../core/path-choice.ts';
import { stringOption } from '../args.ts';
import {
  CAUTION, PREDICTION_PATH_OPTIONS, SAMPLE_OPTIONS, count, describePredictionPath, jsonText, modelWorkCrs, naming, outOption,
  printNotes, printWarnings, progressLine, readModelFile, readPredictionPath, readSamplesFile, writeOutput,
  type CliIo, type CommandSpec, type OptionValues,
} from '../common.ts';
import { CSV_CAUTION, csvLine, formatNumber, linePieces } from '../csv.ts';
import { withSampleCovariates } from '../covariates.ts';
import { sampleId } from '../../io/sample-table.ts';

async function run(values: OptionValues, io: CliIo): Promise<number> {
  const modelPath = stringOption(values, 'model') as string;
  const modelFile = readModelFile(io, modelPath);
  const intake = readSamplesFile(io, values, modelWorkCrs(values, modelFile, modelPath));
  const { table } = intake;
  // A covariate model: the samples' covariate columns (levels as the model records them).
  const { samples } = withSampleCovariates(intake, intake.samples, modelFile.model.trend);
  if (table.length !== samples.value.length) {
    throw new Error(`The intake returned ${table.length} rows for ${samples.value.length} samples; expected one row per sample.`);
  }
  if (modelFile.workCrs === undefined) {
    printWarnings(io, [`${modelPath} does not say which working CRS its distances are in; ${intake.report.crs.work} is assumed.`]);
  }
  if (samples.value.length < 3) {
    throw new GapwiseError('too-few-samples', `Expected at least 3 samples for cross-validation, got ${samples.value.length}.`, { file: stringOption(values, 'samples') });
  }
  const n = samples.value.length;
  const path = readPredictionPath(values, n, { targets: n, leaveOneOut: true });
  printWarnings(io, path.warnings);
  const files = { samples: intake.report.fileName, model: modelPath };
  const cv = path.path === 'exact'
    ? naming(files, () => leaveOneOut(samples, modelFile.model, {}, progressLine(io, 'leave-one-out stages')))
    : naming(files, () => localLeaveOneOut(samples, modelFile.model, { neighbors: path.neighbors, globalMean: path.globalMean }, progressLine(io, 'samples')));
  printNotes(io, [describePredictionPath(path, n, 'each sample left out and predicted', 'nearest other samples')]);
  printWarnings(io, cv.warnings ?? []);

  const log = cv.scale === 'log';
  const unit = intake.report.unit;
  const out = stringOption(values, 'out');
  if (out !== undefined) {
    // In pieces of whole lines, never one string of every sample.
    await writeOutput(io, out, linePieces(table.length + 1, (k) => {
      if (k === 0) return csvLine(['id', 'x', 'y', 'observed', 'predicted', 'sd_obs', 'error', 'standardised_error']);
      const i = k - 1;
      // The observation on the scale the errors are on (ln for a log model).
      const observed = log ? Math.log(samples.value[i]) : samples.value[i];
      return csvLine([
        sampleId(table, i), formatNumber(table.inputX[i]), formatNumber(table.inputY[i]), formatNumber(observed),
        formatNumber(cv.prediction[i]), formatNumber(cv.sdObserved[i]), formatNumber(cv.error[i]), formatNumber(cv.standardisedError[i]),
      ]);
    }));
    io.stderr(`caution: ${CSV_CAUTION} Written by ${SOFTWARE}.\n`);
  }
  const s = cv.summary;
  io.stdout(jsonText({
    me: s.me, rmse: s.rmse, msse: s.msse, coverage95: s.coverage95, n: s.n,
    scale: cv.scale,
    method: path.path === 'exact' ? 'exact kriging' : 'local neighbourhoods',
    ...(path.path === 'local' ? { neighbors: Math.min(path.neighbors, n), globalMean: path.globalMean } : {}),
    reason: path.reason,
    unit: log ? `ln(${unit || 'value'})` : unit,
    caution: CAUTION,
  }));
  return 0;
}

export const cvCommand: CommandSpec = {
  name: 'cv',
  summary: 'leave-one-out cross-validation of a given model (JSON summary; per-sample CSV)',
  usage: 'gapwise cv --samples FILE --model FILE [--out FILE] [options]',
  description: [
    'Predicts each sample from all the others with the model as given (closed form, Dubrule 1983) and '
      + 'compares. stdout gets a JSON summary: me (mean error, about 0 when unbiased), rmse (root mean squared '
      + 'error, in the unit of the samples), msse (mean squared standardised error, about 1 when the model\'s sd '
      + 'is honest), coverage95 (share of samples inside their 95 % interval, about 0.95) and n. '
      + '--out writes one row per sample: id, x, y (input CRS), observed, predicted, sd_obs, error '
      + '(predicted − observed) and standardised_error (error / sd_obs). For a log model every figure is on the '
      + 'log scale ("scale": "log"; observed is then ln(value)).',
    `Up to ${count(REFERENCE_EXACT_LIMIT)} samples the closed form uses all samples (about n³/2 operations: no more than checking `
      + `local neighbourhoods against it would cost). Above, each sample is left out and predicted from its --neighbors nearest `
      + 'other samples (local neighbourhoods around the GLS mean of all samples, as predict and grid do there; no exact '
      + 'reference is computed for cv); --exact and --local override the choice, which is said on stderr with its reason.',
    'The screening caution is in the JSON summary and, for the CSV, on stderr.',
  ],
  options: [
    { name: 'model', kind: 'string', placeholder: 'FILE', help: 'model JSON, as written by "gapwise fit"', required: true },
    outOption('CSV file for the per-sample table', 'not written'),
    ...PREDICTION_PATH_OPTIONS,
    ...SAMPLE_OPTIONS,
  ],
  examples: ['gapwise cv --samples data-demo/lead-topsoil.csv --model lead-model.json --out lead-cv.csv'],
  run,
};
