/**
 * Support and simulation choices shared by `gapwise grid` and `gapwise simulate`: the option specs,
 * reading them into a plain choice, and the extra surfaces they produce.
 *
 * `grid` lists GRID_SIMULATION_OPTIONS (--support point|block, --block-points K, --realisations N,
 * --seed S, --depth D); `simulate` lists SIMULATE_OPTIONS (the same with --count N instead of
 * --realisations). With --support block and no realisations, cells are block-kriged averages
 * (core/prediction/block-kriging.ts); with realisations, P(exceed) comes from conditional simulation
 * (core/simulation/conditional-simulation.ts) and the area above the threshold gets a median and 90 % interval.
 * A log model with --support block needs realisations (block averages of a lognormal surface have
 * no closed form): asking without them is an option error that says so.
 * Realisations are drawn over worker threads (./simulation-pool.ts, --workers), equal to one run.
 */
import { GapwiseError, type Warning } from '../core/shared/errors.ts';
import type { CovarianceModel } from '../core/covariance/model.ts';
import type { Samples } from '../core/shared/samples.ts';
import type { Grid } from '../core/geometry/grid.ts';
import { computeBlockSurface, DEFAULT_BLOCK_POINTS } from '../core/prediction/block-kriging.ts';
import { DEFAULT_SIMULATION_NEIGHBOURS, MAX_REALISATIONS } from '../core/simulation/conditional-simulation.ts';
import { DEFAULT_TOLERANCE, EXACT_SAMPLE_LIMIT, parseTolerance, type Tolerance } from '../core/prediction/path-choice.ts';
import { MAX_LOCAL_NEIGHBOURS } from '../core/prediction/local-kriging.ts';
import { describeAccuracy } from '../core/prediction/local-accuracy.ts';
import type { SimulationPath } from '../core/simulation/simulation-path.ts';
import type { ExceedanceAreaSummary } from '../core/prediction/exceedance-area.ts';
import type { SurfaceResult } from '../core/prediction/surface.ts';
import { booleanOption, numberOption, stringOption, type OptionSpec } from './args.ts';
import { count as countText, naming, type OptionValues } from './common.ts';
import { simulateParallel, simulationThreads } from './simulation-pool.ts';

const SUPPORT: OptionSpec = {
  name: 'support', kind: 'string', placeholder: 'KIND', choices: ['point', 'block'],
  help: 'point: the value at each cell centre; block: the average over each cell (what a remediation unit holds)', defaultText: 'point',
};
const BLOCK_POINTS: OptionSpec = {
  name: 'block-points', kind: 'number', placeholder: 'K', help: 'block support: each cell is averaged over K × K points', defaultText: String(DEFAULT_BLOCK_POINTS),
};
const SEED: OptionSpec = { name: 'seed', kind: 'number', placeholder: 'S', help: 'seed of the random numbers (the same seed gives the same realisations)', defaultText: '1' };
const DEPTH: OptionSpec = {
  name: 'depth', kind: 'number', placeholder: 'D', unit: 'm', help: 'depth of the layer: adds the volume above the threshold (area × depth)', defaultText: 'none',
};

/** --workers for the commands whose threads share out realisations (`simulate`, `report`). */
export const SIMULATION_WORKERS: OptionSpec = {
  name: 'workers', kind: 'number', placeholder: 'N', help: 'worker threads that share out the realisations (1 to 256)', unit: 'threads', defaultText: 'one per core of this machine',
};

/** "1 worker thread", "4 worker threads". */
export function threadsText(threads: number): string {
  return `${threads} worker thread${threads === 1 ? '' : 's'}`;
}

/** Like `naming`, for asynchronous work: an input problem without a file gets the file it concerns. */
export async function namingAsync<T>(files: { samples?: string; model?: string }, work: () => Promise<T>): Promise<T> {
  try {
    return await work();
  } catch (e) {
    return naming(files, () => { throw e; });
  }
}

/** Options `gapwise grid` lists for support and simulation. */
export const GRID_SIMULATION_OPTIONS: OptionSpec[] = [
  SUPPORT,
  BLOCK_POINTS,
  { name: 'realisations', kind: 'number', placeholder: 'N', help: 'conditional realisations for P(exceed) and the area above --threshold with its 5–95 % interval', defaultText: 'none (closed-form kriging)' },
  SEED,
  DEPTH,
];

