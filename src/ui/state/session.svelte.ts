/**
 * The app's state as runes: the saved choices (`s`, a SessionSnapshot, autosaved on every change)
 * and the results computed from them (read samples, variograms, model candidates, cross-validation,
 * surfaces), which are recomputed rather than stored. Components read and call this; the numerics
 * run in src/core and, when heavy, in workers (./engine.ts).
 */
import type { IntakeResult } from '../../io/types.ts';
import { readSamples } from '../../io/intake.ts';
import { readPolygons, projectPolygons, type Polygon } from '../../io/boundary.ts';
import { createTransform, LOCAL_CRS } from '../../io/crs.ts';
import { GapwiseError } from '../../core/errors.ts';
import { untrack } from 'svelte';
import { emptySnapshot, type SessionSnapshot, type SourceFile, type StepId } from './snapshot.ts';
import { createAutosave, type Autosave } from './autosave.ts';
import type { Samples } from '../../core/samples.ts';
import type { CovarianceModel } from '../../core/model.ts';
import type { LeaveOneOutResult } from '../../core/cross-validation.ts';
import {
  directionalVariograms, empiricalVariogram, variogramCloud, type EmpiricalVariogram, type VariogramCloud, type VariogramSet,
} from '../../core/variogram.ts';
import { bestKey, withParts, type CandidateRow, type ModelParts } from './structure.ts';
import * as engine from './engine.ts';
import type { Grid } from '../../core/grid.ts';
import type { SurfaceResult } from '../../core/surface.ts';
import { measuredRate, planGrid, type GridPlan } from './grid-plan.ts';
import type { ConditionalSimulationResult } from '../../core/conditional-simulation.ts';
import { chooseFitMethod, EXACT_FIT_LIMIT } from '../../core/vecchia.ts';
import { DEFAULT_LOCAL_NEIGHBORS } from '../../core/local-kriging.ts';

/** Samples from which fits use the nearest-neighbour likelihood and surfaces local neighbourhoods. */
export const MANY_SAMPLES = EXACT_FIT_LIMIT;
/** From this many samples the variograms are computed in a worker (below, at once on this thread). */
export const ASYNC_VARIOGRAM_FROM = 3000;
/** Pairs drawn in the variogram cloud. */
const CLOUD_PAIRS = 6000;

/** Conditional realisations with what they were computed from. */
export interface SimulationView {
  grid: Grid;
  result: ConditionalSimulationResult;
  key: string;
  /** The surface key at the time (see Session.surfaceKey). */
  base: string;
  ms: number;
  /** Seed and depth (m) they were drawn with, and when (ISO 8601). */
  seed: number;
  depth: number | null;
  made: string;
}

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
  /** Set when the layers show the per-cell summaries of this many realisations. */
  fromSimulation?: number;
}

/** A value computed from the state, or the reason it could not be. */
export interface Outcome<T> {
  value: T | null;
  error: ShownError | null;
}

function attempt<T>(f: () => T): Outcome<T> {
  try {
    return { value: f(), error: null };
  } catch (e) {
    return { value: null, error: showError(e) };
  }
}

export interface TaskState {
  status: 'idle' | 'running' | 'done' | 'error' | 'cancelled';
  done: number;
  total: number;
  what: string;
  error: ShownError | null;
  /** Wall-clock duration of the last run, ms. */
  ms: number;
}

const idleTask = (): TaskState => ({ status: 'idle', done: 0, total: 0, what: '', error: null, ms: 0 });

/** An error as shown on screen: the sentence and where it points. */
export interface ShownError {
  message: string;
  code?: string;
}

export function showError(e: unknown): ShownError {
  if (e instanceof GapwiseError) return { message: e.describe(), code: e.code };
  if (e && typeof e === 'object' && 'message' in e) {
    const o = e as { message: string; code?: string; place?: { file?: string; row?: number; column?: string } };
    const where = o.place ? [o.place.file, o.place.row !== undefined ? `line ${o.place.row}` : '', o.place.column ? `column "${o.place.column}"` : ''].filter(Boolean).join(', ') : '';
    return { message: where ? `${where}: ${o.message}` : o.message, code: o.code };
  }
  return { message: String(e) };
}

