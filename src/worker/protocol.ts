/**
 * The message protocol between the main thread and the engine workers: a tagged union of requests
 * ({id, type, payload}) and responses ({id, type: 'progress' | 'result' | 'error', ...}).
 *
 * Everything is plain data (structured-clone safe). Errors travel as data {code, message, place} and
 * become GapwiseError again on the main thread. Results are posted with their typed-array buffers
 * transferred (no copy); requests are copied, so the main thread keeps its samples.
 */
import type { Samples } from '../core/shared/samples.ts';
import type { CovarianceModel } from '../core/covariance/model.ts';
import type { FitOptions } from '../core/fitting/fit.ts';
import type { StructureChoice, StructureFit } from '../core/fitting/fit-structure.ts';
import type { EmpiricalVariogram, VariogramOptions, VariogramSet } from '../core/fitting/variogram.ts';
import type { LeaveOneOutResult } from '../core/validation/cross-validation.ts';
import type { Grid } from '../core/geometry/grid.ts';
import type { SurfaceOptions, SurfaceResult } from '../core/prediction/surface.ts';
import type { IntakeOptions, IntakeResult } from '../io/types.ts';
import type { DesignResult } from '../core/design/design.ts';
import type { BlockSurfaceOptions } from '../core/prediction/block-kriging.ts';
import type { VecchiaFitOptions } from '../core/fitting/vecchia.ts';
import type { LocalKrigingOptions, LocalPrediction } from '../core/prediction/local-kriging.ts';
import type { LocalGridCheck, LocalSettings } from '../core/prediction/local-accuracy.ts';
import type { Tolerance } from '../core/prediction/path-choice.ts';
import type { ConditionalSimulationOptions, ConditionalSimulationResult } from '../core/simulation/conditional-simulation.ts';
import type { SimulationPath, SimulationPathOptions } from '../core/simulation/simulation-path.ts';

/** Simulation options that cross postMessage (no callbacks). */
export type SimulateOptions = Omit<ConditionalSimulationOptions, 'onProgress' | 'isCancelled'>;

/** A block surface band: every cell is a block average (SurfaceResult shape, plus the block facts). */
export type BlockSurfaceResult = SurfaceResult & { support: 'block'; points: number; blockVariance: number };
import type { DesignRequestPayload } from './design-handler.ts';
import type { LikelihoodPartPayload } from './likelihood-part.ts';
import type { PrepareRequestOptions } from './report-data.ts';
import type { Project } from '../io/project.ts';
import type { ReportInput } from '../io/report.ts';
import { GapwiseError, type ErrorCode, type ErrorPlace } from '../core/shared/errors.ts';

/** The richer fit of the Structure step: a fitted anisotropy, two structures (short and long range), or both. */
export type StructureFitChoice = StructureChoice;

/**
 * What a richer fit answers (core/fitting/fit-structure.ts): the model kept, the simpler model fitted
 * beside it, the comparison rows (log-likelihood, AIC), the model behind each row that may be used
 * and, for two structures, why they were not kept.
 */
export type StructureFitResult = StructureFit;

