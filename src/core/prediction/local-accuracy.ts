/**
 * The measured error of local neighbourhoods (./local-kriging.ts) against exact kriging, and the
 * growth of the neighbourhood when a tolerance is missed.
 *
 * After a local run, a seeded random subset of the targets (CHECK_COUNT, all when fewer; see
 * ./path-choice.ts) is kriged again by the reference: exact kriging from all samples up to
 * MAX_EXACT_SAMPLES samples (./kriging.ts), above that kriging from the REFERENCE_NEIGHBOURS nearest
 * samples of each checked target around the GLS mean of all samples. The differences of mean and sd
 * at those targets are reported as largest and root-mean-square, in % of the prior sd of the
 * surface (√ of its sill without the nugget; on the log scale for a log model, where kriging works).
 * The starting settings are tried at the checked targets alone first (local values do not depend on
 * which targets are predicted together, ./local-kriging.ts, so a subset's values equal those of a
 * full run). When the largest difference misses the tolerance, larger settings are tried there too,
 * cheapest first (the GLS mean of all samples, then 1.5 and 2 times the neighbours in turn up to
 * maxGrownNeighbours(n)). When most checked targets missed, the first setting within the tolerance runs
 * once at every target (a targeted rerun would rerun nearly all of them). Otherwise, after a first run,
 * each step up to it reruns only the targets whose own values still move as the neighbourhood grows
 * (affectedTargets, calibrated on the checked targets that missed). A grown result is measured again
 * at a fresh seeded subset against a new reference, and that measurement is the one reported. When it
 * misses, every target is rerun with the grown setting (up to EXACT_SAMPLE_LIMIT samples), then exact
 * kriging may be taken, or a warning says the tolerance was missed.
 * Why the reference above MAX_EXACT_SAMPLES samples is kriging from the R nearest: with the mean
 * fixed at the GLS estimate, a sample beyond the R-th nearest changes the kriging answer only through
 * the screened remainder of the covariance; on the benchmark field (100,000 samples, scale 17 sample
 * spacings, 8 % nugget) the local answer converged geometrically (largest mean difference 4.5 %, 2.1 %,
 * 0.48 % of the prior sd from 800 at 64, 128, 256 neighbours; 800 and 1,200 differed by 0.05 % at 200
 * targets), so at R = 800 the reference's own distance from exact kriging is far below the 1 % tolerance.
 * Cost: the reference (see ./path-choice.ts localCost), per tried setting c local predictions; a
 * growth at every target costs one run with the grown setting, a stepwise one the first run, the signal
 * (a run with half the starting neighbours, about an eighth of the first run) and the rerun targets;
 * a second reference for the fresh subset.
 */
import type { CovarianceModel } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import { createRandom } from '../shared/random.ts';
import type { Warning } from '../shared/errors.ts';
import { surfaceVariance } from '../covariance/covariance.ts';
import { covariateColumnCount, trendColumnCount } from '../covariance/trend.ts';
import { cellCentres, type Grid } from '../geometry/grid.ts';
import { spatialOrder } from './target-spacing.ts';
import { createPredictor, type Prediction } from './kriging.ts';
import { createLocalPredictor, DEFAULT_LOCAL_NEIGHBOURS, globalMeanCoefficients, type LocalKrigingOptions } from './local-kriging.ts';
import { DEFAULT_TOLERANCE, EXACT_SAMPLE_LIMIT, GROWTH_BUDGET, GROWTH_OPERATIONS_PER_THREAD, REFERENCE_NEIGHBOURS, checkCount, localTargetCost, type Tolerance } from './path-choice.ts';
import { MAX_EXACT_SAMPLES } from '../shared/sizes.ts';

/** Largest neighbourhood the growth tries before the exact path (checked against exact kriging). */
export const MAX_GROWN_NEIGHBOURS = 512;
/** Largest neighbourhood the growth tries when the reference is itself a neighbourhood (REFERENCE_NEIGHBOURS). */
const MAX_GROWN_NEIGHBOURS_LARGE = 256;

/** The largest neighbourhood the growth tries for n samples. */
export function maxGrownNeighbours(samples: number): number {
  return Math.min(samples, samples <= MAX_EXACT_SAMPLES ? MAX_GROWN_NEIGHBOURS : MAX_GROWN_NEIGHBOURS_LARGE);
}
/** Seed of the checked subset when none is given. */
export const DEFAULT_CHECK_SEED = 1;

/** Largest and root-mean-square difference, % of the prior sd. */
export interface ErrorFigures {
  max: number;
  rms: number;
}

/** The measured error of a local run (plain data: goes to JSON, GeoTIFF metadata, the report). */
export interface LocalAccuracy {
  /** Targets checked, and of how many. */
  checked: number;
  targets: number;
  seed: number;
  /** 'exact': exact kriging from all samples; 'nearest': from the `referenceNeighbours` nearest samples. */
  reference: 'exact' | 'nearest';
  referenceNeighbours?: number;
  /** 'log' when compared on the log scale (log models). */
  scale: 'data' | 'log';
  /** The prior sd the figures are relative to (on `scale`). */
  priorSd: number;
  mean: ErrorFigures;
  sd: ErrorFigures;
  tolerance: Tolerance;
  within: boolean;
  /** Settings of the local run measured. */
  neighbours: number;
  globalMean: boolean;
}

