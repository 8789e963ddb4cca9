/**
 * `gapwise grid`: mean, sd and (with --threshold) P(exceed) on a regular grid, written by the
 * extension of --out: .tif (GeoTIFF, one Float32 band per surface), .csv (one row per cell inside
 * the area) or .geojson (contour bands and isolines of the mean and P(exceed), WGS 84). A JSON
 * summary with the caution goes to stdout. With --project the grid is the project's own, cell for
 * cell, so the numbers are the app's.
 *
 * Point surfaces are computed in row bands by the worker-thread pool of ../parallel.ts (one worker
 * per core unless --workers says otherwise): exact kriging or local neighbourhoods, chosen by cost
 * (core/prediction/path-choice.ts) or as --exact / --local say, with a note on stderr and progress
 * lines for long runs. Block support and realisations (../simulation-options.ts) replace the point
 * surface by block-kriged cells and add bands, the area above the threshold and warnings; the
 * realisations are shared out over the same --workers threads (../simulation-pool.ts).
 */
import { GapwiseError, type Warning } from '../../core/shared/errors.ts';
import { cellCount, type Grid } from '../../core/geometry/grid.ts';
import type { SurfaceResult } from '../../core/prediction/surface.ts';

import { knownMean, trendColumnCount } from '../../core/covariance/trend.ts';
import { surfaceGeoTiff } from '../../io/geotiff.ts';
import { surfaceContours } from '../../io/contours.ts';
import { surfaceGridCsvChunks } from '../../io/grid-csv.ts';
import { DEFAULT_PADDING, openProject, planSurfaceGrid, projectGrid, type Project } from '../../io/project.ts';
import { booleanOption, numberOption, stringOption } from '../args.ts';
import {
  AUTOMATIC_PATH_TEXT, CAUTION, PREDICTION_PATH_OPTIONS, SAMPLE_OPTIONS, count, describePredictionPath, gridFigures, jsonText,
  printNotes, printWarnings, progressLine, readGridSpacing, readModelAndSamples, readPredictionPath,
  readText, readWorkers, writeOutput, type CliIo, type CommandSpec, type OptionValues, type PredictionPath,
} from '../common.ts';
import { readBoundaryFile } from '../boundary-file.ts';
import { COVARIATE_RASTER_OPTION, checkCovariateRasters, covariateLattice, readCovariateRasters, withSampleCovariates } from '../covariates.ts';
import { gridCovariates, type CovariateRaster } from '../../io/covariate-raster.ts';
import { isCovariateTrend, type CovarianceModel, type CovariateTrend } from '../../core/covariance/model.ts';
import type { Samples } from '../../core/shared/samples.ts';
import type { IntakeResult } from '../../io/types.ts';
import { analyteRequest, gridAnalytes, singleThreshold } from '../analytes.ts';
import { modelFromSet } from '../analyte-runs.ts';
import { computeSurfaceParallel } from '../parallel.ts';
import { checkLocalSurface } from '../local-check.ts';
import { describeAccuracy, type LocalAccuracy, type LocalSettings } from '../../core/prediction/local-accuracy.ts';
import { simulationThreads } from '../simulation-pool.ts';
import { checkSimulationDemand } from '../resource-limits.ts';
import { GRID_SIMULATION_OPTIONS, addSimulationBands, describeSimulationPath, namingAsync, readSimulationChoice, type SimulationBand, type SimulationChoice } from '../simulation-options.ts';
import { MAX_EXACT_SAMPLES } from '../../core/shared/sizes.ts';

type Format = 'tif' | 'csv' | 'geojson';

function formatOf(file: string): Format {
  const lower = file.toLowerCase();
  if (lower.endsWith('.tif') || lower.endsWith('.tiff')) return 'tif';
  if (lower.endsWith('.csv')) return 'csv';
  if (lower.endsWith('.geojson') || lower.endsWith('.json')) return 'geojson';
  throw new GapwiseError('bad-option', `Option "--out ${file}" has an extension Gapwise cannot write; expected .tif, .csv or .geojson.`);
}