/** How the choice of exact or local conditioning is made, for help texts (generated from its constants). */
const AUTOMATIC_SIMULATION_PATH_TEXT = 'automatic: the cheaper of kriging the residuals from all samples and from local neighbourhoods by estimated cost '
  + '(samples, lattice nodes, realisations, threads); a local run is measured against exact kriging at seeded random nodes, grown when it misses '
  + `--tolerance, or replaced by exact conditioning; never exact above ${countText(EXACT_SAMPLE_LIMIT)} samples`;

/** The options of `simulate` that choose between exact and local conditioning. */
const SIMULATION_PATH_OPTIONS: OptionSpec[] = [
  {
    name: 'neighbours', kind: 'number', placeholder: 'M', unit: 'samples',
    help: `local conditioning: the residuals at each lattice node are kriged from its M nearest samples (1 to ${countText(MAX_LOCAL_NEIGHBOURS)}); a given M is not grown`,
    defaultText: `${DEFAULT_SIMULATION_NEIGHBOURS}, grown when the measured error misses --tolerance`,
  },
  { name: 'exact', kind: 'boolean', help: `condition by kriging from all samples whatever their number (memory 8·n² bytes per thread; up to ${countText(EXACT_SAMPLE_LIMIT)} samples)`, defaultText: AUTOMATIC_SIMULATION_PATH_TEXT },
  { name: 'local', kind: 'boolean', help: 'condition from local neighbourhoods whatever the number of samples (their error is still measured and reported)', defaultText: 'automatic, as for --exact' },
  {
    name: 'tolerance', kind: 'string', placeholder: 'mean=P,sd=P',
    help: 'how close local conditioning must come to exact kriging: largest difference of the realisations\' mean and sd, in % of the prior sd (0 takes exact conditioning)',
    defaultText: `mean=${DEFAULT_TOLERANCE.mean},sd=${DEFAULT_TOLERANCE.sd}`,
  },
];

/** Options `gapwise simulate` lists. */
export const SIMULATE_OPTIONS: OptionSpec[] = [
  { name: 'count', kind: 'number', placeholder: 'N', help: `number of realisations (1 to ${MAX_REALISATIONS.toLocaleString('en')})`, required: true },
  SEED,
  SUPPORT,
  BLOCK_POINTS,
  DEPTH,
  ...SIMULATION_PATH_OPTIONS,
];

/** What --exact, --local, --neighbours and --tolerance ask of the conditioning (plain data). */
export interface SimulationPathRequest {
  force?: 'exact' | 'local';
  neighbours?: number;
  tolerance: { mean: number; sd: number };
}

/** Reads --exact, --local, --neighbours and --tolerance. Throws GapwiseError('bad-option') for contradictory or out-of-range values. */
export function readSimulationPathRequest(values: OptionValues): SimulationPathRequest {
  const exact = booleanOption(values, 'exact');
  const local = booleanOption(values, 'local');
  const neighbours = numberOption(values, 'neighbours');
  if (exact && local) throw new GapwiseError('bad-option', 'Options "--exact" and "--local" contradict each other; expected at most one of them.');
  if (neighbours !== undefined && !(Number.isInteger(neighbours) && neighbours >= 1 && neighbours <= MAX_LOCAL_NEIGHBOURS)) {
    throw new GapwiseError('bad-option', `Option "--neighbours" expects a whole number of samples from 1 to ${countText(MAX_LOCAL_NEIGHBOURS)}, got ${neighbours}.`);
  }
  if (exact && neighbours !== undefined) {
    throw new GapwiseError('bad-option', 'Option "--neighbours" sets the size of local neighbourhoods; it does not apply with "--exact" (exact conditioning uses all samples).');
  }
  const toleranceText = stringOption(values, 'tolerance');
  return {
    ...(exact ? { force: 'exact' as const } : local ? { force: 'local' as const } : {}),
    ...(neighbours !== undefined ? { neighbours } : {}),
    tolerance: toleranceText === undefined ? { ...DEFAULT_TOLERANCE } : parseTolerance(toleranceText),
  };
}

/**
 * The notes that say how the realisations were conditioned and why, in the words predict uses:
 * "conditioned by kriging from all 500 samples; chosen automatically: ... (--local overrides)", and for a
 * local run its measured error.
 */