/** Kriging-scale values at the checked targets. */
export interface CheckedValues {
  mean: ArrayLike<number>;
  sd: ArrayLike<number>;
}

/** The reference at the checked targets (kriging scale) and what it is. */
export interface ReferenceValues extends CheckedValues {
  reference: 'exact' | 'nearest';
  referenceNeighbours?: number;
}

/** `count` distinct target indices out of `total`, seeded, in increasing order (all when count ≥ total). */
export function chooseCheckTargets(total: number, count: number, seed = DEFAULT_CHECK_SEED): Uint32Array {
  const k = Math.max(0, Math.min(total, Math.floor(count)));
  if (k === total) return Uint32Array.from({ length: total }, (_, i) => i);
  // Partial Fisher–Yates on a sparse map: O(k) memory whatever the total.
  const r = createRandom(seed);
  const swapped = new Map<number, number>();
  const out = new Uint32Array(k);
  for (let i = 0; i < k; i++) {
    const j = i + Math.floor(r.uniform() * (total - i));
    const vj = swapped.get(j) ?? j;
    swapped.set(j, swapped.get(i) ?? i);
    out[i] = vj;
  }
  return out.sort();
}

/** The values of `p` at indices `idx`, on the kriging scale (log scale for a log model). */
export function checkedValues(p: Prediction, idx: ArrayLike<number>, log: boolean): CheckedValues {
  const mean = new Float64Array(idx.length);
  const sd = new Float64Array(idx.length);
  const m = log ? p.logMean! : p.mean;
  const s = log ? p.logSd! : p.sd;
  for (let k = 0; k < idx.length; k++) {
    mean[k] = m[idx[k]];
    sd[k] = s[idx[k]];
  }
  return { mean, sd };
}

/** Kriging of the checked targets by the reference (see the file header). */
export function referencePredictions(
  samples: Samples, model: CovarianceModel, x: ArrayLike<number>, y: ArrayLike<number>, globalBeta?: number[],
  covariates?: ArrayLike<number>,
): ReferenceValues {
  const withCovariates = covariates ? { covariates } : {};
  const n = samples.x.length;
  const log = model.transform === 'log';
  const all = Uint32Array.from({ length: x.length }, (_, i) => i);
  if (n <= MAX_EXACT_SAMPLES) {
    const p = createPredictor(samples, model).predict(x, y, withCovariates);
    return { ...checkedValues(p, all, log), reference: 'exact' };
  }
  const p = createLocalPredictor(samples, model, { neighbours: REFERENCE_NEIGHBOURS, globalMean: true, ...(globalBeta ? { globalBeta } : {}) }).predict(x, y, withCovariates);
  return { ...checkedValues(p, all, log), reference: 'nearest', referenceNeighbours: Math.min(n, REFERENCE_NEIGHBOURS) };
}

/** The prior sd of the surface on the kriging scale: √ of its sill without the nugget. */
export function priorSdOf(model: CovarianceModel): number {
  return Math.sqrt(surfaceVariance(model));
}

/** Largest and RMS differences of `local` from `reference`, % of `priorSd`. */
function errorFigures(reference: ArrayLike<number>, local: ArrayLike<number>, priorSd: number): ErrorFigures {
  let max = 0;
  let ss = 0;
  for (let k = 0; k < reference.length; k++) {
    const d = Math.abs(local[k] - reference[k]);
    // A NaN difference is never within tolerance.
    if (!(d <= max)) max = Number.isNaN(d) ? NaN : d;
    ss += d * d;
  }
  const count = Math.max(1, reference.length);
  return { max: (100 * max) / priorSd, rms: (100 * Math.sqrt(ss / count)) / priorSd };
}

/** Compares local values at the checked targets with the reference there. */
export function compareWithReference(
  model: CovarianceModel, reference: ReferenceValues, local: CheckedValues,
  info: { targets: number; seed: number; neighbours: number; globalMean: boolean; tolerance?: Tolerance },
): LocalAccuracy {
  const priorSd = priorSdOf(model);
  const tolerance = info.tolerance ?? DEFAULT_TOLERANCE;
  const mean = errorFigures(reference.mean, local.mean, priorSd);
  const sd = errorFigures(reference.sd, local.sd, priorSd);
  return {
    checked: reference.mean.length, targets: info.targets, seed: info.seed,
    reference: reference.reference,
    ...(reference.referenceNeighbours !== undefined ? { referenceNeighbours: reference.referenceNeighbours } : {}),
    scale: model.transform === 'log' ? 'log' : 'data',
    priorSd, mean, sd, tolerance,
    within: mean.max <= tolerance.mean && sd.max <= tolerance.sd,
    neighbours: info.neighbours, globalMean: info.globalMean,
  };
}

/** Local settings the growth may change (the rest of LocalKrigingOptions is kept). */
export interface LocalSettings {
  neighbours: number;
  globalMean: boolean;
}

/**
 * The next neighbourhood size after m: the next of 1, 2, 3, 4, 6, 8, 12, 16, 24, 32, 48, 64, 96, 128,
 * 192, 256, … (powers of two and 1.5 times them), so that a growth costs at most about 3.4 times
 * the step before (a neighbourhood costs about m³) instead of 8 times for a doubling.
 */
