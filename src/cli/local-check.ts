// The measured error of a local-neighbourhood grid surface (core/prediction/local-accuracy.ts): exact kriging at
// a seeded subset of the cells against the values computed, and — when the tolerance is missed — a
// larger neighbourhood at the cells whose values still move with its size (the rest kept bit for bit),
// the whole surface rerun through the worker pool when most cells need it, or exact kriging. Also the
// runner that spreads predict's local neighbourhoods over worker threads.
import type { Samples } from '../core/shared/samples.ts';
import type { CovarianceModel } from '../core/covariance/model.ts';
import { cellCentres, type Grid } from '../core/geometry/grid.ts';
import type { SurfaceResult } from '../core/prediction/surface.ts';
import { createLocalPredictor, globalMeanCoefficients } from '../core/prediction/local-kriging.ts';
import { covariateColumnCount, trendColumnCount } from '../core/covariance/trend.ts';
import {
  DEFAULT_CHECK_SEED, affectedTargets, type LocalTargetRunner, checkedValues, chooseCheckTargets, compareWithReference, findGrowth, freshSeed, missesAtEach,
  priorSdOf, referencePredictions, type CheckedValues, type GrowthAttempt, type LocalAccuracy, type LocalSettings,
} from '../core/prediction/local-accuracy.ts';
import type { Prediction } from '../core/prediction/kriging.ts';
import { rangeOf } from '../core/prediction/surface.ts';
import { exceedanceProbability } from '../core/shared/normal.ts';
import { EXACT_SAMPLE_LIMIT, checkCount, type Tolerance } from '../core/prediction/path-choice.ts';
import type { Warning } from '../core/shared/errors.ts';
import { startEngineThreads } from './engine-threads.ts';

/** What checkLocalSurface needs (the surface was computed with `settings` and tiles of the grid's cell). */
export interface LocalSurfaceCheck {
  samples: Samples;
  model: CovarianceModel;
  grid: Grid;
  surface: SurfaceResult;
  settings: LocalSettings;
  tolerance: Tolerance;
  /** Grow the neighbourhood when the tolerance is missed (false when --neighbours was given). */
  grow: boolean;
  /** Take exact kriging when no larger neighbourhood meets the tolerance (automatic choice only). */
  exactFallback: boolean;
  seed?: number;
  /** A covariate model: encoded covariates of every grid cell (nx·ny rows × q columns, as SurfaceOptions). */
  covariates?: Float64Array;
  /** Computes the surface again with other settings, or exactly. */
  rerun(settings: LocalSettings | 'exact'): Promise<SurfaceResult>;
}

/** The surface kept, how, and its measured error (of the last local run when the path became exact). */
export interface CheckedSurface {
  surface: SurfaceResult;
  path: 'local' | 'exact';
  settings: LocalSettings;
  accuracy: LocalAccuracy;
  attempts: GrowthAttempt[];
  notes: string[];
}

/** Kriging-scale mean and sd of a surface's cells (log surfaces: ln of the median, and the sd from mean = exp(μ + σ²/2)). */
function krigingScale(surface: SurfaceResult, log: boolean): { mean: Float64Array; sd: Float64Array } {
  const size = surface.mean.length;
  const mean = new Float64Array(size);
  const sd = new Float64Array(size);
  for (let k = 0; k < size; k++) {
    if (log && surface.median) {
      mean[k] = Math.log(surface.median[k]);
      sd[k] = Math.sqrt(Math.max(0, 2 * (Math.log(surface.mean[k]) - mean[k])));
    } else {
      mean[k] = surface.mean[k];
      sd[k] = surface.sd[k];
    }
  }
  return { mean, sd };
}

/** Per-cell signal |Δmean| + |Δsd| between two surfaces, % of the prior sd on the kriging scale (cells in centres order). */
function cellMovement(a: SurfaceResult, b: SurfaceResult, cells: Uint32Array, log: boolean, priorSd: number): Float64Array {
  const ka = krigingScale(a, log);
  const kb = krigingScale(b, log);
  const out = new Float64Array(cells.length);
  for (let c = 0; c < cells.length; c++) {
    const k = cells[c];
    const d = Math.abs(ka.mean[k] - kb.mean[k]) + Math.abs(ka.sd[k] - kb.sd[k]);
    out[c] = Number.isNaN(d) ? Infinity : (100 * d) / priorSd;
  }
  return out;
}

