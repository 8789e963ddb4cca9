/**
 * The app's door to the heavy numerics: fitting the candidate models, cross-validation and surfaces.
 * Every call is asynchronous, reports progress and can be cancelled with an AbortSignal; the work runs
 * in a pool of engine workers (src/worker) so the page stays responsive.
 */
import type { Samples } from '../../core/shared/samples.ts';
import type { CovarianceModel, Trend } from '../../core/covariance/model.ts';
import type { Grid } from '../../core/geometry/grid.ts';
import type { LeaveOneOutResult } from '../../core/validation/cross-validation.ts';
import type { SurfaceResult } from '../../core/prediction/surface.ts';
import { GapwiseError } from '../../core/shared/errors.ts';
import { EnginePool } from '../../worker/pool.ts';
import { CANDIDATE_SPECS, type CandidateRow } from './structure.ts';
import { mergeSimulationParts, simulationPart, type ConditionalSimulationResult } from '../../core/simulation/conditional-simulation.ts';
import type { SimulationPath } from '../../core/simulation/simulation-path.ts';
import type { SimulateOptions } from '../../worker/protocol.ts';
import { chooseFitMethod, DEFAULT_VECCHIA_NEIGHBOURS } from '../../core/fitting/vecchia.ts';
import { DEFAULT_LOCAL_NEIGHBOURS } from '../../core/prediction/local-kriging.ts';
import type { LocalKrigingOptions } from '../../core/prediction/local-kriging.ts';
import type { LocalGridCheck, LocalSettings } from '../../core/prediction/local-accuracy.ts';
import { chooseLeaveOneOutPath } from '../../core/prediction/path-choice.ts';
import type { VariogramOptions, VariogramSet } from '../../core/fitting/variogram.ts';
import type { IntakeOptions, IntakeResult } from '../../io/types.ts';
import { readSamples } from '../../io/intake.ts';
import { epsgIndexLoaded } from '../../io/crs.ts';
import type { RequestType, StructureFitChoice, StructureFitResult } from '../../worker/protocol.ts';
import type { FitOptions } from '../../core/fitting/fit-options.ts';

export type Progress = (done: number, total: number, what?: string) => void;

let pool: EnginePool | null = null;

/** Workers the surface is split across (the machine's cores, 1 to 4). */
export function workerCount(): number {
  const n = typeof navigator !== 'undefined' ? navigator.hardwareConcurrency ?? 2 : 2;
  return Math.max(1, Math.min(4, n));
}

/** Engine requests started so far, by type (empty before the first); the browser tests read it. */
export function requestCounts(): Partial<Record<RequestType, number>> {
  return pool ? pool.startedRequests : {};
}

/** The app's one pool of engine workers (fits, surfaces, realisations, variograms, designs). */
export function enginePool(): EnginePool {
  pool ??= new EnginePool({ size: workerCount() });
  return pool;
}

export interface FitRequest {
  /** Samples in data units. */
  samples: Samples;
  method: 'reml' | 'wls';
  transform: 'none' | 'log';
  /**
   * 'exact' (the dense likelihood or WLS as `method` says) or 'nnl' (nearest-neighbour REML, for many
   * samples; leave-one-out then predicts each sample from its 64 nearest others). Default: chooseFitMethod(n).
   */
  likelihood?: 'exact' | 'nnl';
  /** The mean: a covariate trend (samples then carry its encoded columns); default constant. */
  trend?: Trend;
}

function logSamples(s: Samples): Samples {
  return { ...s, value: Float64Array.from(s.value, Math.log) };
}

/**
 * Fits every candidate (on ln values for a log transform) and cross-validates each, spread over the
 * workers; a candidate that cannot be fitted comes back with `error`. Input errors reject.
 */