/** "50,100,200" → [50, 100, 200]. */
function parseLevels(raw: string, option: string): number[] {
  const parts = raw.split(',').map((s) => s.trim()).filter((s) => s !== '');
  const out = parts.map(Number);
  if (parts.length === 0 || out.some((v) => !Number.isFinite(v))) {
    throw new GapwiseError('bad-option', `Option "--${option}" expects numbers separated by commas (e.g. 50,100,200), got "${raw}".`);
  }
  return out;
}

/** A planned grid with what it was planned from: the project, the covariate rasters, the samples with their covariates. */
interface PlannedGrid {
  grid: Grid;
  samples: Samples;
  project: Project | null;
  rasters: CovariateRaster[];
}

/**
 * The grid: the project's as stored (unless --padding or a different boundary changed its area), a
 * covariate model's raster lattice, or planned over the samples' extent or --boundary.
 */
async function planGrid(io: CliIo, values: OptionValues, intake: IntakeResult, model: CovarianceModel): Promise<PlannedGrid> {
  const projectPath = stringOption(values, 'project');
  const project: Project | null = projectPath === undefined ? null : openProject(readText(io, projectPath), projectPath).project;
  const boundaryPath = stringOption(values, 'boundary');
  const boundary = boundaryPath === undefined ? null : readBoundaryFile(io, boundaryPath, intake);
  const { cell, padding } = readGridSpacing(values);

  // The project's grid as stored, unless the command line changed what it depends on.
  const projectBoundaryKey = project?.boundary ? `${projectPath}:${project.boundary.fileName}` : undefined;
  const sameArea = project !== null && padding === undefined
    && (project.grid.area === 'boundary' ? boundaryPath === projectBoundaryKey : boundaryPath === undefined);
  // A covariate model: the samples' covariate columns, and on the grid the covariate rasters.
  const rasters = await readCovariateRasters(values, io.cwd);
  const covariateModel = isCovariateTrend(model.trend);
  checkCovariateRasters(model.trend, rasters);
  const samples = covariateModel ? withSampleCovariates(intake, intake.samples, model.trend).samples : intake.samples;
  const workCrs = intake.report.crs.work;
  let grid: Grid;
  if (covariateModel && cell === undefined && !(project && sameArea)) {
    grid = covariateLattice(model.trend as CovariateTrend, rasters, workCrs, boundary ? boundary.polygons.map((p) => p.rings) : null);
  } else if (project && sameArea) {
    grid = projectGrid(project, intake, boundary ? { work: boundary.polygons } : null, cell !== undefined ? { cellSize: cell } : {});
  } else {
    grid = planSurfaceGrid({
      x: intake.samples.x, y: intake.samples.y,
      padding: padding ?? project?.grid.padding ?? DEFAULT_PADDING,
      cellSize: cell ?? project?.grid.cellSize ?? 0,
      polygons: boundary ? boundary.polygons.map((p) => p.rings) : null,
    }, workCrs);
  }
  return { grid, samples, project, rasters };
}

/** A covariate model's covariates on the grid: at each cell's centre, and for block support or realisations at its block points. */
interface GridCovariates {
  grid: Grid;
  cells?: Float64Array;
  nodes?: Float64Array;
  warnings: Warning[];
}

function covariatesOnGrid(planned: PlannedGrid, model: CovarianceModel, workCrs: string, choice: SimulationChoice): GridCovariates {
  if (!isCovariateTrend(model.trend)) return { grid: planned.grid, warnings: [] };
  // Block support and realisations read the covariates at each cell's block points (or its centre).
  const nodes = choice.support === 'block' || choice.realisations !== undefined ? choice.blockPoints : undefined;
  const g = gridCovariates(planned.grid, model.trend, planned.rasters, workCrs, nodes !== undefined ? { nodes } : {});
  return { grid: g.grid, ...(g.covariates ? { cells: g.covariates } : {}), ...(g.nodeCovariates ? { nodes: g.nodeCovariates } : {}), warnings: [...g.warnings] };
}

/** `--threshold`, refused when it is 0 or less with a log model. */
function readThreshold(values: OptionValues, model: CovarianceModel): number | undefined {
  const threshold = numberOption(values, 'threshold');
  if (threshold !== undefined && model.transform === 'log' && !(threshold > 0)) {
    throw new GapwiseError('bad-option', `Option "--threshold" must be above 0 with a log model, got ${threshold}.`);
  }
  return threshold;
}

