/**
 * A fake of the app's engine door (src/ui/state/engine.ts) for the step-state tests: samples are read
 * by the real intake on this thread; fits, cross-validation, surfaces, realisations and variograms
 * answer with small made-up values at once, or wait for the test (`hold`) so it can settle them late.
 */
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { readSamples } from '../../../src/io/intake.ts';
import type { IntakeOptions } from '../../../src/io/types.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import type { Grid } from '../../../src/core/geometry/grid.ts';
import type { SurfaceResult } from '../../../src/core/prediction/surface.ts';
import type { ConditionalSimulationResult } from '../../../src/core/simulation/conditional-simulation.ts';
import type { LeaveOneOutResult } from '../../../src/core/validation/cross-validation.ts';
import type { CandidateRow } from '../../../src/ui/state/structure.ts';
import type { FitRequest, SimulateRequest, SurfaceRequest } from '../../../src/ui/state/engine.ts';

export const exponential = (scale: number): CovarianceModel => ({
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'exponential', sill: 1, scale }], trend: 'constant', transform: 'none',
});

/** Two candidate rows: exponential (lower AIC, the best) and Matérn 3/2. */
export function fakeRows(scale = 30): CandidateRow[] {
  return [
    { key: 'exponential', label: 'Exponential', model: exponential(scale), logLikelihood: -10, aic: 26, rmse: 1.1, msse: 0.9 },
    {
      key: 'matern-1.5', label: 'Matérn ν = 3/2',
      model: { structures: [{ type: 'nugget', sill: 0.2 }, { type: 'matern', sill: 1, scale: 20, nu: 1.5 }], trend: 'constant', transform: 'none' },
      logLikelihood: -12, aic: 30, rmse: 1.3, msse: 1.2,
    },
  ];
}

/** A surface of `value` in every cell of the grid. */
export function flatSurface(grid: Grid, value: number): SurfaceResult {
  const cells = grid.nx * grid.ny;
  const mean = new Float32Array(cells).fill(value), sd = new Float32Array(cells).fill(1);
  return { rows: [0, grid.ny], nx: grid.nx, mean, sd, range: { mean: { min: value, max: value }, sd: { min: 1, max: 1 } }, cells, warnings: [] };
}

interface Held {
  name: string;
  args: unknown[];
  resolve(v: unknown): void;
  reject(e: unknown): void;
}

/** What the fake saw and what it holds back. */
export const engineLog = {
  calls: [] as Array<{ name: string; args: unknown[] }>,
  /** Names of calls that wait for the test instead of answering at once. */
  hold: new Set<string>(),
  held: [] as Held[],
  /** Candidate rows the next fits answer with. */
  rows: fakeRows(),
  reset(): void {
    this.calls = [];
    this.hold.clear();
    this.held = [];
    this.rows = fakeRows();
  },
};

function answer<T>(name: string, args: unknown[], signal: AbortSignal | undefined, value: () => T): Promise<T> {
  engineLog.calls.push({ name, args });
  if (!engineLog.hold.has(name)) return Promise.resolve().then(value);
  return new Promise<T>((resolve, reject) => {
    engineLog.held.push({ name, args, resolve: resolve as (v: unknown) => void, reject });
    // A held call does not honour the abort: its answer may still arrive late (the state must drop it).
    void signal;
  });
}

export function workerCount(): number {
  return 2;
}

export function requestCounts(): Record<string, number> {
  return {};
}

export function readSamplesFile(text: string, options: IntakeOptions, signal?: AbortSignal) {
  return answer('readSamplesFile', [text, options], signal, () => readSamples(text, options));
}

export function fitCandidateRows(req: FitRequest, _progress?: unknown, signal?: AbortSignal): Promise<CandidateRow[]> {
  return answer('fitCandidateRows', [req], signal, () => structuredClone(engineLog.rows));
}

export function crossValidate(samples: { x: Float64Array }, model: CovarianceModel, signal?: AbortSignal): Promise<LeaveOneOutResult> {
  return answer('crossValidate', [samples, model], signal, () => ({
    scale: 'data', summary: { n: samples.x.length, me: 0, rmse: 1, msse: 1 },
  }) as unknown as LeaveOneOutResult);
}

export function surface(req: SurfaceRequest, _progress?: unknown, signal?: AbortSignal): Promise<SurfaceResult> {
  return answer('surface', [req], signal, () => flatSurface(req.grid, 5));
}

export function localAccuracy(): Promise<never> {
  return Promise.reject(new GapwiseError('bad-option', 'Not used in these tests.'));
}

export function simulate(req: SimulateRequest, _progress?: unknown, signal?: AbortSignal): Promise<ConditionalSimulationResult> {
  return answer('simulate', [req], signal, () => {
    const cells = req.grid.nx * req.grid.ny;
    return {
      grid: req.grid, support: 'point', points: 1, count: req.options.count, mean: new Float64Array(cells).fill(7), sd: new Float64Array(cells).fill(2),
      realisations: [new Float32Array(cells).fill(6)], lattice: { nx: 1, ny: 1, spacing: 1, torus: [1, 1], paddingSteps: 0, negativeFraction: 0 },
      placementError: 0, neighbours: 'all', warnings: [], first: 0,
    } as ConditionalSimulationResult;
  });
}

export function variograms(): Promise<never> {
  return Promise.reject(new GapwiseError('bad-option', 'Not used in these tests (fewer samples than the worker threshold).'));
}

export function fitStructure(): Promise<never> {
  return Promise.reject(new GapwiseError('bad-option', 'Not used in these tests.'));
}

export function enginePool(): never {
  throw new Error('The fake engine has no pool.');
}