/**
 * Sample positions for the map, aligned with intake.rows and intake.samples: WGS 84 longitude and
 * latitude, or for local coordinates (no CRS) the working x (in `lon`) and y (in `lat`), drawn on a
 * plain planar map.
 */
export interface SamplePlaces {
  lon: Float64Array;
  lat: Float64Array;
  /** True when the samples can be drawn (always, now that local coordinates have a planar map). */
  placed: boolean;
  /** True for local coordinates with no CRS: lon/lat hold x/y and the map is planar. */
  planar: boolean;
}

export class Session {
  /** Everything saved: the file text, choices, model, grid settings. */
  s = $state<SessionSnapshot>(emptySnapshot());
  /** The samples as read from s.source with s.samples; null before a file is read. */
  intake = $state.raw<IntakeResult | null>(null);
  intakeError = $state.raw<ShownError | null>(null);
  places = $state.raw<SamplePlaces | null>(null);
  /** Boundary polygons in WGS 84 and in the working CRS. */
  boundary = $state.raw<{ lonLat: Polygon[]; work: Polygon[] } | null>(null);
  boundaryError = $state.raw<ShownError | null>(null);
  /** Index (into intake.rows) of the sample shown in the sample panel. */
  selected = $state<number | null>(null);
  /** 'restoring' until the saved session has been read back. */
  ready = $state(false);
  savedAt = $state<number | null>(null);
  saveError = $state<string | null>(null);
  /** Bumped whenever new samples are read, so the map refits its view. */
  samplesVersion = $state(0);

  // ---------------------------------------------------------------- structure

  /** Samples on the modelling scale (ln values for a log transform). */
  modelSamples = $derived.by((): Samples | null => {
    const intake = this.intake;
    if (!intake) return null;
    const s = intake.samples;
    if (this.s.samples.transform !== 'log') return s;
    return { x: s.x, y: s.y, value: Float64Array.from(s.value, Math.log) };
  });

  /** What the variogram views are computed from (options as the structure step sets them). */
  private variogramRequest = $derived.by(() => {
    const samples = this.modelSamples;
    if (!samples) return null;
    const { lagWidth, maxLag, directional, cloud } = this.s.structure;
    const options = { lagWidth: lagWidth || undefined, maxLag: maxLag || undefined };
    return { samples, options, directional, cloud, key: `${this.samplesVersion}|${this.s.samples.transform}|${lagWidth}|${maxLag}|${directional}|${cloud}` };
  });

  /**
   * Variograms from many samples (ASYNC_VARIOGRAM_FROM on) come from a worker (about a second per
   * 10⁷ pairs would stall the page); `variogramPending` is true meanwhile. Fewer are computed here.
   */
  private variogramRemote = $state.raw<{ key: string; set: VariogramSet | null; error: ShownError | null } | null>(null);
  private variogramAbort: AbortController | null = null;

  get variogramPending(): boolean {
    const r = this.variogramRequest;
    return !!r && r.samples.x.length >= ASYNC_VARIOGRAM_FROM && this.variogramRemote?.key !== r.key;
  }

  /** Starts the worker request for the current variogram settings (many samples only). */
  refreshVariograms(): void {
    const r = this.variogramRequest;
    if (!r || r.samples.x.length < ASYNC_VARIOGRAM_FROM || this.variogramRemote?.key === r.key) return;
    this.variogramAbort?.abort();
    const ac = new AbortController();
    this.variogramAbort = ac;
    engine.variograms({ samples: r.samples, options: r.options, directional: r.directional, cloudPairs: r.cloud ? CLOUD_PAIRS : undefined }, ac.signal)
      .then((set) => { if (this.variogramAbort === ac) this.variogramRemote = { key: r.key, set, error: null }; })
      .catch((e: unknown) => {
        if (this.variogramAbort !== ac) return;
        const err = showError(e);
        if (err.code !== 'cancelled') this.variogramRemote = { key: r.key, set: null, error: err };
      });
  }

