/**
 * Step 3, Surface, realisations: conditional realisations drawn on the surface's grid (split over the
 * workers), their per-cell mean, sd and P(exceed) put on the map in place of the kriged surface on
 * request, and the area above the action level. Engine work runs through LatestRequest.
 */
import type { CovarianceModel } from '../../core/covariance/model.ts';
import { covariatesOnGrid } from './covariate-grid.ts';
import type { Grid } from '../../core/geometry/grid.ts';
import { rangeOf, type SurfaceResult } from '../../core/prediction/surface.ts';
import type { ConditionalSimulationResult } from '../../core/simulation/conditional-simulation.ts';
import { LatestRequest } from './latest-request.ts';
import { idleTask, type TaskState } from './shown-error.ts';
import { usableThreshold } from './surface-step.svelte.ts';
import * as engine from './engine.ts';
import type { Session } from './session.svelte.ts';

/** Conditional realisations with what they were computed from. */
export interface SimulationView {
  grid: Grid;
  result: ConditionalSimulationResult;
  key: string;
  /** The surface key at the time (see SurfaceState.key). */
  base: string;
  ms: number;
  /** Seed and depth (m) they were drawn with, and when (ISO 8601). */
  seed: number;
  depth: number | null;
  made: string;
}

/** Realisations kept for the view (the summaries are computed from all of them). */
const KEEP_FIRST = 4;

export class RealisationsState {
  /** The last run. */
  simulation = $state.raw<SimulationView | null>(null);
  task = $state<TaskState>(idleTask());
  /** Seconds per realisation-cell measured on the last run (per worker), for the estimate. */
  rate = $state<number | null>(null);
  private runs = new LatestRequest();

  constructor(private readonly app: Session) {}

  /** Realisations to draw (saved). */
  get count(): number {
    return this.app.s.simulation.count;
  }

  set count(v: number) {
    this.app.s.simulation.count = v;
  }

  /** Depth (m) for the volume above the action level, or null (saved). */
  get depth(): number | null {
    return this.app.s.simulation.depth;
  }

  set depth(v: number | null) {
    this.app.s.simulation.depth = v;
  }

  /** Seed of the realisations, a whole number (saved); the same seed redraws the same maps. */
  get seed(): number {
    return this.app.s.simulation.seed;
  }

  set seed(v: number) {
    this.app.s.simulation.seed = v;
  }

  /** Seconds the next run should take, or null before a first run has measured the speed. */
  get estimate(): number | null {
    const cells = this.app.surface.gridPlan.value?.cells;
    return this.rate !== null && cells ? this.rate * cells * this.count : null;
  }

  /** True when realisations were drawn for other inputs (model, grid, threshold, support) than the current ones. */
  get stale(): boolean {
    return !!this.simulation && !this.simulation.key.startsWith(this.app.surface.key + '|');
  }

  /** Draws conditional realisations (split over the workers) with the current support, threshold and depth. */
  async simulate(): Promise<void> {
    const intake = this.app.samples.intake;
    const model = this.app.s.structure.model;
    const plan = this.app.surface.gridPlan.value;
    if (!intake || !model || !plan) return;
    const threshold = usableThreshold(this.app.s.surface.threshold, model);
    const count = Math.max(1, Math.min(10_000, Math.round(this.count)));
    const seed = Number.isInteger(this.seed) ? this.seed : 1;
    const depth = threshold !== null && this.depth && this.depth > 0 ? this.depth : null;
    const base = this.app.surface.key;
    const key = base + `|${count}|${depth}|${seed}`;
    const support = this.app.surface.support;
    const blockPoints = this.app.surface.blockPoints;
    const t0 = performance.now();
    this.task = { ...idleTask(), status: 'running', total: count, what: 'realisations' };
    const plain = $state.snapshot(model) as CovarianceModel;
    const answer = await this.runs.run(async (run) => {
      // A covariate model: the covariates at the lattice nodes (block points) from the loaded rasters.
      const setup = await covariatesOnGrid(intake, plain, this.app.rasters.covariateRasters, plan.grid, { nodes: support === 'block' ? blockPoints : 1 });
      run.check();
      const result = await engine.simulate({
        samples: setup.samples, model: plain, grid: setup.grid,
        options: {
          count, seed, support, blockPoints, keepRealisations: true,
          ...(setup.nodeCovariates ? { covariates: setup.nodeCovariates } : {}),
          threshold: threshold ?? undefined,
          depth: depth ?? undefined,
        },
        keepFirst: KEEP_FIRST,
      }, (done, total) => { if (run.current()) this.task = { ...this.task, done, total }; }, run.signal);
      return { setup, result };
    });
    if (answer.status === 'stale') return;
    const ms = performance.now() - t0;
    if (answer.status !== 'done') {
      this.task = { ...this.task, status: answer.status, error: answer.error, ms };
      return;
    }
    // Keep the first realisations only: the view shows them, the summaries are computed.
    const { setup, result } = answer.value;
    const kept = { ...result, realisations: result.realisations?.slice(0, KEEP_FIRST), warnings: [...setup.warnings, ...result.warnings] };
    this.simulation = { grid: setup.grid, result: kept, key, base, ms, seed, depth, made: new Date().toISOString() };
    this.rate = ms / 1000 / (count * plan.cells);
    this.task = { ...this.task, status: 'done', done: count, ms };
  }

  /**
   * Puts the realisations' per-cell mean, sd and P(exceed) (the share of realisations above the
   * action level) on the map in place of the kriged surface.
   */
  showSimulation(): void {
    const sim = this.simulation;
    const intake = this.app.samples.intake;
    if (!sim || !intake) return;
    const r = sim.result;
    const mean = Float32Array.from(r.mean), sd = Float32Array.from(r.sd);
    let cells = 0;
    for (const v of mean) if (v === v) cells++;
    const result: SurfaceResult = {
      rows: [0, sim.grid.ny], nx: sim.grid.nx, mean, sd, range: { mean: rangeOf(mean), sd: rangeOf(sd) }, cells, warnings: [...r.warnings],
    };
    if (r.pExceed) {
      result.pExceed = Float32Array.from(r.pExceed);
      result.threshold = r.threshold;
      result.range.pExceed = rangeOf(result.pExceed);
    }
    const surface = this.app.surface;
    if (surface.shown && !surface.shown.fromSimulation) surface.kriged = surface.shown;
    surface.shown = {
      grid: sim.grid, result, work: intake.report.crs.work, threshold: r.threshold ?? null, key: sim.base,
      bands: (surface.shown?.bands ?? 0) + 1, done: true, support: r.support, points: r.points, local: null, fromSimulation: r.count,
    };
    if (result.pExceed) this.app.s.surface.layer = 'exceed';
  }

  /** Puts the kept kriged surface back on the map in place of the realisations' layers. */
  showKriged(): void {
    const surface = this.app.surface;
    const k = surface.kriged;
    if (!k || !surface.shown?.fromSimulation) return;
    surface.shown = { ...k, bands: surface.shown.bands + 1 };
  }

  cancelSimulation(): void {
    this.runs.cancel();
    this.task = { ...this.task, status: 'cancelled' };
  }

  /** Drops the realisations (the samples changed). */
  drop(): void {
    this.runs.cancel();
    this.simulation = null;
    this.task = idleTask();
  }
}