/** A copy of `surface` with the cells `cells` (grid indices) replaced by the prediction `p` there, computed as computeSurfaceWith does. */
function withCells(surface: SurfaceResult, cells: ArrayLike<number>, p: Prediction & { warnings?: Warning[] }, log: boolean): SurfaceResult {
  const copy = <A extends Float32Array | Float64Array>(a: A): A => a.slice() as A;
  const mean = copy(surface.mean);
  const sd = copy(surface.sd);
  const pExceed = surface.pExceed ? copy(surface.pExceed) : undefined;
  const median = surface.median ? copy(surface.median) : undefined;
  const threshold = surface.threshold;
  for (let c = 0; c < cells.length; c++) {
    const k = cells[c];
    mean[k] = p.mean[c];
    sd[k] = p.sd[c];
    if (median && p.median) median[k] = p.median[c];
    if (pExceed && threshold !== undefined) {
      pExceed[k] = log && p.logMean && p.logSd
        ? exceedanceProbability(p.logMean[c], p.logSd[c], Math.log(threshold))
        : exceedanceProbability(p.mean[c], p.sd[c], threshold);
    }
  }
  const warnings = [...surface.warnings];
  for (const w of p.warnings ?? []) if (!warnings.some((v) => v.message === w.message)) warnings.push(w);
  return {
    ...surface, mean, sd, warnings,
    range: { ...surface.range, mean: rangeOf(mean), sd: rangeOf(sd), ...(pExceed ? { pExceed: rangeOf(pExceed) } : {}) },
    ...(pExceed ? { pExceed } : {}), ...(median ? { median } : {}),
  };
}

/** The checked cells of one seed: their indices, the reference there, and the measurement of a surface. */
function cellMeasurement(c: LocalSurfaceCheck, seed: number, globalBeta: number[] | undefined) {
  const { samples, model, grid } = c;
  const log = model.transform === 'log';
  const centres = cellCentres(grid);
  const T = centres.x.length;
  const idx = chooseCheckTargets(T, checkCount(samples.x.length, T), seed);
  const cx = Float64Array.from(idx, (i) => centres.x[i]);
  const cy = Float64Array.from(idx, (i) => centres.y[i]);
  const q = covariateColumnCount(model.trend ?? 'constant');
  let cc: Float64Array | undefined;
  if (c.covariates && q > 0) {
    cc = new Float64Array(idx.length * q);
    for (let k = 0; k < idx.length; k++) cc.set(c.covariates.subarray(centres.index[idx[k]] * q, centres.index[idx[k]] * q + q), k * q);
  }
  const withCovariates = cc ? { covariates: cc } : {};
  const reference = referencePredictions(samples, model, cx, cy, globalBeta, cc);
  // What the surface holds at the checked cells; a log surface holds data-scale values, so its
  // kriging-scale values are computed again there (the same neighbourhoods: results do not depend on
  // which cells are predicted together).
  const valuesOf = (surface: SurfaceResult, settings: LocalSettings): CheckedValues => {
    if (log) {
      const p = createLocalPredictor(samples, model, { ...settings, targetSpacing: grid.cell, ...(globalBeta ? { globalBeta } : {}) }).predict(cx, cy, withCovariates);
      return checkedValues(p, Uint32Array.from({ length: idx.length }, (_, k) => k), true);
    }
    return {
      mean: Array.from(idx, (i) => surface.mean[centres.index[i]]),
      sd: Array.from(idx, (i) => surface.sd[centres.index[i]]),
    };
  };
  const measure = (surface: SurfaceResult, settings: LocalSettings): LocalAccuracy =>
    compareWithReference(model, reference, valuesOf(surface, settings), { targets: T, seed, ...settings, tolerance: c.tolerance });
  const misses = (surface: SurfaceResult, settings: LocalSettings): boolean[] => missesAtEach(model, reference, valuesOf(surface, settings), c.tolerance);
  return { centres, idx, cx, cy, cc, reference, measure, misses };
}