  variogram = $derived.by((): Outcome<EmpiricalVariogram> => {
    const r = this.variogramRequest;
    if (!r) return { value: null, error: null };
    if (r.samples.x.length >= ASYNC_VARIOGRAM_FROM) {
      const got = this.variogramRemote;
      if (!got || got.key !== r.key) return { value: null, error: null };
      return { value: got.set?.omni ?? null, error: got.error };
    }
    return attempt(() => empiricalVariogram(r.samples, r.options));
  });

  directional = $derived.by((): EmpiricalVariogram[] | null => {
    const r = this.variogramRequest;
    if (!r || !r.directional) return null;
    if (r.samples.x.length >= ASYNC_VARIOGRAM_FROM) return this.variogramRemote?.key === r.key ? this.variogramRemote.set?.directional ?? null : null;
    return attempt(() => directionalVariograms(r.samples, r.options)).value;
  });

  cloud = $derived.by((): VariogramCloud | null => {
    const r = this.variogramRequest;
    if (!r || !r.cloud) return null;
    if (r.samples.x.length >= ASYNC_VARIOGRAM_FROM) return this.variogramRemote?.key === r.key ? this.variogramRemote.set?.cloud ?? null : null;
    return attempt(() => variogramCloud(r.samples, CLOUD_PAIRS)).value;
  });

  candidates = $state.raw<CandidateRow[]>([]);
  fitTask = $state<TaskState>(idleTask());
  cv = $state.raw<LeaveOneOutResult | null>(null);
  cvError = $state.raw<ShownError | null>(null);
  private fitAbort: AbortController | null = null;
  private cvAbort: AbortController | null = null;
  private cvTimer: ReturnType<typeof setTimeout> | null = null;

  get best(): string {
    return bestKey(this.candidates);
  }

  /** 'auto' chooses by sample count (MANY_SAMPLES); 'exact' or 'nnl' overrides. */
  fitLikelihood = $state<'auto' | 'exact' | 'nnl'>('auto');
  /** How the candidates in the table were fitted. */
  fittedWith = $state.raw<{ likelihood: 'exact' | 'nnl'; n: number; automatic: boolean } | null>(null);
  /** 'auto' uses local neighbourhoods from MANY_SAMPLES; 'exact' (all samples) or 'local' overrides. */
  surfaceMethod = $state<'auto' | 'exact' | 'local'>('auto');

  /** True when the next surface is computed from local neighbourhoods. */
  get surfaceLocal(): boolean {
    const n = this.intake?.samples.x.length ?? 0;
    return this.surfaceMethod === 'local' || (this.surfaceMethod === 'auto' && n >= MANY_SAMPLES);
  }

  /** Fits every candidate model (in workers); keeps the user's choice and any edited model. */
  async fit(): Promise<void> {
    const intake = this.intake;
    if (!intake) return;
    this.fitAbort?.abort();
    const ac = new AbortController();
    this.fitAbort = ac;
    const t0 = performance.now();
    this.fitTask = { ...idleTask(), status: 'running', total: 7 };
    const n = intake.samples.x.length;
    const likelihood = chooseFitMethod(n, this.fitLikelihood === 'auto' ? undefined : this.fitLikelihood);
    try {
      const rows = await engine.fitCandidateRows(
        { samples: intake.samples, method: this.s.structure.method, transform: this.s.samples.transform, likelihood },
        (done, total, what) => { if (this.fitAbort === ac) this.fitTask = { ...this.fitTask, done, total, what: what ?? '' }; },
        ac.signal,
      );
      if (this.fitAbort !== ac) return;
      this.candidates = rows;
      this.fittedWith = { likelihood, n, automatic: this.fitLikelihood === 'auto' };
      const st = this.s.structure;
      const kept = rows.find((r) => r.key === st.chosen && r.model);
      if (kept) {
        if (!st.model || st.model.fit?.method !== 'manual') st.model = kept.model;
      } else {
        const best = rows.find((r) => r.key === bestKey(rows));
        st.chosen = best?.key ?? '';
        if (!st.model || st.model.fit?.method !== 'manual' || !best) st.model = best?.model ?? null;
      }
      this.fitTask = { ...this.fitTask, status: 'done', done: rows.length, ms: performance.now() - t0 };
    } catch (e) {
      if (this.fitAbort !== ac) return;
      const err = showError(e);
      this.fitTask = { ...this.fitTask, status: err.code === 'cancelled' ? 'cancelled' : 'error', error: err, ms: performance.now() - t0 };
    }
  }

