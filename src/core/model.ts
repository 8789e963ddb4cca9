/**
 * The covariance model: the JSON object shared by the app, the CLI, project files and tests.
 *
 * Structures add up. Distances are in working-CRS units (metres). `scale` is the same length in every
 * family (Rasmussen & Williams 2006, eq. 4.14); for the spherical family it is the range.
 * Anisotropy: azimuth of the long axis in degrees clockwise from grid north, ratio = short/long ≤ 1.
 */
import { GapwiseError } from './errors.ts';

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

/** 'constant' = ordinary kriging, 'linear' = universal kriging in x, y, {known: m} = simple kriging. */
export type Trend = 'constant' | 'linear' | { known: number };

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
  warnings?: string[];
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

function positiveNumber(v: unknown, what: string, allowZero = false): number {
  if (typeof v !== 'number' || !Number.isFinite(v) || v < 0 || (!allowZero && v === 0)) {
    bad(`Expected ${what} to be a ${allowZero ? 'non-negative' : 'positive'} number, got ${JSON.stringify(v)}.`);
  }
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
    const sill = positiveNumber(r.sill, `structures[${i}].sill`, true);
    if (r.type === 'nugget') return { type: 'nugget', sill };
    if (typeof r.type !== 'string' || !FAMILIES.has(r.type)) {
      bad(`Expected structures[${i}].type to be one of nugget, exponential, gaussian, matern, spherical; got ${JSON.stringify(r.type)}.`);
    }
    const scale = positiveNumber(r.scale, `structures[${i}].scale`);
    const out: CorrelatedStructure = { type: r.type as Family, sill, scale };
    if (r.type === 'matern') out.nu = positiveNumber(r.nu, `structures[${i}].nu`);
    return out;
  });
  let trend: Trend = 'constant';
  if (o.trend !== undefined) {
    if (o.trend === 'constant' || o.trend === 'linear') trend = o.trend;
    else if (typeof o.trend === 'object' && o.trend !== null && typeof (o.trend as { known?: unknown }).known === 'number'
      && Number.isFinite((o.trend as { known: number }).known)) trend = { known: (o.trend as { known: number }).known };
    else bad(`Expected "trend" to be "constant", "linear" or {"known": number}; got ${JSON.stringify(o.trend)}.`);
  }
  const model: CovarianceModel = { structures, trend, transform: 'none' };
  if (o.transform !== undefined) {
    if (o.transform !== 'none' && o.transform !== 'log') bad(`Expected "transform" to be "none" or "log", got ${JSON.stringify(o.transform)}.`);
    model.transform = o.transform;
  }
  if (o.anisotropy !== undefined && o.anisotropy !== null) {
    const a = o.anisotropy as Record<string, unknown>;
    if (typeof a.azimuth !== 'number' || !Number.isFinite(a.azimuth)) bad(`Expected anisotropy.azimuth in degrees, got ${JSON.stringify(a.azimuth)}.`);
    const ratio = positiveNumber(a.ratio, 'anisotropy.ratio');
    if (ratio > 1) bad(`Expected anisotropy.ratio ≤ 1 (short range / long range), got ${ratio}.`);
    model.anisotropy = { azimuth: a.azimuth, ratio };
  }
  if (o.fit !== undefined) model.fit = o.fit as FitInfo;
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
export function totalSill(model: CovarianceModel): number {
  let s = 0;
  for (const st of model.structures) s += st.sill;
  return s;
}