/** Refuses block kriging from too many samples or with point-support options, and realisations beyond the resource limits. */
function checkGridJob(values: OptionValues, model: CovarianceModel, choice: SimulationChoice, grid: Grid, n: number, workers: number): void {
  // Block kriging (block support of a model without a log transform) is exact: all samples, n³/3 flops.
  const blockKriging = choice.support === 'block' && model.transform !== 'log';
  if (blockKriging && n >= MAX_EXACT_SAMPLES) {
    throw new GapwiseError('bad-option',
      `Block kriging (--support block) uses all samples and is limited to fewer than ${count(MAX_EXACT_SAMPLES)} of them; got ${count(n)}. `
      + 'Use --support point (local neighbourhoods from that many samples), or thin the samples.');
  }
  if (blockKriging && (booleanOption(values, 'local') || numberOption(values, 'neighbours') !== undefined || booleanOption(values, 'global-mean') || booleanOption(values, 'local-mean'))) {
    throw new GapwiseError('bad-option', 'Options "--local", "--neighbours", "--global-mean" and "--local-mean" apply to point support; block kriging uses all samples.');
  }
  if (choice.realisations !== undefined) {
    const threads = simulationThreads(choice.realisations, workers);
    checkSimulationDemand({ grid, realisations: choice.realisations, blockPoints: choice.blockPoints, threads, keep: false }, 'realisations');
  }
}

/** What a point surface needs: the samples, model and grid, and how to compute it. */
interface PointSurfaceJob {
  io: CliIo;
  samples: Samples;
  model: CovarianceModel;
  grid: Grid;
  path: PredictionPath;
  files: { samples: string; model: string };
  workers: number;
  threshold: number | undefined;
  precision: 'float32' | 'float64';
  covariates: Float64Array | undefined;
}

/**
 * The point surface by the chosen path over the worker threads; local neighbourhoods are measured
 * against exact kriging and grown or replaced when they miss the tolerance. Prints what was done.
 */
async function computePointSurface(job: PointSurfaceJob): Promise<{ surface: SurfaceResult; accuracy?: LocalAccuracy; used: PredictionPath }> {
  const { io, samples, model, grid, path, files, workers, threshold, precision, covariates } = job;
  const n = samples.value.length;
  const compute = (p: 'exact' | 'local', settings?: LocalSettings): Promise<SurfaceResult> => namingAsync(files, () => computeSurfaceParallel({
    samples, model, grid, path: p,
    ...(p === 'local' && settings ? { local: { ...settings } } : {}),
    surface: { ...(threshold !== undefined ? { threshold } : {}), precision, ...(covariates ? { covariates } : {}) },
  }, { workers, onProgress: progressLine(io, 'cells') }));
  const settings = { neighbours: Math.min(path.neighbours, n), globalMean: path.globalMean && trendColumnCount(model.trend ?? 'constant') > 0 };
  let surface = await compute(path.path, settings);
  let accuracy: LocalAccuracy | undefined;
  let used = path;
  const notes: string[] = [];
  if (path.path === 'local') {
    const checked = await namingAsync(files, () => checkLocalSurface({
      samples, model, grid, surface, settings, tolerance: path.tolerance,
      ...(covariates ? { covariates } : {}),
      grow: !path.neighboursGiven, exactFallback: path.automatic,
      rerun: (s) => (s === 'exact' ? compute('exact') : compute('local', s)),
    }));
    surface = checked.surface;
    used = checked.path === 'exact'
      ? { ...path, path: 'exact', reason: 'local neighbourhoods missed the tolerance' }
      : { ...path, neighbours: checked.settings.neighbours, globalMean: checked.settings.globalMean };
    if (checked.path === 'local') accuracy = checked.accuracy;
    notes.push(...checked.notes, `measured error of the local neighbourhoods ${describeAccuracy(checked.accuracy)}`);
  }
  const threads = Math.min(workers, grid.ny);
  printNotes(io, [`${describePredictionPath(used, n, undefined, undefined, knownMean(model.trend ?? 'constant') !== null)}; ${count(cellCount(grid))} cells on ${threads} worker thread${threads === 1 ? '' : 's'}`, ...notes]);
  return { surface, ...(accuracy ? { accuracy } : {}), used };
}

