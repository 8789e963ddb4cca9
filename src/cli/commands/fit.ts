/**
 * `gapwise fit`: fits a covariance model to the samples and writes the model JSON (with its fit
 * diagnostics, practical range and the working CRS its distances are in).
 */
import { GapwiseError } from '../../core/errors.ts';
import { fitModel, type FitOptions } from '../../core/fit.ts';
import type { Family, Trend } from '../../core/model.ts';
import type { Samples } from '../../core/samples.ts';
import type { IntakeResult } from '../../io/types.ts';
import { booleanOption, stringOption } from '../args.ts';
import {
  CAUTION, SAMPLE_OPTIONS, jsonText, naming, outOption, printWarnings, readSamplesFile, writeOutput,
  type CliIo, type CommandSpec, type OptionValues,
} from '../common.ts';

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
      const row = intake.rows[i];
      throw new GapwiseError('bad-value',
        `The value ${value[i]} cannot be log-transformed; expected every value above 0 for --transform log (use --transform none).`,
        { file: intake.report.fileName, row: row?.lines[0], column: intake.report.valueColumn });
    }
    logValue[i] = Math.log(value[i]);
  }
  return { x, y, value: logValue };
}

async function run(values: OptionValues, io: CliIo): Promise<number> {
  const family = (stringOption(values, 'family') ?? 'matern') as Family;
  const nuRaw = stringOption(values, 'nu');
  if (nuRaw !== undefined && family !== 'matern') {
    throw new GapwiseError('bad-option', `Option "--nu" applies to the matern family only; got --family ${family}.`);
  }
  const nu = parseNu(nuRaw ?? '1.5');
  const method = (stringOption(values, 'method') ?? 'reml') as FitOptions['method'];
  const trend = parseTrend(stringOption(values, 'trend') ?? 'constant');
  const transform = (stringOption(values, 'transform') ?? 'none') as 'none' | 'log';
  const intake = readSamplesFile(io, values);

  const options: FitOptions = { family, method, trend, nugget: !booleanOption(values, 'no-nugget') };
  if (family === 'matern') options.nu = nu;
  const model = naming({ samples: intake.report.fileName }, () => fitModel(transform === 'log' ? logSamples(intake) : intake.samples, options));
  model.transform = transform;
  printWarnings(io, model.fit?.warnings ?? []);
  if (model.fit && !model.fit.converged) printWarnings(io, ['the optimiser stopped before it converged; the model may not be the best fit.']);

  const r = intake.report;
  const out = {
    ...model,
    crs: { work: r.crs.work, input: r.crs.input },
    data: { file: r.fileName, valueColumn: r.valueColumn, unit: r.unit, n: intake.samples.value.length },
    caution: CAUTION,
  };
  writeOutput(io, stringOption(values, 'out'), jsonText(out));
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
  ],
  options: [
    ...SAMPLE_OPTIONS,
    { name: 'family', kind: 'string', placeholder: 'F', choices: ['matern', 'exponential', 'spherical', 'gaussian'], help: 'correlation family of the structure', defaultText: 'matern' },
    { name: 'nu', kind: 'string', placeholder: 'NU', help: 'Matérn smoothness: a number > 0, or "free" to fit it', defaultText: '1.5' },
    { name: 'method', kind: 'string', placeholder: 'M', choices: ['reml', 'ml', 'wls'], help: 'fitting method', defaultText: 'reml' },
    { name: 'trend', kind: 'string', placeholder: 'T', help: 'mean: constant (unknown constant), linear (unknown 1, x, y drift) or known:VALUE (a known mean in the samples\' unit; with --transform log, VALUE is on the log scale)', defaultText: 'constant' },
    { name: 'transform', kind: 'string', placeholder: 'T', choices: ['none', 'log'], help: 'fit ln(value) for positive, right-skewed data; results come back on the data scale', defaultText: 'none' },
    { name: 'no-nugget', kind: 'boolean', help: 'fit without a nugget (exact interpolation of the samples)' },
    outOption('model JSON file to write', 'stdout'),
  ],
  examples: [
    'gapwise fit --samples data-demo/lead-topsoil.csv --transform log --out lead-model.json',
    'gapwise fit --samples wells.csv --value nitrate --family exponential --method ml --trend linear',
  ],
  run,
};
