/**
 * Step 3, Surface: the grid planned over the samples (or the boundary) and the kriged surface (mean, sd, P(exceed)) computed in workers band by
 * band, from every sample or from local neighbourhoods checked against exact kriging (a model with
 * covariates reads them from the rasters of ./covariate-rasters.svelte.ts). The surface on
 * the map may be the realisations' summaries (./realisations.svelte.ts); the kriged one is then kept
 * in `kriged`. Engine work runs through LatestRequest: a newer surface drops the older one.
 */
import type { Samples } from '../../core/shared/samples.ts';
import type { Warning } from '../../core/shared/errors.ts';
import { isCovariateTrend, type CovarianceModel } from '../../core/covariance/model.ts';
import { covariatesOnGrid, missingRasterMessage } from './covariate-grid.ts';
import type { Grid } from '../../core/geometry/grid.ts';
import type { SurfaceResult } from '../../core/prediction/surface.ts';
import { DEFAULT_LOCAL_NEIGHBOURS } from '../../core/prediction/local-kriging.ts';
import { choosePredictionPath, EXACT_SAMPLE_LIMIT } from '../../core/prediction/path-choice.ts';
import type { LocalAccuracy, LocalSettings } from '../../core/prediction/local-accuracy.ts';
import type { IntakeResult } from '../../io/types.ts';
import { measureSurfaceSpeed, planGrid, type GridPlan, type SurfaceSpeed } from './grid-plan.ts';
import { LatestRequest, type Run } from './latest-request.ts';
import { attempt, idleTask, showError, type Outcome, type TaskState } from './shown-error.ts';
import { modelKey } from './structure-step.svelte.ts';
import * as engine from './engine.ts';
import type { Session } from './session.svelte.ts';

/** A computed surface with what it was computed from. */
export interface SurfaceView {
  grid: Grid;
  result: SurfaceResult;
  /** Working CRS of the grid. */
  work: string;
  threshold: number | null;
  /** What the surface was computed from (compared with the current inputs to tell it is stale). */
  key: string;
  /** Bumped as bands arrive, so the map repaints. */
  bands: number;
  done: boolean;
  /** Point values at cell centres, or cell averages with `points` × `points` discretisation. */
  support: 'point' | 'block';
  points: number;
  /** Samples per local neighbourhood, or null when every sample was used. */
  local: number | null;
  /** The measured error of a local-neighbourhood surface against exact kriging (core/prediction/local-accuracy.ts). */
  accuracy?: LocalAccuracy;
  /** What was done when local neighbourhoods missed the tolerance: grown, exact kriging taken, or kept. */
  pathNote?: string;
  /** Set when the layers show the per-cell summaries of this many realisations. */
  fromSimulation?: number;
  /** Wall-clock time the computation took, ms (when known). */
  ms?: number;
}

/** The action level when it can be used with the model (a positive one for a log model), else null. */
export function usableThreshold(threshold: number | null, model: CovarianceModel): number | null {
  return threshold !== null && Number.isFinite(threshold) && (model.transform !== 'log' || threshold > 0) ? threshold : null;
}

/** One surface computation: what it is computed from and how far it got. */
interface SurfaceJob {
  samples: Samples;
  /** Samples in use (for the speed measurement and the exact-kriging limit). */
  n: number;
  model: CovarianceModel;
  grid: Grid;
  cells: number;
  covariates?: Float64Array;
  threshold: number | null;
  support: 'point' | 'block';
  points: number;
  work: string;
  key: string;
  t0: number;
  bands: number;
}

/** The kriged values with how they were reached (local settings, measured error, what was done on a miss). */
interface Kriged {
  result: SurfaceResult;
  settings: LocalSettings | null;
  accuracy: LocalAccuracy | null;
  note: string | null;
}

export class SurfaceState {
  /** The surface on the map (kriged, or the realisations' summaries), or null. */
  shown = $state.raw<SurfaceView | null>(null);
  /** The kriged surface kept while the map shows the realisations' layers in its place (exportSurface). */
  kriged = $state.raw<SurfaceView | null>(null);
  task = $state<TaskState>(idleTask());
  /** Rate measured on the last surface (flops per second per worker), for the time estimate. */
  rate = $state<SurfaceSpeed | undefined>(undefined);
  /**
   * True after a reload when a surface was being computed as the page closed: it was not stored (a
   * surface still arriving never is), so the Surface step says so and offers to compute it again.
   */
  interrupted = $state(false);
  /** Warnings of the last surface's covariates on the grid (cells without a covariate value). */
  covariateWarnings = $state.raw<Warning[]>([]);
  private runs = new LatestRequest();