/** What each request type carries. */
export interface RequestPayloads {
  fit: { samples: Samples; options: FitOptions };
  fitCandidates: { samples: Samples; options?: Omit<FitOptions, 'family' | 'nu'> };
  /** A fitted anisotropy, two structures or both (core/fitting/fit-structure.ts), with progress. */
  fitStructure: { samples: Samples; options: FitOptions; choice: StructureFitChoice };
  variogram: { samples: Samples; options?: VariogramOptions };
  /** The variogram with, on request, the four directions and the cloud (core/fitting/variogram.ts variogramSet). */
  variogramSet: { samples: Samples; options?: VariogramOptions; directional?: boolean; cloudPairs?: number };
  /** Leave-one-out: closed form from all samples, or with `local` from each sample's nearest others (many samples). */
  crossValidate: { samples: Samples; model: CovarianceModel; local?: { neighbours: number } };
  /** Surfaces on `options.rows` of the grid (all rows when absent). */
  /** With `local`, predictions come from local neighbourhoods (for many samples) instead of all samples. */
  surfaceRows: { samples: Samples; model: CovarianceModel; grid: Grid; options?: SurfaceOptions; local?: LocalKrigingOptions };
  /** A model fitted by the nearest-neighbour (Vecchia) likelihood: for many samples. */
  fitVecchia: { samples: Samples; options: VecchiaFitOptions };
  /** Block (cell-average) surfaces on `options.rows` of the grid (all rows when absent). */
  blockSurfaceRows: { samples: Samples; model: CovarianceModel; grid: Grid; options?: BlockSurfaceOptions };
  /** Conditional realisations on the grid, with P(exceed) and the area above the action level. */
  simulate: { samples: Samples; model: CovarianceModel; grid: Grid; options: SimulateOptions };
  /** Exact or local conditioning for realisations on `grid`, chosen by cost and measured (core/simulation/simulation-path.ts). */
  simulationPath: { samples: Samples; model: CovarianceModel; grid: Grid; options: SimulationPathOptions };
  readSamples: { text: string; options: IntakeOptions };
  /** The data of a report from a project (./report-data.ts prepareReport; the app's worker only, like readSamples). */
  prepareReport: { project: Project; options: PrepareRequestOptions };
  design: DesignRequestPayload;
  /**
   * The measured error of a local-neighbourhood surface against exact kriging at a seeded subset of its
   * cells; with `grow`, the larger settings that meet the tolerance when it is missed.
   */
  localAccuracy: { samples: Samples; model: CovarianceModel; grid: Grid; local: LocalSettings; tolerance?: Tolerance; grow?: boolean };
  /** Local-neighbourhood predictions at points (the command line's predict; values equal a one-thread run's). */
  localPredict: { samples: Samples; model: CovarianceModel; local: LocalKrigingOptions; x: Float64Array; y: Float64Array; covariates?: Float64Array };
  /** Answers once the worker runs: starts workers ahead of work that blocks the caller (the likelihood passes). */
  ready: Record<string, never>;
  /** This worker's part of every nearest-neighbour likelihood pass, over shared memory until told to leave (./likelihood-part.ts). */
  likelihoodPart: LikelihoodPartPayload;
}

/** What each request type answers. */
export interface ResultPayloads {
  fit: CovarianceModel;
  fitCandidates: CovarianceModel[];
  fitStructure: StructureFitResult;
  variogram: EmpiricalVariogram;
  variogramSet: VariogramSet;
  crossValidate: LeaveOneOutResult;
  surfaceRows: SurfaceResult;
  fitVecchia: CovarianceModel;
  blockSurfaceRows: BlockSurfaceResult;
  simulate: ConditionalSimulationResult;
  simulationPath: SimulationPath;
  readSamples: IntakeResult;
  prepareReport: ReportInput;
  design: DesignResult;
  localAccuracy: LocalGridCheck;
  localPredict: LocalPrediction;
  ready: true;
  likelihoodPart: { passes: number };
}

export type RequestType = keyof RequestPayloads;

export const REQUEST_TYPES: readonly RequestType[] = [
  'fit', 'fitCandidates', 'fitStructure', 'variogram', 'variogramSet', 'crossValidate', 'surfaceRows', 'fitVecchia', 'blockSurfaceRows', 'simulate', 'simulationPath', 'readSamples', 'prepareReport', 'design', 'localAccuracy', 'localPredict',
  'ready', 'likelihoodPart',
];

/** A request; `id` is unique per client. */
export type EngineRequest<K extends RequestType = RequestType> = K extends RequestType
  ? { id: number; type: K; payload: RequestPayloads[K] }
  : never;

export interface ProgressMessage {
  id: number;
  type: 'progress';
  /** Units of work done and in total (cells for surfaces; 0 of 1 when unknown). */
  done: number;
  total: number;
  /** done / total, 0..1. */
  fraction: number;
}

export type ResultMessage<K extends RequestType = RequestType> = K extends RequestType
  ? { id: number; type: 'result'; request: K; result: ResultPayloads[K] }
  : never;

