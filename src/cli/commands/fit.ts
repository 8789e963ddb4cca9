/**
 * `gapwise fit`: fits a covariance model to the samples and writes the model JSON (with its fit
 * diagnostics, practical range and the working CRS its distances are in).
 *
 * Method: by default the number of samples chooses (core/fitting/vecchia.ts chooseFitMethod): the exact
 * REML likelihood below MAX_EXACT_SAMPLES (core/shared/sizes.ts) samples, the nearest-neighbour (Vecchia)
 * REML likelihood with maxmin ordering from there on. The choice is said on stderr and in the model's "fit.note"; --method
 * reml|ml|wls|nnl overrides it.
 */
import { SOFTWARE } from '../../core/shared/version.ts';
import { GapwiseError } from '../../core/shared/errors.ts';
import { type FitOptions } from '../../core/fitting/fit.ts';
import { chooseFitMethod, DEFAULT_VECCHIA_NEIGHBOURS, vecchiaFit, type VecchiaThreads } from '../../core/fitting/vecchia.ts';
import type { CovarianceModel, Family, Trend } from '../../core/covariance/model.ts';
import type { Samples } from '../../core/shared/samples.ts';
import type { IntakeResult } from '../../io/types.ts';
import { booleanOption, numberOption, stringOption } from '../args.ts';
import { startVecchiaPool, type VecchiaPool } from '../vecchia-pool.ts';
import { COVARIATE_OPTIONS, trendWithCovariates, withSampleCovariates } from '../covariates.ts';
import { attachTrendCoefficients } from '../../core/fitting/covariate-fit.ts';
import { analyteRequest, fitAnalytes } from '../analytes.ts';
import { STRUCTURE_OPTIONS, fitWithStructure, printComparison, readStructureChoice } from '../fit-structure.ts';
import { MAX_EXACT_SAMPLES } from '../../core/shared/sizes.ts';
import { fitWarnings, hasFitWarning } from '../../core/covariance/fit-warnings.ts';
import {
  CAUTION, SAMPLE_OPTIONS, activityLine, count, progressLine, jsonText, naming, outOption, printNotes, printWarnings, readSamplesFile, readWorkers,
  writeOutput, type CliIo, type CommandSpec, type OptionValues,
} from '../common.ts';

type MethodOption = 'auto' | 'reml' | 'ml' | 'wls' | 'nnl';

/** From this many samples a nearest-neighbour fit splits its passes over threads (starting them costs about a second). */
const THREADS_FROM = 10000;

const METHOD_NAMES: Record<'reml' | 'ml' | 'wls', string> = {
  reml: 'the exact REML likelihood',
  ml: 'the exact ML likelihood',
  wls: 'weighted least squares on the empirical variogram',
};

/** --trend constant|linear|known:VALUE. */
export function parseTrend(raw: string): Trend {
  if (raw === 'constant' || raw === 'linear') return raw;
  const m = /^known:(.+)$/.exec(raw);
  if (m) {
    const v = Number(m[1].trim());
    if (m[1].trim() !== '' && Number.isFinite(v)) return { known: v };
  }
  throw new GapwiseError('bad-option', `Option "--trend" expects constant, linear or known:VALUE (e.g. known:40), got "${raw}".`);
}

/** --nu NUMBER|free. */
export function parseNu(raw: string): number | 'free' {
  if (raw === 'free') return 'free';
  const v = Number(raw.trim());
  if (raw.trim() === '' || !Number.isFinite(v) || v <= 0) {
    throw new GapwiseError('bad-option', `Option "--nu" expects a positive number or "free", got "${raw}".`);
  }
  return v;
}

/** The samples with ln(value); every value must be positive (a non-detect rule keeps them so). */
function logSamples(intake: IntakeResult): Samples {
  const { x, y, value } = intake.samples;
  const logValue = new Float64Array(value.length);
  for (let i = 0; i < value.length; i++) {
    if (!(value[i] > 0)) {
      throw new GapwiseError('bad-value',
        `The value ${value[i]} cannot be log-transformed; expected every value above 0 for --transform log (use --transform none).`,
        { file: intake.report.fileName, row: intake.table.line[i], column: intake.report.valueColumn });
    }
    logValue[i] = Math.log(value[i]);
  }
  return { x, y, value: logValue };
}