  cancelFit(): void {
    this.fitAbort?.abort();
    this.fitTask = { ...this.fitTask, status: 'cancelled' };
    this.fitAbort = null;
  }

  /** The user picks a candidate: it becomes the model in use (any edit is dropped). */
  choose(key: string): void {
    const row = this.candidates.find((r) => r.key === key);
    if (!row?.model) return;
    this.s.structure.chosen = key;
    this.s.structure.model = row.model;
  }

  /** Edits nugget, sill or scale of the model in use. */
  editModel(change: Partial<Pick<ModelParts, 'nugget' | 'sill' | 'scale'>>): void {
    const m = this.s.structure.model;
    if (!m) return;
    this.s.structure.model = withParts($state.snapshot(m) as CovarianceModel, change);
  }

  /** Puts back the fitted version of the chosen candidate. */
  resetModel(): void {
    this.choose(this.s.structure.chosen);
  }

  /** Cross-validates the model in use, shortly after it last changed. */
  scheduleCv(): void {
    if (this.cvTimer !== null) clearTimeout(this.cvTimer);
    this.cvTimer = setTimeout(() => void this.runCv(), 150);
  }

  private async runCv(): Promise<void> {
    const model = this.s.structure.model;
    const intake = this.intake;
    this.cvAbort?.abort();
    if (!model || !intake) {
      this.cv = null;
      return;
    }
    const ac = new AbortController();
    this.cvAbort = ac;
    try {
      const r = await engine.crossValidate(intake.samples, $state.snapshot(model) as CovarianceModel, ac.signal);
      if (this.cvAbort !== ac) return;
      this.cv = r;
      this.cvError = null;
    } catch (e) {
      if (this.cvAbort !== ac) return;
      const err = showError(e);
      if (err.code !== 'cancelled') {
        this.cv = null;
        this.cvError = err;
      }
    }
  }

  // ---------------------------------------------------------------- surface

  gridPlan = $derived.by((): Outcome<GridPlan> => {
    const intake = this.intake;
    if (!intake) return { value: null, error: null };
    const su = this.s.surface;
    const polygons = su.area === 'boundary' && this.boundary?.work.length
      ? this.boundary.work.map((p) => p.rings)
      : null;
    return attempt(() => planGrid({
      x: intake.samples.x, y: intake.samples.y, padding: su.padding, cellSize: su.cellSize, polygons, workers: engine.workerCount(),
      flopsPerSecond: this.rate,
    }));
  });

  surface = $state.raw<SurfaceView | null>(null);
  /** Colours of the mean layer: 'auto' spaces them by ln(value) for log models, evenly otherwise. */
  meanColours = $state<'auto' | 'linear' | 'log'>('auto');

  /** True when the mean layer's colours are spaced by ln(value). */
  get logColours(): boolean {
    const positive = (this.intake?.report.summary.min ?? 0) > 0;
    return positive && (this.meanColours === 'log' || (this.meanColours === 'auto' && this.s.samples.transform === 'log'));
  }

  /** The kriged surface kept while the map shows the realisations' layers in its place (exportSurface). */
  kriged = $state.raw<SurfaceView | null>(null);

  /** Support of the next surface: point values at cell centres, or cell (block) averages (saved). */
  get support(): 'point' | 'block' {
    return this.s.surface.support;
  }

  set support(v: 'point' | 'block') {
    this.s.surface.support = v;
  }

  /** Block support: discretisation points per cell side (saved). */
  get blockPoints(): number {
    return this.s.surface.blockPoints;
  }

  set blockPoints(v: number) {
    this.s.surface.blockPoints = v;
  }

  /** Rate measured on the last surface (flops per second per worker), for the time estimate. */
  rate = $state<number | undefined>(undefined);
  surfaceTask = $state<TaskState>(idleTask());
  private surfaceAbort: AbortController | null = null;