/** Writes the surfaces by the format of --out; returns the GeoTIFF's bands or the number of contour features, and warnings. */
async function writeGridFile(
  io: CliIo, out: string, format: Format,
  what: { grid: Grid; surface: SurfaceResult; workCrs: string; unit: string; valueName: string; extraBands: SimulationBand[]; accuracy?: LocalAccuracy; meanLevels?: number[] },
): Promise<{ bands?: string[]; features?: number; warnings: Warning[] }> {
  const { grid, surface, workCrs, unit, extraBands } = what;
  const warnings: Warning[] = [];
  let bands: string[] | undefined;
  let features: number | undefined;
  if (format === 'tif') {
    const tif = surfaceGeoTiff({ grid, surface, workCrs, unit, valueName: what.valueName, extraBands, ...(what.accuracy ? { accuracy: what.accuracy } : {}) });
    warnings.push(...tif.warnings);
    bands = tif.bands;
    await writeOutput(io, out, new Uint8Array(tif.buffer));
  } else if (format === 'csv') {
    await writeOutput(io, out, surfaceGridCsvChunks({ grid, surface, workCrs, unit }));
  } else {
    const fc = surfaceContours({ grid, surface, workCrs, unit, meanLevels: what.meanLevels });
    features = fc.features.length;
    await writeOutput(io, out, `${JSON.stringify(fc)}\n`);
  }
  if (format !== 'tif' && extraBands.length > 0) {
    warnings.push({
      code: 'bands-not-written',
      message: `${extraBands.length === 1 ? 'The band' : `The ${extraBands.length} bands`} ${extraBands.map((b) => `"${b.name}"`).join(', ')} from the realisations ${extraBands.length === 1 ? 'is' : 'are'} written to GeoTIFF only; use --out FILE.tif to keep ${extraBands.length === 1 ? 'it' : 'them'}.`,
    });
  }
  return { ...(bands ? { bands } : {}), ...(features !== undefined ? { features } : {}), warnings };
}