  constructor(private readonly app: Session) {}

  gridPlan = $derived.by((): Outcome<GridPlan> => {
    const intake = this.app.samples.intake;
    if (!intake) return { value: null, error: null };
    const su = this.app.s.surface;
    const boundary = this.app.samples.boundary;
    const polygons = su.area === 'boundary' && boundary?.work.length ? boundary.work.map((p) => p.rings) : null;
    return attempt(() => planGrid({
      x: intake.samples.x, y: intake.samples.y, padding: su.padding, cellSize: su.cellSize, polygons, workers: engine.workerCount(),
      flopsPerSecond: this.rate?.flopsPerSecond, overheadSeconds: this.rate?.overheadSeconds,
    }));
  });

  // ---------------------------------------------------------------- saved choices

  /** 'auto' takes the cheaper path (core/prediction/path-choice.ts); 'exact' (all samples) or 'local' overrides (saved). */
  get method(): 'auto' | 'exact' | 'local' {
    return this.app.s.surface.method;
  }

  set method(v: 'auto' | 'exact' | 'local') {
    this.app.s.surface.method = v;
  }

  /** Support of the next surface: point values at cell centres, or cell (block) averages (saved). */
  get support(): 'point' | 'block' {
    return this.app.s.surface.support;
  }

  set support(v: 'point' | 'block') {
    this.app.s.surface.support = v;
  }

  /** Block support: discretisation points per cell side (saved). */
  get blockPoints(): number {
    return this.app.s.surface.blockPoints;
  }

  set blockPoints(v: number) {
    this.app.s.surface.blockPoints = v;
  }

  /** Colours of the mean layer: 'auto' spaces them by ln(value) for log models, evenly otherwise (saved). */
  get meanColours(): 'auto' | 'linear' | 'log' {
    return this.app.s.surface.colours;
  }

  set meanColours(v: 'auto' | 'linear' | 'log') {
    this.app.s.surface.colours = v;
  }

  /** True when the mean layer's colours are spaced by ln(value). */
  get logColours(): boolean {
    const positive = (this.app.samples.intake?.report.summary.min ?? 0) > 0;
    return positive && (this.meanColours === 'log' || (this.meanColours === 'auto' && this.app.s.samples.transform === 'log'));
  }

  // ---------------------------------------------------------------- what the surface is

  /** True when the next surface is computed from local neighbourhoods. */
  get local(): boolean {
    // The measured error (core/prediction/local-accuracy.ts checkLocalGrid) has no covariates at the checked
    // cells: a model with covariates is kriged from every sample.
    if (isCovariateTrend(this.app.s.structure.model?.trend)) return false;
    const n = this.app.samples.intake?.samples.x.length ?? 0;
    if (this.method !== 'auto') return this.method === 'local';
    const cells = this.gridPlan.value?.cells ?? 0;
    return n > 0 && cells > 0 && choosePredictionPath({ samples: n, targets: cells, threads: engine.workerCount() }).path === 'local';
  }

  /** What a surface computed now would be computed from. */
  get key(): string {
    const g = this.gridPlan.value?.grid;
    const s = this.app.s;
    return JSON.stringify({
      v: s.readId, m: modelKey(s.structure.model),
      g: g ? [g.x0, g.y0, g.cell, g.nx, g.ny, s.surface.area] : null,
      t: s.surface.threshold,
      s: this.support, k: this.support === 'block' ? this.blockPoints : 0, l: this.local,
      c: this.app.rasters.covariateRasters.map((r) => [r.name, r.crs, r.x0, r.y0, r.dx, r.nx, r.ny]),
    });
  }

  get stale(): boolean {
    return !!this.shown && this.shown.key !== this.key;
  }

  /**
   * The measured error of the surface shown when it came from local neighbourhoods (its key, the
   * figures), kept with the surface (so it is saved and comes back with it); null for exact kriging.
   */
  get accuracy(): { key: string; accuracy: LocalAccuracy } | null {
    const sf = this.shown;
    if (sf && !sf.fromSimulation && sf.accuracy) return { key: sf.key, accuracy: sf.accuracy };
    const k = this.kriged;
    return sf?.fromSimulation && k?.accuracy ? { key: k.key, accuracy: k.accuracy } : null;
  }

  /**
   * The kriged surface for exports: the surface on the map, or while the map shows the realisations'
   * layers, the kriged surface they replaced (null when there is none for the current inputs).
   */
  get exportSurface(): SurfaceView | null {
    const sv = this.shown;
    if (!sv?.fromSimulation) return sv;
    const k = this.kriged;
    return k && k.key === sv.key ? k : null;
  }