/**
 * The grown setting at the cells that need it: the signal is how far each cell moved from half the
 * starting neighbours to the starting surface, calibrated on the checked cells that missed
 * (affectedTargets); those cells are predicted again with the grown setting (tiles of the grid's
 * cell, so their values equal a whole grown surface's there) and every other cell is kept as it was.
 * Null when most cells would be rerun (the caller reruns the whole surface over its threads).
 */
async function growAffectedCells(
  c: LocalSurfaceCheck, first: ReturnType<typeof cellMeasurement>, surface: SurfaceResult, start: LocalSettings, grown: LocalSettings, globalBeta: number[] | undefined,
): Promise<{ surface: SurfaceResult; rerun: number } | null> {
  const { samples, model, grid } = c;
  const log = model.transform === 'log';
  const cells = first.centres.index;
  // A change of mean is not a change of size: the signal below does not see it.
  if (grown.globalMean !== start.globalMean) return null;
  const half = await c.rerun({ ...start, neighbours: Math.max(1, Math.floor(start.neighbours / 2)) });
  const signal = cellMovement(surface, half, cells, log, priorSdOf(model));
  const { rerun } = affectedTargets(signal, first.idx, first.misses(surface, start), c.tolerance);
  if (2 * rerun.length > cells.length) return null;
  const at = Uint32Array.from(rerun, (r) => cells[r]);
  const tx = Float64Array.from(rerun, (r) => first.centres.x[r]);
  const ty = Float64Array.from(rerun, (r) => first.centres.y[r]);
  const q = covariateColumnCount(model.trend ?? 'constant');
  let covariates: Float64Array | undefined;
  if (c.covariates && q > 0) {
    covariates = new Float64Array(at.length * q);
    for (let k = 0; k < at.length; k++) covariates.set(c.covariates.subarray(at[k] * q, at[k] * q + q), k * q);
  }
  const predictor = createLocalPredictor(samples, model, { ...grown, targetSpacing: grid.cell, ...(globalBeta ? { globalBeta } : {}) });
  const p = predictor.predict(tx, ty, covariates ? { covariates } : {});
  return { surface: withCells(surface, at, { ...p, warnings: predictor.warnings }, log), rerun: at.length };
}

/**
 * Measures a local surface against exact kriging at a seeded subset of its cells; grows or replaces it
 * when it misses. A growth reruns only the cells whose values still move with the neighbourhood's size
 * (growAffectedCells), measured again at a fresh seeded subset; when that misses, or when most cells
 * need it, the whole surface is rerun with the grown setting.
 */
export async function checkLocalSurface(c: LocalSurfaceCheck): Promise<CheckedSurface> {
  const { samples, model } = c;
  const n = samples.x.length;
  const seed = c.seed ?? DEFAULT_CHECK_SEED;
  // The global trend coefficients once for the reference and every growth step.
  const globalBeta = trendColumnCount(model.trend ?? 'constant') > 0 ? Array.from(globalMeanCoefficients(samples, model).beta) : undefined;
  const check = cellMeasurement(c, seed, globalBeta);
  let settings = c.settings;
  let surface = c.surface;
  let accuracy = check.measure(surface, settings);
  if (accuracy.within || !c.grow) return { surface, path: 'local', settings, accuracy, attempts: [], notes: [] };
  const first = accuracy;
  const { settings: grown, attempts } = findGrowth(samples, model, check.cx, check.cy, check.reference, settings, { targetSpacing: c.grid.cell, ...(globalBeta ? { globalBeta } : {}) }, c.tolerance, check.cc);
  const missed = `the ${first.neighbours} nearest samples${first.globalMean ? ' with the GLS mean' : ''} missed the tolerance (mean ${first.mean.max.toFixed(2)} %, sd ${first.sd.max.toFixed(2)} %)`;
  if (grown) {
    const gm = grown.globalMean ? ' with the GLS mean of all samples' : '';
    const targeted = await growAffectedCells(c, check, surface, settings, grown, globalBeta);
    if (targeted) {
      const fresh = cellMeasurement(c, freshSeed(seed), globalBeta);
      accuracy = fresh.measure(targeted.surface, grown);
      const note = `${missed}; grown to the ${grown.neighbours} nearest${gm} where the values still moved with the neighbourhood's size (rerun: ${targeted.rerun.toLocaleString('en-US')} of ${check.centres.index.length.toLocaleString('en-US')} cells); measured again at a fresh subset (seed ${freshSeed(seed)})`;
      if (accuracy.within) return { surface: targeted.surface, path: 'local', settings: grown, accuracy, attempts, notes: [note] };
      surface = await c.rerun(grown);
      accuracy = fresh.measure(surface, grown);
      return { surface, path: 'local', settings: grown, accuracy, attempts, notes: [note, `that missed the tolerance at the fresh subset; rerun for every cell with the ${grown.neighbours} nearest`] };
    }
    settings = grown;
    surface = await c.rerun(settings);
    accuracy = check.measure(surface, settings);
    return {
      surface, path: 'local', settings, accuracy, attempts,
      notes: [`${missed}; grown to the ${settings.neighbours} nearest${gm} and rerun for every cell (most cells still moved with the neighbourhood's size)`],
    };
  }
  if (c.exactFallback && n <= EXACT_SAMPLE_LIMIT) {
    surface = await c.rerun('exact');
    return { surface, path: 'exact', settings, accuracy: first, attempts, notes: [`${missed}, and so did every larger neighbourhood tried; took exact kriging from all ${n.toLocaleString('en-US')} samples instead`] };
  }
  return { surface, path: 'local', settings, accuracy, attempts, notes: [`${missed}; no larger neighbourhood tried met it`] };
}