/**
 * The method a fit uses: --method as given, or for 'auto' the exact REML likelihood below MAX_EXACT_SAMPLES
 * samples and the nearest-neighbour likelihood from there on. Throws GapwiseError('bad-option') for
 * an exact likelihood on more samples than it can take, and for --nnl-neighbours without 'nnl'.
 */
export function resolveFitMethod(given: MethodOption, n: number, vecchiaNeighbours?: number): { method: 'reml' | 'ml' | 'wls' | 'nnl'; automatic: boolean } {
  if (vecchiaNeighbours !== undefined && !(Number.isInteger(vecchiaNeighbours) && vecchiaNeighbours >= 1 && vecchiaNeighbours <= 1000)) {
    throw new GapwiseError('bad-option', `Option "--nnl-neighbours" expects a whole number from 1 to 1,000, got ${vecchiaNeighbours}.`);
  }
  if (given === 'auto') {
    const method = chooseFitMethod(n) === 'nnl' ? 'nnl' : 'reml';
    if (vecchiaNeighbours !== undefined && method !== 'nnl') {
      throw new GapwiseError('bad-option',
        `Option "--nnl-neighbours" applies to the nearest-neighbour likelihood, which is chosen from ${count(MAX_EXACT_SAMPLES)} samples; got ${count(n)} samples (add --method nnl to use it anyway).`);
    }
    return { method, automatic: true };
  }
  if (vecchiaNeighbours !== undefined && given !== 'nnl') {
    throw new GapwiseError('bad-option', `Option "--nnl-neighbours" applies to --method nnl only; got --method ${given}.`);
  }
  if ((given === 'reml' || given === 'ml') && n > MAX_EXACT_SAMPLES) {
    throw new GapwiseError('bad-option',
      `Option "--method ${given}" fits the exact likelihood, which is limited to ${count(MAX_EXACT_SAMPLES)} samples (n³/3 flops and 8·n² bytes per evaluation); got ${count(n)}. `
      + 'Leave --method out (or give --method nnl) for the nearest-neighbour likelihood, or use --method wls.');
  }
  return { method: given, automatic: false };
}

/** The pool's threads, with each likelihood pass counted for the progress line. */
function countingPasses(threads: VecchiaThreads, passes: { step(): void }): VecchiaThreads {
  return {
    buffer: (bytes) => threads.buffer(bytes),
    attach(data) {
      const pass = threads.attach(data);
      return (job) => {
        passes.step();
        return pass(job);
      };
    },
  };
}

