/**
 * The computed results stored beside the saved session (./snapshot.ts), so a reload shows the work
 * again without recomputing: the samples as read, the variograms computed in a worker, the candidate
 * table, the cross-validation of the model in use, the surface, the realisations and the suggested
 * sites. Kept in IndexedDB by structured clone (typed arrays as they are), with a version.
 *
 * A record belongs to one reading of the samples (SessionSnapshot.readId). On load `parseResults`
 * checks it part by part: a record for another reading, or without a readable intake, is dropped
 * whole; a malformed part (wrong array lengths, a grid that does not add up) is dropped alone, and the
 * session computes that part again when it is wanted. Each part also carries the key of the inputs it
 * was computed from, which the session compares with its current inputs as it does before a reload.
 */
import type { IntakeResult } from '../../io/types.ts';
import { isSampleTable } from '../../io/sample-table.ts';
import type { VariogramSet } from '../../core/fitting/variogram.ts';
import type { LeaveOneOutResult } from '../../core/validation/cross-validation.ts';
import type { DesignResult } from '../../core/design/design.ts';
import type { Grid } from '../../core/geometry/grid.ts';
import { parseModel } from '../../core/covariance/model.ts';
import type { CandidateRow } from './structure.ts';
import type { SurfaceSpeed } from './grid-plan.ts';
import type { SurfaceView } from './surface-step.svelte.ts';
import type { SimulationView } from './realisations.svelte.ts';

export const RESULTS_VERSION = 2;

/** How the candidates in the table were fitted. */
export interface FittedWith {
  likelihood: 'exact' | 'nnl';
  n: number;
  automatic: boolean;
}

export interface SavedResults {
  version: typeof RESULTS_VERSION;
  /** The reading the results belong to (SessionSnapshot.readId). */
  readId: string;
  /** The samples as read (the sample table's typed arrays store by structured clone). */
  intake: IntakeResult;
  /** Variograms computed in a worker (many samples), with the key of their settings. */
  variograms: { key: string; set: VariogramSet } | null;
  /** The candidate table, the key it was fitted for, and how long the fit took (ms). */
  fit: { key: string; rows: CandidateRow[]; fittedWith: FittedWith | null; ms: number } | null;
  /** Cross-validation of the model in use, with the key of that model. */
  cv: { key: string; result: LeaveOneOutResult } | null;
  /** A finished surface (never one still arriving) and the rate it measured. */
  surface: SurfaceView | null;
  /** How fast that surface ran (for the next time estimate). */
  rate: SurfaceSpeed | null;
  simulation: SimulationView | null;
  simRate: number | null;
  suggestions: { result: DesignResult; options: Record<string, unknown> | null } | null;
  /**
   * Several analytes: the work of each analyte not in use now (its own reading, fit, surfaces,
   * realisations, suggestions), by value column. Each is checked as a record of its own on load.
   */
  parked?: Record<string, SavedResults>;
}

/** What the stored record must match: the reading now in the saved session. */
export interface ResultsExpectation {
  readId: string;
  fileName: string;
  /** The readings of the analytes not in use now (value column → readId), from the saved session. */
  parked?: Record<string, string>;
}

type Obj = Record<string, unknown>;
const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);
const isFloatArray = (v: unknown, n: number): boolean =>
  (v instanceof Float64Array || v instanceof Float32Array) && v.length === n;
const finite = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);
const whole = (v: unknown, min: number): v is number => finite(v) && Number.isInteger(v) && v >= min;
const optionalFinite = (v: unknown): boolean => v === null || v === undefined || finite(v);

function validModel(v: unknown): boolean {
  if (v === null) return true;
  try {
    parseModel(v);
    return true;
  } catch {
    return false;
  }
}

/** A grid whose numbers add up: positive size, whole counts, a mask of nx·ny cells when present. */
export function validGrid(v: unknown): v is Grid {
  if (!isObj(v)) return false;
  if (!finite(v.x0) || !finite(v.y0) || !finite(v.cell) || !(v.cell > 0) || !whole(v.nx, 1) || !whole(v.ny, 1)) return false;
  return v.mask === undefined || (v.mask instanceof Uint8Array && v.mask.length === v.nx * v.ny);
}

function validIntake(v: unknown, fileName: string): v is IntakeResult {
  if (!isObj(v) || !isObj(v.samples) || !isObj(v.report) || !isSampleTable(v.table)) return false;
  const s = v.samples;
  if (!(s.x instanceof Float64Array) || s.x.length < 1) return false;
  const n = s.x.length;
  if (!isFloatArray(s.y, n) || !isFloatArray(s.value, n) || v.table.length !== n) return false;
  const r = v.report;
  return r.fileName === fileName && whole(r.rowsUsed, 0) && isObj(r.crs) && typeof r.crs.work === 'string'
    && typeof r.valueColumn === 'string' && isObj(r.summary) && Array.isArray(r.entries) && Array.isArray(r.warnings);
}

function validVariograms(v: unknown): v is SavedResults['variograms'] {
  return isObj(v) && typeof v.key === 'string' && isObj(v.set) && isObj(v.set.omni);
}

function validFit(v: unknown): v is SavedResults['fit'] {
  if (!isObj(v) || typeof v.key !== 'string' || !Array.isArray(v.rows) || v.rows.length === 0 || !finite(v.ms)) return false;
  if (v.fittedWith !== null && !(isObj(v.fittedWith) && (v.fittedWith.likelihood === 'exact' || v.fittedWith.likelihood === 'nnl'))) return false;
  return v.rows.every((r: unknown) => isObj(r) && typeof r.key === 'string' && typeof r.label === 'string' && validModel(r.model)
    && typeof r.logLikelihood === 'number' && typeof r.aic === 'number' && typeof r.rmse === 'number' && typeof r.msse === 'number');
}