async function run(valuesGiven: OptionValues, ioGiven: CliIo): Promise<number> {
  const analytes = analyteRequest(valuesGiven);
  if (analytes) return gridAnalytes(valuesGiven, ioGiven, analytes);
  const values = singleThreshold(valuesGiven);
  const io = modelFromSet(values, ioGiven);
  const out = stringOption(values, 'out') as string;
  const format = formatOf(out);
  const levels = stringOption(values, 'levels');
  const meanLevels = levels === undefined ? undefined : parseLevels(levels, 'levels');
  const { modelPath, model, intake, workCrs } = readModelAndSamples(io, values);
  const planned = await planGrid(io, values, intake, model);
  const { samples, project } = planned;
  const choice = readSimulationChoice(values, model);
  const covariates = covariatesOnGrid(planned, model, workCrs, choice);
  const grid = covariates.grid;
  const threshold = readThreshold(values, model);
  const n = intake.samples.value.length;
  const workers = readWorkers(values, io);
  const path = readPredictionPath(values, n, { targets: cellCount(grid), threads: Math.min(workers, grid.ny) });
  checkGridJob(values, model, choice, grid, n, workers);
  const blockKriging = choice.support === 'block' && model.transform !== 'log';
  printWarnings(io, path.warnings);
  const files = { samples: intake.report.fileName, model: modelPath };
  let point: { surface: SurfaceResult; accuracy?: LocalAccuracy; used: PredictionPath } | undefined;
  if (!blockKriging) {
    point = await computePointSurface({
      io, samples, model, grid, path, files, workers, threshold, precision: format === 'csv' ? 'float64' : 'float32', covariates: covariates.cells,
    });
  } else {
    printNotes(io, [`block kriging: each of ${count(cellCount(grid))} cells averaged over ${choice.blockPoints} × ${choice.blockPoints} points, from all ${count(n)} samples`]);
  }
  const used = point?.used ?? path;
  const accuracy = point?.accuracy;
  const unit = project?.samples.unit || intake.report.unit;
  const extra = await namingAsync(files, () => addSimulationBands({
    samples, model, grid, choice, ...(threshold !== undefined ? { threshold } : {}), ...(unit ? { unit } : {}),
    ...(covariates.nodes ? { covariates: covariates.nodes } : {}),
    workers, onProgress: progressLine(io, 'realisations'),
    // --exact / --local and --tolerance apply to the realisations' conditioning as to the surface.
    choose: {
      ...(booleanOption(values, 'exact') ? { force: 'exact' as const } : booleanOption(values, 'local') ? { force: 'local' as const } : {}),
      tolerance: path.tolerance,
    },
  }));
  const surface = extra.surface ?? point?.surface;
  if (!surface) throw new Error('No surface was computed for block support.');
  if (choice.realisations !== undefined) {
    const t = extra.threads ?? 1;
    printNotes(io, [
      `${count(choice.realisations)} conditional realisations (seed ${choice.seed}, ${choice.support} support) on ${t} worker thread${t === 1 ? '' : 's'}`,
      ...(extra.path ? describeSimulationPath(extra.path, samples.x.length) : []),
    ]);
  }
  const valueName = intake.report.valueColumn.replace(/\s*\([^)]*\)\s*$/, '');
  const written = await writeGridFile(io, out, format, { grid, surface, workCrs, unit, valueName, extraBands: extra.bands, ...(accuracy ? { accuracy } : {}), meanLevels });
  printWarnings(io, [...covariates.warnings, ...surface.warnings, ...extra.warnings, ...written.warnings]);
  io.stdout(jsonText({
    out, format, workCrs,
    grid: gridFigures(grid),
    threshold: threshold ?? null,
    support: choice.support,
    ...(choice.support === 'block' ? { blockPoints: choice.blockPoints } : {}),
    method: blockKriging ? 'block kriging' : used.path === 'exact' ? 'exact kriging' : 'local neighbourhoods',
    ...(blockKriging || used.path === 'exact' ? {} : { neighbours: Math.min(used.neighbours, n), globalMean: used.globalMean }),
    ...(blockKriging ? {} : { reason: used.reason }),
    ...(accuracy ? { localError: accuracy } : {}),
    n,
    ...(written.bands ? { bands: written.bands } : {}),
    ...(written.features !== undefined ? { features: written.features } : {}),
    range: surface.range,
    ...(extra.area ? { realisations: extra.area.realisations, seed: extra.area.seed, areaAbove: extra.area.areaAbove } : {}),
    ...(extra.area?.volumeAbove ? { volumeAbove: extra.area.volumeAbove } : {}),
    ...(!extra.area && choice.realisations !== undefined ? { realisations: choice.realisations, seed: choice.seed } : {}),
    unit,
    caution: CAUTION,
  }));
  return 0;
}