export async function fitCandidateRows(req: FitRequest, onProgress?: Progress, signal?: AbortSignal): Promise<CandidateRow[]> {
  const p = enginePool();
  const fitSamples = req.transform === 'log' ? logSamples(req.samples) : req.samples;
  const vecchia = (req.likelihood ?? chooseFitMethod(req.samples.x.length)) === 'nnl';
  let done = 0;
  const total = CANDIDATE_SPECS.length;
  onProgress?.(0, total, CANDIDATE_SPECS.map((c) => c.label).join(', '));
  const rows = await Promise.all(CANDIDATE_SPECS.map(async (spec): Promise<CandidateRow> => {
    try {
      if (vecchia) {
        const m = await p.request('fitVecchia', {
          samples: fitSamples, options: { family: spec.family, nu: spec.nu, method: 'reml', neighbours: DEFAULT_VECCHIA_NEIGHBOURS, ...(req.trend ? { trend: req.trend } : {}) },
        }, { signal });
        m.transform = req.transform;
        const cv = await p.request('crossValidate', { samples: req.samples, model: m, ...localCv(req.samples) }, { signal });
        return {
          key: spec.key, label: spec.label, model: m,
          logLikelihood: m.fit?.logLikelihood ?? NaN, aic: m.fit?.aic ?? NaN,
          rmse: cv.summary.rmse, msse: cv.summary.msse,
        };
      }
      const m = await p.request('fit', { samples: fitSamples, options: { family: spec.family, nu: spec.nu, method: req.method, ...(req.trend ? { trend: req.trend } : {}) } }, { signal });
      m.transform = req.transform;
      const cv = await p.request('crossValidate', { samples: req.samples, model: m }, { signal });
      return {
        key: spec.key, label: spec.label, model: m,
        logLikelihood: m.fit?.logLikelihood ?? NaN, aic: m.fit?.aic ?? NaN,
        rmse: cv.summary.rmse, msse: cv.summary.msse,
      };
    } catch (e) {
      const code = (e as { code?: string }).code;
      if (code !== 'fit-failed' && code !== 'not-positive-definite' && code !== 'non-finite') throw e;
      return { key: spec.key, label: spec.label, model: null, logLikelihood: NaN, aic: NaN, rmse: NaN, msse: NaN, error: (e as Error).message };
    } finally {
      done++;
      if (!signal?.aborted) onProgress?.(done, total, spec.label);
    }
  }));
  if (signal?.aborted) throw new GapwiseError('cancelled', 'Fitting was cancelled.');
  return rows;
}

export interface StructureFitRequest {
  /** Samples in data units. */
  samples: Samples;
  transform: 'none' | 'log';
  /** Family and ν of the candidate the richer model builds on (REML). */
  options: FitOptions;
  choice: StructureFitChoice;
}

/**
 * A fitted anisotropy or two structures (on ln values for a log transform), in a worker, with
 * progress; both models come back with the transform set.
 */
export async function fitStructure(req: StructureFitRequest, onProgress?: Progress, signal?: AbortSignal): Promise<StructureFitResult> {
  const fitSamples = req.transform === 'log' ? logSamples(req.samples) : req.samples;
  const r = await enginePool().request('fitStructure', { samples: fitSamples, options: req.options, choice: req.choice }, {
    signal, onProgress: (p) => onProgress?.(p.done, p.total),
  });
  r.model.transform = req.transform;
  r.simpler.transform = req.transform;
  return r;
}

/** Leave-one-out cross-validation of a model (samples in data units). */
export function crossValidate(samples: Samples, model: CovarianceModel, signal?: AbortSignal): Promise<LeaveOneOutResult> {
  return enginePool().request('crossValidate', { samples, model, ...localCv(samples) }, { signal });
}

/**
 * Above MAX_EXACT_SAMPLES samples (core/prediction/path-choice.ts chooseLeaveOneOutPath, as `gapwise cv`)
 * leave-one-out predicts each sample from its 64 nearest others (core/validation/local-cross-validation.ts,
 * n·64³/3 flops) instead of the closed form's n³/3 flops and 8n² bytes.
 */
function localCv(samples: Samples): { local?: { neighbours: number } } {
  return chooseLeaveOneOutPath({ samples: samples.x.length }).path === 'local' ? { local: { neighbours: DEFAULT_LOCAL_NEIGHBOURS } } : {};
}

export interface SurfaceRequest {
  samples: Samples;
  model: CovarianceModel;
  grid: Grid;
  threshold?: number;
  /** 'point' (cell centres, default) or 'block' (cell averages). */
  support?: 'point' | 'block';
  /** Block support: discretisation points per cell side (default 4). */
  blockPoints?: number;
  /** Point support from local neighbourhoods (many samples). */
  local?: LocalKrigingOptions;
  /** Encoded covariates of every grid cell (nx·ny rows, row-major from the top) for a covariate model. */
  covariates?: Float64Array;
}

/**
 * Mean, sd and (with a threshold) P(exceed) on the grid, in parallel row bands; `onBand` sees the
 * merged surface after each band so the map can fill in as the work goes.
 */
export function surface(
  req: SurfaceRequest, onProgress?: Progress, signal?: AbortSignal, onBand?: (merged: SurfaceResult) => void,
): Promise<SurfaceResult> {
  return enginePool().surface(req.samples, req.model, req.grid, { threshold: req.threshold, ...(req.covariates ? { covariates: req.covariates } : {}) }, {
    signal,
    onProgress: (p) => onProgress?.(p.done, p.total),
    onBand: (_band, merged) => onBand?.(merged),
    support: req.support, blockPoints: req.blockPoints, local: req.local,
  });
}

