/**
 * The covariance model: the JSON object shared by the app, the CLI, project files and tests.
 *
 * Structures add up. Distances are in working-CRS units (metres). `scale` is the same length in every
 * family (Rasmussen & Williams 2006, eq. 4.14); for the spherical family it is the range.
 * Anisotropy: azimuth of the long axis in degrees clockwise from grid north, ratio = short/long ≤ 1.
 *
 * Sane magnitudes, checked in two places:
 * - on parse (`parseModel`), each parameter on its own: every number finite, sills and a known mean
 *   within ±1e100 (so squares, sums over thousands of samples and products of covariances stay far below
 *   the double-precision limit of 1.8e308), scales from 1e-6 to 1e9 metres (a micrometre to 25 times the
 *   Earth's circumference), ν from 0.05 to 100 (where ./matern.ts is accurate), anisotropy ratio from
 *   0.001 to 1;
 * - where the model meets data (`checkModelScale`, called by every predictor), relative to the values:
 *   the total sill's square root and a known mean's distance from the values' mean within
 *   MODEL_DATA_RATIO (1e6) standard deviations of the values, and every scale within MODEL_DATA_RATIO
 *   times the diagonal of the samples' extent. Beyond those the covariance matrix is numerically constant or the
 *   data carry no weight, and results are noise or infinite.
 */
import { GapwiseError } from '../shared/errors.ts';
import { fitWarnings, type FitWarning } from './fit-warnings.ts';

export type Family = 'exponential' | 'gaussian' | 'matern' | 'spherical';
export type StructureType = 'nugget' | Family;

export interface NuggetStructure {
  type: 'nugget';
  sill: number;
}

export interface CorrelatedStructure {
  type: Family;
  sill: number;
  /** Length in metres; the range for the spherical family. */
  scale: number;
  /** Smoothness, matern only. */
  nu?: number;
}

export type Structure = NuggetStructure | CorrelatedStructure;

/**
 * Unknown constant plus a linear combination of covariates (kriging with external drift), plus the
 * x, y drift when `coordinates` is true. Categorical covariates enter as indicator columns, one per
 * level after the first (the reference).
 */
export interface CovariateTrend {
  /** Covariate names (sample columns, target columns, raster names), in the order of their columns. */
  covariates: string[];
  /** Adds the x, y drift. */
  coordinates?: boolean;
  /** Levels of each categorical covariate as read from the samples; the first is the reference. */
  levels?: Record<string, string[]>;
  /** Covariates to treat as categories (integer codes) whose levels are not yet recorded. */
  categorical?: string[];
}

/**
 * 'constant' = ordinary kriging, 'linear' = universal kriging in x, y, {known: m} = simple kriging,
 * {covariates: [...]} = kriging with external drift.
 */
export type Trend = 'constant' | 'linear' | { known: number } | CovariateTrend;

/** True for a trend with covariates. */
export function isCovariateTrend(trend: Trend | undefined): trend is CovariateTrend {
  return typeof trend === 'object' && trend !== null && Array.isArray((trend as CovariateTrend).covariates);
}

/** True for a known-mean (simple kriging) trend. */
export function isKnownTrend(trend: Trend | undefined): trend is { known: number } {
  return typeof trend === 'object' && trend !== null && typeof (trend as { known?: unknown }).known === 'number';
}

/** Largest number of covariates in one trend. */
const MAX_COVARIATES = 20;
/** Largest number of levels of one categorical covariate. */
const MAX_LEVELS = 50;