  /** What a surface computed now would be computed from. */
  get surfaceKey(): string {
    const g = this.gridPlan.value?.grid;
    return JSON.stringify({
      v: this.samplesVersion, m: $state.snapshot(this.s.structure.model),
      g: g ? [g.x0, g.y0, g.cell, g.nx, g.ny, this.s.surface.area] : null,
      t: this.s.surface.threshold,
      s: this.support, k: this.support === 'block' ? this.blockPoints : 0, l: this.surfaceLocal,
    });
  }

  get surfaceStale(): boolean {
    return !!this.surface && this.surface.key !== this.surfaceKey;
  }

  /** Computes mean, sd and P(exceed) on the planned grid, in workers, band by band. */
  async computeSurface(): Promise<void> {
    const intake = this.intake;
    const model = this.s.structure.model;
    const plan = this.gridPlan.value;
    if (!intake || !model || !plan) return;
    this.surfaceAbort?.abort();
    const ac = new AbortController();
    this.surfaceAbort = ac;
    this.s.surface.wanted = true;
    const threshold = this.s.surface.threshold;
    const useThreshold = threshold !== null && Number.isFinite(threshold) && (model.transform !== 'log' || threshold > 0);
    const key = this.surfaceKey;
    const support = model.transform === 'log' ? 'point' : this.support;
    // Block averages are kriged from all samples; local neighbourhoods serve point values.
    const local = support === 'point' && this.surfaceLocal;
    const t0 = performance.now();
    this.surfaceTask = { ...idleTask(), status: 'running', total: plan.cells };
    const view = (result: SurfaceResult, done: boolean, bands: number): SurfaceView => ({
      grid: plan.grid, result, work: intake.report.crs.work, threshold: useThreshold ? threshold : null, key, bands, done,
      support, points: support === 'block' ? this.blockPoints : 1,
      local: local ? DEFAULT_LOCAL_NEIGHBORS : null,
    });
    let bands = 0;
    try {
      const result = await engine.surface(
        {
          samples: intake.samples, model: $state.snapshot(model) as CovarianceModel, grid: plan.grid, threshold: useThreshold ? threshold! : undefined,
          support, blockPoints: this.blockPoints,
          local: local ? { neighbors: DEFAULT_LOCAL_NEIGHBORS, globalMean: true } : undefined,
        },
        (done, total) => { if (this.surfaceAbort === ac) this.surfaceTask = { ...this.surfaceTask, done, total }; },
        ac.signal,
        (merged) => { if (this.surfaceAbort === ac) this.surface = view(merged, false, ++bands); },
      );
      if (this.surfaceAbort !== ac) return;
      this.surface = view(result, true, ++bands);
      const ms = performance.now() - t0;
      this.surfaceTask = { ...this.surfaceTask, status: 'done', done: plan.cells, ms };
      this.rate = measuredRate(intake.samples.x.length, plan.cells, engine.workerCount(), ms / 1000) ?? this.rate;
      if (!this.s.surface.sdLimit && Number.isFinite(result.range.sd.max)) {
        this.s.surface.sdLimit = +result.range.sd.max.toPrecision(2);
      }
    } catch (e) {
      if (this.surfaceAbort !== ac) return;
      const err = showError(e);
      if (err.code === 'cancelled') this.surface = null;
      this.surfaceTask = { ...this.surfaceTask, status: err.code === 'cancelled' ? 'cancelled' : 'error', error: err, ms: performance.now() - t0 };
    }
  }

  // ---------------------------------------------------------------- realisations

  /** Realisations to draw (saved). */
  get simCount(): number {
    return this.s.simulation.count;
  }

  set simCount(v: number) {
    this.s.simulation.count = v;
  }

  /** Depth (m) for the volume above the action level, or null (saved). */
  get simDepth(): number | null {
    return this.s.simulation.depth;
  }

  set simDepth(v: number | null) {
    this.s.simulation.depth = v;
  }

  /** Seed of the realisations, a whole number (saved); the same seed redraws the same maps. */
  get simSeed(): number {
    return this.s.simulation.seed;
  }

  set simSeed(v: number) {
    this.s.simulation.seed = v;
  }

  /** The last run. */
  simulation = $state.raw<SimulationView | null>(null);
  simTask = $state<TaskState>(idleTask());
  /** Seconds per realisation-cell measured on the last run (per worker), for the estimate. */
  simRate = $state<number | null>(null);
  private simAbort: AbortController | null = null;

