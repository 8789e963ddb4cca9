// The measured error of a local-neighbourhood grid surface (core/prediction/local-accuracy.ts): exact kriging at
// a seeded subset of the cells against the values computed, and — when the tolerance is missed — a
// larger neighbourhood rerun through the worker pool, or exact kriging.
import type { Samples } from '../core/shared/samples.ts';
import type { CovarianceModel } from '../core/covariance/model.ts';
import { cellCentres, type Grid } from '../core/geometry/grid.ts';
import type { SurfaceResult } from '../core/prediction/surface.ts';
import { createLocalPredictor, globalMeanCoefficients } from '../core/prediction/local-kriging.ts';
import { covariateColumnCount, trendColumnCount } from '../core/covariance/trend.ts';
import {
  DEFAULT_CHECK_SEED, checkedValues, chooseCheckTargets, compareWithReference, findGrowth, referencePredictions,
  type CheckedValues, type GrowthAttempt, type LocalAccuracy, type LocalSettings,
} from '../core/prediction/local-accuracy.ts';
import { EXACT_SAMPLE_LIMIT, checkCount, type Tolerance } from '../core/prediction/path-choice.ts';
import type { Warning } from '../core/shared/errors.ts';
import type { LocalTargetRunner } from '../core/prediction/local-accuracy.ts';
import { startEngineThreads } from './engine-threads.ts';

/** What checkLocalSurface needs (the surface was computed with `settings` and tiles of the grid's cell). */
export interface LocalSurfaceCheck {
  samples: Samples;
  model: CovarianceModel;
  grid: Grid;
  surface: SurfaceResult;
  settings: LocalSettings;
  tolerance: Tolerance;
  /** Grow the neighbourhood when the tolerance is missed (false when --neighbors was given). */
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

/** Measures a local surface against exact kriging at a seeded subset of its cells; grows or replaces it when it misses. */
export async function checkLocalSurface(c: LocalSurfaceCheck): Promise<CheckedSurface> {
  const { samples, model, grid, tolerance } = c;
  const n = samples.x.length;
  const seed = c.seed ?? DEFAULT_CHECK_SEED;
  const log = model.transform === 'log';
  const centres = cellCentres(grid);
  const T = centres.x.length;
  const idx = chooseCheckTargets(T, checkCount(n, T), seed);
  const cx = Float64Array.from(idx, (i) => centres.x[i]);
  const cy = Float64Array.from(idx, (i) => centres.y[i]);
  const q = covariateColumnCount(model.trend ?? 'constant');
  let cc: Float64Array | undefined;
  if (c.covariates && q > 0) {
    cc = new Float64Array(idx.length * q);
    for (let k = 0; k < idx.length; k++) cc.set(c.covariates.subarray(centres.index[idx[k]] * q, centres.index[idx[k]] * q + q), k * q);
  }
  const withCovariates = cc ? { covariates: cc } : {};
  // The global trend coefficients once for the reference and every growth step.
  const globalBeta = trendColumnCount(model.trend ?? 'constant') > 0 ? Array.from(globalMeanCoefficients(samples, model).beta) : undefined;
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
  let settings = c.settings;
  const measure = (surface: SurfaceResult): LocalAccuracy =>
    compareWithReference(model, reference, valuesOf(surface, settings), { targets: T, seed, ...settings, tolerance });
  let surface = c.surface;
  let accuracy = measure(surface);
  if (accuracy.within || !c.grow) return { surface, path: 'local', settings, accuracy, attempts: [], notes: [] };
  const first = accuracy;
  const { settings: grown, attempts } = findGrowth(samples, model, cx, cy, reference, settings, { targetSpacing: grid.cell, ...(globalBeta ? { globalBeta } : {}) }, tolerance, cc);
  const missed = `the ${first.neighbors} nearest samples${first.globalMean ? ' with the GLS mean' : ''} missed the tolerance (mean ${first.mean.max.toFixed(2)} %, sd ${first.sd.max.toFixed(2)} %)`;
  if (grown) {
    settings = grown;
    surface = await c.rerun(settings);
    accuracy = measure(surface);
    return {
      surface, path: 'local', settings, accuracy, attempts,
      notes: [`${missed}; grown to the ${settings.neighbors} nearest${settings.globalMean ? ' with the GLS mean of all samples' : ''} and rerun for every cell`],
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