/** An error as data: a GapwiseError code, or 'internal' for a bug (an exception that is not ours). */
export interface ErrorData {
  code: ErrorCode | 'internal';
  message: string;
  place: ErrorPlace;
  /** The numeric columns to choose the value from, when a file has several (intake's `numericColumns`). */
  choices?: string[];
}

export interface ErrorMessage {
  id: number;
  type: 'error';
  error: ErrorData;
}

export type EngineResponse = ProgressMessage | ResultMessage | ErrorMessage;

/** An engine failure that is not a GapwiseError (a bug, or the worker dying). */
export class EngineError extends Error {
  readonly code: 'internal';
  readonly place: ErrorPlace;
  constructor(message: string, place: ErrorPlace = {}) {
    super(message);
    this.name = 'EngineError';
    this.code = 'internal';
    this.place = place;
  }
}

/** True when `value` has the shape of a request of a known type. */
export function isEngineRequest(value: unknown): value is EngineRequest {
  if (typeof value !== 'object' || value === null) return false;
  const v = value as { id?: unknown; type?: unknown; payload?: unknown };
  return typeof v.id === 'number' && Number.isFinite(v.id)
    && typeof v.type === 'string' && (REQUEST_TYPES as readonly string[]).includes(v.type)
    && typeof v.payload === 'object' && v.payload !== null;
}

/** True when `value` has the shape of a response. */
export function isEngineResponse(value: unknown): value is EngineResponse {
  if (typeof value !== 'object' || value === null) return false;
  const v = value as { id?: unknown; type?: unknown };
  return typeof v.id === 'number' && (v.type === 'progress' || v.type === 'result' || v.type === 'error');
}

/** Turns anything thrown into error data (GapwiseError keeps its code and place). */
export function errorData(error: unknown): ErrorData {
  if (error instanceof GapwiseError) {
    const choices = (error as { numericColumns?: unknown }).numericColumns;
    const listed = Array.isArray(choices) && choices.every((c) => typeof c === 'string') ? { choices: [...choices] as string[] } : {};
    return { code: error.code, message: error.message, place: { ...error.place }, ...listed };
  }
  if (error instanceof EngineError) return { code: 'internal', message: error.message, place: { ...error.place } };
  const message = error instanceof Error ? `${error.name}: ${error.message}` : String(error);
  return { code: 'internal', message: `Unexpected failure in the engine (a bug): ${message}`, place: {} };
}

/** Error data back into an error object: GapwiseError for our codes, EngineError for 'internal'. */
export function errorFromData(data: ErrorData): GapwiseError | EngineError {
  if (data.code === 'internal') return new EngineError(data.message, data.place);
  const error = new GapwiseError(data.code, data.message, data.place);
  return data.choices ? Object.assign(error, { numericColumns: [...data.choices] }) : error;
}

/**
 * The distinct ArrayBuffers behind the typed arrays in a value (searched through plain objects and
 * arrays, 6 levels deep), for the transfer list of postMessage. Duplicates are removed (a transfer
 * list may not name a buffer twice).
 */
export function transferablesOf(value: unknown): ArrayBuffer[] {
  const found = new Set<ArrayBuffer>();
  const visit = (v: unknown, depth: number): void => {
    if (v === null || typeof v !== 'object' || depth > 6) return;
    if (ArrayBuffer.isView(v)) {
      if (v.buffer instanceof ArrayBuffer && v.buffer.byteLength > 0) found.add(v.buffer);
      return;
    }
    if (v instanceof ArrayBuffer) {
      if (v.byteLength > 0) found.add(v);
      return;
    }
    if (Array.isArray(v)) {
      for (const item of v) visit(item, depth + 1);
      return;
    }
    const proto = Object.getPrototypeOf(v);
    if (proto !== Object.prototype && proto !== null) return;
    for (const key of Object.keys(v)) visit((v as Record<string, unknown>)[key], depth + 1);
  };
  visit(value, 0);
  return [...found];
}