export function nextNeighbours(m: number): number {
  const p = 2 ** Math.floor(Math.log2(Math.max(1, m)));
  const between = 1.5 * p;
  return Number.isInteger(between) && between > m ? between : 2 * p;
}

/**
 * The larger settings to try after `start` missed the tolerance, cheapest first: the GLS mean of all
 * samples (when the trend is estimated), then larger neighbourhoods (nextNeighbours) up to maxGrownNeighbours(n).
 */
export function growthSteps(start: LocalSettings, samples: number, model: CovarianceModel): LocalSettings[] {
  const steps: LocalSettings[] = [];
  const estimated = trendColumnCount(model.trend ?? 'constant') > 0;
  let s = { ...start };
  if (!s.globalMean && estimated) {
    s = { ...s, globalMean: true };
    steps.push(s);
  }
  const cap = maxGrownNeighbours(samples);
  while (s.neighbours < cap) {
    s = { ...s, neighbours: Math.min(nextNeighbours(s.neighbours), cap) };
    steps.push(s);
  }
  return steps;
}

/** One tried setting and what it measured at the checked targets. */
export interface GrowthAttempt extends LocalSettings {
  meanMax: number;
  sdMax: number;
  within: boolean;
}

/**
 * Tries the growth steps at the checked targets only and returns the first within the tolerance
 * (null when none is), with every attempt's figures.
 */
export function findGrowth(
  samples: Samples, model: CovarianceModel, x: ArrayLike<number>, y: ArrayLike<number>, reference: ReferenceValues,
  start: LocalSettings, base: LocalKrigingOptions, tolerance: Tolerance = DEFAULT_TOLERANCE,
  covariates?: ArrayLike<number>,
): { settings: LocalSettings | null; attempts: GrowthAttempt[] } {
  const log = model.transform === 'log';
  const all = Uint32Array.from({ length: x.length }, (_, i) => i);
  const attempts: GrowthAttempt[] = [];
  for (const step of growthSteps(start, samples.x.length, model)) {
    const p = createLocalPredictor(samples, model, { ...base, ...step }).predict(x, y, covariates ? { covariates } : {});
    const a = compareWithReference(model, reference, checkedValues(p, all, log), { targets: x.length, seed: 0, ...step, tolerance });
    attempts.push({ ...step, meanMax: a.mean.max, sdMax: a.sd.max, within: a.within });
    if (a.within) return { settings: step, attempts };
  }
  return { settings: null, attempts };
}

/** Options of predictLocalChecked (plain data). */
export interface CheckedLocalOptions {
  local?: LocalKrigingOptions;
  tolerance?: Tolerance;
  seed?: number;
  /** Try larger settings when the tolerance is missed; default true. */
  grow?: boolean;
  /** Take exact kriging when no larger setting meets the tolerance; default true. */
  exactFallback?: boolean;
  /** A covariate model: the targets' encoded covariates, row-major (targets × covariate columns). */
  covariates?: ArrayLike<number>;
  /**
   * Most cost a growth may add, in multiples of the first run's estimated cost; default GROWTH_BUDGET
   * above EXACT_SAMPLE_LIMIT samples (or GROWTH_OPERATIONS_PER_THREAD per thread when that is more),
   * unlimited below (where exact kriging is the next step anyway).
   */
  growthBudget?: number;
  /** Threads the full-target runs are spread over (the growth budget grows with them); default 1. */
  threads?: number;
  /** Runs the full-target predictions (for example over worker threads); default: in this thread. */
  runTargets?: LocalTargetRunner;
}

/** A local prediction with its measured error and what was done to meet the tolerance. */
export interface CheckedLocalPrediction {
  prediction: Prediction;
  path: 'local' | 'exact';
  /** Settings of the local run returned (the last one run when the path became exact). */
  settings: LocalSettings;
  /** The measured error of the returned local values (of the last local run when the path became exact). */
  accuracy: LocalAccuracy;
  attempts: GrowthAttempt[];
  /** Sentences for the user: the growth or the switch to exact kriging, and a missed tolerance. */
  notes: string[];
  warnings: Warning[];
}

/** The prediction at targets given in `order` (order[k] = the target at position k), back in the targets' order. */
function unpermute(p: Prediction, order: Uint32Array): Prediction {
  const back = (a: Float64Array | undefined): Float64Array | undefined => {
    if (!a) return undefined;
    const out = new Float64Array(a.length);
    for (let k = 0; k < order.length; k++) out[order[k]] = a[k];
    return out;
  };
  return {
    mean: back(p.mean)!, sd: back(p.sd)!, sdObserved: back(p.sdObserved)!,
    ...(p.median ? { median: back(p.median)!, logMean: back(p.logMean)!, logSd: back(p.logSd)! } : {}),
  };
}

/** A one-line summary of a measurement: against what, where, largest and RMS differences, the tolerance. */
export function describeAccuracy(a: LocalAccuracy, what: 'targets' | 'samples' = 'targets'): string {
  const against = a.reference === 'exact'
    ? `exact ${what === 'samples' ? 'leave-one-out' : 'kriging'}`
    : `kriging from the ${a.referenceNeighbours!.toLocaleString('en-US')} nearest ${what === 'samples' ? 'other ' : ''}samples`;
  const f = (x: number): string => (x >= 10 ? x.toFixed(0) : x >= 1 ? x.toFixed(1) : x.toFixed(2));
  const sd = what === 'samples' ? 'sd_obs' : 'sd';
  return `against ${against} at ${a.checked.toLocaleString('en-US')} of ${a.targets.toLocaleString('en-US')} ${what} (seed ${a.seed}): `
    + `mean largest ${f(a.mean.max)} %, RMS ${f(a.mean.rms)} %; ${sd} largest ${f(a.sd.max)} %, RMS ${f(a.sd.rms)} % of the prior sd`
    + `${a.scale === 'log' ? ' (log scale)' : ''}; tolerance ${a.tolerance.mean} % / ${a.tolerance.sd} % ${a.within ? 'met' : 'MISSED'}`;
}

