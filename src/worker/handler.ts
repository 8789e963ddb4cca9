/**
 * The engine's request handler: one function from a request message to response messages,
 * independent of any Worker API so it runs (and is tested) in Node. engine.worker.ts wraps it.
 *
 * It dispatches each request type to its core/io function, reports progress for surfaces, keeps the
 * last factorised predictor (keyed by a hash of the samples and the model) so the row bands of one
 * surface factorise once per worker, turns every exception into error data, and names the result's
 * typed-array buffers for transfer.
 */
import { fitCandidates, fitModel } from '../core/fitting/fit.ts';
import { fitStructure } from '../core/fitting/fit-structure.ts';
import { empiricalVariogram, variogramSet } from '../core/fitting/variogram.ts';
import { leaveOneOut } from '../core/validation/cross-validation.ts';
import { localLeaveOneOut } from '../core/validation/local-cross-validation.ts';
import { createPredictor, type Predictor } from '../core/prediction/kriging.ts';
import { computeSurfaceWith } from '../core/prediction/surface.ts';
import { computeBlockSurfaceWith, createBlockPredictor, type BlockPredictor } from '../core/prediction/block-kriging.ts';
import { simulateConditional } from '../core/simulation/conditional-simulation.ts';
import { planSimulationPath } from '../core/simulation/simulation-path.ts';
import { vecchiaFit } from '../core/fitting/vecchia.ts';
import { createLocalPredictor } from '../core/prediction/local-kriging.ts';
import { checkLocalGrid } from '../core/prediction/local-accuracy.ts';
import type { SurfacePredictor } from '../core/prediction/surface.ts';
import type { LocalKrigingOptions } from '../core/prediction/local-kriging.ts';
import { GapwiseError } from '../core/shared/errors.ts';
import type { Samples } from '../core/shared/samples.ts';
import { isCovariateTrend, type CovarianceModel } from '../core/covariance/model.ts';
import { attachTrendCoefficients } from '../core/fitting/covariate-fit.ts';
import type { readSamples } from '../io/intake.ts';
import type { prepareReport } from './report-data.ts';
import { runDesignRequest } from './design-handler.ts';
import { runLikelihoodPart } from './likelihood-part.ts';
import {
  errorData, isEngineRequest, transferablesOf, REQUEST_TYPES,
  type EngineRequest, type EngineResponse, type RequestPayloads, type RequestType, type ResultPayloads,
} from './protocol.ts';

/** Posts one response; `transfer` lists buffers to move rather than copy. */
export type Send = (message: EngineResponse, transfer: ArrayBuffer[]) => void;

/** The core and io functions the handler calls (replaceable in tests). */
export interface EngineOperations {
  fitModel: typeof fitModel;
  fitCandidates: typeof fitCandidates;
  fitStructure: typeof fitStructure;
  empiricalVariogram: typeof empiricalVariogram;
  variogramSet: typeof variogramSet;
  leaveOneOut: typeof leaveOneOut;
  localLeaveOneOut: typeof localLeaveOneOut;
  createPredictor: typeof createPredictor;
  computeSurfaceWith: typeof computeSurfaceWith;
  createBlockPredictor: typeof createBlockPredictor;
  computeBlockSurfaceWith: typeof computeBlockSurfaceWith;
  simulateConditional: typeof simulateConditional;
  vecchiaFit: typeof vecchiaFit;
  createLocalPredictor: typeof createLocalPredictor;
  /** Reading a samples file: only the app's worker has it (./operations.ts), so the command line's workers never load the file reader. */
  readSamples?: typeof readSamples;
  /** A report's data from a project (it reads the project's files too): only the app's worker has it (./operations.ts). */
  prepareReport?: typeof prepareReport;
}

/** The computing operations, without the file reader (what the command line's engine threads run). */
export const COMPUTE_OPERATIONS: EngineOperations = {
  fitModel, fitCandidates, fitStructure, empiricalVariogram, variogramSet, leaveOneOut, localLeaveOneOut, createPredictor, computeSurfaceWith,
  createBlockPredictor, computeBlockSurfaceWith, simulateConditional, vecchiaFit, createLocalPredictor,
};

/** Progress is posted when it has moved by at least this fraction (and at the end). */
const PROGRESS_STEP = 0.01;

function hashBytes(bytes: Uint8Array, seed: number): number {
  // FNV-1a, 32 bit.
  let h = seed >>> 0;
  for (let k = 0; k < bytes.length; k++) {
    h ^= bytes[k];
    h = Math.imul(h, 0x01000193) >>> 0;
  }
  return h;
}

function hashArray(a: Float64Array, seed: number): string {
  const bytes = new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
  return hashBytes(bytes, seed).toString(36) + hashBytes(bytes, seed ^ 0x5bd1e995).toString(36);
}