  /** Seconds the next run should take, or null before a first run has measured the speed. */
  get simEstimate(): number | null {
    const cells = this.gridPlan.value?.cells;
    return this.simRate !== null && cells ? this.simRate * cells * this.simCount : null;
  }

  /** Draws conditional realisations (split over the workers) with the current support, threshold and depth. */
  async simulate(): Promise<void> {
    const intake = this.intake;
    const model = this.s.structure.model;
    const plan = this.gridPlan.value;
    if (!intake || !model || !plan) return;
    this.simAbort?.abort();
    const ac = new AbortController();
    this.simAbort = ac;
    const threshold = this.s.surface.threshold;
    const useThreshold = threshold !== null && Number.isFinite(threshold) && (model.transform !== 'log' || threshold > 0);
    const count = Math.max(1, Math.min(10_000, Math.round(this.simCount)));
    const seed = Number.isInteger(this.simSeed) ? this.simSeed : 1;
    const depth = useThreshold && this.simDepth && this.simDepth > 0 ? this.simDepth : null;
    const key = this.surfaceKey + `|${count}|${depth}|${seed}`;
    const t0 = performance.now();
    this.simTask = { ...idleTask(), status: 'running', total: count, what: 'realisations' };
    try {
      const result = await engine.simulate({
        samples: intake.samples, model: $state.snapshot(model) as CovarianceModel, grid: plan.grid,
        options: {
          count, seed, support: this.support, blockPoints: this.blockPoints, keepRealisations: true,
          threshold: useThreshold ? threshold! : undefined,
          depth: depth ?? undefined,
        },
        keepFirst: 4,
      }, (done, total) => { if (this.simAbort === ac) this.simTask = { ...this.simTask, done, total }; }, ac.signal);
      if (this.simAbort !== ac) return;
      const ms = performance.now() - t0;
      // Keep the first four realisations only: the view shows them, the summaries are computed.
      const kept = { ...result, realisations: result.realisations?.slice(0, 4) };
      this.simulation = { grid: plan.grid, result: kept, key, base: this.surfaceKey, ms, seed, depth, made: new Date().toISOString() };
      this.simRate = ms / 1000 / (count * plan.cells);
      this.simTask = { ...this.simTask, status: 'done', done: count, ms };
    } catch (e) {
      if (this.simAbort !== ac) return;
      const err = showError(e);
      this.simTask = { ...this.simTask, status: err.code === 'cancelled' ? 'cancelled' : 'error', error: err, ms: performance.now() - t0 };
    }
  }

  /**
   * Puts the realisations' per-cell mean, sd and P(exceed) (the share of realisations above the
   * action level) on the map in place of the kriged surface.
   */
  showSimulation(): void {
    const sim = this.simulation;
    const intake = this.intake;
    if (!sim || !intake) return;
    const r = sim.result;
    const rangeOf = (a: Float32Array) => {
      let min = Infinity, max = -Infinity;
      for (const v of a) { if (v < min) min = v; if (v > max) max = v; }
      return min <= max ? { min, max } : { min: NaN, max: NaN };
    };
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
    if (this.surface && !this.surface.fromSimulation) this.kriged = this.surface;
    this.surface = {
      grid: sim.grid, result, work: intake.report.crs.work, threshold: r.threshold ?? null, key: sim.base,
      bands: (this.surface?.bands ?? 0) + 1, done: true, support: r.support, points: r.points, local: null, fromSimulation: r.count,
    };
    if (result.pExceed) this.s.surface.layer = 'exceed';
  }

  /** Puts the kept kriged surface back on the map in place of the realisations' layers. */
  showKriged(): void {
    const k = this.kriged;
    if (!k || !this.surface?.fromSimulation) return;
    this.surface = { ...k, bands: this.surface.bands + 1 };
  }

  /** True when realisations were drawn for other inputs (model, grid, threshold, support) than the current ones. */
  get simulationStale(): boolean {
    return !!this.simulation && !this.simulation.key.startsWith(this.surfaceKey + '|');
  }

  cancelSimulation(): void {
    this.simAbort?.abort();
    this.simAbort = null;
    this.simTask = { ...this.simTask, status: 'cancelled' };
  }