/** The values of `part` (predicted at targets `at`) written into `into` at those targets. */
function scatterInto(into: Prediction, part: Prediction, at: ArrayLike<number>): void {
  const put = (dst: Float64Array | undefined, src: Float64Array | undefined): void => {
    if (!dst || !src) return;
    for (let k = 0; k < at.length; k++) dst[at[k]] = src[k];
  };
  put(into.mean, part.mean);
  put(into.sd, part.sd);
  put(into.sdObserved, part.sdObserved);
  put(into.median, part.median);
  put(into.logMean, part.logMean);
  put(into.logSd, part.logSd);
}

/** A copy of a prediction's arrays (so later reruns do not change what an earlier step returned). */
function copyPrediction(p: Prediction): Prediction {
  const c = (a: Float64Array | undefined): Float64Array | undefined => (a ? Float64Array.from(a) : undefined);
  return {
    mean: c(p.mean)!, sd: c(p.sd)!, sdObserved: c(p.sdObserved)!,
    ...(p.median ? { median: c(p.median)!, logMean: c(p.logMean)!, logSd: c(p.logSd)! } : {}),
  };
}

/** For each checked target, whether its own difference from the reference misses the tolerance. */
export function missesAtEach(model: CovarianceModel, reference: CheckedValues, local: CheckedValues, tolerance: Tolerance): boolean[] {
  const priorSd = priorSdOf(model);
  return Array.from({ length: reference.mean.length }, (_, k) => {
    const dm = (100 * Math.abs(local.mean[k] - reference.mean[k])) / priorSd;
    const ds = (100 * Math.abs(local.sd[k] - reference.sd[k])) / priorSd;
    return !(dm <= tolerance.mean && ds <= tolerance.sd);
  });
}

/**
 * Which targets a growth step must rerun. The signal at each target is how much its own values move
 * between the previous setting and a smaller one (|Δmean| + |Δsd| on the kriging scale, % of the prior
 * sd): a target whose answer has settled as its neighbourhood grew is close to its limit. The checked
 * targets calibrate it: the threshold is half the smaller of the smallest signal among checked targets
 * that missed the tolerance and the tighter tolerance (none missed: nothing to rerun); every target at
 * or above it is rerun. A miss with a small signal lowers the threshold, so the rule errs towards
 * rerunning; the error reported afterwards is measured again on a fresh subset, whatever this rule chose.
 */
export function affectedTargets(
  signal: ArrayLike<number>, checked: ArrayLike<number>, checkedMissed: ArrayLike<boolean>, tolerance: Tolerance = DEFAULT_TOLERANCE,
): { rerun: Uint32Array; threshold: number } {
  let smallest = Infinity;
  for (let k = 0; k < checked.length; k++) if (checkedMissed[k]) smallest = Math.min(smallest, signal[checked[k]]);
  if (smallest === Infinity) return { rerun: new Uint32Array(0), threshold: Infinity };
  const threshold = Math.min(smallest, tolerance.mean, tolerance.sd) / 2;
  const out: number[] = [];
  for (let j = 0; j < signal.length; j++) if (!(signal[j] < threshold)) out.push(j);
  return { rerun: Uint32Array.from(out), threshold };
}

/** Per-target signal |Δmean| + |Δsd| between two predictions, % of the prior sd (kriging scale). */
function movement(a: Prediction, b: Prediction, log: boolean, priorSd: number): Float64Array {
  const am = log ? a.logMean! : a.mean;
  const bm = log ? b.logMean! : b.mean;
  const as = log ? a.logSd! : a.sd;
  const bs = log ? b.logSd! : b.sd;
  const out = new Float64Array(am.length);
  for (let j = 0; j < am.length; j++) {
    const d = Math.abs(am[j] - bm[j]) + Math.abs(as[j] - bs[j]);
    out[j] = Number.isNaN(d) ? Infinity : (100 * d) / priorSd;
  }
  return out;
}

/** Seed of the fresh subset that measures a grown run (a subset other than the one that chose the growth). */
export function freshSeed(seed: number): number {
  return seed + 1;
}

/**
 * Runs local predictions at many targets with the given local options, values in the order of the
 * targets given (for example over worker threads); the values must equal createLocalPredictor's.
 */
export type LocalTargetRunner = (
  local: LocalKrigingOptions, x: Float64Array, y: Float64Array, covariates: Float64Array | undefined,
) => Promise<Prediction & { warnings?: Warning[] }>;