/** A key that changes whenever the samples or the parts of the model that predictions use change. */
export function predictorKey(samples: Samples, model: CovarianceModel): string {
  const asF64 = (a: ArrayLike<number>) => (a instanceof Float64Array ? a : Float64Array.from(a));
  const m = { s: model.structures, t: model.trend, a: model.anisotropy ?? null, f: model.transform };
  return [samples.x.length, hashArray(asF64(samples.x), 0x811c9dc5), hashArray(asF64(samples.y), 0x9747b28c),
    hashArray(asF64(samples.value), 0x3c6ef372), samples.covariates ? hashArray(asF64(samples.covariates), 0x2545f491) : '', JSON.stringify(m)].join('|');
}

function checkSamples(samples: unknown): asserts samples is Samples {
  const s = samples as Partial<Samples> | null;
  if (!s || typeof s !== 'object' || !s.x || !s.y || !s.value) {
    throw new GapwiseError('bad-option', 'Expected the request to carry samples with x, y and value arrays.');
  }
}

/**
 * The last predictor built, kept while requests ask for the same key: `get(key, build)` returns it,
 * or frees it and builds the one for the new key.
 */
function lastPredictor<P>(): (key: string, build: () => P) => P {
  let cached: { key: string; predictor: P } | null = null;
  return (key, build) => {
    if (cached && cached.key === key) return cached.predictor;
    cached = null; // free the old factor before building a new one
    const predictor = build();
    cached = { key, predictor };
    return predictor;
  };
}

/**
 * The handler's predictor caches: the exact, local-neighbourhood and block predictors, each the last
 * one built (keyed by predictorKey, and for local neighbourhoods their options too).
 */
function predictorCaches(ops: EngineOperations) {
  const exact = lastPredictor<Predictor>();
  const local = lastPredictor<SurfacePredictor>();
  const block = lastPredictor<BlockPredictor>();
  return {
    predictorFor: (samples: Samples, model: CovarianceModel): Predictor => exact(predictorKey(samples, model), () => ops.createPredictor(samples, model)),
    localPredictorFor: (samples: Samples, model: CovarianceModel, options: LocalKrigingOptions): SurfacePredictor =>
      local(predictorKey(samples, model) + JSON.stringify(options), () => ops.createLocalPredictor(samples, model, options)),
    blockPredictorFor: (samples: Samples, model: CovarianceModel): BlockPredictor => block(predictorKey(samples, model), () => ops.createBlockPredictor(samples, model)),
  };
}

/** Runs one request of a known type; `progress` reports the fraction done. */
type RunRequest = <K extends RequestType>(type: K, payload: RequestPayloads[K], progress: (done: number, total: number) => void) => ResultPayloads[K];

/**
 * Answers one incoming message: a message that is not a request gets an error naming the request
 * types; a request gets progress (at most every PROGRESS_STEP), then exactly one result or error.
 */
function answer(message: unknown, send: Send, run: RunRequest): void {
  if (!isEngineRequest(message)) {
    const m = message as { id?: unknown; type?: unknown } | null;
    const id = typeof m?.id === 'number' ? m.id : -1;
    send({
      id, type: 'error',
      error: { code: 'bad-option', message: `Expected a request {id, type, payload} with type one of ${REQUEST_TYPES.join(', ')}; got type ${JSON.stringify(m?.type)}.`, place: {} },
    }, []);
    return;
  }
  const request = message as EngineRequest;
  let lastFraction = -1;
  const progress = (done: number, total: number): void => {
    const fraction = total > 0 ? done / total : 1;
    if (fraction - lastFraction >= PROGRESS_STEP || (done === total && lastFraction < 1)) {
      lastFraction = fraction;
      send({ id: request.id, type: 'progress', done, total, fraction }, []);
    }
  };
  try {
    const result = run(request.type, request.payload, progress);
    send({ id: request.id, type: 'result', request: request.type, result } as EngineResponse, transferablesOf(result));
  } catch (error) {
    send({ id: request.id, type: 'error', error: errorData(error) }, []);
  }
}

/**
 * Creates a handler with its own predictor cache. Call it with each incoming message; it posts
 * progress, then exactly one result or error for the request's id.
 */