/** Fewest targets for which predict spreads local neighbourhoods over threads (below, starting them costs more than it saves). */
export const THREADED_TARGETS = 5000;

/**
 * Local-neighbourhood predictions at points over `threads` worker threads of the engine's pool: the
 * targets (in the order given, which predictLocalChecked makes spatial) in contiguous parts, four per
 * thread, each a `localPredict` request; the values equal a one-thread run's (local results do not
 * depend on which targets are predicted together). The threads start at once, so that they are ready
 * while the global trend and the reference are computed. dispose() ends them.
 */
export function threadedTargetRunner(samples: Samples, model: CovarianceModel, threads: number): { run: LocalTargetRunner; dispose: () => Promise<void> } {
  const size = Math.max(1, Math.floor(threads));
  const pool = startEngineThreads(size);
  const started = pool.run(Array.from({ length: size }, () => ({ type: 'ready' as const, payload: {} })), { name: 'start of the prediction threads' });
  // A thread that fails to start is reported by the run that needs it.
  started.catch(() => {});
  const run: LocalTargetRunner = async (local, x, y, covariates) => {
    await started;
    const T = x.length;
    const parts = Math.max(1, Math.min(T, 4 * size));
    const bounds = Array.from({ length: parts + 1 }, (_, k) => Math.round((k * T) / parts));
    const q = covariates && T > 0 ? covariates.length / T : 0;
    const out: Record<string, Float64Array> = {};
    const warnings = new Map<string, Warning>();
    await pool.run(Array.from({ length: parts }, (_, k) => ({
      type: 'localPredict' as const,
      payload: {
        samples, model, local,
        x: x.slice(bounds[k], bounds[k + 1]), y: y.slice(bounds[k], bounds[k + 1]),
        ...(covariates && q > 0 ? { covariates: covariates.slice(bounds[k] * q, bounds[k + 1] * q) } : {}),
      },
    })), {
      name: 'prediction', parts: 'parts of the targets',
      onResult: (k, r) => {
        for (const key of ['mean', 'sd', 'sdObserved', 'median', 'logMean', 'logSd'] as const) {
          const part = r[key];
          if (!part) continue;
          out[key] ??= new Float64Array(T);
          out[key].set(part, bounds[k]);
        }
        for (const w of r.warnings) warnings.set(`${w.code}:${w.message.replace(/^\d+ /, '')}`, w);
      },
    });
    return {
      mean: out.mean ?? new Float64Array(0), sd: out.sd ?? new Float64Array(0), sdObserved: out.sdObserved ?? new Float64Array(0),
      ...(out.median ? { median: out.median, logMean: out.logMean, logSd: out.logSd } : {}),
      warnings: [...warnings.values()],
    };
  };
  return { run, dispose: () => pool.dispose() };
}