  cancelSurface(): void {
    this.surfaceAbort?.abort();
    this.surfaceAbort = null;
    this.surface = null;
    this.s.surface.wanted = false;
    this.surfaceTask = { ...this.surfaceTask, status: 'cancelled' };
  }

  private autosave: Autosave;

  constructor(autosave?: Autosave) {
    this.autosave = autosave ?? createAutosave({
      onSaved: () => { this.savedAt = Date.now(); this.saveError = null; },
      onError: (e) => { this.saveError = `Autosave failed: ${(e as Error)?.message ?? String(e)}`; },
    });
  }

  // ---------------------------------------------------------------- derived facts

  get unit(): string {
    return this.s.samples.unit || this.intake?.report.unit || '';
  }

  get valueName(): string {
    return this.intake?.report.valueColumn ?? '';
  }

  /** True for local coordinates with no CRS (site grids, trial plots): a planar map, no lon/lat. */
  get planar(): boolean {
    const crs = this.intake?.report.crs;
    return !!crs && (crs.work === LOCAL_CRS || crs.input === LOCAL_CRS);
  }

  /** True when distances are known to be metres: a real CRS, or local coordinates the user says are metres. */
  get metres(): boolean {
    return !this.planar || this.s.samples.localMetres === true;
  }

  /** The length unit to print beside distances: "m", or "coordinate units" for local coordinates. */
  get lengthUnit(): string {
    return this.metres ? 'm' : 'coordinate units';
  }

  /** The area unit: "m²", or "square coordinate units". */
  get areaUnit(): string {
    return this.metres ? 'm²' : 'square coordinate units';
  }

  /**
   * The kriged surface for exports: the surface on the map, or while the map shows the realisations'
   * layers, the kriged surface they replaced (null when there is none for the current inputs).
   */
  get exportSurface(): SurfaceView | null {
    const sv = this.surface;
    if (!sv?.fromSimulation) return sv;
    const k = this.kriged;
    return k && k.key === sv.key ? k : null;
  }

  get invented(): boolean {
    return this.s.source?.invented === true;
  }

  // ---------------------------------------------------------------- saving

  /** Starts autosaving; call once from the root component (inside an effect root). */
  watch(): void {
    $effect(() => {
      const snap = $state.snapshot(this.s) as SessionSnapshot;
      if (this.ready) this.autosave.schedule(snap);
    });
    // Variograms of many samples follow their settings in a worker.
    $effect(() => {
      void this.variogramRequest;
      untrack(() => this.refreshVariograms());
    });
    // Cross-validation follows the model in use.
    $effect(() => {
      void $state.snapshot(this.s.structure.model);
      void this.intake;
      this.scheduleCv();
    });
  }

  /** Reads the saved session back (or starts empty) and recomputes what depends on it. */
  async restore(): Promise<boolean> {
    const saved = await this.autosave.load();
    if (saved) {
      this.s = saved;
      this.readSource();
      this.readBoundary();
    }
    this.ready = true;
    // Bring back the comparison table; the chosen (and possibly edited) model is kept.
    if (saved && this.intake && this.s.structure.model) {
      if (this.s.surface.wanted) void this.computeSurface();
      void this.fit();
    }
    return saved !== null;
  }

  /** Writes any pending save now (e.g. before the page is hidden). */
  flush(): Promise<void> {
    return this.autosave.flush();
  }

  /** Clears the saved session and every result. */
  async startOver(): Promise<void> {
    await this.autosave.clear();
    this.s = emptySnapshot();
    this.intake = null;
    this.intakeError = null;
    this.places = null;
    this.boundary = null;
    this.boundaryError = null;
    this.selected = null;
    this.dropResults();
    this.savedAt = null;
  }

  // ---------------------------------------------------------------- steps

  open(step: StepId): void {
    this.s.step = step;
  }

  // ---------------------------------------------------------------- samples

  /** Drops every result computed from the samples (they changed). */
  dropResults(): void {
    this.fitAbort?.abort();
    this.fitAbort = null;
    this.candidates = [];
    this.fitTask = idleTask();
    this.cv = null;
    this.cvError = null;
    this.surfaceAbort?.abort();
    this.surfaceAbort = null;
    this.simAbort?.abort();
    this.simAbort = null;
    this.simulation = null;
    this.simTask = idleTask();
    this.surface = null;
    this.kriged = null;
    this.surfaceTask = idleTask();
    this.onSamplesChanged?.();
  }

