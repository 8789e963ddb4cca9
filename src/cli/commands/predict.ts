/**
 * `gapwise predict`: kriging at the points of a targets CSV with a given model (never refits).
 * The target rows are written back in their order and with their cells verbatim, with mean, sd,
 * sd_obs (and p_exceed with --threshold) appended. Exact kriging from all samples or local
 * neighbourhoods, whichever core/prediction/path-choice.ts finds cheaper (or as --exact / --local say); a local
 * run is checked against exact kriging at a seeded subset of the targets (core/prediction/local-accuracy.ts),
 * grown or replaced when it misses --tolerance. The choice and the measured error are notes on stderr.
 */
import { SOFTWARE } from '../../core/shared/version.ts';
import { GapwiseError, type Warning } from '../../core/shared/errors.ts';
import { createPredictor, type Prediction } from '../../core/prediction/kriging.ts';
import { describeAccuracy, predictLocalChecked, type CheckedLocalPrediction } from '../../core/prediction/local-accuracy.ts';
import { THREADED_TARGETS, threadedTargetRunner } from '../local-check.ts';
import { namingAsync } from '../simulation-options.ts';
import { denseTargetSpacing } from '../../core/prediction/target-spacing.ts';
import { exceedanceProbability } from '../../core/shared/normal.ts';
import { createTransform } from '../../io/crs.ts';
import { chooseMark, isMissing, parseColumnNumber } from '../../io/numbers.ts';
import { numberOption, stringOption } from '../args.ts';
import { knownMean } from '../../core/covariance/trend.ts';
import {
  AUTOMATIC_PATH_TEXT, CAUTION, PREDICTION_PATH_OPTIONS, SAMPLE_OPTIONS, describePredictionPath,
  findUsualColumn, naming, outOption, printNotes, printWarnings, readModelAndSamples, readPredictionPath, readText, readWorkers, writeOutput,
  type CliIo, type CommandSpec, type OptionValues,
} from '../common.ts';
import { USUAL_COORDINATE_NAMES } from '../../io/intake-columns.ts';
import { CSV_CAUTION, csvCell, formatFullPrecision, linePieces, readCsvTable, recordText, type CsvTable } from '../csv.ts';
import { tableCovariates, withSampleCovariates } from '../covariates.ts';
import { analyteRequest, singleThreshold } from '../analytes.ts';
import { modelFromSet, predictAnalytes } from '../analyte-runs.ts';

/** Index of the coordinate column: the given name, else the samples' name, else a usual name. */
function findColumn(
  table: CsvTable, file: string, given: string | undefined, fallback: string | undefined, axis: 'x' | 'y',
): number {
  const names = table.header.cells.map((c) => c.trim());
  if (given !== undefined) {
    const i = names.indexOf(given);
    if (i === -1) {
      throw new GapwiseError('missing-column', `There is no column "${given}"; expected one of ${names.map((n) => `"${n}"`).join(', ')}.`,
        { file, row: table.header.line, column: given });
    }
    return i;
  }
  const i = findUsualColumn(names, fallback, axis);
  if (i !== -1) return i;
  throw new GapwiseError('missing-column',
    `No ${axis} coordinate column was found among ${names.map((n) => `"${n}"`).join(', ')}; expected a usual name (${USUAL_COORDINATE_NAMES[axis]}) or --targets-${axis} COL.`,
    { file, row: table.header.line });
}

/** Reads the coordinate cells of one column as numbers; a bad cell names its line and column. */
function readCoordinates(table: CsvTable, file: string, col: number): Float64Array {
  const name = table.header.cells[col].trim();
  const cells = table.records.map((r) => r.cells[col] ?? '');
  const marks = chooseMark(cells, table.delimiter);
  const out = new Float64Array(cells.length);
  table.records.forEach((r, i) => {
    const raw = r.cells[col];
    if (raw === undefined || isMissing(raw)) {
      throw new GapwiseError('bad-value', `The ${name} coordinate is missing; expected a number.`, { file, row: r.line, column: name, raw: raw ?? '' });
    }
    const v = parseColumnNumber(raw, marks);
    if (!v.ok) throw new GapwiseError('bad-value', `"${raw}" ${v.reason}; expected a number.`, { file, row: r.line, column: name, raw });
    out[i] = v.value;
  });
  return out;
}