/**
 * The measured error of a local-neighbourhood surface against exact kriging (core/prediction/local-accuracy.ts
 * checkLocalGrid); with `grow`, the larger settings that meet the tolerance when it is missed.
 */
export function localAccuracy(samples: Samples, model: CovarianceModel, grid: Grid, local: LocalSettings, grow: boolean, signal?: AbortSignal): Promise<LocalGridCheck> {
  return enginePool().request('localAccuracy', { samples, model, grid, local, grow }, { signal });
}

export interface SimulateRequest {
  samples: Samples;
  model: CovarianceModel;
  grid: Grid;
  options: SimulateOptions;
  /** With options.keepRealisations: keep only the first this many realisations (default all). */
  keepFirst?: number;
}

/**
 * Conditional realisations on the grid, with progress in realisations: split into consecutive parts
 * (whole pairs of realisations) over the workers and merged (core mergeSimulationParts), which gives
 * what one run gives: each realisation has its own random stream.
 */
export async function simulate(req: SimulateRequest, onProgress?: Progress, signal?: AbortSignal): Promise<ConditionalSimulationResult & { path: SimulationPath }> {
  const N = req.options.count;
  const parts = Math.max(1, Math.min(workerCount(), Math.floor(N / 2)));
  const keep = req.options.keepRealisations === false ? 0 : req.keepFirst ?? N;
  // Exact or local conditioning, chosen by cost and measured in a worker as the command line chooses it.
  const o = req.options;
  const path = await enginePool().request('simulationPath', {
    samples: req.samples, model: req.model, grid: req.grid,
    options: {
      realisations: N, threads: parts, ...(o.support ? { support: o.support } : {}), ...(o.blockPoints !== undefined ? { blockPoints: o.blockPoints } : {}),
      ...(o.covariates ? { covariates: o.covariates } : {}),
    },
  }, { signal });
  const chosen: SimulateOptions = { ...o, path: path.choice.path };
  if (path.choice.path === 'local') chosen.neighbours = path.neighbours;
  else delete chosen.neighbours;
  req = { ...req, options: chosen };
  const done = new Array<number>(parts).fill(0);
  const results = new Array<ConditionalSimulationResult>(parts);
  await enginePool().run(Array.from({ length: parts }, (_, i) => {
    const { first, count } = simulationPart(0, N, i, parts);
    const options: SimulateOptions = { ...req.options, first, count, keepTotals: true, keepRealisations: first < keep };
    return { type: 'simulate' as const, payload: { samples: req.samples, model: req.model, grid: req.grid, options } };
  }), {
    name: 'simulation', parts: 'parts', signal,
    onProgress: (i, p) => {
      done[i] = p.done;
      onProgress?.(done.reduce((a, b) => a + b, 0), N);
    },
    onResult: (i, result) => { results[i] = result; },
  });
  const merged = mergeSimulationParts(results, { depth: req.options.depth });
  delete merged.totals;
  if (merged.realisations && keep < merged.realisations.length) merged.realisations = merged.realisations.slice(0, keep);
  return { ...merged, warnings: [...path.warnings, ...merged.warnings], path };
}

/** The variogram, and on request the four directions and the cloud, computed in a worker (many samples). */
export function variograms(
  req: { samples: Samples; options: VariogramOptions; directional: boolean; cloudPairs?: number }, signal?: AbortSignal,
): Promise<VariogramSet> {
  return enginePool().request('variogramSet', { samples: req.samples, options: req.options, directional: req.directional, cloudPairs: req.cloudPairs }, { signal });
}

/**
 * Reads a samples file (the text as read) in a worker, so a large file never stalls the page. The
 * app's one call of the intake: every samples file the app takes goes through here. Rejects with the
 * intake's GapwiseError. The workers know the built-in coordinate systems only; a code from the full
 * EPSG list (loaded on this thread by the CRS picker) is read here instead.
 */
export async function readSamplesFile(text: string, options: IntakeOptions, signal?: AbortSignal): Promise<IntakeResult> {
  try {
    return await enginePool().request('readSamples', { text, options }, { signal });
  } catch (e) {
    if ((e as { code?: string }).code === 'bad-crs' && epsgIndexLoaded() && !signal?.aborted) {
      return readSamples(text, options);
    }
    throw e;
  }
}