export function createEngineHandler(ops: EngineOperations = COMPUTE_OPERATIONS): (message: unknown, send: Send) => void {
  const { predictorFor, localPredictorFor, blockPredictorFor } = predictorCaches(ops);

  const run = <K extends RequestType>(type: K, payload: RequestPayloads[K], progress: (done: number, total: number) => void): ResultPayloads[K] => {
    const p = payload as RequestPayloads[RequestType];
    switch (type) {
      case 'fit': {
        const q = p as RequestPayloads['fit'];
        checkSamples(q.samples);
        return ops.fitModel(q.samples, q.options) as ResultPayloads[K];
      }
      case 'fitCandidates': {
        const q = p as RequestPayloads['fitCandidates'];
        checkSamples(q.samples);
        return ops.fitCandidates(q.samples, q.options ?? {}) as ResultPayloads[K];
      }
      case 'fitStructure': {
        const q = p as RequestPayloads['fitStructure'];
        checkSamples(q.samples);
        return ops.fitStructure(q.samples, q.options, q.choice, progress) as ResultPayloads[K];
      }
      case 'variogram': {
        const q = p as RequestPayloads['variogram'];
        checkSamples(q.samples);
        return ops.empiricalVariogram(q.samples, q.options ?? {}) as ResultPayloads[K];
      }
      case 'variogramSet': {
        const q = p as RequestPayloads['variogramSet'];
        checkSamples(q.samples);
        return ops.variogramSet(q.samples, q.options ?? {}, { directional: q.directional, cloudPairs: q.cloudPairs }) as ResultPayloads[K];
      }
      case 'crossValidate': {
        const q = p as RequestPayloads['crossValidate'];
        checkSamples(q.samples);
        if (q.local) return ops.localLeaveOneOut(q.samples, q.model, { neighbours: q.local.neighbours }, progress) as ResultPayloads[K];
        return ops.leaveOneOut(q.samples, q.model) as ResultPayloads[K];
      }
      case 'surfaceRows': {
        const q = p as RequestPayloads['surfaceRows'];
        checkSamples(q.samples);
        // On a grid, targets one cell apart may share tile neighbourhoods (core/prediction/local-kriging.ts chooseTile).
        const predictor = q.local
          ? localPredictorFor(q.samples, q.model, { ...q.local, targetSpacing: q.local.targetSpacing ?? q.grid.cell })
          : predictorFor(q.samples, q.model);
        return ops.computeSurfaceWith(predictor, q.grid, q.options ?? {}, progress) as ResultPayloads[K];
      }
      case 'localAccuracy': {
        const q = p as RequestPayloads['localAccuracy'];
        checkSamples(q.samples);
        return checkLocalGrid(q.samples, q.model, q.grid, q.local, { ...(q.tolerance ? { tolerance: q.tolerance } : {}), grow: q.grow === true }) as ResultPayloads[K];
      }
      case 'localPredict': {
        const q = p as RequestPayloads['localPredict'];
        checkSamples(q.samples);
        const predictor = localPredictorFor(q.samples, q.model, q.local);
        return predictor.predict(q.x, q.y, { ...(q.covariates ? { covariates: q.covariates } : {}), onProgress: progress }) as ResultPayloads[K];
      }
      case 'fitVecchia': {
        const q = p as RequestPayloads['fitVecchia'];
        checkSamples(q.samples);
        const m = ops.vecchiaFit(q.samples, q.options);
        // A covariate model carries its coefficients with standard errors, as an exact fit's does.
        return (isCovariateTrend(m.trend) && !m.fit?.coefficients ? attachTrendCoefficients(q.samples, m) : m) as ResultPayloads[K];
      }
      case 'blockSurfaceRows': {
        const q = p as RequestPayloads['blockSurfaceRows'];
        checkSamples(q.samples);
        return ops.computeBlockSurfaceWith(blockPredictorFor(q.samples, q.model), q.grid, q.options ?? {}, progress) as ResultPayloads[K];
      }
      case 'simulate': {
        const q = p as RequestPayloads['simulate'];
        checkSamples(q.samples);
        return ops.simulateConditional(q.samples, q.model, q.grid, { ...q.options, onProgress: progress }) as ResultPayloads[K];
      }
      case 'simulationPath': {
        const q = p as RequestPayloads['simulationPath'];
        checkSamples(q.samples);
        return planSimulationPath(q.samples, q.model, q.grid, q.options) as ResultPayloads[K];
      }
      case 'readSamples': {
        const q = p as RequestPayloads['readSamples'];
        if (!ops.readSamples) throw new Error('This engine worker reads no files: the command line reads them on its main thread.');
        return ops.readSamples(q.text, q.options) as ResultPayloads[K];
      }
      case 'prepareReport': {
        const q = p as RequestPayloads['prepareReport'];
        if (!ops.prepareReport) throw new Error('This engine worker prepares no reports: the command line prepares them on its main thread.');
        // The candidate fits and the realisations each report progress; a request makes at most one of them count.
        return ops.prepareReport(q.project, { ...q.options, onCompareProgress: progress, onProgress: progress }) as ResultPayloads[K];
      }
      case 'design':
        return runDesignRequest(p as RequestPayloads['design'], progress) as ResultPayloads[K];
      case 'ready':
        return true as ResultPayloads[K];
      case 'likelihoodPart':
        return runLikelihoodPart(p as RequestPayloads['likelihoodPart']) as ResultPayloads[K];
    }
    throw new GapwiseError('bad-option', `Unknown request type ${JSON.stringify(type)}.`);
  };

  return (message: unknown, send: Send): void => answer(message, send, run);
}