/** Checks a covariate trend's shape (parse or option) and returns a clean copy. */
export function parseCovariateTrend(o: Record<string, unknown>, where = 'trend'): CovariateTrend {
  const names = o.covariates;
  if (!Array.isArray(names) || names.length === 0 || names.length > MAX_COVARIATES
    || !names.every((v) => typeof v === 'string' && v.trim() !== '')) {
    bad(`Expected ${where}.covariates to be a list of 1 to ${MAX_COVARIATES} column names, got ${JSON.stringify(names)}.`);
  }
  const list = names as string[];
  const seen = new Set<string>();
  for (const name of list) {
    if (seen.has(name)) bad(`Expected ${where}.covariates to name each column once, got ${JSON.stringify(name)} twice.`);
    seen.add(name);
  }
  const out: CovariateTrend = { covariates: [...list] };
  if (o.coordinates !== undefined) {
    if (typeof o.coordinates !== 'boolean') bad(`Expected ${where}.coordinates to be true or false, got ${JSON.stringify(o.coordinates)}.`);
    if (o.coordinates) out.coordinates = true;
  }
  if (o.levels !== undefined) {
    if (typeof o.levels !== 'object' || o.levels === null || Array.isArray(o.levels)) {
      bad(`Expected ${where}.levels to be an object of level lists, got ${JSON.stringify(o.levels)}.`);
    }
    const levels: Record<string, string[]> = {};
    for (const [name, value] of Object.entries(o.levels as Record<string, unknown>)) {
      if (!seen.has(name)) bad(`Expected ${where}.levels to name covariates of the trend, got ${JSON.stringify(name)}.`);
      if (!Array.isArray(value) || value.length === 0 || value.length > MAX_LEVELS || !value.every((v) => typeof v === 'string')) {
        bad(`Expected ${where}.levels.${name} to be a list of 1 to ${MAX_LEVELS} level names, got ${JSON.stringify(value)}.`);
      }
      if (new Set(value).size !== value.length) bad(`Expected ${where}.levels.${name} to list each level once, got ${JSON.stringify(value)}.`);
      levels[name] = [...value as string[]];
    }
    if (Object.keys(levels).length > 0) out.levels = levels;
  }
  if (o.categorical !== undefined) {
    if (!Array.isArray(o.categorical) || !o.categorical.every((v) => typeof v === 'string' && seen.has(v))) {
      bad(`Expected ${where}.categorical to list covariates of the trend, got ${JSON.stringify(o.categorical)}.`);
    }
    const rest = (o.categorical as string[]).filter((v) => !out.levels?.[v]);
    if (rest.length > 0) out.categorical = rest;
  }
  return out;
}

export interface Anisotropy {
  /** Long axis, degrees clockwise from grid north. */
  azimuth: number;
  /** Short range / long range, in (0, 1]. */
  ratio: number;
}

export interface FitInfo {
  method: 'reml' | 'ml' | 'wls' | 'nnl' | 'manual';
  logLikelihood?: number;
  aic?: number;
  converged: boolean;
  iterations?: number;
  n?: number;
  /** Objects with a code (./fit-warnings.ts); models written before the codes hold strings, read by `fitWarnings`. */
  warnings?: FitWarning[];
  [key: string]: unknown;
}

export interface CovarianceModel {
  structures: Structure[];
  trend: Trend;
  anisotropy?: Anisotropy;
  transform: 'none' | 'log';
  fit?: FitInfo;
  /** Distance where the correlation falls to 5 %, for display only. */
  practicalRange?: number;
}

const FAMILIES: ReadonlySet<string> = new Set(['exponential', 'gaussian', 'matern', 'spherical']);

function bad(message: string): never {
  throw new GapwiseError('bad-model', message);
}

/** Largest sill accepted on parse (a variance, data units squared). */
export const MAX_SILL = 1e100;
/** Largest |known mean| accepted on parse (data units, or ln units for a log model). */
export const MAX_ABS_MEAN = 1e100;
/** Shortest and longest scale accepted on parse, metres. */
const MIN_SCALE = 1e-6;
const MAX_SCALE = 1e9;
/** Matérn smoothness accepted on parse. */
const MIN_NU = 0.05;
const MAX_NU = 100;
/** Smallest anisotropy ratio (short / long range) accepted on parse. */
const MIN_ANISOTROPY_RATIO = 0.001;
/**
 * Where a model meets data: the largest ratio of √(total sill) and of |known mean − mean of the values|
 * to the values' standard deviation, and of a scale to the diagonal of the samples' extent.
 */
export const MODEL_DATA_RATIO = 1e6;

function positiveNumber(v: unknown, what: string, allowZero = false): number {
  if (typeof v !== 'number' || !Number.isFinite(v) || v < 0 || (!allowZero && v === 0)) {
    bad(`Expected ${what} to be a ${allowZero ? 'non-negative' : 'positive'} number, got ${JSON.stringify(v)}.`);
  }
  return v;
}

function withinRange(v: number, what: string, low: number, high: number, unit = ''): number {
  if (v < low || v > high) bad(`Expected ${what} from ${low}${unit} to ${high}${unit}, got ${v}${unit}.`);
  return v;
}

/**
 * Checks an unknown value (parsed JSON) against the model contract and returns it typed,
 * with defaults filled in (trend 'constant', transform 'none').
 */