export function describeSimulationPath(p: SimulationPath, n: number): string[] {
  const c = p.choice;
  if (c.path === 'exact') {
    return [`conditioned by kriging from all ${countText(n)} samples${c.automatic ? `; chosen automatically: ${c.reason} (--local overrides)` : ' (--exact)'}`];
  }
  const m = Math.min(p.neighbours ?? DEFAULT_SIMULATION_NEIGHBOURS, n);
  const why = c.automatic ? `; chosen automatically: ${c.reason} (--exact overrides)` : ` (--local${c.reason.includes('grown') ? `; ${c.reason.slice(c.reason.indexOf('grown'))}` : ''})`;
  const notes = [`conditioned from the ${m} nearest samples of each lattice node (local neighbourhoods); ${countText(n)} samples${why}`];
  if (p.accuracy) notes.push(`measured error of the local conditioning ${describeAccuracy(p.accuracy)}`);
  return notes;
}

/** What the options ask for (plain data). */
export interface SimulationChoice {
  support: 'point' | 'block';
  /** Points per cell side for block support. */
  blockPoints: number;
  /** Realisations, when asked for. */
  realisations?: number;
  seed: number;
  depth?: number;
}

/**
 * Reads and checks the support and simulation options. `countOption` is the name of the option
 * holding N ('realisations' for grid, 'count' for simulate). Throws GapwiseError('bad-option').
 */
export function readSimulationChoice(values: OptionValues, model: CovarianceModel, countOption: 'realisations' | 'count' = 'realisations'): SimulationChoice {
  const support = (stringOption(values, 'support') ?? 'point') as 'point' | 'block';
  const k = numberOption(values, 'block-points');
  const n = numberOption(values, countOption);
  const seed = numberOption(values, 'seed');
  const depth = numberOption(values, 'depth');
  const threshold = numberOption(values, 'threshold');
  if (k !== undefined && !(Number.isInteger(k) && k >= 1 && k <= 16)) {
    throw new GapwiseError('bad-option', `Option "--block-points" expects a whole number from 1 to 16, got ${k}.`);
  }
  if (k !== undefined && support !== 'block') throw new GapwiseError('bad-option', 'Option "--block-points" applies to block support; expected "--support block" with it.');
  if (n !== undefined && !(Number.isInteger(n) && n >= 1 && n <= MAX_REALISATIONS)) {
    throw new GapwiseError('bad-option', `Option "--${countOption}" expects a whole number from 1 to ${MAX_REALISATIONS.toLocaleString('en')}, got ${n}.`);
  }
  if (seed !== undefined && !(Number.isInteger(seed) && Math.abs(seed) <= 2 ** 31)) {
    throw new GapwiseError('bad-option', `Option "--seed" expects a whole number, got ${seed}.`);
  }
  if (depth !== undefined && !(depth > 0 && Number.isFinite(depth))) {
    throw new GapwiseError('bad-option', `Option "--depth" expects a positive number of metres, got ${depth}.`);
  }
  if (depth !== undefined && threshold === undefined) {
    throw new GapwiseError('bad-option', 'Option "--depth" gives the volume above the action level; expected "--threshold T" with it.');
  }
  if (countOption === 'realisations' && depth !== undefined && n === undefined) {
    throw new GapwiseError('bad-option', 'Option "--depth" needs "--realisations N": the volume and its interval come from realisations.');
  }
  if (support === 'block' && model.transform === 'log' && n === undefined) {
    throw new GapwiseError('bad-option',
      `Block averages of a log model come from simulation; expected "--${countOption} N" (for example 200) with "--support block".`);
  }
  const choice: SimulationChoice = { support, blockPoints: support === 'block' ? k ?? DEFAULT_BLOCK_POINTS : 1, seed: seed ?? 1 };
  if (n !== undefined) choice.realisations = n;
  if (depth !== undefined) choice.depth = depth;
  return choice;
}

/** One extra band for the grid output. */
export interface SimulationBand {
  name: string;
  values: Float32Array;
}

/**
 * The area (and volume) above the threshold of a simulation summary as the commands print them:
 * median, p5, p95 and mean with their units (and the cells above, for `simulate`).
 */