async function run(values: OptionValues, io: CliIo): Promise<number> {
  const analytes = analyteRequest(values);
  if (analytes) return fitAnalytes(values, io, analytes, run);
  const family = (stringOption(values, 'family') ?? 'matern') as Family;
  const nuRaw = stringOption(values, 'nu');
  if (nuRaw !== undefined && family !== 'matern') {
    throw new GapwiseError('bad-option', `Option "--nu" applies to the matern family only; got --family ${family}.`);
  }
  const nu = parseNu(nuRaw ?? '1.5');
  const givenTrend = trendWithCovariates(values, parseTrend(stringOption(values, 'trend') ?? 'constant'));
  const transform = (stringOption(values, 'transform') ?? 'none') as 'none' | 'log';
  const vecchiaNeighbours = numberOption(values, 'nnl-neighbours');
  const workers = readWorkers(values, io);
  const intake = readSamplesFile(io, values);
  const n = intake.samples.value.length;
  const { method, automatic } = resolveFitMethod((stringOption(values, 'method') ?? 'auto') as MethodOption, n, vecchiaNeighbours);

  const structureChoice = readStructureChoice(values, method);
  const nugget = !booleanOption(values, 'no-nugget');
  const { samples, trend } = withSampleCovariates(intake, transform === 'log' ? logSamples(intake) : intake.samples, givenTrend, false);
  const files = { samples: intake.report.fileName };
  let model: CovarianceModel;
  if (method === 'nnl') {
    const pool: VecchiaPool | null = workers > 1 && n >= THREADS_FROM ? await startVecchiaPool({ threads: workers }) : null;
    const passes = activityLine(io, 'likelihood passes over the samples');
    try {
      model = naming(files, () => vecchiaFit(samples, {
        family, trend, nugget, method: 'reml', neighbours: vecchiaNeighbours ?? DEFAULT_VECCHIA_NEIGHBOURS,
        ...(family === 'matern' ? { nu } : {}),
      }, pool ? { threads: countingPasses(pool.threads, passes) } : { onPass: () => passes.step() }));
    } finally {
      passes.done();
      await pool?.close();
    }
    model = naming(files, () => attachTrendCoefficients(samples, model));
  } else {
    const options: FitOptions = { family, method, trend, nugget };
    if (family === 'matern') options.nu = nu;
    // REML/ML count likelihood evaluations against the budget still ahead; WLS counts its stages.
    const twoFits = structureChoice.anisotropy || structureChoice.structures === 2;
    const progress = progressLine(io, method === 'wls' ? 'fitting stages' : twoFits ? 'fits (the simpler model, then the richer one)' : 'likelihood evaluations planned');
    model = naming(files, () => fitWithStructure(samples, options, structureChoice, progress));
    if (model.fit) model.fit.note = `fitted with ${METHOD_NAMES[method]} on ${count(n)} samples`;
  }
  model.transform = transform;
  const fit = model.fit;
  if (fit) {
    fit.choice = automatic ? 'automatic' : 'given';
    const why = !automatic ? `; --method ${method}`
      : method === 'nnl' ? `; chosen automatically from ${count(MAX_EXACT_SAMPLES)} samples (--method reml|ml|wls overrides)` : '';
    printNotes(io, [`${String(fit.note ?? `fitted on ${count(n)} samples`)}${why}`]);
  }
  printComparison(io, model);
  printWarnings(io, fitWarnings(fit));
  // The engine's own warnings usually say so already; this line covers a fit that does not.
  if (fit && !fit.converged && !hasFitWarning(fit, 'optimiser-stopped')) {
    printWarnings(io, ['the optimiser stopped before it converged; the model may not be the best fit.']);
  }

  const r = intake.report;
  const out = {
    ...model,
    crs: { work: r.crs.work, input: r.crs.input },
    data: { file: r.fileName, valueColumn: r.valueColumn, unit: r.unit, n },
    caution: CAUTION,
    software: SOFTWARE,
  };
  await writeOutput(io, stringOption(values, 'out'), jsonText(out));
  return 0;
}