export function parseModel(input: unknown): CovarianceModel {
  if (typeof input !== 'object' || input === null || Array.isArray(input)) bad('Expected the model to be a JSON object.');
  const o = input as Record<string, unknown>;
  if (!Array.isArray(o.structures) || o.structures.length === 0) {
    bad('Expected "structures" to be a non-empty array.');
  }
  const structures: Structure[] = o.structures.map((s: unknown, i: number): Structure => {
    if (typeof s !== 'object' || s === null) bad(`Expected structures[${i}] to be an object.`);
    const r = s as Record<string, unknown>;
    const sill = withinRange(positiveNumber(r.sill, `structures[${i}].sill`, true), `structures[${i}].sill`, 0, MAX_SILL);
    if (r.type === 'nugget') return { type: 'nugget', sill };
    if (typeof r.type !== 'string' || !FAMILIES.has(r.type)) {
      bad(`Expected structures[${i}].type to be one of nugget, exponential, gaussian, matern, spherical; got ${JSON.stringify(r.type)}.`);
    }
    const scale = withinRange(positiveNumber(r.scale, `structures[${i}].scale`), `structures[${i}].scale`, MIN_SCALE, MAX_SCALE, ' m');
    const out: CorrelatedStructure = { type: r.type as Family, sill, scale };
    if (r.type === 'matern') out.nu = withinRange(positiveNumber(r.nu, `structures[${i}].nu`), `structures[${i}].nu`, MIN_NU, MAX_NU);
    return out;
  });
  let trend: Trend = 'constant';
  if (o.trend !== undefined) {
    if (o.trend === 'constant' || o.trend === 'linear') trend = o.trend;
    else if (typeof o.trend === 'object' && o.trend !== null && 'covariates' in o.trend) {
      trend = parseCovariateTrend(o.trend as Record<string, unknown>);
    } else if (typeof o.trend === 'object' && o.trend !== null && typeof (o.trend as { known?: unknown }).known === 'number'
      && Number.isFinite((o.trend as { known: number }).known)) {
      trend = { known: withinRange((o.trend as { known: number }).known, 'trend.known', -MAX_ABS_MEAN, MAX_ABS_MEAN) };
    } else bad(`Expected "trend" to be "constant", "linear", {"known": number} or {"covariates": [names]}; got ${JSON.stringify(o.trend)}.`);
  }
  const model: CovarianceModel = { structures, trend, transform: 'none' };
  if (o.transform !== undefined) {
    if (o.transform !== 'none' && o.transform !== 'log') bad(`Expected "transform" to be "none" or "log", got ${JSON.stringify(o.transform)}.`);
    model.transform = o.transform;
  }
  if (o.anisotropy !== undefined && o.anisotropy !== null) {
    const a = o.anisotropy as Record<string, unknown>;
    if (typeof a.azimuth !== 'number' || !Number.isFinite(a.azimuth)) bad(`Expected anisotropy.azimuth in degrees, got ${JSON.stringify(a.azimuth)}.`);
    withinRange(a.azimuth, 'anisotropy.azimuth', -360, 360, '°');
    const ratio = positiveNumber(a.ratio, 'anisotropy.ratio');
    if (ratio > 1) bad(`Expected anisotropy.ratio ≤ 1 (short range / long range), got ${ratio}.`);
    withinRange(ratio, 'anisotropy.ratio', MIN_ANISOTROPY_RATIO, 1);
    model.anisotropy = { azimuth: a.azimuth, ratio };
  }
  if (o.fit !== undefined) model.fit = o.fit as FitInfo;
  if (Array.isArray(model.fit?.warnings)) model.fit = { ...model.fit, warnings: fitWarnings(model.fit) };
  if (typeof o.practicalRange === 'number') model.practicalRange = o.practicalRange;
  return model;
}

/** Sum of nugget sills (measurement-error variance). */
export function nuggetOf(model: CovarianceModel): number {
  let s = 0;
  for (const st of model.structures) if (st.type === 'nugget') s += st.sill;
  return s;
}

/** Sum of all sills: the prior variance of a new measurement. */
function totalSill(model: CovarianceModel): number {
  let s = 0;
  for (const st of model.structures) s += st.sill;
  return s;
}

function sig(v: number): string {
  return Math.abs(v) >= 1e5 || (v !== 0 && Math.abs(v) < 1e-3) ? v.toExponential(2) : String(Number(v.toPrecision(4)));
}