/** One checked job: its inputs, the shared global trend, the targets' spatial order and the runs over them. */
interface CheckedJob {
  samples: Samples;
  model: CovarianceModel;
  x: ArrayLike<number>;
  y: ArrayLike<number>;
  options: CheckedLocalOptions;
  n: number;
  T: number;
  log: boolean;
  tolerance: Tolerance;
  seed: number;
  /** The local options with the global trend coefficients (when the trend is estimated). */
  base: LocalKrigingOptions;
  /** Targets visited cell by cell share neighbourhoods (./target-spacing.ts spatialOrder). */
  order: Uint32Array;
  warnings: Warning[];
  priorSd: number;
  /** The covariate rows of targets `at` (undefined without covariates). */
  rows(at: ArrayLike<number>): Float64Array | undefined;
  /** Predicts with settings `s` at the targets `at` (indices, in spatial order); values in that order. */
  runAt(s: LocalSettings, at: Uint32Array): Promise<Prediction>;
  /** Predicts with settings `s` at every target; values in the targets' order. */
  run(s: LocalSettings): Promise<Prediction>;
}

/** The job: the global trend coefficients once for every run, the reference and the growth (n > 1,000: a nearest-neighbour GLS, the costliest step to repeat). */
function startCheckedJob(samples: Samples, model: CovarianceModel, x: ArrayLike<number>, y: ArrayLike<number>, options: CheckedLocalOptions): CheckedJob {
  const warnings: Warning[] = [];
  let base = options.local ?? {};
  const estimated = trendColumnCount(model.trend ?? 'constant') > 0;
  if (estimated && base.globalBeta === undefined) {
    const g = globalMeanCoefficients(samples, model, base);
    base = { ...base, globalBeta: Array.from(g.beta) };
    warnings.push(...g.warnings);
  }
  const order = spatialOrder(x, y);
  const q = covariateColumnCount(model.trend ?? 'constant');
  const rows = (at: ArrayLike<number>): Float64Array | undefined => {
    const src = options.covariates;
    if (!src || q === 0) return undefined;
    const out = new Float64Array(at.length * q);
    for (let k = 0; k < at.length; k++) for (let j = 0; j < q; j++) out[k * q + j] = src[at[k] * q + j];
    return out;
  };
  const inThisThread: LocalTargetRunner = async (local, ax, ay, ac) => {
    const predictor = createLocalPredictor(samples, model, local);
    const p = predictor.predict(ax, ay, ac ? { covariates: ac } : {});
    return { ...p, warnings: predictor.warnings };
  };
  const runner = options.runTargets ?? inThisThread;
  const runAt = async (s: LocalSettings, at: Uint32Array): Promise<Prediction> => {
    const { warnings: said, ...p } = await runner({ ...base, ...s }, Float64Array.from(at, (i) => x[i]), Float64Array.from(at, (i) => y[i]), rows(at));
    for (const w of said ?? []) if (!warnings.some((v) => v.message === w.message)) warnings.push(w);
    return p;
  };
  return {
    samples, model, x, y, options, n: samples.x.length, T: x.length, log: model.transform === 'log',
    tolerance: options.tolerance ?? DEFAULT_TOLERANCE, seed: options.seed ?? DEFAULT_CHECK_SEED,
    base, order, warnings, priorSd: priorSdOf(model), rows, runAt,
    run: async (s) => unpermute(await runAt(s, order), order),
  };
}

/** The measurement at the seeded subset of the targets: its targets, reference, and comparisons. */
interface Measurement {
  seed: number;
  idx: Uint32Array;
  cx: Float64Array;
  cy: Float64Array;
  cc: Float64Array | undefined;
  reference: ReferenceValues;
  /** The measured error of values at every target (the checked ones are read). */
  measure(p: Prediction, s: LocalSettings): LocalAccuracy;
  /** The measured error of settings `s` computed at the checked targets only, and which of them miss. */
  trial(s: LocalSettings): { accuracy: LocalAccuracy; misses: boolean[] };
}

function measurementAt(job: CheckedJob, subsetSeed: number): Measurement {
  const { samples, model, x, y, T, log, tolerance } = job;
  const idx = chooseCheckTargets(T, checkCount(job.n, T), subsetSeed);
  const cx = Float64Array.from(idx, (i) => x[i]);
  const cy = Float64Array.from(idx, (i) => y[i]);
  const cc = job.rows(idx);
  const reference = referencePredictions(samples, model, cx, cy, job.base.globalBeta, cc);
  const compare = (values: CheckedValues, s: LocalSettings): LocalAccuracy =>
    compareWithReference(model, reference, values, { targets: T, seed: subsetSeed, ...s, tolerance });
  const all = Uint32Array.from({ length: idx.length }, (_, k) => k);
  return {
    seed: subsetSeed, idx, cx, cy, cc, reference,
    measure: (p, s) => compare(checkedValues(p, idx, log), s),
    trial: (s) => {
      // Local values do not depend on which targets are predicted together: these are the full run's.
      const p = createLocalPredictor(samples, model, { ...job.base, ...s }).predict(cx, cy, cc ? { covariates: cc } : {});
      const values = checkedValues(p, all, log);
      return { accuracy: compare(values, s), misses: missesAtEach(model, reference, values, tolerance) };
    },
  };
}