function validCv(v: unknown, n: number): v is SavedResults['cv'] {
  if (!isObj(v) || typeof v.key !== 'string' || !isObj(v.result)) return false;
  const r = v.result;
  return isFloatArray(r.prediction, n) && isFloatArray(r.sdObserved, n) && isFloatArray(r.error, n)
    && isFloatArray(r.standardisedError, n) && isObj(r.summary) && (r.scale === 'data' || r.scale === 'log') && Array.isArray(r.warnings);
}

function validSurface(v: unknown): v is SurfaceView {
  if (!isObj(v) || !validGrid(v.grid) || !isObj(v.result) || v.done !== true || typeof v.key !== 'string' || typeof v.work !== 'string') return false;
  const cells = v.grid.nx * v.grid.ny;
  const r = v.result;
  if (!isFloatArray(r.mean, cells) || !isFloatArray(r.sd, cells) || r.nx !== v.grid.nx || !whole(r.cells, 0) || !isObj(r.range)) return false;
  if (r.pExceed !== undefined && !isFloatArray(r.pExceed, cells)) return false;
  if (r.median !== undefined && !isFloatArray(r.median, cells)) return false;
  // A local-neighbourhood surface is never shown without its measured error: without it, it is computed again.
  if (v.local !== null && v.local !== undefined && !validAccuracy(v.accuracy)) return false;
  if (v.pathNote !== undefined && typeof v.pathNote !== 'string') return false;
  return (v.support === 'point' || v.support === 'block') && whole(v.points, 1) && optionalFinite(v.threshold) && Array.isArray(r.warnings);
}

function validAccuracy(a: unknown): boolean {
  return isObj(a) && whole(a.checked, 1) && isObj(a.mean) && finite(a.mean.max) && finite(a.mean.rms)
    && isObj(a.sd) && finite(a.sd.max) && finite(a.sd.rms) && isObj(a.tolerance) && typeof a.within === 'boolean';
}

function validSimulation(v: unknown): v is SimulationView {
  if (!isObj(v) || !validGrid(v.grid) || !isObj(v.result) || typeof v.key !== 'string' || typeof v.base !== 'string') return false;
  if (!finite(v.seed) || !optionalFinite(v.depth) || typeof v.made !== 'string') return false;
  const cells = v.grid.nx * v.grid.ny;
  const r = v.result;
  if (!whole(r.count, 1) || !isFloatArray(r.mean, cells) || !isFloatArray(r.sd, cells) || !Array.isArray(r.warnings)) return false;
  if (r.pExceed !== undefined && !isFloatArray(r.pExceed, cells)) return false;
  return r.realisations === undefined || (Array.isArray(r.realisations) && r.realisations.every((a: unknown) => isFloatArray(a, cells)));
}

function validSuggestions(v: unknown): v is SavedResults['suggestions'] {
  if (!isObj(v) || !isObj(v.result) || !(v.options === null || isObj(v.options))) return false;
  const r = v.result;
  return (r.mode === 'variance' || r.mode === 'decision' || r.mode === 'coverage') && Array.isArray(r.suggestions)
    && r.suggestions.every((s: unknown) => isObj(s) && finite(s.x) && finite(s.y) && whole(s.rank, 1)) && Array.isArray(r.warnings);
}

/**
 * Checks a stored value against the reading in the saved session. Returns null when it is not a
 * record of this version, belongs to another reading, or has no readable intake; otherwise the
 * record with every malformed part set to null (rates that are not positive numbers too).
 */
export function parseResults(input: unknown, expect: ResultsExpectation): SavedResults | null {
  if (!isObj(input) || input.version !== RESULTS_VERSION) return null;
  if (!expect.readId || input.readId !== expect.readId) return null;
  if (!validIntake(input.intake, expect.fileName)) return null;
  const n = input.intake.samples.x.length;
  const rate = (v: unknown): number | null => (finite(v) && v > 0 ? v : null);
  return {
    version: RESULTS_VERSION,
    readId: expect.readId,
    intake: input.intake,
    variograms: validVariograms(input.variograms) ? input.variograms : null,
    fit: validFit(input.fit) ? input.fit : null,
    cv: validCv(input.cv, n) ? input.cv : null,
    surface: validSurface(input.surface) ? input.surface : null,
    rate: isObj(input.rate) && rate(input.rate.flopsPerSecond) !== null && finite(input.rate.overheadSeconds) && input.rate.overheadSeconds >= 0
      ? { flopsPerSecond: input.rate.flopsPerSecond as number, overheadSeconds: input.rate.overheadSeconds as number }
      : null,
    simulation: validSimulation(input.simulation) ? input.simulation : null,
    simRate: rate(input.simRate),
    suggestions: validSuggestions(input.suggestions) ? input.suggestions : null,
    ...parkedResults(input.parked, expect),
  };
}

/**
 * The parked analytes' records that belong to the readings the saved session names for them (and
 * whose samples hold that analyte as value); any other is dropped alone (that analyte is read again
 * when it is switched to).
 */
function parkedResults(v: unknown, expect: ResultsExpectation): { parked?: Record<string, SavedResults> } {
  if (!isObj(v) || !expect.parked) return {};
  const out: Record<string, SavedResults> = {};
  for (const [name, readId] of Object.entries(expect.parked)) {
    const r = parseResults(v[name], { readId, fileName: expect.fileName });
    if (r && r.intake.report.valueColumn === name) out[name] = r;
  }
  return Object.keys(out).length > 0 ? { parked: out } : {};
}