  /** Hook for the surface: results that depend on the samples are dropped when they change. */
  onSamplesChanged: (() => void) | null = null;

  /** Takes a new samples file: choices that belonged to the old file are reset. */
  loadSource(file: SourceFile): void {
    this.s.source = file;
    this.s.samples = { unit: '', transform: 'none' };
    this.s.structure.model = null;
    this.s.structure.chosen = '';
    this.s.structure.lagWidth = 0;
    this.s.structure.maxLag = 0;
    this.s.surface.wanted = false;
    this.s.surface.cellSize = 0;
    this.s.surface.threshold = null;
    this.s.surface.sdLimit = null;
    this.readSource();
  }

  loadBoundary(file: SourceFile | null): void {
    this.s.boundary = file;
    this.s.surface.area = file ? 'boundary' : 'extent';
    this.readBoundary();
  }

  /** Changes one reading choice (value column, CRS, non-detect rule) and reads the file again. */
  setReadChoice(choice: { value?: string; crs?: string | undefined; nonDetect?: 'half' | 'dl' | 'sqrt2' }): void {
    if ('value' in choice) {
      this.s.samples.value = choice.value;
      this.s.samples.unit = '';
      this.s.structure.model = null;
      this.s.structure.chosen = '';
      this.s.surface.threshold = null;
    }
    if ('crs' in choice) this.s.samples.crs = choice.crs;
    if ('nonDetect' in choice) this.s.samples.nonDetect = choice.nonDetect;
    this.readSource();
  }

  /** Reads s.source with the current choices (synchronous: intake is fast for files people type). */
  readSource(): void {
    const src = this.s.source;
    this.selected = null;
    if (!src) {
      this.intake = null;
      this.intakeError = null;
      this.places = null;
      this.dropResults();
      return;
    }
    try {
      const c = this.s.samples;
      const result = readSamples(src.text, {
        fileName: src.fileName,
        value: c.value,
        crs: c.crs,
        nonDetect: c.nonDetect,
      });
      this.intake = result;
      this.intakeError = null;
      this.places = placesOf(result);
      if (this.s.samples.transform === 'log' && !(result.report.summary.min > 0)) this.s.samples.transform = 'none';
    } catch (e) {
      this.intake = null;
      this.places = null;
      this.intakeError = showError(e);
    }
    this.samplesVersion++;
    this.readBoundary();
    this.dropResults();
  }

  readBoundary(): void {
    const b = this.s.boundary;
    if (!b) {
      this.boundary = null;
      this.boundaryError = null;
      return;
    }
    try {
      // Local coordinates: the boundary is read in the samples' own x, y (lonLat then holds x, y too).
      const local = this.planar;
      const lonLat = readPolygons(b.text, b.fileName, local ? { planar: true } : undefined);
      const work = !this.intake ? [] : local ? lonLat : projectPolygons(lonLat, this.intake.report.crs.work);
      this.boundary = { lonLat, work };
      this.boundaryError = null;
    } catch (e) {
      this.boundary = null;
      this.boundaryError = showError(e);
    }
  }

  setTransform(t: 'none' | 'log'): void {
    if (this.s.samples.transform === t) return;
    this.s.samples.transform = t;
    this.s.structure.model = null;
    this.s.structure.chosen = '';
    this.dropResults();
  }
}

/** WGS 84 positions of the samples for the map (from the working CRS, as the surface is drawn). */
export function placesOf(result: IntakeResult): SamplePlaces {
  const { samples, report } = result;
  const n = samples.x.length;
  if (report.crs.work === LOCAL_CRS || report.crs.input === LOCAL_CRS) {
    return { lon: Float64Array.from(samples.x), lat: Float64Array.from(samples.y), placed: true, planar: true };
  }
  const t = createTransform(report.crs.work, 'EPSG:4326');
  const { x, y } = t.forwardMany(samples.x, samples.y);
  return { lon: x, lat: y, placed: true, planar: false };
}
