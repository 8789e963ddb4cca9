/**
 * `gapwise report`: one self-contained HTML report from a project file — the samples read from
 * the text the project holds, the variogram, the model and its comparison, cross-validation, the
 * maps on the project's grid and the suggestions — with the software version and date.
 * The area (and volume) above the action level with its 90 % interval comes from the project's
 * saved realisations, or with --realisations N from realisations drawn here over --workers threads
 * as `gapwise simulate` draws them (../simulation-pool.ts; options read by ../simulation-options.ts)
 * before the report is prepared; the figure and the thread count are also printed on stderr.
 * A model with covariates takes its covariates on the grid from rasters: --covariate-raster NAME=FILE.tif,
 * else the raster files the project names, looked for beside the project file.
 */
import { dirname, join } from 'node:path';
import { GAPWISE_VERSION } from '../../core/shared/version.ts';
import { booleanOption, numberOption, stringOption } from '../args.ts';
import { GapwiseError } from '../../core/shared/errors.ts';
import { areaFigureText, formatQuantity, noAreaText, reportHtml } from '../../io/report.ts';
import { prepareReport, reportSimulationJob } from '../../worker/report-data.ts';
import type { Project, SimulationSettings } from '../../io/project.ts';
import {
  CAUTION, naming, outOption, printNotes, printWarnings, progressLine, readWorkers, writeOutput, type CliIo, type CommandSpec, type OptionValues,
} from '../common.ts';
import { readProjectFile } from '../project-options.ts';
import { GRID_SIMULATION_OPTIONS, SIMULATION_WORKERS, describeSimulationPath, namingAsync, readSimulationChoice, threadsText } from '../simulation-options.ts';
import { simulateParallel, simulationThreads } from '../simulation-pool.ts';
import { checkSimulationDemand } from '../resource-limits.ts';
import type { ConditionalSimulationResult } from '../../core/simulation/conditional-simulation.ts';
import { analyteRequest, singleThreshold } from '../analytes.ts';
import { reportAnalytes } from '../analyte-runs.ts';
import { COVARIATE_RASTER_OPTION, checkCovariateRasters, readCovariateRasters } from '../covariates.ts';
import type { CovariateRaster } from '../../io/covariate-raster.ts';
import { isCovariateTrend } from '../../core/covariance/model.ts';

/** Options that only shape realisations, refused without --realisations. */
const SIMULATION_ONLY = ['support', 'block-points', 'seed', 'depth', 'workers'];

/**
 * The realisations to draw for the report, or null when --realisations is not given. Settings the
 * command line leaves out come from the project's saved realisations (seed, support, block points,
 * depth), then from the defaults of `gapwise simulate`. Throws GapwiseError('bad-option').
 */
function reportSimulationSettings(values: OptionValues, project: Project): SimulationSettings | null {
  if (values.realisations === undefined) {
    const stray = SIMULATION_ONLY.find((name) => values[name] !== undefined);
    if (stray) throw new GapwiseError('bad-option', `Option "--${stray}" applies to the realisations; expected "--realisations N" with it.`);
    return null;
  }
  if (!project.model) throw new GapwiseError('bad-option', 'Option "--realisations" needs a model, and the project has none; choose one in the app or with "gapwise fit" first.');
  const stored = project.simulation;
  const filled: OptionValues = { ...values };
  if (project.threshold !== null) filled.threshold = project.threshold;
  if (stored) {
    if (filled.seed === undefined) filled.seed = stored.seed;
    if (filled.support === undefined) filled.support = stored.support;
    if (filled['block-points'] === undefined && filled.support === 'block' && stored.support === 'block') filled['block-points'] = stored.blockPoints;
    if (filled.depth === undefined && stored.depth !== null) filled.depth = stored.depth;
  }
  if (project.threshold === null) {
    throw new GapwiseError('bad-option', 'The area above the action level needs an action level, and the project has none; expected "--threshold T" with "--realisations".');
  }
  const choice = readSimulationChoice(filled, project.model, 'realisations');
  return { count: choice.realisations!, seed: choice.seed, support: choice.support, blockPoints: choice.blockPoints, depth: choice.depth ?? null };
}

/**
 * The covariate rasters of a covariate model's maps: each --covariate-raster NAME=FILE.tif, and for a
 * covariate not given there the raster file the project names (saved by the app with its file name
 * only), looked for beside the project file. None for other models (and --covariate-raster is then
 * refused). Throws GapwiseError 'bad-option' naming the covariate when the project's file cannot be read.
 */