/** Neighbourhood operations a growth may spend, and that as a multiple of the first run's. */
function growthBudgetOf(job: CheckedJob, first: LocalSettings): { operations: number; multiple: number } {
  const firstCost = job.T * localTargetCost(first.neighbours);
  const given = job.options.growthBudget;
  if (given !== undefined) return { operations: given * firstCost, multiple: given };
  // Up to EXACT_SAMPLE_LIMIT samples exact kriging is the next step anyway.
  if (job.n <= EXACT_SAMPLE_LIMIT) return { operations: Infinity, multiple: Infinity };
  const threads = Math.max(1, Math.floor(job.options.threads ?? 1));
  const operations = Math.max(GROWTH_BUDGET * firstCost, GROWTH_OPERATIONS_PER_THREAD * threads);
  return { operations, multiple: Number((operations / firstCost).toPrecision(2)) };
}

/** The sentence for a growth not done: what it would cost against the budget, and the option that does it. */
function tooCostly(targets: number, grown: LocalSettings, projected: number, multiple: number): string {
  return `rerunning ${targets.toLocaleString('en-US')} targets up to the ${grown.neighbours} nearest would cost about `
    + `${Math.ceil(projected / 1e9)} billion operations, more than ${multiple} times the first run, so it was not done unasked (--neighbours ${grown.neighbours} does it)`;
}

/** The first measurement's miss, in words. */
function missedText(first: LocalAccuracy): string {
  return `the ${first.neighbours} nearest samples${first.globalMean ? ' with the GLS mean' : ''} missed the tolerance (mean ${first.mean.max.toFixed(2)} %, sd ${first.sd.max.toFixed(2)} %)`;
}

/** Exact kriging from all samples instead, with the measurement that led there. */
function exactInstead(
  job: CheckedJob, why: string, measured: LocalAccuracy, settings: LocalSettings, attempts: GrowthAttempt[], notes: string[],
): CheckedLocalPrediction {
  const exact = createPredictor(job.samples, job.model);
  notes.push(`${why}; took exact kriging from all ${job.n.toLocaleString('en-US')} samples instead`);
  const covariates = job.options.covariates;
  return {
    prediction: exact.predict(job.x, job.y, covariates ? { covariates } : {}), path: 'exact', settings,
    accuracy: measured, attempts, notes, warnings: [...job.warnings, ...exact.warnings],
  };
}

/**
 * The grown setting at every target in one run (when most checked targets missed, a targeted rerun
 * would rerun nearly all of them after a first run that is then thrown away), measured at a fresh
 * subset; exact kriging or a warning when that misses.
 */
async function growEverywhere(
  job: CheckedJob, first: LocalAccuracy, missedCount: number, grown: LocalSettings, attempts: GrowthAttempt[],
): Promise<CheckedLocalPrediction> {
  const pending = job.run(grown);
  // Awaited below; a failure of the reference first must not leave its rejection unhandled.
  pending.catch(() => {});
  // The fresh reference while the run goes on (on other threads when the runner uses them).
  const fresh = measurementAt(job, freshSeed(job.seed));
  const prediction = await pending;
  const accuracy = fresh.measure(prediction, grown);
  const gm = grown.globalMean && !first.globalMean ? ' with the GLS mean of all samples' : '';
  const notes = [`${missedText(first)} at ${missedCount} of ${first.checked} checked targets; grown to the ${grown.neighbours} nearest${gm} at every target (the first setting within the tolerance there); measured again at a fresh subset (seed ${fresh.seed})`];
  if (!accuracy.within && job.options.exactFallback !== false && job.n <= EXACT_SAMPLE_LIMIT) {
    return exactInstead(job, `the grown neighbourhoods still missed the tolerance at the fresh subset (mean ${accuracy.mean.max.toFixed(2)} %, sd ${accuracy.sd.max.toFixed(2)} %)`, accuracy, grown, attempts, notes);
  }
  if (!accuracy.within) {
    job.warnings.push({ code: 'tolerance-missed', message: `Local neighbourhoods missed the tolerance after growing (${describeAccuracy(accuracy)}); exact kriging was not taken.` });
  }
  return { prediction, path: 'local', settings: grown, accuracy, attempts, notes, warnings: job.warnings };
}

/**
 * Step by step up to the grown setting after a first run at every target, each step rerunning only
 * the targets still moving (affectedTargets), within the growth budget; then measured at a fresh
 * subset, rerun everywhere or replaced by exact kriging when that misses (up to EXACT_SAMPLE_LIMIT samples).
 */