  // ---------------------------------------------------------------- computing the surface

  /** Computes mean, sd and P(exceed) on the planned grid, in workers, band by band. */
  async computeSurface(): Promise<void> {
    const intake = this.app.samples.intake;
    const model = this.app.s.structure.model;
    const plan = this.gridPlan.value;
    if (!intake || !model || !plan) return;
    const missing = this.app.rasters.missingRasters;
    if (missing.length > 0) {
      this.task = {
        ...idleTask(), status: 'error',
        error: { code: 'bad-option', message: missingRasterMessage(missing) },
      };
      return;
    }
    const job = await this.surfaceJob(intake, model, plan);
    if (!job) return;
    const su = this.app.s.surface;
    su.wanted = true;
    su.running = true;
    this.interrupted = false;
    this.task = { ...idleTask(), status: 'running', total: plan.cells };
    const answer = await this.runs.run((run) => this.krigeChecked(job, run));
    if (answer.status === 'stale') return;
    su.running = false;
    const ms = performance.now() - job.t0;
    if (answer.status !== 'done') {
      if (answer.status === 'cancelled') this.shown = null;
      this.task = { ...this.task, status: answer.status, error: answer.error, ms };
      return;
    }
    const { result, settings, accuracy, note } = answer.value;
    this.shown = { ...this.view(job, result, true, settings?.neighbours ?? null, ms), ...(accuracy ? { accuracy } : {}), ...(note ? { pathNote: note } : {}) };
    this.task = { ...this.task, status: 'done', done: plan.cells, total: plan.cells, what: '', ms };
    if (!su.sdLimit && Number.isFinite(result.range.sd.max)) su.sdLimit = +result.range.sd.max.toPrecision(2);
  }

  /**
   * What the surface is computed from: the grid, the samples and, for a model with covariates, the
   * covariates read from the rasters at every cell (or block point); null (with the task's error)
   * when the rasters cannot serve.
   */
  private async surfaceJob(intake: IntakeResult, model: CovarianceModel, plan: GridPlan): Promise<SurfaceJob | null> {
    const plain = $state.snapshot(model) as CovarianceModel;
    const support = model.transform === 'log' ? 'point' : this.support;
    const job: SurfaceJob = {
      samples: intake.samples, n: intake.samples.x.length, model: plain, grid: plan.grid, cells: plan.cells,
      threshold: usableThreshold(this.app.s.surface.threshold, model), support, points: support === 'block' ? this.blockPoints : 1,
      work: intake.report.crs.work, key: this.key, t0: 0, bands: 0,
    };
    this.covariateWarnings = [];
    if (isCovariateTrend(model.trend)) {
      try {
        // Block support reads the covariates at each cell's block points (averaged into its trend row).
        const block = support === 'block';
        const g = await covariatesOnGrid(intake, plain, this.app.rasters.covariateRasters, plan.grid, block ? { nodes: this.blockPoints } : {});
        job.grid = g.grid;
        job.samples = g.samples;
        job.covariates = block ? g.nodeCovariates : g.covariates;
        this.covariateWarnings = g.warnings;
      } catch (e) {
        this.task = { ...idleTask(), status: 'error', error: showError(e) };
        return null;
      }
    }
    job.t0 = performance.now();
    return job;
  }

  /** The surface as the map shows it while it arrives (`done` false) or once finished. */
  private view(job: SurfaceJob, result: SurfaceResult, done: boolean, neighbours: number | null, ms?: number): SurfaceView {
    return {
      grid: job.grid, result, work: job.work, threshold: job.threshold, key: job.key, bands: ++job.bands, done,
      support: job.support, points: job.points, local: neighbours,
      ...(ms !== undefined ? { ms } : {}),
    };
  }

  /** One run of the surface through the workers, band by band (`settings` null: every sample). */
  private krige(job: SurfaceJob, run: Run, settings: LocalSettings | null, progress: Array<{ seconds: number; done: number }>): Promise<SurfaceResult> {
    const started = performance.now();
    return engine.surface(
      {
        samples: job.samples, model: job.model, grid: job.grid, threshold: job.threshold ?? undefined,
        support: job.support, blockPoints: this.blockPoints, covariates: job.covariates, local: settings ?? undefined,
      },
      (done, total) => {
        if (!run.current()) return;
        this.task = { ...this.task, done, total };
        progress.push({ seconds: (performance.now() - started) / 1000, done });
      },
      run.signal,
      (merged) => { if (run.current()) this.shown = this.view(job, merged, false, settings?.neighbours ?? null); },
    );
  }