async function run(valuesGiven: OptionValues, ioGiven: CliIo): Promise<number> {
  const analytes = analyteRequest(valuesGiven);
  if (analytes) return predictAnalytes(valuesGiven, ioGiven, analytes, run);
  const values = singleThreshold(valuesGiven);
  const io = modelFromSet(values, ioGiven);
  const targetsPath = stringOption(values, 'targets') as string;
  const threshold = numberOption(values, 'threshold');
  const { modelPath, model, intake, workCrs } = readModelAndSamples(io, values);

  const table = readCsvTable(readText(io, targetsPath), targetsPath);
  if (table.records.length === 0) {
    throw new GapwiseError('bad-file', 'The targets file has a header but no rows; expected at least one target.', { file: targetsPath });
  }
  const xi = findColumn(table, targetsPath, stringOption(values, 'targets-x'), intake.report.xColumn, 'x');
  const yi = findColumn(table, targetsPath, stringOption(values, 'targets-y'), intake.report.yColumn, 'y');
  const tx = readCoordinates(table, targetsPath, xi);
  const ty = readCoordinates(table, targetsPath, yi);
  const targetsCrs = stringOption(values, 'targets-crs') ?? stringOption(values, 'crs') ?? intake.report.crs.input;
  const work = createTransform(targetsCrs, workCrs).forwardMany(tx, ty);
  for (let i = 0; i < tx.length; i++) {
    if (!Number.isFinite(work.x[i]) || !Number.isFinite(work.y[i])) {
      const r = table.records[i];
      throw new GapwiseError('bad-value',
        `The point (${r.cells[xi]}, ${r.cells[yi]}) cannot be transformed from ${targetsCrs} to ${workCrs}; expected coordinates valid in ${targetsCrs}.`,
        { file: targetsPath, row: r.line, column: table.header.cells[xi].trim() });
    }
  }

  const files = { samples: intake.report.fileName, model: modelPath };
  const n = intake.samples.value.length;
  // A covariate model: the samples' covariate columns, and the same columns at every target.
  const { samples } = naming(files, () => withSampleCovariates(intake, intake.samples, model.trend));
  const covariates = tableCovariates(table, targetsPath, model.trend);
  const path = readPredictionPath(values, n, { targets: tx.length });
  printWarnings(io, path.warnings);
  const warnings: Warning[] = [];
  let p: Prediction;
  const notes: string[] = [];
  if (path.path === 'exact') {
    const predictor = naming(files, () => createPredictor(samples, model));
    warnings.push(...predictor.warnings);
    p = naming(files, () => predictor.predict(work.x, work.y, { covariates }));
    notes.push(`${describePredictionPath(path, n)}; ${tx.length.toLocaleString('en-US')} targets`);
  } else {
    // Targets denser than the samples share tile neighbourhoods, as grid cells do.
    const spacing = denseTargetSpacing(work.x, work.y, samples.x, samples.y);
    const threads = tx.length >= THREADED_TARGETS ? Math.min(readWorkers(values, io), Math.ceil(tx.length / THREADED_TARGETS)) : 1;
    const runner = threads > 1 ? threadedTargetRunner(samples, model, threads) : null;
    let checked: CheckedLocalPrediction;
    try {
      checked = await namingAsync(files, () => predictLocalChecked(samples, model, work.x, work.y, {
        ...(covariates ? { covariates } : {}),
        local: { neighbours: path.neighbours, globalMean: path.globalMean, ...(spacing !== undefined ? { targetSpacing: spacing } : {}) },
        tolerance: path.tolerance, grow: !path.neighboursGiven, exactFallback: path.automatic,
        threads, ...(runner ? { runTargets: runner.run } : {}),
      }));
    } finally {
      await runner?.dispose();
    }
    warnings.push(...checked.warnings);
    p = checked.prediction;
    const used = { ...path, neighbours: checked.settings.neighbours, globalMean: checked.settings.globalMean };
    notes.push(`${describePredictionPath(used, n, undefined, undefined, knownMean(model.trend ?? 'constant') !== null)}; ${tx.length.toLocaleString('en-US')} targets${spacing !== undefined ? ' (dense: in shared tile neighbourhoods)' : ''}`);
    notes.push(...checked.notes);
    notes.push(`measured error of the local neighbourhoods ${describeAccuracy(checked.accuracy)}`);
  }
  printNotes(io, notes);
  printWarnings(io, warnings);

  const d = table.delimiter;
  const added = ['mean', 'sd', 'sd_obs'];
  if (threshold !== undefined) added.push('p_exceed');
  const log = model.transform === 'log';
  const line = (k: number): string => {
    if (k === 0) return recordText(table.header, d) + d + added.map((a) => csvCell(a, d)).join(d);
    const i = k - 1;
    const cells = [formatFullPrecision(p.mean[i]), formatFullPrecision(p.sd[i]), formatFullPrecision(p.sdObserved[i])];
    if (threshold !== undefined) {
      // The noise-free surface; for a log model on the log scale, where the kriging error is normal.
      const prob = log
        ? threshold <= 0 ? 1 : exceedanceProbability(p.logMean![i], p.logSd![i], Math.log(threshold))
        : exceedanceProbability(p.mean[i], p.sd[i], threshold);
      cells.push(formatFullPrecision(prob));
    }
    return recordText(table.records[i], d) + d + cells.join(d);
  };
  // In pieces of whole lines, never one string of every target.
  await writeOutput(io, stringOption(values, 'out'), linePieces(table.records.length + 1, line, table.newline));
  io.stderr(`caution: ${CSV_CAUTION} Written by ${SOFTWARE}.\n`);
  return 0;
}