export function areaFigures(a: ExceedanceAreaSummary): Pick<AreaReport, 'areaAbove' | 'volumeAbove'> & { cellsAbove: { median: number; p5: number; p95: number } } {
  return {
    areaAbove: { median: a.area.median, p5: a.area.p05, p95: a.area.p95, mean: a.area.mean, unit: 'm²' },
    cellsAbove: { median: a.cells.median, p5: a.cells.p05, p95: a.cells.p95 },
    ...(a.volume ? { volumeAbove: { median: a.volume.median, p5: a.volume.p05, p95: a.volume.p95, mean: a.volume.mean, unit: 'm³' as const, depth: a.volume.depth } } : {}),
  };
}

/** Area above the threshold across realisations (JSON-ready). */
export interface AreaReport {
  threshold: number;
  realisations: number;
  seed: number;
  support: 'point' | 'block';
  areaAbove: { median: number; p5: number; p95: number; mean: number; unit: 'm²' };
  volumeAbove?: { median: number; p5: number; p95: number; mean: number; unit: 'm³'; depth: number };
}

/**
 * What `grid` writes for a choice, given the point surface it already computed:
 * - point support, no realisations: nothing (bands = [], surface unchanged);
 * - block support, no realisations: `surface` = block-kriged mean, sd, P(block > T) replacing the point one;
 * - realisations: a band "P(... > T) from N realisations" (when there is a threshold), a band of the
 *   realisation mean for block support with a log model, and `area` for the summary; they are drawn
 *   over `workers` threads (default one per core; `threads` says how many were used).
 * Rejects with GapwiseError as the core functions throw it.
 */
export async function addSimulationBands(input: {
  samples: Samples; model: CovarianceModel; grid: Grid; choice: SimulationChoice; threshold?: number; unit?: string;
  workers?: number; onProgress?: (done: number, total: number) => void;
  /** Covariate model: the encoded covariates at the block points of every cell (core/prediction/block-kriging.ts order; one per cell for point support). */
  covariates?: Float64Array;
  /** Exact or local conditioning: forced, or chosen by cost within this tolerance (default: chosen, default tolerance). */
  choose?: { force?: 'exact' | 'local'; tolerance?: Tolerance };
}): Promise<{ surface?: SurfaceResult; bands: SimulationBand[]; area?: AreaReport; warnings: Warning[]; threads?: number; path?: SimulationPath }> {
  const { samples, model, grid, choice, threshold, unit } = input;
  const bands: SimulationBand[] = [];
  const warnings: Warning[] = [];
  let surface: SurfaceResult | undefined;
  if (choice.support === 'block' && model.transform !== 'log') {
    surface = computeBlockSurface(samples, model, grid, {
      points: choice.blockPoints, ...(threshold !== undefined ? { threshold } : {}), ...(input.covariates ? { covariates: input.covariates } : {}),
    });
    warnings.push(...surface.warnings);
  }
  if (choice.realisations === undefined) return { ...(surface ? { surface } : {}), bands, warnings };
  const threads = simulationThreads(choice.realisations, input.workers);
  const sim = await simulateParallel(samples, model, grid, {
    count: choice.realisations, seed: choice.seed, support: choice.support, blockPoints: choice.blockPoints,
    keepRealisations: false,
    ...(input.covariates ? { covariates: input.covariates } : {}),
    ...(threshold !== undefined ? { threshold } : {}),
    ...(choice.depth !== undefined ? { depth: choice.depth } : {}),
  }, { workers: threads, ...(input.onProgress ? { onProgress: input.onProgress } : {}), choose: input.choose ?? {} });
  warnings.push(...sim.warnings);
  const u = unit ? ` ${unit}` : '';
  if (choice.support === 'block' && model.transform === 'log') {
    bands.push({ name: `block mean from ${sim.count} realisations${unit ? ` (${unit})` : ''}`, values: Float32Array.from(sim.mean) });
  }
  let area: AreaReport | undefined;
  if (sim.pExceed && sim.area && threshold !== undefined) {
    bands.push({ name: `P(${choice.support === 'block' ? 'block mean' : 'value'} > ${threshold}${u}) from ${sim.count} realisations`, values: Float32Array.from(sim.pExceed) });
    const { areaAbove, volumeAbove } = areaFigures(sim.area);
    area = { threshold, realisations: sim.count, seed: choice.seed, support: choice.support, areaAbove, ...(volumeAbove ? { volumeAbove } : {}) };
  }
  return { ...(surface ? { surface } : {}), bands, ...(area ? { area } : {}), warnings, threads, ...(sim.path ? { path: sim.path } : {}) };
}