  /**
   * Kriges the grid (local neighbourhoods when the path says so; block averages always from every
   * sample), measures the speed, and checks a local surface against exact kriging.
   */
  private async krigeChecked(job: SurfaceJob, run: Run): Promise<Kriged> {
    const settings: LocalSettings | null = job.support === 'point' && this.local ? { neighbours: DEFAULT_LOCAL_NEIGHBOURS, globalMean: true } : null;
    const progress: Array<{ seconds: number; done: number }> = [];
    const result = await this.krige(job, run, settings, progress);
    run.check();
    const seconds = (performance.now() - job.t0) / 1000;
    this.rate = measureSurfaceSpeed({ n: job.n, cells: job.cells, workers: engine.workerCount(), seconds, progress }) ?? this.rate;
    if (!settings) return { result, settings, accuracy: null, note: null };
    this.shown = this.view(job, result, false, settings.neighbours);
    return this.meetTolerance(job, run, settings, result);
  }

  /**
   * Exact kriging at a seeded subset of the cells against the local values there (a worker); a
   * missed tolerance grows the neighbourhood as the command line does, or takes every sample.
   */
  private async meetTolerance(job: SurfaceJob, run: Run, settings: LocalSettings, result: SurfaceResult): Promise<Kriged> {
    this.task = { ...this.task, what: 'checking against exact kriging' };
    const threads = engine.workerCount();
    // Chosen automatically, growth is tried only while a doubled neighbourhood stays cheaper than
    // exact kriging; otherwise a miss goes straight to exact kriging (cheaper and exact).
    const growthPays = this.method !== 'auto' || choosePredictionPath({
      samples: job.samples.x.length, targets: job.cells, threads, neighbours: 2 * settings.neighbours,
    }).path === 'local';
    const check = await engine.localAccuracy(job.samples, job.model, job.grid, settings, growthPays, run.signal);
    run.check();
    const first = check.accuracy;
    if (first.within) return { result, settings, accuracy: first, note: null };
    const missed = `The ${first.neighbours} nearest samples${first.globalMean ? ' around the mean of all samples' : ''} missed the tolerance `
      + `(mean within ${first.mean.max.toFixed(2)} %, sd within ${first.sd.max.toFixed(2)} % of the prior sd; aim ${first.tolerance.mean} % / ${first.tolerance.sd} %)`;
    const exactAllowed = this.method === 'auto' && job.n <= EXACT_SAMPLE_LIMIT;
    if (!check.grown && !exactAllowed) {
      return { result, settings, accuracy: first, note: `${missed}; no larger neighbourhood met it${this.method === 'local' ? '. Choose "every sample" for exact kriging' : ''}.` };
    }
    // A grown neighbourhood that costs more than exact kriging (up to every sample) is not
    // worth it when the path is chosen automatically: exact kriging is then both cheaper and exact.
    const grownCostsMore = !!check.grown && exactAllowed && choosePredictionPath({
      samples: job.samples.x.length, targets: job.cells, threads, neighbours: check.grown.neighbours,
    }).path === 'exact';
    const grown = grownCostsMore ? null : check.grown;
    this.task = { ...this.task, done: 0, what: grown ? `again with the ${grown.neighbours} nearest samples` : 'again from every sample' };
    const again = await this.krige(job, run, grown, []);
    run.check();
    if (grown) {
      const accuracy = (await engine.localAccuracy(job.samples, job.model, job.grid, grown, false, run.signal)).accuracy;
      run.check();
      return { result: again, settings: grown, accuracy, note: `${missed}, so the surface was computed again with the ${grown.neighbours} nearest samples.` };
    }
    const note = grownCostsMore
      ? `${missed}; the ${check.grown!.neighbours} nearest would meet it but cost more than exact kriging here, so the surface was computed again by exact kriging from every sample.`
      : growthPays
        ? `${missed}, and so did every larger neighbourhood tried, so the surface was computed again by exact kriging from every sample.`
        : `${missed}; larger neighbourhoods would cost more than exact kriging here, so the surface was computed again by exact kriging from every sample.`;
    return { result: again, settings: null, accuracy: null, note };
  }

  cancelSurface(): void {
    this.runs.cancel();
    this.shown = null;
    this.app.s.surface.wanted = false;
    this.app.s.surface.running = false;
    this.task = { ...this.task, status: 'cancelled' };
  }

  /** Drops the surfaces (the samples changed). */
  drop(): void {
    this.runs.cancel();
    this.shown = null;
    this.kriged = null;
    this.task = idleTask();
    this.app.s.surface.running = false;
    this.interrupted = false;
  }
}