async function reportRasters(values: OptionValues, cwd: string, projectFile: string, project: Project): Promise<CovariateRaster[]> {
  const given = await readCovariateRasters(values, cwd);
  const trend = project.model?.trend;
  if (!trend || !isCovariateTrend(trend)) {
    checkCovariateRasters(trend ?? 'constant', given);
    return given;
  }
  const out = [...given];
  for (const name of trend.covariates) {
    const named = project.covariateRasters?.find((r) => r.covariate === name);
    if (out.some((r) => r.name === name) || !named) continue;
    const file = join(dirname(projectFile), named.fileName);
    try {
      out.push(...await readCovariateRasters({ 'covariate-raster': `${name}=${file}` }, cwd));
    } catch (e) {
      if (!(e instanceof GapwiseError) || e.code !== 'bad-file') throw e;
      throw new GapwiseError('bad-option', `The project names the raster "${named.fileName}" for the covariate "${name}", and ${file} cannot be used (${e.message}); expected that file beside the project, or "--covariate-raster ${name}=FILE.tif".`, { file });
    }
  }
  return out;
}

/** The name and version written into the report (src/core/shared/version.ts, equal to package.json's). */
function softwareVersion(): { name: string; version: string } {
  return { name: 'Gapwise', version: GAPWISE_VERSION };
}

async function run(valuesGiven: OptionValues, io: CliIo): Promise<number> {
  // Several analytes (--value a,b with a model set), or one analyte other than the project's.
  const raw = stringOption(valuesGiven, 'value');
  const analytes = analyteRequest(valuesGiven) ?? (raw !== undefined || valuesGiven.model !== undefined ? [raw ?? ''] : null);
  if (analytes) {
    if (analytes[0] === '') throw new GapwiseError('bad-option', 'Option "--model" on report takes a model set and needs "--value NAME" (or a,b) naming the analytes to report.');
    return reportAnalytes(valuesGiven, io, analytes, softwareVersion());
  }
  const values = singleThreshold(valuesGiven);
  const file = stringOption(values, 'project') as string;
  const { project } = readProjectFile(io, file);
  const title = stringOption(values, 'title');
  if (title !== undefined) project.title = title;
  const cell = numberOption(values, 'cell');
  if (cell !== undefined && !(cell > 0)) throw new GapwiseError('bad-option', `Option "--cell" expects a cell size above 0 m, got ${cell}.`);
  const threshold = numberOption(values, 'threshold');
  if (threshold !== undefined) project.threshold = threshold;
  const simulate = reportSimulationSettings(values, project);
  const workers = readWorkers(values, io);
  const rasters = await reportRasters(values, io.cwd, file, project);
  const files = { samples: `${file}:${project.samples.fileName}` };
  const t0 = performance.now();
  // The realisations are drawn first, over threads; prepareReport then takes them as they are.
  let drawn: ConditionalSimulationResult | undefined;
  let threads = 1;
  if (simulate) {
    const job = naming(files, () => reportSimulationJob(project, { simulate, rasters, ...(cell !== undefined ? { cellSize: cell } : {}) }));
    if (job) {
      threads = simulationThreads(job.options.count, workers);
      const blockPoints = job.options.support === 'block' ? simulate.blockPoints : 1;
      checkSimulationDemand({ grid: job.grid, realisations: job.options.count, blockPoints, threads, keep: false }, 'realisations');
      const sim = await namingAsync(files, () => simulateParallel(job.samples, job.model, job.grid, job.options, { workers: threads, onProgress: progressLine(io, 'realisations'), choose: {} }));
      // Exact or local conditioning, chosen by cost and measured as `simulate` chooses it.
      if (sim.path) printNotes(io, describeSimulationPath(sim.path, job.samples.x.length));
      drawn = sim;
    }
  }
  const drawSeconds = (performance.now() - t0) / 1000;
  const input = naming(files, () => prepareReport(project, {
    software: softwareVersion(),
    compare: !booleanOption(values, 'no-compare'),
    onCompareProgress: progressLine(io, 'candidate models'),
    ...(cell !== undefined ? { cellSize: cell } : {}),
    ...(simulate ? { simulate, ...(drawn ? { drawn } : {}) } : {}),
    ...(rasters.length > 0 ? { rasters } : {}),
  }));
  printWarnings(io, input.warnings ?? []);
  await writeOutput(io, stringOption(values, 'out'), reportHtml(input));
  const sim = input.simulation;
  if (sim?.summary) {
    const unit = project.samples.unit || input.intake.report.unit;
    const v = sim.summary.volume;
    io.stderr(`area: ${areaFigureText(sim, unit)} (seed ${sim.seed}, ${sim.support} support)`
      + `${v ? `; volume to ${v.depth} m: ${formatQuantity(v.median)} m³, 90 % interval ${formatQuantity(v.p05)} – ${formatQuantity(v.p95)} m³` : ''}`
      + `${simulate ? `; drawn in ${drawSeconds.toFixed(1)} s on ${threadsText(threads)}` : '; as saved in the project'}\n`);
  } else {
    io.stderr(`area: ${noAreaText(project.threshold !== null)}\n`);
  }
  io.stderr(`caution: ${CAUTION}\n`);
  return 0;
}

