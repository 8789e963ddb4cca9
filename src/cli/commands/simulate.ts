/**
 * `gapwise simulate`: conditional realisations of the surface on a grid, written as GeoTIFF bands
 * (one Float32 band per realisation, data units, no-data -9999 outside the area), and a JSON summary
 * on stdout: the area (and with --depth the volume) above --threshold as a median with a 90 %
 * interval, the simulation lattice, warnings and the screening caution.
 * The GeoTIFF comes from the one multi-band writer, src/io/geotiff.ts bandsGeoTiff. The realisations
 * are shared out over --workers threads (../simulation-pool.ts; the same bands as one thread draws).
 */
import { COVARIATE_RASTER_OPTION, gridWithCovariates } from '../covariates.ts';
import { GapwiseError } from '../../core/shared/errors.ts';
import { bandsGeoTiff, USER_DEFINED_CRS } from '../../io/geotiff.ts';
import { DEFAULT_PADDING, planSurfaceGrid } from '../../io/project.ts';
import { numberOption, stringOption } from '../args.ts';
import {
  CAUTION, SAMPLE_OPTIONS, count, gridFigures, jsonText, printNotes, printWarnings, progressLine, readGridSpacing, readModelAndSamples,
  readWorkers, writeOutput, type CliIo, type CommandSpec, type OptionValues,
} from '../common.ts';
import { readBoundaryFile } from '../boundary-file.ts';
import {
  SIMULATE_OPTIONS, SIMULATION_WORKERS, areaFigures, describeSimulationPath, namingAsync, readSimulationChoice, readSimulationPathRequest, threadsText,
} from '../simulation-options.ts';
import { simulateParallel, simulationThreads } from '../simulation-pool.ts';
import { checkSimulationDemand } from '../resource-limits.ts';

async function run(values: OptionValues, io: CliIo): Promise<number> {
  const out = stringOption(values, 'out') as string;
  if (!/\.tiff?$/i.test(out)) throw new GapwiseError('bad-option', `Option "--out ${out}" must name a GeoTIFF (.tif); realisations are written as its bands.`);
  const { modelPath, model, intake, workCrs } = readModelAndSamples(io, values);
  const boundaryPath = stringOption(values, 'boundary');
  const boundary = boundaryPath === undefined ? null : readBoundaryFile(io, boundaryPath, intake);
  const { cell } = readGridSpacing(values);
  const choice = readSimulationChoice(values, model, 'count');
  const pathRequest = readSimulationPathRequest(values);
  const polygons = boundary ? boundary.polygons.map((p) => p.rings) : null;
  // A covariate model: the samples' covariate columns and the rasters' values at the grid's block points.
  const { samples, grid, nodeCovariates, warnings: covariateWarnings } = await gridWithCovariates(values, io.cwd, intake, model.trend, {
    ...(cell !== undefined ? { cell } : {}), polygons, nodes: choice.blockPoints,
    planned: () => planSurfaceGrid({ x: intake.samples.x, y: intake.samples.y, padding: DEFAULT_PADDING, cellSize: cell ?? 0, polygons }, intake.report.crs.work),
  });
  const threshold = numberOption(values, 'threshold');
  const files = { samples: intake.report.fileName, model: modelPath };
  const n = choice.realisations ?? 0;
  const threads = simulationThreads(n, readWorkers(values, io));
  checkSimulationDemand({ grid, realisations: n, blockPoints: choice.blockPoints, threads, keep: true }, 'count');
  const sim = await namingAsync(files, () => simulateParallel(samples, model, grid, {
    count: n,
    ...(nodeCovariates ? { covariates: nodeCovariates } : {}),
    seed: choice.seed,
    support: choice.support,
    blockPoints: choice.blockPoints,
    ...(threshold !== undefined ? { threshold } : {}),
    ...(choice.depth !== undefined ? { depth: choice.depth } : {}),
  }, { workers: threads, onProgress: progressLine(io, 'realisations'), choose: pathRequest }));
  printNotes(io, [
    `${count(n)} conditional realisations (seed ${choice.seed}, ${sim.support} support) on ${threadsText(threads)}`,
    ...(sim.path ? describeSimulationPath(sim.path, samples.x.length) : []),
  ]);
  const unit = intake.report.unit;
  const names = sim.realisations!.map((_, r) => `realisation ${r + 1}${unit ? ` (${unit})` : ''}`);
  const tif = bandsGeoTiff({ grid, bands: sim.realisations!, names, workCrs, title: `Gapwise conditional realisations (${sim.support} support).` });
  await writeOutput(io, out, tif.bytes);
  printWarnings(io, [...covariateWarnings, ...sim.warnings, ...tif.warnings]);
  const area = sim.area;
  io.stdout(jsonText({
    out, format: 'tif', workCrs, epsg: tif.epsg === USER_DEFINED_CRS ? null : tif.epsg,
    grid: gridFigures(grid),
    realisations: sim.count, seed: choice.seed, support: sim.support, blockPoints: sim.points,
    unit,
    threshold: threshold ?? null,
    ...(area ? {
      ...areaFigures(area),
    } : {}),
    lattice: sim.lattice,
    placementError: sim.placementError,
    neighbours: sim.neighbours,
    ...(sim.path ? {
      path: { path: sim.path.choice.path, automatic: sim.path.choice.automatic, reason: sim.path.choice.reason, tolerance: pathRequest.tolerance },
      ...(sim.path.accuracy ? { localError: sim.path.accuracy } : {}),
    } : {}),
    caution: CAUTION,
  }));
  return 0;
}