export const gridCommand: CommandSpec = {
  name: 'grid',
  summary: 'surfaces on a grid: GeoTIFF (.tif), CSV (.csv) or contour GeoJSON (.geojson)',
  usage: 'gapwise grid --samples FILE --model FILE --out FILE.tif|.csv|.geojson [--cell M] [--boundary FILE] [--threshold T] [options]',
  description: [
    'Kriging with the model as given (never refitted) on a north-up grid in the working CRS: over the samples\' '
      + 'extent widened by --padding, or over --boundary, where only cells whose centre lies inside are computed. '
      + 'The extension of --out chooses the output: .tif writes a GeoTIFF with one Float32 band each for the mean, '
      + 'the sd and, with --threshold, P(value > T), with the working CRS\'s EPSG code, band names and no-data '
      + '-9999 outside the area; .csv writes x, y, lon, lat, mean, sd (and p_exceed) for each cell inside the area; '
      + '.geojson writes filled bands and isolines of the mean (and of P(exceed)) in WGS 84 longitude/latitude.',
    'Every cell is computed by exact kriging from all samples or from its --neighbours nearest samples (local '
      + 'neighbourhoods from a kd-tree, shared by tiles of cells, around the GLS mean of all samples unless --local-mean), '
      + `${AUTOMATIC_PATH_TEXT}. --exact and --local override the choice, which is said on stderr with its reason; the `
      + 'measured error of local neighbourhoods (largest and RMS difference from exact kriging, % of the prior sd) is '
      + 'said on stderr, in the JSON summary ("localError") and in the GeoTIFF\'s metadata. The rows are shared out '
      + 'among --workers threads; a run that lasts more than 2 s prints a progress line at every 10 %.',
    'With --support block each cell holds the average over the cell (block kriging from all samples, fewer than '
      + `${count(MAX_EXACT_SAMPLES)}) instead of the value at its centre. With --realisations N, N conditional realisations add a band `
      + '"P(... > T) from N realisations" (and, for a log model with block support, the realisations\' block mean) '
      + 'and the summary gives the area above --threshold (m²; with --depth the volume, m³) as the median with 5 % '
      + 'and 95 % values over the realisations, drawn over the same --workers threads. Those bands are written to GeoTIFF only.',
    'A JSON summary (grid, method, bands, value ranges, the area above the threshold and the screening caution) '
      + 'goes to stdout. The caution is also in the GeoTIFF description, on the first line of the CSV and in every contour.',
    'Several analytes: with --value a,b,c (or \'*\') and a model set from "gapwise fit --value a,b,c" as --model, '
      + 'each analyte is mapped with its own model on one grid planned from all their samples: the GeoTIFF holds mean, '
      + 'sd (and P(exceed)) bands per analyte, the CSV the columns a_mean, a_sd (a_p_exceed), ...; --threshold takes '
      + 'one number for all or a=T1,b=T2. Point support, .tif or .csv.',
  ],
  options: [
    { name: 'model', kind: 'string', placeholder: 'FILE', help: 'model JSON, as written by "gapwise fit"', required: true },
    { name: 'out', kind: 'string', placeholder: 'FILE', help: 'file to write: .tif, .csv or .geojson', required: true },
    COVARIATE_RASTER_OPTION,
    { name: 'cell', kind: 'number', placeholder: 'M', help: 'cell size', unit: 'm', defaultText: 'the project\'s, else about 40,000 cells rounded to 1, 2, 2.5 or 5 × 10^k m' },
    { name: 'boundary', kind: 'string', placeholder: 'FILE', help: 'GeoJSON polygon(s) of the area (longitude/latitude); cells outside are no-data', defaultText: 'none: the samples\' extent' },
    { name: 'padding', kind: 'number', placeholder: 'F', help: 'margin around the samples\' extent as a fraction of its larger side (without --boundary)', defaultText: '0.05' },
    { name: 'threshold', kind: 'string', placeholder: 'T', help: 'action level: adds P(value > T); with several analytes (--value a,b) one number for all or NAME=T pairs, e.g. zinc=720,lead=530', unit: 'the samples\' unit', defaultText: 'none' },
    { name: 'levels', kind: 'string', placeholder: 'LIST', help: 'contour levels of the mean for .geojson, comma-separated', unit: 'the samples\' unit', defaultText: 'about 8 round values over the range' },
    ...PREDICTION_PATH_OPTIONS,
    { name: 'workers', kind: 'number', placeholder: 'N', help: 'worker threads that share out the rows of the grid (1 to 256)', unit: 'threads', defaultText: 'one per core of this machine' },
    ...GRID_SIMULATION_OPTIONS,
    ...SAMPLE_OPTIONS,
  ],
  examples: [
    'gapwise grid --samples data-demo/lead-topsoil.csv --model lead-model.json --boundary data-demo/site-boundary.geojson --cell 2 --threshold 200 --out lead.tif',
    'gapwise grid --project site.gapwise.json --out lead-contours.geojson',
    'gapwise grid --samples survey.csv --model models.json --value zinc,lead,copper --threshold zinc=720,lead=530 --cell 10 --out metals.tif',
    'gapwise grid --samples survey-48k.csv --model survey-model.json --cell 10 --neighbours 48 --out survey.tif',
    'gapwise grid --samples data-demo/lead-topsoil.csv --model lead-model.json --cell 5 --support block --realisations 200 --seed 3 --threshold 200 --depth 0.3 --out lead-blocks.tif',
  ],
  run,
};