export const predictCommand: CommandSpec = {
  name: 'predict',
  summary: 'predict at the points of a CSV with a given model (mean, sd, sd_obs, p_exceed)',
  usage: 'gapwise predict --samples FILE --model FILE --targets FILE [options]',
  description: [
    'Kriging with the model as given (it is never refitted). The targets file is written back row by row, in '
      + 'its order and with its cells unchanged, with the columns mean (the most likely value), sd (the uncertainty '
      + 'of the noise-free surface), sd_obs (the spread of a new measurement there: sd and the nugget together) and, '
      + 'with --threshold, p_exceed = P(value > T) for the noise-free surface. For a log model mean is the '
      + 'bias-corrected data-scale mean and p_exceed is computed on the log scale. All values are in the unit of the '
      + 'samples.',
    'Each target is predicted by exact kriging from all samples or from its --neighbours nearest samples (local '
      + 'neighbourhoods, found with a kd-tree, around the GLS mean of all samples; targets denser than the samples '
      + `share tile neighbourhoods), ${AUTOMATIC_PATH_TEXT}. --exact and --local override the `
      + 'choice, which is said on stderr with its reason and, for local neighbourhoods, the measured error '
      + '("note: measured error of the local neighbourhoods against exact kriging at 200 of 40,000 targets ...").',
    'Several analytes: with --value a,b,c (or \'*\') and a model set from "gapwise fit --value a,b,c" as --model, '
      + 'each analyte is predicted with its own model, exactly as a run with --value a would: the targets file is written '
      + 'once with the columns a_mean, a_sd, a_sd_obs (a_p_exceed), b_mean, ...; --threshold takes one number for all '
      + 'or NAME=T pairs. With one --value, a model set gives that analyte\'s model.',
    'The screening caution is printed on stderr (CSV has no place for it).',
  ],
  options: [
    { name: 'model', kind: 'string', placeholder: 'FILE', help: 'model JSON, as written by "gapwise fit" (a model set from "gapwise fit --value a,b" with --value naming its analytes)', required: true },
    { name: 'targets', kind: 'string', placeholder: 'FILE', help: 'CSV of target points with a header and coordinate columns', required: true },
    { name: 'targets-x', kind: 'string', placeholder: 'COL', help: 'x column of the targets', defaultText: 'the samples\' x column name, else a usual name' },
    { name: 'targets-y', kind: 'string', placeholder: 'COL', help: 'y column of the targets', defaultText: 'the samples\' y column name, else a usual name' },
    { name: 'targets-crs', kind: 'string', placeholder: 'CRS', help: 'CRS of the target coordinates', defaultText: '--crs, else the samples\' CRS' },
    { name: 'threshold', kind: 'string', placeholder: 'T', help: 'action level: adds p_exceed = P(value > T); with several analytes (--value a,b) one number for all or NAME=T pairs, e.g. zinc=720,lead=530', unit: 'the samples\' unit', defaultText: 'none' },
    outOption('CSV file to write', 'stdout'),
    { name: 'workers', kind: 'number', placeholder: 'N', help: `local neighbourhoods from ${THREADED_TARGETS.toLocaleString('en-US')} targets: worker threads that share out the targets (1 to 256)`, unit: 'threads', defaultText: 'one per core of this machine' },
    ...PREDICTION_PATH_OPTIONS,
    ...SAMPLE_OPTIONS,
  ],
  examples: [
    'gapwise predict --samples data-demo/lead-topsoil.csv --model lead-model.json --targets plots.csv --threshold 200 --out plots-predicted.csv',
    'gapwise predict --samples survey.csv --model set.json --value zinc,lead --targets plots.csv --threshold zinc=720,lead=530 --out plots-predicted.csv',
  ],
  run,
};