async function growStepwise(
  job: CheckedJob, check: Measurement, firstRun: Prediction, first: LocalAccuracy, start: LocalSettings,
  grown: LocalSettings, attempts: GrowthAttempt[],
): Promise<CheckedLocalPrediction> {
  const { n, T, log, tolerance, model } = job;
  const steps = growthSteps(start, n, model);
  const last = steps.findIndex((s) => s.neighbours === grown.neighbours && s.globalMean === grown.globalMean);
  let prediction = firstRun;
  let settings = start;
  let previous = start;
  // The values one step back, for the signal (null: none computed yet).
  let before: Prediction | null = null;
  const stepNotes: string[] = [];
  const notes: string[] = [];
  const budget = growthBudgetOf(job, start);
  let spent = 0;
  let stopped: string | null = null;
  for (const step of steps.slice(0, last + 1)) {
    const perChecked = missesAtEach(model, check.reference, checkedValues(prediction, check.idx, log), tolerance);
    if (!perChecked.some(Boolean)) break;
    let at: Uint32Array;
    if (step.neighbours > previous.neighbours && step.globalMean === previous.globalMean) {
      // The signal: how far each target moved over the last step (the first time, from half the
      // neighbours to the starting neighbourhood: about an eighth of the starting run's cost).
      before ??= await job.run({ ...previous, neighbours: Math.max(1, Math.floor(previous.neighbours / 2)) });
      at = affectedTargets(movement(prediction, before, log, job.priorSd), check.idx, perChecked, tolerance).rerun;
    } else {
      at = Uint32Array.from({ length: T }, (_, j) => j);
    }
    // What reaching the grown setting at these targets would cost (the last step dominates).
    const projected = at.length * localTargetCost(grown.neighbours);
    if (spent + projected > budget.operations) {
      stopped = tooCostly(at.length, grown, projected, budget.multiple);
      break;
    }
    spent += at.length * localTargetCost(step.neighbours);
    const next = copyPrediction(prediction);
    if (at.length > 0) {
      // In spatial order, so consecutive targets share neighbourhoods.
      const member = new Uint8Array(T);
      for (const j of at) member[j] = 1;
      const inOrder = job.order.filter((i) => member[i] === 1);
      scatterInto(next, await job.runAt(step, inOrder), inOrder);
    }
    stepNotes.push(`${at.length.toLocaleString('en-US')} with the ${step.neighbours} nearest${step.globalMean && !previous.globalMean ? ' and the GLS mean' : ''}`);
    before = prediction;
    prediction = next;
    previous = step;
    settings = step;
  }
  if (stepNotes.length === 0 && stopped !== null) {
    // Nothing was rerun: the first measurement describes the values returned.
    notes.push(`${missedText(first)}; ${stopped}`);
    job.warnings.push({ code: 'tolerance-missed', message: `Local neighbourhoods missed the tolerance (${describeAccuracy(first)}); growing them here costs too much to do unasked.` });
    return { prediction, path: 'local', settings, accuracy: first, attempts, notes, warnings: job.warnings };
  }
  const fresh = measurementAt(job, freshSeed(job.seed));
  let accuracy = fresh.measure(prediction, settings);
  const gm = settings.globalMean && !first.globalMean ? ' with the GLS mean of all samples' : '';
  notes.push(`${missedText(first)}; grown to the ${settings.neighbours} nearest${gm} where the values still moved with the neighbourhood's size (rerun: ${stepNotes.join(', then ')} of ${T.toLocaleString('en-US')} targets)${stopped !== null ? `; then ${stopped}` : ''}; measured again at a fresh subset (seed ${fresh.seed})`);
  if (!accuracy.within && n <= EXACT_SAMPLE_LIMIT) {
    // The targeted rerun left out targets that needed it: rerun every target with the grown setting
    // (above EXACT_SAMPLE_LIMIT samples the miss is reported instead: a full rerun there is the
    // costliest step of all, and the figure says how far the values are).
    notes.push(`that missed the tolerance at the fresh subset (mean ${accuracy.mean.max.toFixed(2)} %, sd ${accuracy.sd.max.toFixed(2)} %); rerun for every target with the ${grown.neighbours} nearest`);
    settings = grown;
    prediction = await job.run(settings);
    accuracy = fresh.measure(prediction, settings);
  }
  if (!accuracy.within && job.options.exactFallback !== false && n <= EXACT_SAMPLE_LIMIT) {
    return exactInstead(job, `the grown neighbourhoods still missed the tolerance at the fresh subset (mean ${accuracy.mean.max.toFixed(2)} %, sd ${accuracy.sd.max.toFixed(2)} %)`, accuracy, settings, attempts, notes);
  }
  if (!accuracy.within) {
    job.warnings.push({ code: 'tolerance-missed', message: `Local neighbourhoods missed the tolerance after growing (${describeAccuracy(accuracy)}); exact kriging was not taken.` });
  }
  return { prediction, path: 'local', settings, accuracy, attempts, notes, warnings: job.warnings };
}

/** No larger setting met the tolerance: exact kriging (automatic choice, up to EXACT_SAMPLE_LIMIT samples) or the best attempt with a warning. */
async function noGrowthMet(
  job: CheckedJob, check: Measurement, firstRun: Prediction, first: LocalAccuracy, start: LocalSettings, attempts: GrowthAttempt[],
): Promise<CheckedLocalPrediction> {
  const { tolerance } = job;
  if (job.options.exactFallback !== false && job.n <= EXACT_SAMPLE_LIMIT) {
    return exactInstead(job, `${missedText(first)}, and no neighbourhood up to ${maxGrownNeighbours(job.n)} samples met it (best mean ${Math.min(...attempts.map((a) => a.meanMax)).toFixed(2)} %)`, first, start, attempts, []);
  }
  let best: LocalSettings = start;
  let bestScore = first.mean.max / tolerance.mean + first.sd.max / tolerance.sd;
  for (const a of attempts) {
    const score = a.meanMax / tolerance.mean + a.sdMax / tolerance.sd;
    if (score < bestScore) { bestScore = score; best = a; }
  }
  let settings = start;
  let prediction = firstRun;
  let accuracy = first;
  if (best !== start) {
    settings = { neighbours: best.neighbours, globalMean: best.globalMean };
    prediction = await job.run(settings);
    accuracy = check.measure(prediction, settings);
  }
  job.warnings.push({ code: 'tolerance-missed', message: `Local neighbourhoods missed the tolerance (${describeAccuracy(accuracy)}); no larger neighbourhood met it and exact kriging was not taken.` });
  return { prediction, path: 'local', settings, accuracy, attempts, notes: [], warnings: job.warnings };
}

