/**
 * `gapwise cv`: leave-one-out cross-validation with a given model. The JSON summary (me, rmse,
 * msse, coverage95, n) goes to stdout; the per-sample table to --out as CSV.
 *
 * Up to MAX_EXACT_SAMPLES samples (or with --exact) the closed form of core/validation/cross-validation.ts: one
 * factorisation of all samples, n³/3 flops. Above (or with --local; core/prediction/path-choice.ts chooseLeaveOneOutPath) each sample is
 * left out and predicted from its M nearest other samples (core/validation/local-cross-validation.ts): the same
 * kriging as the local path of predict and grid, m³/3 flops per sample. With M ≥ n − 1 it is the
 * closed form's answer.
 */
import { SOFTWARE } from '../../core/shared/version.ts';
import { GapwiseError, type Warning } from '../../core/shared/errors.ts';
import { leaveOneOut, type LeaveOneOutResult } from '../../core/validation/cross-validation.ts';
import { localLeaveOneOut } from '../../core/validation/local-cross-validation.ts';
import { createPredictor } from '../../core/prediction/kriging.ts';
import { globalMeanCoefficients } from '../../core/prediction/local-kriging.ts';
import type { CovarianceModel } from '../../core/covariance/model.ts';
import { NeighbourIndex } from '../../core/geometry/neighbours.ts';
import type { Samples } from '../../core/shared/samples.ts';
import { coordinateFrame, designRow, trendColumnCount } from '../../core/covariance/trend.ts';
import { CHECK_COUNT, EXACT_SAMPLE_LIMIT, LARGE_CHECK_COUNT, REFERENCE_NEIGHBOURS } from '../../core/prediction/path-choice.ts';
import { describeAccuracy } from '../../core/prediction/local-accuracy.ts';
import { measureLocalLeaveOneOut } from '../../core/validation/local-cross-validation.ts';
import { stringOption } from '../args.ts';
import {
  CAUTION, PREDICTION_PATH_OPTIONS, SAMPLE_OPTIONS, count, describePredictionPath, jsonText, naming, outOption,
  printNotes, printWarnings, progressLine, readModelAndSamples, readPredictionPath, writeOutput,
  type CliIo, type CommandSpec, type OptionValues,
} from '../common.ts';
import { CSV_CAUTION, csvLine, formatFullPrecision, linePieces } from '../csv.ts';
import { withSampleCovariates } from '../covariates.ts';
import { sampleId } from '../../io/sample-table.ts';
import { analyteRequest } from '../analytes.ts';
import { cvAnalytes, modelFromSet } from '../analyte-runs.ts';
import { MAX_EXACT_SAMPLES } from '../../core/shared/sizes.ts';

async function run(values: OptionValues, ioGiven: CliIo): Promise<number> {
  const analytes = analyteRequest(values);
  if (analytes) return cvAnalytes(values, ioGiven, analytes, run);
  const io = modelFromSet(values, ioGiven);
  const { modelPath, modelFile, intake } = readModelAndSamples(io, values);
  const { table } = intake;
  // A covariate model: the samples' covariate columns (levels as the model records them).
  const { samples } = withSampleCovariates(intake, intake.samples, modelFile.model.trend);
  if (table.length !== samples.value.length) {
    throw new Error(`The intake returned ${table.length} rows for ${samples.value.length} samples; expected one row per sample.`);
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
    : naming(files, () => localLeaveOneOut(samples, modelFile.model, { neighbours: path.neighbours, globalMean: path.globalMean }, progressLine(io, 'samples')));
  const notes = [describePredictionPath(path, n, 'each sample left out and predicted', 'nearest other samples')];
  // A local leave-one-out is measured against the reference at a seeded subset of the samples.
  const accuracy = path.path === 'local'
    ? naming(files, () => measureLocalLeaveOneOut(samples, modelFile.model, cv, { neighbours: Math.min(path.neighbours, n - 1), globalMean: path.globalMean }, { tolerance: path.tolerance }))
    : null;
  if (accuracy) notes.push(`measured error of the local leave-one-out ${describeAccuracy(accuracy, 'samples')}`);
  printNotes(io, notes);
  printWarnings(io, [
    ...(cv.warnings ?? []),
    ...(accuracy && !accuracy.within ? [`The local leave-one-out missed the tolerance (${describeAccuracy(accuracy, 'samples')}); --neighbours with more samples, or --exact up to ${count(EXACT_SAMPLE_LIMIT)} samples, comes closer.`] : []),
  ]);

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
        sampleId(table, i), formatFullPrecision(table.inputX[i]), formatFullPrecision(table.inputY[i]), formatFullPrecision(observed),
        formatFullPrecision(cv.prediction[i]), formatFullPrecision(cv.sdObserved[i]), formatFullPrecision(cv.error[i]), formatFullPrecision(cv.standardisedError[i]),
      ]);
    }));
    io.stderr(`caution: ${CSV_CAUTION} Written by ${SOFTWARE}.\n`);
  }
  const s = cv.summary;
  io.stdout(jsonText({
    me: s.me, rmse: s.rmse, msse: s.msse, coverage95: s.coverage95, n: s.n,
    scale: cv.scale,
    method: path.path === 'exact' ? 'exact kriging' : 'local neighbourhoods',
    ...(path.path === 'local' ? { neighbours: Math.min(path.neighbours, n), globalMean: path.globalMean } : {}),
    ...(accuracy ? { localError: accuracy } : {}),
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
    `Up to ${count(MAX_EXACT_SAMPLES)} samples the closed form uses all samples (about n³/2 operations: no more than checking `
      + `local neighbourhoods against it would cost). Above, each sample is left out and predicted from its --neighbours nearest `
      + 'other samples (local neighbourhoods around the GLS mean of all samples, as predict and grid do there); --exact and '
      + '--local override the choice, which is said on stderr with its reason.',
    `A local leave-one-out is measured: at ${count(CHECK_COUNT)} seeded samples (${count(LARGE_CHECK_COUNT)} above ${count(MAX_EXACT_SAMPLES)} samples) `
      + `its prediction and sd_obs are compared with the closed form from all other samples (above ${count(MAX_EXACT_SAMPLES)} samples: `
      + `kriging from the ${count(REFERENCE_NEIGHBOURS)} nearest other samples), and the largest and RMS differences, in % of the prior sd, `
      + 'are said on stderr and given in the JSON summary ("localError"); a miss of --tolerance is a warning.',
    'Several analytes: with --value a,b,c (or \'*\') and a model set from "gapwise fit --value a,b,c" as --model, '
      + 'each analyte is cross-validated with its own model, exactly as a run with --value a would: a table of each '
      + 'analyte\'s figures on stderr, the JSON {"analytes": {"a": SUMMARY, ...}} on stdout, and --out one CSV of every '
      + 'analyte\'s rows with a first column analyte. With one --value, a model set gives that analyte\'s model.',
    'The screening caution is in the JSON summary and, for the CSV, on stderr.',
  ],
  options: [
    { name: 'model', kind: 'string', placeholder: 'FILE', help: 'model JSON, as written by "gapwise fit" (a model set from "gapwise fit --value a,b" with --value naming its analytes)', required: true },
    outOption('CSV file for the per-sample table', 'not written'),
    ...PREDICTION_PATH_OPTIONS,
    ...SAMPLE_OPTIONS,
  ],
  examples: [
    'gapwise cv --samples data-demo/lead-topsoil.csv --model lead-model.json --out lead-cv.csv',
    'gapwise cv --samples survey.csv --model set.json --value zinc,lead --out survey-cv.csv',
  ],
  run,
};