export const fitCommand: CommandSpec = {
  name: 'fit',
  summary: 'fit a covariance model to the samples and write it as JSON',
  usage: 'gapwise fit --samples FILE [--family F] [--nu NU] [--method M] [--trend T] [--out FILE] [options]',
  description: [
    'Fits a nugget plus one correlated structure by restricted maximum likelihood (REML), maximum likelihood '
      + 'or weighted least squares on the empirical variogram, and writes the model JSON (--out, else stdout) that '
      + 'predict, cv and the app read. The JSON carries the fit diagnostics (method, log-likelihood, AIC, '
      + 'converged), the practical range (the distance where the correlation falls to 5 %) and "crs": {"work": ...}, '
      + 'the coordinate system its distances (metres) are measured in.',
    `By default the number of samples chooses the method: the exact REML likelihood below ${count(MAX_EXACT_SAMPLES)} samples `
      + '(n³/3 flops per evaluation), and from there on a nearest-neighbour (Vecchia) REML likelihood: each sample, '
      + 'in a maxmin order, is conditioned on its --nnl-neighbours nearest earlier samples (n·m³/3 flops). The choice '
      + 'is said on stderr ("note: fitted with a nearest-neighbour likelihood on 48,211 samples ...") and in the '
      + 'model\'s "fit": "note" and "choice" ("automatic" or "given"). --method overrides it.',
    '--anisotropy also estimates the azimuth of the long axis (degrees clockwise from grid north, 0 to 180) and the '
      + 'ratio short/long range; --structures 2 fits a short and a long structure and keeps them only when the data '
      + 'tell them apart. Both fit the simpler model first and print both side by side (parameters, log-likelihood, '
      + `AIC), also written to "fit": "comparison". They use the exact REML or ML likelihood (up to ${count(MAX_EXACT_SAMPLES)} samples).`,
    '--value a,b,c (column names separated by commas, or \'*\' for every numeric column besides the coordinates) '
      + 'fits each analyte on its own, exactly as a run with --value a would, and writes one model set: '
      + '{"analytes": {"a": MODEL, ...}} for "gapwise grid --value a,b,c".',
  ],
  options: [
    ...SAMPLE_OPTIONS,
    { name: 'family', kind: 'string', placeholder: 'F', choices: ['matern', 'exponential', 'spherical', 'gaussian'], help: 'correlation family of the structure', defaultText: 'matern' },
    { name: 'nu', kind: 'string', placeholder: 'NU', help: 'Matérn smoothness: a number > 0, or "free" to fit it', defaultText: '1.5' },
    {
      name: 'method', kind: 'string', placeholder: 'M', choices: ['auto', 'reml', 'ml', 'wls', 'nnl'],
      help: `fitting method: reml or ml (exact likelihood, up to ${count(MAX_EXACT_SAMPLES)} samples), wls (variogram), nnl (nearest-neighbour REML likelihood, any number of samples), auto (reml below ${count(MAX_EXACT_SAMPLES)} samples, nnl from there on)`,
      defaultText: 'auto',
    },
    { name: 'nnl-neighbours', kind: 'number', placeholder: 'M', help: 'nearest-neighbour likelihood: earlier neighbours each sample is conditioned on (1 to 1,000)', unit: 'samples', defaultText: String(DEFAULT_VECCHIA_NEIGHBOURS) },
    { name: 'workers', kind: 'number', placeholder: 'N', help: `nearest-neighbour likelihood from ${count(THREADS_FROM)} samples: threads that share each pass over the samples (1 to 256)`, unit: 'threads', defaultText: 'one per core of this machine' },
    { name: 'trend', kind: 'string', placeholder: 'T', help: 'mean: constant (unknown constant), linear (unknown 1, x, y drift) or known:VALUE (a known mean in the samples\' unit; with --transform log, VALUE is on the log scale)', defaultText: 'constant' },
    ...COVARIATE_OPTIONS,
    { name: 'transform', kind: 'string', placeholder: 'T', choices: ['none', 'log'], help: 'fit ln(value) for positive, right-skewed data; results come back on the data scale', defaultText: 'none' },
    { name: 'no-nugget', kind: 'boolean', help: 'fit without a nugget (exact interpolation of the samples)' },
    ...STRUCTURE_OPTIONS,
    outOption('model JSON file to write', 'stdout'),
  ],
  examples: [
    'gapwise fit --samples data-demo/lead-topsoil.csv --transform log --out lead-model.json',
    'gapwise fit --samples wells.csv --value nitrate --family exponential --method ml --trend linear',
    'gapwise fit --samples survey-48k.csv --method nnl --nnl-neighbours 40 --out survey-model.json',
    'gapwise fit --samples data-demo/lead-topsoil.csv --transform log --covariates sqrt_dist_mill --out lead-covariate-model.json',
    'gapwise fit --samples data-demo/lead-topsoil.csv --transform log --anisotropy --out lead-anisotropic.json',
    'gapwise fit --samples data-demo/lead-topsoil.csv --transform log --structures 2 --out lead-nested.json',
  ],
  run,
};