/**
 * Local prediction at every target, its error measured at a seeded subset, grown or replaced by
 * exact kriging when the tolerance is missed (see the file header).
 *
 * The starting settings are first tried at the checked targets alone (their values equal a full
 * run's there). Within the tolerance, one run at every target follows. When they miss, the growth
 * steps are tried there too, and the first within the tolerance is taken: run at every target at once
 * when most checked targets missed (within the growth budget), else after a first run, step by step,
 * each step rerunning the targets whose own values still move with the neighbourhood's size
 * (affectedTargets). A grown result is measured again at a fresh seeded subset (freshSeed), and that
 * is the error reported; when it misses, exact kriging is taken (exactFallback, up to
 * EXACT_SAMPLE_LIMIT samples) or a warning says so. `runTargets` runs the full-target predictions
 * (worker threads on the command line).
 */
export async function predictLocalChecked(
  samples: Samples, model: CovarianceModel, x: ArrayLike<number>, y: ArrayLike<number>, options: CheckedLocalOptions = {},
): Promise<CheckedLocalPrediction> {
  const job = startCheckedJob(samples, model, x, y, options);
  // The GLS mean of all samples only means something when the trend is estimated.
  const estimated = trendColumnCount(model.trend ?? 'constant') > 0;
  const local = options.local ?? {};
  const start: LocalSettings = { neighbours: Math.min(local.neighbours ?? DEFAULT_LOCAL_NEIGHBOURS, job.n), globalMean: local.globalMean === true && estimated };
  const check = measurementAt(job, job.seed);
  const trial = check.trial(start);
  if (trial.accuracy.within || options.grow === false) {
    const prediction = await job.run(start);
    return { prediction, path: 'local', settings: start, accuracy: check.measure(prediction, start), attempts: [], notes: [], warnings: job.warnings };
  }
  const { settings: grown, attempts } = findGrowth(samples, model, check.cx, check.cy, check.reference, start, job.base, job.tolerance, check.cc);
  const missedCount = trial.misses.filter(Boolean).length;
  if (grown && 2 * missedCount >= trial.misses.length && job.T * localTargetCost(grown.neighbours) <= growthBudgetOf(job, start).operations) {
    return growEverywhere(job, trial.accuracy, missedCount, grown, attempts);
  }
  const firstRun = await job.run(start);
  const first = check.measure(firstRun, start);
  if (grown) return growStepwise(job, check, firstRun, first, start, grown, attempts);
  return noGrowthMet(job, check, firstRun, first, start, attempts);
}

/** A grid surface's measured error and, when asked and the tolerance was missed, the growth that meets it. */
export interface LocalGridCheck {
  accuracy: LocalAccuracy;
  /** The first larger settings within the tolerance at the checked cells (null: none, or not asked). */
  grown: LocalSettings | null;
  /** Every larger setting tried, with its figures (empty when none was). */
  attempts: GrowthAttempt[];
}

/**
 * The measured error of a local-neighbourhood surface on a grid computed with `settings` (tiles of the
 * grid's cell, as every surface path uses): the local values at a seeded subset of the cells, which
 * equal the surface's there (results do not depend on which cells are predicted together), against
 * the reference. With `grow`, a missed tolerance tries the growth steps at the same cells
 * (findGrowth); the caller reruns the surface with `grown`, or takes the exact path when it is null.
 * For the app, which computes surfaces band by band in workers.
 */
export function checkLocalGrid(
  samples: Samples, model: CovarianceModel, grid: Grid, settings: LocalSettings,
  options: { tolerance?: Tolerance; seed?: number; grow?: boolean } = {},
): LocalGridCheck {
  const n = samples.x.length;
  const seed = options.seed ?? DEFAULT_CHECK_SEED;
  const centres = cellCentres(grid);
  const T = centres.x.length;
  const idx = chooseCheckTargets(T, checkCount(n, T), seed);
  const cx = Float64Array.from(idx, (i) => centres.x[i]);
  const cy = Float64Array.from(idx, (i) => centres.y[i]);
  const reference = referencePredictions(samples, model, cx, cy);
  const p = createLocalPredictor(samples, model, { ...settings, targetSpacing: grid.cell }).predict(cx, cy);
  const all = Uint32Array.from({ length: idx.length }, (_, k) => k);
  const accuracy = compareWithReference(model, reference, checkedValues(p, all, model.transform === 'log'), {
    targets: T, seed, ...settings, ...(options.tolerance ? { tolerance: options.tolerance } : {}),
  });
  if (accuracy.within || options.grow !== true) return { accuracy, grown: null, attempts: [] };
  const { settings: grown, attempts } = findGrowth(samples, model, cx, cy, reference, settings, { targetSpacing: grid.cell }, options.tolerance);
  return { accuracy, grown, attempts };
}

/** The measured error of a local-neighbourhood surface on a grid (checkLocalGrid without the growth). */
export function measureLocalGrid(
  samples: Samples, model: CovarianceModel, grid: Grid, settings: LocalSettings,
  options: { tolerance?: Tolerance; seed?: number } = {},
): LocalAccuracy {
  return checkLocalGrid(samples, model, grid, settings, options).accuracy;
}