export const simulateCommand: CommandSpec = {
  name: 'simulate',
  summary: 'conditional realisations on a grid (GeoTIFF bands) and the area above an action level',
  usage: 'gapwise simulate --samples FILE --model FILE --count N --out FILE.tif [--cell M] [--boundary FILE] [--threshold T [--depth D]] [options]',
  description: [
    'Draws N realisations of the surface that honour the samples and the model (never refitted): each is as '
      + 'likely as any other given the data, and together they show how the surface may vary. Fields are simulated '
      + 'by FFT on a lattice and conditioned by kriging; for a log model each cell is back-transformed. '
      + 'Each realisation is one Float32 band of the GeoTIFF (data units, -9999 outside the area).',
    'With --threshold the JSON summary on stdout gives the area above T (square metres) as the median over the '
      + 'realisations with a 90 % interval (5 % and 95 %), and with --depth the volume (cubic metres = area × depth). '
      + 'With --support block each cell is the average of --block-points × --block-points lattice points.',
    'A model with covariates (fit --covariates) needs --covariate-raster NAME=FILE.tif for each: the realisations are '
      + 'conditioned under the kriging mean with covariates, each lattice point with the rasters\' values there; without '
      + '--cell the grid is the first raster\'s lattice, and cells without a value are left empty.',
    'The residuals are kriged from all samples or from each lattice node\'s --neighbours nearest, whichever is cheaper for this '
      + 'job by estimated cost (samples, lattice nodes, realisations, threads) within --tolerance; the choice and its reason are said '
      + 'on stderr ("chosen automatically: ... (--exact overrides)") and in the JSON summary ("path"), and a local run\'s measured '
      + 'error against exact kriging at seeded nodes as "localError". --exact and --local override the choice.',
    'The realisations are shared out among --workers threads in consecutive parts (the same bands as one thread '
      + 'draws with the same conditioning: the thread count enters the cost, so near the switch --exact or --local fixes it); the thread count is said on stderr, and a run that lasts more than 2 s prints a progress line at every 10 %.',
    'The screening caution is in the summary and in the GeoTIFF description.',
  ],
  options: [
    { name: 'model', kind: 'string', placeholder: 'FILE', help: 'model JSON, as written by "gapwise fit"', required: true },
    { name: 'out', kind: 'string', placeholder: 'FILE', help: 'GeoTIFF to write, one band per realisation', required: true },
    COVARIATE_RASTER_OPTION,
    { name: 'cell', kind: 'number', placeholder: 'M', help: 'cell size', unit: 'm', defaultText: 'about 40,000 cells over the area (a covariate model: the raster\'s lattice)' },
    { name: 'boundary', kind: 'string', placeholder: 'FILE', help: 'GeoJSON polygon(s): only cells whose centre lies inside', defaultText: 'the samples\' extent' },
    { name: 'threshold', kind: 'number', placeholder: 'T', help: 'action level for the area (and volume) above it', unit: 'the samples\' unit', defaultText: 'none' },
    ...SIMULATE_OPTIONS,
    SIMULATION_WORKERS,
    ...SAMPLE_OPTIONS,
  ],
  examples: [
    'gapwise simulate --samples data-demo/lead-topsoil.csv --model lead-model.json --count 100 --seed 7 --threshold 200 --depth 0.3 --out lead-realisations.tif',
  ],
  run,
};