/**
 * Checks that a model is in scale with the data it is used with (see the header): throws GapwiseError
 * 'non-finite' (the numbers would fail; exit 3 on the command line) naming the model parameter, its
 * value and the data figure it is compared with. `values` are on the data scale (a log model takes
 * logarithms here); `x`, `y` are the sample coordinates. Constant values or a single place skip the
 * relative tests they need. O(n).
 */
export function checkModelScale(model: CovarianceModel, x: ArrayLike<number>, y: ArrayLike<number>, values: ArrayLike<number>): void {
  const n = values.length;
  if (n === 0) return;
  const log = model.transform === 'log';
  let mean = 0;
  for (let i = 0; i < n; i++) mean += log ? Math.log(values[i]) : values[i];
  mean /= n;
  let ss = 0;
  for (let i = 0; i < n; i++) {
    const d = (log ? Math.log(values[i]) : values[i]) - mean;
    ss += d * d;
  }
  const sd = n > 1 ? Math.sqrt(ss / (n - 1)) : 0;
  const scaleWord = log ? 'ln(value)' : 'the values';
  const tooBig = (what: string, value: number, measure: string, ratio: number, against: string): never => {
    throw new GapwiseError('non-finite',
      `The model's ${what} (${sig(value)}) is out of scale with the data: ${measure} is ${sig(ratio)} times ${against}; expected at most ${sig(MODEL_DATA_RATIO)} times: check that the model was fitted to these values in these units, or refit it.`);
  };
  if (sd > 0 && Number.isFinite(sd)) {
    let largest = 0;
    let at = 0;
    model.structures.forEach((s, i) => { if (s.sill > largest) { largest = s.sill; at = i; } });
    const ratio = Math.sqrt(totalSill(model)) / sd;
    if (ratio > MODEL_DATA_RATIO) tooBig(`structures[${at}].sill`, largest, 'the square root of the total sill', ratio, `the standard deviation of ${scaleWord} (${sig(sd)})`);
    if (typeof model.trend === 'object' && 'known' in model.trend) {
      const off = Math.abs(model.trend.known - mean) / sd;
      if (off > MODEL_DATA_RATIO) tooBig('trend.known', model.trend.known, `its distance from the mean of ${scaleWord} (${sig(mean)})`, off, `their standard deviation (${sig(sd)})`);
    }
  }
  let xmin = Infinity, xmax = -Infinity, ymin = Infinity, ymax = -Infinity;
  for (let i = 0; i < x.length; i++) {
    if (x[i] < xmin) xmin = x[i];
    if (x[i] > xmax) xmax = x[i];
    if (y[i] < ymin) ymin = y[i];
    if (y[i] > ymax) ymax = y[i];
  }
  const extent = Math.hypot(xmax - xmin, ymax - ymin);
  if (extent > 0 && Number.isFinite(extent)) {
    model.structures.forEach((s, i) => {
      if (s.type === 'nugget') return;
      const ratio = s.scale / extent;
      if (ratio > MODEL_DATA_RATIO) tooBig(`structures[${i}].scale`, s.scale, 'it', ratio, `the diagonal of the samples' extent (${sig(extent)} m)`);
    });
  }
}

/**
 * The error for a result that is not a finite number: GapwiseError 'non-finite' (exit 3 on the command
 * line) naming the result, where it is, its value, and the likely cause: a value too large for 32-bit
 * output (`float32`), else the model parameter of the largest magnitude (√sill or |known mean|).
 */
export function nonFiniteResult(model: CovarianceModel, what: string, where: string, value: number, float32 = false): GapwiseError {
  if (float32) {
    return new GapwiseError('non-finite',
      `The ${what} at ${where} is ${sig(value)}, beyond the largest 32-bit float (3.4e38) of this output; expected values that fit: rescale the values (other units) or write a full-precision CSV.`);
  }
  let name = '';
  let size = 0;
  model.structures.forEach((s, i) => {
    if (Math.sqrt(s.sill) > size) { size = Math.sqrt(s.sill); name = `structures[${i}].sill (${sig(s.sill)})`; }
  });
  if (typeof model.trend === 'object' && 'known' in model.trend && Math.abs(model.trend.known) > size) {
    name = `trend.known (${sig(model.trend.known)})`;
  }
  return new GapwiseError('non-finite',
    `The ${what} at ${where} is ${String(value)}, not a finite number; expected a finite result: the model's ${name} is the largest parameter, so rescale the values (other units) or refit the model to them.`);
}