export const reportCommand: CommandSpec = {
  name: 'report',
  summary: 'a self-contained HTML report (print to PDF from the browser) from a project file',
  usage: 'gapwise report --project FILE [--out report.html] [options]',
  description: [
    'Recomputes everything from the project exactly as the app does (the samples from the text the project holds, '
      + 'the model as chosen, the project\'s grid and threshold) and writes one HTML file with no outside links: '
      + 'summary, samples and what was read, histogram, variogram with the model, model comparison, cross-validation, '
      + 'maps of the mean, the sd and P(exceed) with legends, scale bar and north arrow, suggested next samples, and '
      + 'every parameter needed to reproduce the result. Open it in a browser and print to PDF.',
    'When the project holds no model comparison, the standard candidate models are fitted for the table (a few '
      + 'seconds for a few hundred samples); --no-compare leaves the table out.',
    'The area above the action level (and with --depth the volume) is given as the median over conditional '
      + 'realisations with a 90 % interval (5 % and 95 %), in m², ha and m³, with the method behind it and the caution '
      + 'that it is a screening estimate. It comes from the realisations saved in the project, or with --realisations N '
      + 'from N realisations drawn on the report\'s grid (as "gapwise simulate" draws them; seed, support, block points '
      + 'and depth not given here come from the project\'s saved settings), shared out among --workers threads. '
      + 'The figure is also printed on stderr. '
      + 'Without either, the report says in one line that no area estimate was made.',
    'Several analytes: with --value a,b,c (or \'*\') and a model set from "gapwise fit --value a,b,c" as --model, the '
      + 'report has a section per analyte, each what a report of the project with that value column and that model '
      + 'shows (caution, summary, samples, variogram with the model, comparison, cross-validation, maps, reproduction); '
      + '--threshold takes one number for all or NAME=T pairs. The comparison table, suggestions and realisations saved in '
      + 'the project belong to its own analyte and model and appear only in that analyte\'s section; --realisations '
      + 'takes one analyte at a time.',
    'A model with covariates (fit --covariates) needs each covariate on the report\'s grid: --covariate-raster NAME=FILE.tif '
      + '(repeatable; read as "gapwise grid" reads it), else the raster file the project names for it, looked for beside the project '
      + 'file. Cells without a covariate value are left out of the maps and the realisations, counted in a warning; a covariate '
      + 'with no raster is refused (exit 2). The report lists the trend coefficients with their standard errors and the share '
      + 'of the values\' variance the covariates explain.',
  ],
  options: [
    { name: 'project', kind: 'string', placeholder: 'FILE', help: 'the project file (as saved by the app)', required: true },
    outOption('HTML file to write', 'stdout'),
    { name: 'title', kind: 'string', placeholder: 'TEXT', help: 'title at the top of the report', defaultText: 'the project\'s title, else "<value> screening map"' },
    { name: 'cell', kind: 'number', placeholder: 'M', help: 'draw the maps on a grid of this cell size instead of the project\'s', unit: 'm', defaultText: 'the project\'s grid' },
    { name: 'no-compare', kind: 'boolean', help: 'do not fit the candidate models when the project has no comparison table' },
    { name: 'threshold', kind: 'string', placeholder: 'T', help: 'action level for the exceedance map and the area above it; with --value a,b one number for all or NAME=T pairs, e.g. zinc=720,lead=530', unit: 'the samples\' unit', defaultText: 'the project\'s (for its own analyte)' },
    { name: 'value', kind: 'string', placeholder: 'COLS', help: 'analytes to report, each in a section of its own: column names separated by commas, or \'*\' for every numeric column; needs --model', defaultText: 'the project\'s value column' },
    { name: 'model', kind: 'string', placeholder: 'FILE', help: 'model set written by "gapwise fit --value a,b" (one model per analyte), with --value', defaultText: 'the project\'s model' },
    { ...COVARIATE_RASTER_OPTION, help: 'a model covariate on the report\'s grid from a single-band GeoTIFF in any EPSG CRS (reprojected; bilinear for numbers, nearest cell for categories); give it once per covariate', defaultText: 'the raster files the project names, beside the project file' },
    ...GRID_SIMULATION_OPTIONS,
    SIMULATION_WORKERS,
  ],
  examples: [
    'gapwise report --project site.gapwise.json --out site-report.html',
    'gapwise report --project site.gapwise.json --realisations 100 --depth 0.3 --seed 1 --out site-report.html',
    'gapwise report --project site.gapwise.json --covariate-raster workshop_dist_m=workshop-distance.tif --realisations 100 --out site-report.html',
    'gapwise report --project site.gapwise.json --model set.json --value zinc,lead --threshold zinc=720,lead=530 --out site-report.html',
  ],
  run,
};
