/**
 * The app's state as runes: the saved choices (`s`, a SessionSnapshot, autosaved on every change)
 * and the results computed from them (read samples, variograms, model candidates, cross-validation,
 * surfaces, realisations), autosaved beside them (./saved-results.ts) so a reload shows them again
 * without recomputing. A file is read (in a worker) and checked before it replaces anything: a file
 * that fails leaves the work in use as it was. Components read and call this; the numerics run in
 * src/core and, when heavy, in workers (./engine.ts).
 */
import type { IntakeOptions, IntakeResult } from '../../io/types.ts';
import { readPolygons, projectPolygons, type Polygon } from '../../io/boundary.ts';
import { createTransform, LOCAL_CRS } from '../../io/crs.ts';
import { GapwiseError } from '../../core/shared/errors.ts';
import { untrack } from 'svelte';
import {
  analyteChoicesOf, emptySnapshot, MAX_ANALYTES, newReadId, type AnalyteChoices, type SampleChoices, type SessionSnapshot, type SourceFile, type StepId,
} from './snapshot.ts';
import { createAutosave, MAX_SAVED_RASTER_BYTES, type Autosave, type SavedRaster } from './autosave.ts';
import { RESULTS_VERSION, type SavedResults } from './saved-results.ts';
import { LatestRun } from './latest.ts';
import { nextTask } from './next-task.ts';
import { suggestions } from './suggestions.svelte.ts';
import { provideTestHook } from './test-hook.ts';
import type { Samples } from '../../core/shared/samples.ts';
import type { DesignResult } from '../../core/design/design.ts';
import { parseModel, type CovarianceModel } from '../../core/covariance/model.ts';
import type { LeaveOneOutResult } from '../../core/validation/cross-validation.ts';
import {
  directionalVariograms, empiricalVariogram, variogramCloud, type EmpiricalVariogram, type VariogramCloud, type VariogramSet,
} from '../../core/fitting/variogram.ts';
import { bestKey, withParts, type CandidateRow, type ModelParts } from './structure.ts';
import * as engine from './engine.ts';
import { RichFitState } from './rich-fit.svelte.ts';
import type { Grid } from '../../core/geometry/grid.ts';
import { rangeOf, type SurfaceResult } from '../../core/prediction/surface.ts';
import { measureSurfaceSpeed, planGrid, type GridPlan, type SurfaceSpeed } from './grid-plan.ts';
import type { ConditionalSimulationResult } from '../../core/simulation/conditional-simulation.ts';
import { chooseFitMethod } from '../../core/fitting/vecchia.ts';
import { DEFAULT_LOCAL_NEIGHBORS } from '../../core/prediction/local-kriging.ts';
import { choosePredictionPath, EXACT_SAMPLE_LIMIT } from '../../core/prediction/path-choice.ts';
import type { LocalAccuracy, LocalSettings } from '../../core/prediction/local-accuracy.ts';
import { isCovariateTrend, type CovariateTrend } from '../../core/covariance/model.ts';
import type { Warning } from '../../core/shared/errors.ts';
import { covariateCandidates, residualSamples, samplesForModel, withChosenCovariates } from './covariates.ts';
import type { CovariateRaster } from '../../io/covariate-raster.ts';
import { MAX_EXACT_SAMPLES } from '../../core/shared/sizes.ts';

/** Samples from which fits use the nearest-neighbour likelihood and surfaces local neighbourhoods. */
export const MANY_SAMPLES = MAX_EXACT_SAMPLES;
/** From this many samples the variograms are computed in a worker (below, at once on this thread). */
const ASYNC_VARIOGRAM_FROM = 3000;
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
  /** The measured error of a local-neighbourhood surface against exact kriging (core/prediction/local-accuracy.ts). */
  accuracy?: LocalAccuracy;
  /** What was done when local neighbourhoods missed the tolerance: grown, exact kriging taken, or kept. */
  pathNote?: string;
  /** Set when the layers show the per-cell summaries of this many realisations. */
  fromSimulation?: number;
  /** Wall-clock time the computation took, ms (when known). */
  ms?: number;
}

/** One analyte's work as the report and the project file take it (see Session.analyteWork). */
export interface AnalyteWork {
  name: string;
  /** True for the analyte in use. */
  current: boolean;
  /** The session's snapshot with this analyte's choices. */
  snapshot: SessionSnapshot;
  candidates: CandidateRow[];
  surface: SurfaceView | null;
  accuracy: LocalAccuracy | null;
  cv: LeaveOneOutResult | null;
  simulation: SimulationView | null;
  suggestions: { result: DesignResult; options: Record<string, unknown> | null } | null;
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
  /** A file with several numeric columns: the columns the value can be chosen from. */
  choices?: string[];
}

function showError(e: unknown): ShownError {
  if (e instanceof GapwiseError) {
    const choices = (e as { numericColumns?: unknown }).numericColumns;
    return { message: e.describe(), code: e.code, ...(Array.isArray(choices) && choices.length ? { choices: choices.map(String) } : {}) };
  }
  if (e && typeof e === 'object' && 'message' in e) {
    const o = e as { message: string; code?: string; place?: { file?: string; row?: number; column?: string } };
    const where = o.place ? [o.place.file, o.place.row !== undefined ? `line ${o.place.row}` : '', o.place.column ? `column "${o.place.column}"` : ''].filter(Boolean).join(', ') : '';
    return { message: where ? `${where}: ${o.message}` : o.message, code: o.code };
  }
  return { message: String(e) };
}

/**
 * Sample positions for the map, aligned with intake.table and intake.samples: WGS 84 longitude and
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
  /** Index (into intake.table and intake.samples) of the sample shown in the sample panel. */
  selected = $state<number | null>(null);
  /** 'restoring' until the saved session has been read back. */
  ready = $state(false);
  savedAt = $state<number | null>(null);
  saveError = $state<string | null>(null);
  /** Bumped whenever new samples are read, so the map refits its view. */
  samplesVersion = $state(0);
  /** The name of a file being read (in a worker), or null. */
  reading = $state<string | null>(null);
  /** A samples file that was refused, with why; the samples in use are unchanged. Cleared by the next success. */
  rejectedSource = $state.raw<{ fileName: string; error: ShownError } | null>(null);
  /** A boundary file that was refused, with why; the boundary in use is unchanged. */
  rejectedBoundary = $state.raw<{ fileName: string; error: ShownError } | null>(null);
  private readRuns = new LatestRun();

  // ---------------------------------------------------------------- structure

  /** Covariate columns chosen in the Samples step (saved); none = constant mean. */
  get covariateNames(): string[] {
    return this.s.samples.covariates ?? [];
  }

  /** Chooses the covariate columns: the candidate table (fitted for other covariates) is dropped. */
  setCovariates(names: string[]): void {
    const next = [...new Set(names)];
    if (next.join('\u0000') === this.covariateNames.join('\u0000')) return;
    if (next.length > 0) this.s.samples.covariates = next;
    else delete this.s.samples.covariates;
    this.candidates = [];
    this.fittedFor = '';
  }

  /**
   * The samples (data units) with the encoded columns of the chosen covariates and the trend with its
   * levels recorded; value null with no covariate chosen, error for a column that cannot serve.
   */
  covariateSetup = $derived.by((): Outcome<{ samples: Samples; trend: CovariateTrend }> => {
    const intake = this.intake;
    // A column that became the value (or a coordinate) since it was chosen is no covariate.
    const names = intake ? (this.s.samples.covariates ?? []).filter((c) => covariateCandidates(intake).includes(c)) : [];
    if (!intake || names.length === 0) return { value: null, error: null };
    return attempt(() => withChosenCovariates(intake, names)!);
  });

  /** True when the variogram views show least-squares residuals of the covariate trend. */
  get residualVariogram(): boolean {
    return !!this.covariateSetup.value;
  }

  /**
   * Samples on the modelling scale (ln values for a log transform); with covariates chosen, the
   * least-squares residuals of those values on the covariates (what the variogram is computed from).
   */
  modelSamples = $derived.by((): Samples | null => {
    const intake = this.intake;
    if (!intake) return null;
    const s = intake.samples;
    const cov = this.covariateSetup.value;
    if (cov) {
      const r = attempt(() => residualSamples(cov.samples, cov.trend, this.s.samples.transform === 'log'));
      if (r.value) return r.value;
    }
    if (this.s.samples.transform !== 'log') return s;
    return { x: s.x, y: s.y, value: Float64Array.from(s.value, Math.log) };
  });

  /** The samples the model in use is cross-validated and mapped with (its covariates encoded). */
  private samplesFor(model: CovarianceModel | null): Samples {
    return samplesForModel(this.intake!, model ? ($state.snapshot(model) as CovarianceModel) : null);
  }

  /** What the variogram views are computed from (options as the structure step sets them). */
  private variogramRequest = $derived.by(() => {
    const samples = this.modelSamples;
    if (!samples) return null;
    const { lagWidth, maxLag, directional, cloud } = this.s.structure;
    const options = { lagWidth: lagWidth || undefined, maxLag: maxLag || undefined };
    return { samples, options, directional, cloud, key: `${this.s.readId}|${this.s.samples.transform}|${lagWidth}|${maxLag}|${directional}|${cloud}|${(this.s.samples.covariates ?? []).join('\u0000')}` };
  });

  /**
   * Variograms from many samples (ASYNC_VARIOGRAM_FROM on) come from a worker (about a second per
   * 10⁷ pairs would stall the page); `variogramPending` is true meanwhile. Fewer are computed here.
   */
  private variogramRemote = $state.raw<{ key: string; set: VariogramSet | null; error: ShownError | null } | null>(null);
  private variogramRuns = new LatestRun();

  get variogramPending(): boolean {
    const r = this.variogramRequest;
    return !!r && r.samples.x.length >= ASYNC_VARIOGRAM_FROM && this.variogramRemote?.key !== r.key;
  }

  /** Starts the worker request for the current variogram settings (many samples only). */
  refreshVariograms(): void {
    const r = this.variogramRequest;
    if (!r || r.samples.x.length < ASYNC_VARIOGRAM_FROM || this.variogramRemote?.key === r.key) return;
    const run = this.variogramRuns.begin();
    engine.variograms({ samples: r.samples, options: r.options, directional: r.directional, cloudPairs: r.cloud ? CLOUD_PAIRS : undefined }, run.signal)
      .then((set) => { if (run.current()) this.variogramRemote = { key: r.key, set, error: null }; })
      .catch((e: unknown) => {
        if (!run.current()) return;
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
  private fitRuns = new LatestRun();
  private cvRuns = new LatestRun();
  private cvTimer: ReturnType<typeof setTimeout> | null = null;
  /** What the candidates in the table were fitted for (see fitKey). */
  private fittedFor = '';
  /** The model the cross-validation figures belong to (see cvKey). */
  private cvFor = '';

  /** What the candidate table is fitted for: the reading and the transform. */
  private get fitKey(): string {
    return `${this.s.readId}|${this.s.samples.transform}|${(this.s.samples.covariates ?? []).join('\u0000')}`;
  }

  /** What the cross-validation of the model in use is computed from. */
  private get cvKey(): string {
    return JSON.stringify([this.s.readId, modelKey(this.s.structure.model)]);
  }

  get best(): string {
    return bestKey(this.candidates);
  }

  /** 'auto' chooses by sample count (MANY_SAMPLES); 'exact' or 'nnl' overrides (saved). */
  get fitLikelihood(): 'auto' | 'exact' | 'nnl' {
    return this.s.structure.likelihood;
  }

  set fitLikelihood(v: 'auto' | 'exact' | 'nnl') {
    this.s.structure.likelihood = v;
  }

  /** How the candidates in the table were fitted. */
  fittedWith = $state.raw<{ likelihood: 'exact' | 'nnl'; n: number; automatic: boolean } | null>(null);
  /** 'auto' takes the cheaper path (core/prediction/path-choice.ts); 'exact' (all samples) or 'local' overrides (saved). */
  get surfaceMethod(): 'auto' | 'exact' | 'local' {
    return this.s.surface.method;
  }

  set surfaceMethod(v: 'auto' | 'exact' | 'local') {
    this.s.surface.method = v;
  }


  /** True when the next surface is computed from local neighbourhoods. */
  get surfaceLocal(): boolean {
    // The measured error (core/prediction/local-accuracy.ts checkLocalGrid) has no covariates at the checked
    // cells: a model with covariates is kriged from every sample.
    if (isCovariateTrend(this.s.structure.model?.trend)) return false;
    const n = this.intake?.samples.x.length ?? 0;
    if (this.surfaceMethod !== 'auto') return this.surfaceMethod === 'local';
    const cells = this.gridPlan.value?.cells ?? 0;
    return n > 0 && cells > 0 && choosePredictionPath({ samples: n, targets: cells, threads: engine.workerCount() }).path === 'local';
  }

  /** Fits every candidate model (in workers); keeps the user's choice and any edited model. */
  async fit(): Promise<void> {
    const intake = this.intake;
    if (!intake) return;
    const run = this.fitRuns.begin();
    const fitKey = this.fitKey;
    const t0 = performance.now();
    this.fitTask = { ...idleTask(), status: 'running', total: 7 };
    const n = intake.samples.x.length;
    const likelihood = chooseFitMethod(n, this.fitLikelihood === 'auto' ? undefined : this.fitLikelihood);
    try {
      const cov = this.covariateSetup;
      if (cov.error) throw new GapwiseError(cov.error.code as never, cov.error.message);
      const rows = await engine.fitCandidateRows(
        {
          samples: cov.value?.samples ?? intake.samples, method: this.s.structure.method, transform: this.s.samples.transform, likelihood,
          ...(cov.value ? { trend: cov.value.trend } : {}),
        },
        (done, total, what) => { if (run.current()) this.fitTask = { ...this.fitTask, done, total, what: what ?? '' }; },
        run.signal,
      );
      if (!run.current()) return;
      this.candidates = rows;
      this.fittedFor = fitKey;
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
      if (!run.current()) return;
      const err = showError(e);
      this.fitTask = { ...this.fitTask, status: err.code === 'cancelled' ? 'cancelled' : 'error', error: err, ms: performance.now() - t0 };
    }
  }

  cancelFit(): void {
    this.fitRuns.cancel();
    this.fitTask = { ...this.fitTask, status: 'cancelled' };
  }

  /** The richer fit (direction-dependent range, or two ranges) of the candidate in use. */
  rich = new RichFitState();

  /** What the richer fit is for: the reading and the transform. */
  get richKey(): string {
    return this.fitKey;
  }

  /** Runs the richer fit the user chose; its kept model becomes the model in use. */
  fitRich(): Promise<void> {
    const row = this.candidates.find((r) => r.key === this.s.structure.chosen);
    return this.rich.run({
      samples: this.intake?.samples ?? null, transform: this.s.samples.transform, chosen: this.s.structure.chosen,
      chosenModel: row?.model ?? null, key: this.fitKey,
    }, (model) => this.useModel(model));
  }

  /** Puts a fitted model (from the richer fit's comparison) in use; the candidate choice stays. */
  useModel(model: CovarianceModel): void {
    this.s.structure.model = model;
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
    if (!model || !intake) {
      this.cvRuns.cancel();
      this.cv = null;
      this.cvFor = '';
      return;
    }
    const key = this.cvKey;
    // Figures for this very model are on screen already (e.g. brought back after a reload).
    if (this.cv && this.cvFor === key) return;
    const run = this.cvRuns.begin();
    try {
      const r = await engine.crossValidate(this.samplesFor(model), $state.snapshot(model) as CovarianceModel, run.signal);
      if (!run.current()) return;
      this.cv = r;
      this.cvFor = key;
      this.cvError = null;
    } catch (e) {
      if (!run.current()) return;
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
      flopsPerSecond: this.rate?.flopsPerSecond, overheadSeconds: this.rate?.overheadSeconds,
    }));
  });

  surface = $state.raw<SurfaceView | null>(null);
  /**
   * The measured error of the surface shown when it came from local neighbourhoods (its key, the
   * figures), kept with the surface (so it is saved and comes back with it); null for exact kriging.
   */
  get surfaceAccuracy(): { key: string; accuracy: LocalAccuracy } | null {
    const sf = this.surface;
    if (sf && !sf.fromSimulation && sf.accuracy) return { key: sf.key, accuracy: sf.accuracy };
    const k = this.kriged;
    return sf?.fromSimulation && k?.accuracy ? { key: k.key, accuracy: k.accuracy } : null;
  }

  /** Covariate rasters loaded in the Surface step, one per covariate (their files autosaved beside the session, read again on a reload). */
  covariateRasters = $state.raw<CovariateRaster[]>([]);
  /** The files of `covariateRasters` as loaded (what the autosave keeps). */
  rasterFiles = $state.raw<SavedRaster[]>([]);
  /** A raster that could not be used, and why; the rasters in use are unchanged. */
  rasterError = $state.raw<{ fileName: string; error: ShownError } | null>(null);
  /** The covariate raster shown as a map layer of its own (by covariate name), or null. */
  covariateLayer = $state<string | null>(null);
  /** Warnings of the last surface's covariates on the grid (cells without a covariate value). */
  covariateWarnings = $state.raw<Warning[]>([]);

  /** Covariates of the model in use that have no raster yet (empty for a model without covariates). */
  get missingRasters(): string[] {
    const t = this.s.structure.model?.trend;
    if (!t || !isCovariateTrend(t)) return [];
    return t.covariates.filter((c) => !this.covariateRasters.some((r) => r.name === c));
  }

  /**
   * Reads a covariate GeoTIFF for the covariate `name` (geotiff.js, on this thread); it replaces that
   * covariate's raster only when it reads and its CRS is known.
   */
  async loadCovariateRaster(name: string, fileName: string, bytes: Uint8Array): Promise<ShownError | null> {
    try {
      const { readCovariateRaster } = await import('../../io/covariate-raster.ts');
      const raster = await readCovariateRaster(bytes, name, fileName);
      // Checks the raster's CRS can be reprojected to the working one before it is taken.
      const work = this.intake?.report.crs.work;
      if (work) createTransform(raster.crs, work);
      this.covariateRasters = [...this.covariateRasters.filter((r) => r.name !== name), raster];
      const kept = bytes.length <= MAX_SAVED_RASTER_BYTES ? [{ name, fileName, bytes: bytes.slice() }] : [];
      this.rasterFiles = [...this.rasterFiles.filter((r) => r.name !== name), ...kept];
      this.rasterError = null;
      return null;
    } catch (e) {
      const error = showError(e);
      this.rasterError = { fileName, error };
      return error;
    }
  }

  removeCovariateRaster(name: string): void {
    this.covariateRasters = this.covariateRasters.filter((r) => r.name !== name);
    this.rasterFiles = this.rasterFiles.filter((r) => r.name !== name);
    if (this.covariateLayer === name) this.covariateLayer = null;
  }
  /**
   * True after a reload when a surface was being computed as the page closed: it was not stored (a
   * surface still arriving never is), so the Surface step says so and offers to compute it again.
   */
  surfaceInterrupted = $state(false);
  /** Colours of the mean layer: 'auto' spaces them by ln(value) for log models, evenly otherwise (saved). */
  get meanColours(): 'auto' | 'linear' | 'log' {
    return this.s.surface.colours;
  }

  set meanColours(v: 'auto' | 'linear' | 'log') {
    this.s.surface.colours = v;
  }

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
  rate = $state<SurfaceSpeed | undefined>(undefined);
  surfaceTask = $state<TaskState>(idleTask());
  private surfaceRuns = new LatestRun();

  /** What a surface computed now would be computed from. */
  get surfaceKey(): string {
    const g = this.gridPlan.value?.grid;
    return JSON.stringify({
      v: this.s.readId, m: modelKey(this.s.structure.model),
      g: g ? [g.x0, g.y0, g.cell, g.nx, g.ny, this.s.surface.area] : null,
      t: this.s.surface.threshold,
      s: this.support, k: this.support === 'block' ? this.blockPoints : 0, l: this.surfaceLocal,
      c: this.covariateRasters.map((r) => [r.name, r.crs, r.x0, r.y0, r.dx, r.nx, r.ny]),
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
    const missing = this.missingRasters;
    if (missing.length > 0) {
      this.surfaceTask = {
        ...idleTask(), status: 'error',
        error: { code: 'bad-option', message: `The model's covariate${missing.length > 1 ? 's' : ''} ${missing.join(', ')} need${missing.length > 1 ? '' : 's'} a raster on the map area; expected "Load covariate raster…" for ${missing.length > 1 ? 'each' : 'it'} first.` },
      };
      return;
    }
    let grid = plan.grid;
    let covariates: Float64Array | undefined;
    let samples = intake.samples;
    this.covariateWarnings = [];
    if (isCovariateTrend(model.trend)) {
      try {
        const { gridCovariates } = await import('../../io/covariate-raster.ts');
        const plain = $state.snapshot(model) as CovarianceModel;
        // Block support reads the covariates at each cell's block points (averaged into its trend row).
        const block = model.transform !== 'log' && this.support === 'block';
        const g = gridCovariates(plan.grid, plain.trend as CovariateTrend, this.covariateRasters, intake.report.crs.work, block ? { nodes: this.blockPoints } : {});
        grid = g.grid;
        covariates = block ? g.nodeCovariates : g.covariates;
        this.covariateWarnings = g.warnings;
        samples = this.samplesFor(model);
      } catch (e) {
        this.surfaceTask = { ...idleTask(), status: 'error', error: showError(e) };
        return;
      }
    }
    const run = this.surfaceRuns.begin();
    this.s.surface.wanted = true;
    this.s.surface.running = true;
    this.surfaceInterrupted = false;
    const threshold = this.s.surface.threshold;
    const useThreshold = threshold !== null && Number.isFinite(threshold) && (model.transform !== 'log' || threshold > 0);
    const key = this.surfaceKey;
    const support = model.transform === 'log' ? 'point' : this.support;
    // Block averages are kriged from all samples; local neighbourhoods serve point values.
    const local = support === 'point' && this.surfaceLocal;
    const t0 = performance.now();
    this.surfaceTask = { ...idleTask(), status: 'running', total: plan.cells };
    const view = (result: SurfaceResult, done: boolean, bands: number, neighbors: number | null, ms?: number): SurfaceView => ({
      grid, result, work: intake.report.crs.work, threshold: useThreshold ? threshold : null, key, bands, done,
      support, points: support === 'block' ? this.blockPoints : 1,
      local: neighbors,
      ...(ms !== undefined ? { ms } : {}),
    });
    const plainModel = $state.snapshot(model) as CovarianceModel;
    let bands = 0;
    /** One run of the surface through the workers, band by band (`settings` null: every sample). */
    const compute = async (settings: LocalSettings | null, progress: Array<{ seconds: number; done: number }>): Promise<SurfaceResult> => {
      const started = performance.now();
      return engine.surface(
        {
          samples, model: plainModel, grid, threshold: useThreshold ? threshold! : undefined,
          support, blockPoints: this.blockPoints, covariates, local: settings ?? undefined,
        },
        (done, total) => {
          if (!run.current()) return;
          this.surfaceTask = { ...this.surfaceTask, done, total };
          progress.push({ seconds: (performance.now() - started) / 1000, done });
        },
        run.signal,
        (merged) => { if (run.current()) this.surface = view(merged, false, ++bands, settings?.neighbors ?? null); },
      );
    };
    try {
      let settings: LocalSettings | null = local ? { neighbors: DEFAULT_LOCAL_NEIGHBORS, globalMean: true } : null;
      const progress: Array<{ seconds: number; done: number }> = [];
      let result = await compute(settings, progress);
      if (!run.current()) return;
      const firstMs = performance.now() - t0;
      this.rate = measureSurfaceSpeed({ n: intake.samples.x.length, cells: plan.cells, workers: engine.workerCount(), seconds: firstMs / 1000, progress }) ?? this.rate;
      let accuracy: LocalAccuracy | null = null;
      let note: string | null = null;
      if (settings) {
        // Exact kriging at a seeded subset of the cells against the local values there (a worker);
        // a missed tolerance grows the neighbourhood as the command line does, or takes every sample.
        this.surface = view(result, false, ++bands, settings.neighbors);
        this.surfaceTask = { ...this.surfaceTask, what: 'checking against exact kriging' };
        // Chosen automatically, growth is tried only while a doubled neighbourhood stays cheaper than
        // exact kriging; otherwise a miss goes straight to exact kriging (cheaper and exact).
        const growthPays = this.surfaceMethod !== 'auto' || choosePredictionPath({
          samples: samples.x.length, targets: plan.cells, threads: engine.workerCount(), neighbors: 2 * settings.neighbors,
        }).path === 'local';
        const check = await engine.localAccuracy(samples, plainModel, grid, settings, growthPays, run.signal);
        if (!run.current()) return;
        accuracy = check.accuracy;
        if (!accuracy.within) {
          const first = accuracy;
          const missed = `The ${first.neighbors} nearest samples${first.globalMean ? ' around the mean of all samples' : ''} missed the tolerance `
            + `(mean within ${first.mean.max.toFixed(2)} %, sd within ${first.sd.max.toFixed(2)} % of the prior sd; aim ${first.tolerance.mean} % / ${first.tolerance.sd} %)`;
          const exactAllowed = this.surfaceMethod === 'auto' && intake.samples.x.length <= EXACT_SAMPLE_LIMIT;
          // A grown neighbourhood that costs more than exact kriging (up to every sample) is not
          // worth it when the path is chosen automatically: exact kriging is then both cheaper and exact.
          const grownCostsMore = !!check.grown && exactAllowed && choosePredictionPath({
            samples: samples.x.length, targets: plan.cells, threads: engine.workerCount(), neighbors: check.grown.neighbors,
          }).path === 'exact';
          if (check.grown || exactAllowed) {
            const grown = grownCostsMore ? null : check.grown;
            settings = grown;
            this.surfaceTask = { ...this.surfaceTask, done: 0, what: grown ? `again with the ${grown.neighbors} nearest samples` : 'again from every sample' };
            result = await compute(settings, []);
            if (!run.current()) return;
            if (grown) {
              accuracy = (await engine.localAccuracy(samples, plainModel, grid, grown, false, run.signal)).accuracy;
              if (!run.current()) return;
              note = `${missed}, so the surface was computed again with the ${grown.neighbors} nearest samples.`;
            } else {
              accuracy = null;
              note = grownCostsMore
                ? `${missed}; the ${check.grown!.neighbors} nearest would meet it but cost more than exact kriging here, so the surface was computed again by exact kriging from every sample.`
                : growthPays
                  ? `${missed}, and so did every larger neighbourhood tried, so the surface was computed again by exact kriging from every sample.`
                  : `${missed}; larger neighbourhoods would cost more than exact kriging here, so the surface was computed again by exact kriging from every sample.`;
            }
          } else {
            note = `${missed}; no larger neighbourhood met it${this.surfaceMethod === 'local' ? '. Choose "every sample" for exact kriging' : ''}.`;
          }
        }
      }
      this.s.surface.running = false;
      const ms = performance.now() - t0;
      this.surface = { ...view(result, true, ++bands, settings?.neighbors ?? null, ms), ...(accuracy ? { accuracy } : {}), ...(note ? { pathNote: note } : {}) };
      this.surfaceTask = { ...this.surfaceTask, status: 'done', done: plan.cells, total: plan.cells, what: '', ms };
      if (!this.s.surface.sdLimit && Number.isFinite(result.range.sd.max)) {
        this.s.surface.sdLimit = +result.range.sd.max.toPrecision(2);
      }
    } catch (e) {
      if (!run.current()) return;
      this.s.surface.running = false;
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
  private simRuns = new LatestRun();

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
    if (isCovariateTrend(model.trend)) {
      this.simTask = {
        ...idleTask(), status: 'error',
        error: { code: 'bad-option', message: `Realisations are not offered for a model with covariates (${model.trend.covariates.join(', ')}) yet; the kriged surface above uses them. Expected a model without covariates for realisations.` },
      };
      return;
    }
    const run = this.simRuns.begin();
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
      }, (done, total) => { if (run.current()) this.simTask = { ...this.simTask, done, total }; }, run.signal);
      if (!run.current()) return;
      const ms = performance.now() - t0;
      // Keep the first four realisations only: the view shows them, the summaries are computed.
      const kept = { ...result, realisations: result.realisations?.slice(0, 4) };
      this.simulation = { grid: plan.grid, result: kept, key, base: this.surfaceKey, ms, seed, depth, made: new Date().toISOString() };
      this.simRate = ms / 1000 / (count * plan.cells);
      this.simTask = { ...this.simTask, status: 'done', done: count, ms };
    } catch (e) {
      if (!run.current()) return;
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
    this.simRuns.cancel();
    this.simTask = { ...this.simTask, status: 'cancelled' };
  }

  cancelSurface(): void {
    this.surfaceRuns.cancel();
    this.surface = null;
    this.s.surface.wanted = false;
    this.s.surface.running = false;
    this.surfaceTask = { ...this.surfaceTask, status: 'cancelled' };
  }

  private autosave: Autosave;

  constructor(autosave?: Autosave) {
    this.autosave = autosave ?? createAutosave({
      onSaved: () => { this.savedAt = Date.now(); this.saveError = null; },
      onError: (e) => { this.saveError = `Autosave failed: ${(e as Error)?.message ?? String(e)}`; },
    });
    provideTestHook({
      engineRequests: () => ({ ...engine.requestCounts() }),
      sessionDigest: () => this.digest(),
    });
  }

  // ---------------------------------------------------------------- derived facts

  get unit(): string {
    return this.s.samples.unit || this.intake?.report.unit || '';
  }

  /** Unit of semivariances, nugget and sill: the data unit squared, or ln units for a log model. */
  get semivarianceUnit(): string {
    if (this.s.samples.transform === 'log') return '(ln units)²';
    return this.unit ? `(${this.unit})²` : '';
  }

  /** The fitted candidates other than the chosen one, as curves to draw over the variogram. */
  get comparisonCurves(): Array<{ key: string; label: string; model: CovarianceModel }> {
    const chosen = this.s.structure.chosen;
    return this.candidates
      .filter((r) => r.model && r.key !== chosen)
      .map((r) => ({ key: r.key, label: r.label, model: r.model! }));
  }

  /** The sample values on the scale the cross-validation worked on (ln values for a log model). */
  get cvObserved(): Float64Array {
    const values = this.intake?.samples.value;
    if (!values) return new Float64Array(0);
    return this.cv?.scale === 'log' ? Float64Array.from(values, Math.log) : values;
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
      // Nothing to keep before a file is read (and after "Start over", which cleared the store).
      if (this.ready && snap.source) this.autosave.schedule(snap);
    });
    // The computed results follow, stored beside the choices.
    $effect(() => {
      const record = this.resultsRecord();
      // null deletes the stored results (samples that no longer read); nothing to do with no file at all.
      if (this.ready && (record || this.s.source)) untrack(() => this.autosave.scheduleResults(record));
    });
    // The covariate raster files follow, beside them.
    $effect(() => {
      const files = this.rasterFiles;
      if (this.ready) untrack(() => this.autosave.scheduleRasters(files));
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

  /**
   * The results to store with the current reading, or null when there is none (which deletes the
   * stored ones). A surface still arriving is left out: the last finished one is what a reload shows.
   */
  private resultsRecord(): SavedResults | null {
    const own = this.ownResults();
    const parked = this.parkedWork;
    return own && Object.keys(parked).length > 0 ? { ...own, parked } : own;
  }

  /** The results of the analyte in use (the whole record with one analyte). */
  private ownResults(): SavedResults | null {
    const intake = this.intake;
    const readId = this.s.readId;
    if (!intake || !readId || !this.s.source) return null;
    const v = this.variogramRemote;
    const surface = this.surface?.done ? this.surface : null;
    const design = suggestions.current;
    return {
      version: RESULTS_VERSION,
      readId,
      intake,
      variograms: v?.set ? { key: v.key, set: v.set } : null,
      fit: this.candidates.length && this.fittedFor
        ? { key: this.fittedFor, rows: this.candidates, fittedWith: this.fittedWith, ms: this.fitTask.ms }
        : null,
      cv: this.cv && this.cvFor ? { key: this.cvFor, result: this.cv } : null,
      surface,
      // A $state object is a proxy, which IndexedDB cannot clone: store a plain copy.
      rate: this.rate ? $state.snapshot(this.rate) : null,
      simulation: this.simulation,
      simRate: this.simRate,
      suggestions: design ? { result: design, options: suggestions.options } : null,
    };
  }

  /**
   * Reads the saved session back and shows the results stored with it, computing only what is
   * wanted and was not stored (or did not pass the checks on load). Resolves true when there was a
   * saved session.
   */
  async restore(): Promise<boolean> {
    // Marks on the page's clock (performance.mark) say where a reload spends its time; the browser
    // test prints them.
    mark('restore-start');
    // The raster files are asked for at once too (one more read that overlaps the others).
    const rasters = this.autosave.loadRasters();
    const saved = await this.autosave.load();
    mark('snapshot-read');
    let results: SavedResults | null = null;
    if (saved?.source) {
      if (!saved.readId) saved.readId = newReadId();
      const parked = saved.analytes
        ? Object.fromEntries(Object.entries(saved.analytes.parked).filter(([, c]) => c.readId).map(([name, c]) => [name, c.readId]))
        : undefined;
      results = await this.autosave.loadResults({ readId: saved.readId, fileName: saved.source.fileName, parked });
      mark('results-read');
    }
    if (saved) {
      // A surface still arriving when the page closed was not stored: say so rather than start it again unasked.
      const interrupted = saved.surface.running;
      saved.surface.running = false;
      this.s = saved;
      this.surfaceInterrupted = interrupted;
      const intake: IntakeResult | null = results ? results.intake : null;
      if (intake) {
        this.takeIntake(intake);
      } else if (saved.source) {
        const got = await this.readWith(saved.source, this.s.samples);
        if (got.intake) this.takeIntake(got.intake);
        else this.failIntake(got.error);
      }
    }
    this.parkedWork = results?.parked ?? {};
    if (saved && this.intake) await this.restoreRasters(await rasters);
    this.ready = true;
    if (saved && this.intake) {
      const back = results ? this.showResults(results) : { fit: false, surface: false };
      mark('results-shown');
      if (this.s.structure.model) {
        if (this.s.surface.wanted && !back.surface && !this.surfaceInterrupted) void this.computeSurface();
        // Bring back the comparison table; the chosen (and possibly edited) model is kept.
        if (!back.fit) void this.fit();
      }
    }
    return saved !== null;
  }

  /**
   * Reads the saved covariate raster files again (so each is checked as a new one would be); a file
   * that no longer reads is dropped and named in `rasterError`.
   */
  private async restoreRasters(files: SavedRaster[]): Promise<void> {
    if (files.length === 0) return;
    this.rasterFiles = files;
    const failed: string[] = [];
    for (const f of files) {
      const error = await this.loadCovariateRaster(f.name, f.fileName, f.bytes);
      if (error) failed.push(`${f.fileName} (${f.name}): ${error.message}`);
    }
    if (failed.length > 0) {
      this.rasterFiles = this.rasterFiles.filter((f) => this.covariateRasters.some((r) => r.name === f.name));
      this.rasterError = {
        fileName: failed.length === 1 ? files.find((f) => !this.covariateRasters.some((r) => r.name === f.name))!.fileName : `${failed.length} saved rasters`,
        error: { message: `The saved covariate raster could not be read again, so it was dropped: ${failed.join('; ')}. Expected a raster that reads as when it was loaded; load it again.` },
      };
    }
  }

  /** Puts stored results on screen (the intake is already taken); says which parts came back. */
  private showResults(r: SavedResults): { fit: boolean; surface: boolean } {
    if (r.variograms) this.variogramRemote = { key: r.variograms.key, set: r.variograms.set, error: null };
    const fit = !!r.fit && r.fit.key === this.fitKey;
    if (fit && r.fit) {
      this.candidates = r.fit.rows;
      this.fittedWith = r.fit.fittedWith;
      this.fittedFor = r.fit.key;
      this.fitTask = { ...idleTask(), status: 'done', done: r.fit.rows.length, total: r.fit.rows.length, ms: r.fit.ms };
    }
    if (r.cv && r.cv.key === this.cvKey) {
      this.cv = r.cv.result;
      this.cvFor = r.cv.key;
    }
    if (r.rate !== null) this.rate = r.rate;
    if (r.simRate !== null) this.simRate = r.simRate;
    // Surfaces and realisations come back as they were on screen, stale or not (the views say so).
    const surface = r.surface;
    if (surface) {
      this.surface = { ...surface, bands: 1 };
      this.surfaceTask = { ...idleTask(), status: 'done', done: surface.result.cells, total: surface.result.cells, ms: surface.ms ?? 0 };
    }
    if (r.simulation) {
      this.simulation = r.simulation;
      this.simTask = { ...idleTask(), status: 'done', done: r.simulation.result.count, total: r.simulation.result.count, what: 'realisations', ms: r.simulation.ms };
    }
    if (r.suggestions) {
      suggestions.session ??= this;
      suggestions.set(r.suggestions.result, r.suggestions.options);
    }
    return { fit, surface: !!surface };
  }

  /** Writes any pending save now (e.g. before the page is hidden). */
  flush(): Promise<void> {
    return this.autosave.flush();
  }

  /** Clears the saved session and every result. */
  async startOver(): Promise<void> {
    await this.autosave.clear();
    this.readRuns.cancel();
    this.reading = null;
    this.s = emptySnapshot();
    this.intake = null;
    this.intakeError = null;
    this.places = null;
    this.boundary = null;
    this.boundaryError = null;
    this.rejectedSource = null;
    this.rejectedBoundary = null;
    this.rejectedChoice = null;
    this.selected = null;
    this.dropResults();
    this.parkedWork = {};
    this.covariateRasters = [];
    this.rasterFiles = [];
    this.covariateLayer = null;
    this.rasterError = null;
    if (suggestions.session === this) suggestions.set(null);
    this.savedAt = null;
  }

  // ---------------------------------------------------------------- steps

  open(step: StepId): void {
    this.s.step = step;
  }

  // ---------------------------------------------------------------- samples

  /** Drops every result computed from the samples (they changed). */
  dropResults(): void {
    this.rich.reset();
    this.fitRuns.cancel();
    this.candidates = [];
    this.fittedFor = '';
    this.fitTask = idleTask();
    this.cvRuns.cancel();
    this.cv = null;
    this.cvFor = '';
    this.cvError = null;
    this.surfaceRuns.cancel();
    this.simRuns.cancel();
    this.simulation = null;
    this.simTask = idleTask();
    this.surface = null;
    this.kriged = null;
    this.surfaceTask = idleTask();
    this.s.surface.running = false;
    this.surfaceInterrupted = false;
    this.onSamplesChanged?.();
  }

  /** Hook for the surface: results that depend on the samples are dropped when they change. */
  onSamplesChanged: (() => void) | null = null;

  /**
   * Reads a samples file (in a worker) and, only when it can be used, makes it the session's samples:
   * the choices that belonged to the old file are reset (`choices` sets reading choices at once, e.g.
   * the demo's value column) and every result is dropped. A file that cannot be used changes nothing
   * in use; it is named in `rejectedSource`. Resolves with the error, or null on success (or when a
   * newer load replaced this one).
   */
  async loadSource(file: SourceFile, choices: Partial<SampleChoices> = {}): Promise<ShownError | null> {
    const samples: SampleChoices = { unit: '', transform: 'none', ...choices };
    let got = await this.readWith(file, samples);
    if (got.stale) return null;
    let valueNote: string | null = null;
    const several = got.error?.choices;
    if (!got.intake && several && samples.value === undefined) {
      // Several numeric columns: the first is mapped and the user told, so the file opens and the
      // Value column choice (and the covariates) can be made on it.
      samples.value = several[0];
      got = await this.readWith(file, samples);
      if (got.stale) return null;
      valueNote = `Several columns hold numbers (${several.join(', ')}): ${several[0]}, the first, is mapped. Choose another under Value column, tick others under Analytes to map them too, or use them as covariates.`;
    }
    if (!got.intake) {
      this.rejectedSource = { fileName: file.fileName, error: got.error! };
      return got.error;
    }
    this.s.source = file;
    this.s.samples = samples;
    delete this.s.analytes;
    this.parkedWork = {};
    this.s.structure.model = null;
    this.s.structure.chosen = '';
    this.s.structure.lagWidth = 0;
    this.s.structure.maxLag = 0;
    this.s.surface.wanted = false;
    this.s.surface.cellSize = 0;
    this.s.surface.threshold = null;
    this.s.surface.sdLimit = null;
    this.rejectedSource = null;
    this.takeNewReading(got.intake);
    this.valueNote = valueNote;
    return null;
  }

  /**
   * Takes a boundary file when it reads (and, with samples in a known CRS, projects); null removes
   * the boundary. A file that cannot be used leaves the boundary in use; it is named in
   * `rejectedBoundary`. Returns the error, or null.
   */
  loadBoundary(file: SourceFile | null): ShownError | null {
    if (file) {
      try {
        this.boundary = this.polygonsOf(file);
      } catch (e) {
        const error = showError(e);
        this.rejectedBoundary = { fileName: file.fileName, error };
        return error;
      }
      this.boundaryError = null;
    } else {
      this.boundary = null;
      this.boundaryError = null;
    }
    this.rejectedBoundary = null;
    this.s.boundary = file;
    this.s.surface.area = file ? 'boundary' : 'extent';
    return null;
  }

  /**
   * Puts a whole saved state in place (an opened project): its samples are read first, and only when
   * they can be used does it replace the session (every result dropped; the surface and the table are
   * computed again when the state has a model). Resolves with the error, or null.
   */
  async openSnapshot(next: SessionSnapshot): Promise<ShownError | null> {
    if (!next.source) return null;
    const got = await this.readWith(next.source, next.samples);
    if (got.stale) return null;
    if (!got.intake) {
      this.rejectedSource = { fileName: next.source.fileName, error: got.error! };
      return got.error;
    }
    this.s = next;
    // The other analytes of an opened project are read when they are switched to.
    this.parkedWork = {};
    this.rejectedSource = null;
    this.takeNewReading(got.intake);
    if (this.s.structure.model) {
      if (this.s.surface.wanted) void this.computeSurface();
      void this.fit();
    }
    return null;
  }

  /**
   * Changes one reading choice (value column, CRS, non-detect rule) and reads the file again. The
   * choice is taken only when the file reads with it: a choice the file cannot be read with (e.g. a
   * value column with no usable row) leaves the samples, the choices and every result as they were,
   * and is named in `rejectedChoice` beside them.
   */
  async setReadChoice(choice: { value?: string; crs?: string | undefined; nonDetect?: 'half' | 'dl' | 'sqrt2' }): Promise<void> {
    if (choice.value !== undefined) this.valueNote = null;
    const src = this.s.source;
    if (!src) return;
    // Another chosen analyte as value: switch to it, its work kept.
    if (choice.value !== undefined && this.s.analytes?.chosen.includes(choice.value)) {
      await this.switchAnalyte(choice.value);
      return;
    }
    const before = this.s.samples.value ?? this.intake?.report.valueColumn;
    const next = { ...($state.snapshot(this.s.samples) as SampleChoices) };
    if ('value' in choice) {
      next.value = choice.value;
      next.unit = '';
    }
    if ('crs' in choice) next.crs = choice.crs;
    if ('nonDetect' in choice) next.nonDetect = choice.nonDetect;
    const got = await this.readWith(src, next);
    if (got.stale) return;
    if (!got.intake) {
      if (this.intake) {
        this.rejectedChoice = { what: choiceText(choice), error: got.error! };
      } else {
        // Nothing in use to keep (the file did not read before either): the error takes the samples' place.
        this.s.samples = next;
        this.failIntake(got.error);
      }
      return;
    }
    this.rejectedChoice = null;
    this.s.samples = next;
    if ('value' in choice) {
      this.s.structure.model = null;
      this.s.structure.chosen = '';
      this.s.surface.threshold = null;
    }
    this.rereadAnalytes(before, choice);
    this.takeNewReading(got.intake);
  }

  // ---------------------------------------------------------------- several analytes

  /**
   * The work of each chosen analyte not in use now (its reading, fit, surfaces, realisations,
   * suggestions), by value column: switching back shows it again without recomputing. Autosaved
   * with the results.
   */
  parkedWork = $state.raw<Record<string, SavedResults>>({});

  /** The value columns that can be chosen as analytes: the file's numeric columns but the coordinates. */
  get analyteOptions(): string[] {
    const r = this.intake?.report;
    if (!r) return [];
    const options = r.numericColumns.filter((c) => c !== r.xColumn && c !== r.yColumn);
    return options.includes(r.valueColumn) ? options : [r.valueColumn, ...options];
  }

  /** The analytes chosen, in use first among them as listed; one (the value column) when none were chosen. */
  get analyteNames(): string[] {
    const set = this.s.analytes;
    if (set) return set.chosen;
    const v = this.s.samples.value ?? this.intake?.report.valueColumn;
    return v ? [v] : [];
  }

  /** The analyte in use (the value column), or '' before a file is read. */
  get currentAnalyte(): string {
    return this.s.samples.value ?? this.intake?.report.valueColumn ?? '';
  }

  /** The action level of each chosen analyte (its own), for the switch. */
  get analyteThresholds(): Record<string, number | null> {
    const out: Record<string, number | null> = {};
    const set = this.s.analytes;
    for (const name of this.analyteNames) {
      out[name] = name === this.currentAnalyte ? this.s.surface.threshold : set?.parked[name]?.surface.threshold ?? null;
    }
    return out;
  }

  /**
   * Chooses the analytes (value columns) to map from this file; the one in use always stays. An
   * analyte added starts with no model and no action level; one removed loses its work.
   */
  setAnalytes(names: readonly string[]): void {
    const current = this.currentAnalyte;
    if (!current || !this.s.source) return;
    const options = this.analyteOptions;
    const wanted = new Set([...names, current]);
    const chosen = options.filter((c) => wanted.has(c)).slice(0, MAX_ANALYTES);
    if (!chosen.includes(current)) chosen[chosen.length - 1] = current;
    if (chosen.length < 2) {
      delete this.s.analytes;
      this.parkedWork = {};
      return;
    }
    const before = this.s.analytes?.parked ?? {};
    const parked: Record<string, AnalyteChoices> = {};
    for (const name of chosen) if (name !== current) parked[name] = before[name] ?? this.freshAnalyte(name);
    this.s.samples.value = current;
    this.s.analytes = { chosen, parked };
    this.parkedWork = Object.fromEntries(Object.entries(this.parkedWork).filter(([name]) => name in parked));
  }

  /** Choices for an analyte added now: the file's reading choices, everything else at its start. */
  private freshAnalyte(name: string): AnalyteChoices {
    const c = analyteChoicesOf($state.snapshot(this.s) as SessionSnapshot);
    const { covariates: _dropped, ...samples } = c.samples;
    void _dropped;
    return {
      ...c,
      readId: '',
      samples: { ...samples, value: name, unit: '', transform: 'none' },
      structure: { ...c.structure, chosen: '', model: null, lagWidth: 0, maxLag: 0 },
      surface: { ...c.surface, threshold: null, sdLimit: null, wanted: false, running: false },
    };
  }

  /**
   * Each chosen analyte's work for the report and the project file, in the order chosen: the one in
   * use as on screen, the others as parked. A surface comes only finished and current (for a parked
   * analyte: from all samples, or from local neighbourhoods with the measured error kept beside it),
   * realisations only when drawn on that surface, cross-validation only for the model
   * in use.
   */
  analyteWork(): AnalyteWork[] {
    const snap = $state.snapshot(this.s) as SessionSnapshot;
    const names = this.analyteNames;
    const current = this.currentAnalyte;
    const out: AnalyteWork[] = [];
    for (const name of names) {
      if (name === current) {
        const surface = this.exportSurface;
        const design = suggestions.current;
        out.push({
          name, current: true, snapshot: snap, candidates: this.candidates,
          surface: surface?.done && !this.surfaceStale ? surface : null,
          accuracy: surface && this.surfaceAccuracy?.key === surface.key ? this.surfaceAccuracy.accuracy : null,
          cv: this.cv && this.cvFor === this.cvKey ? this.cv : null,
          simulation: this.simulation && !this.simulationStale ? this.simulation : null,
          suggestions: design ? { result: design, options: suggestions.options } : null,
        });
        continue;
      }
      const c = snap.analytes?.parked[name];
      if (!c) continue;
      const snapshot: SessionSnapshot = { ...snap, readId: c.readId, samples: c.samples, structure: c.structure, surface: c.surface, simulation: c.simulation, next: c.next };
      const work = c.readId && this.parkedWork[name]?.readId === c.readId ? this.parkedWork[name] : null;
      // A surface from local neighbourhoods goes with its measured error (kept with the surface).
      const surface = work?.surface && (work.surface.local === null || work.surface.accuracy) ? work.surface : null;
      out.push({
        name, current: false, snapshot, candidates: work?.fit?.rows ?? [], surface, accuracy: surface?.accuracy ?? null,
        cv: work?.cv && work.cv.key === JSON.stringify([c.readId, modelKey(c.structure.model)]) ? work.cv.result : null,
        simulation: work?.simulation && surface && work.simulation.base === surface.key ? work.simulation : null,
        suggestions: work?.suggestions ?? null,
      });
    }
    return out;
  }

  /** True while switching to an analyte whose samples are being read. */
  switching = $state<string | null>(null);

  /**
   * Puts another chosen analyte in use: the one in use is parked with its work; the other's choices
   * and stored work come back as they were (nothing recomputed). An analyte not read yet (just
   * added, or from an opened project) is read first; when its samples cannot be used nothing changes.
   */
  async switchAnalyte(name: string): Promise<ShownError | null> {
    const current = this.currentAnalyte;
    const set = this.s.analytes;
    const src = this.s.source;
    if (!set || !src || !current || name === current || !set.chosen.includes(name)) return null;
    const target = set.parked[name] ?? this.freshAnalyte(name);
    const work = this.parkedWork[name];
    const stored = target.readId && work && work.readId === target.readId ? work : null;
    let intake = stored?.intake ?? null;
    if (!intake) {
      this.switching = name;
      const got = await this.readWith(src, target.samples);
      if (this.switching === name) this.switching = null;
      if (got.stale || this.currentAnalyte !== current || this.s.source !== src) return null;
      if (!got.intake) {
        this.rejectedChoice = { what: choiceText({ value: name }), error: got.error! };
        return got.error;
      }
      intake = got.intake;
    }
    // Park the analyte in use with its work (taken before the samples change: suggestions belong to them).
    const own = this.ownResults();
    const parked = { ...set.parked, [current]: analyteChoicesOf($state.snapshot(this.s) as SessionSnapshot) };
    delete parked[name];
    const parkedWork = { ...this.parkedWork };
    delete parkedWork[name];
    if (own) parkedWork[current] = own;
    else delete parkedWork[current];
    this.parkedWork = parkedWork;
    this.s.analytes = { chosen: [...set.chosen], parked };
    this.s.readId = stored ? target.readId : newReadId();
    this.s.samples = target.samples;
    this.s.structure = target.structure;
    this.s.surface = { ...target.surface, running: false };
    this.s.simulation = target.simulation;
    this.s.next = target.next;
    this.valueNote = null;
    this.rejectedChoice = null;
    this.surfaceInterrupted = false;
    this.dropResults();
    this.takeIntake(intake);
    const back = stored ? this.showResults(stored) : { fit: false, surface: false };
    if (this.s.structure.model) {
      if (this.s.surface.wanted && !back.surface) void this.computeSurface();
      if (!back.fit) void this.fit();
    }
    return null;
  }

  /**
   * After a reading choice changed: the analytes' list follows a new value column, and a changed CRS
   * or non-detect rule applies to every analyte, whose samples are then read again on switching.
   */
  private rereadAnalytes(before: string | undefined, choice: { value?: string; crs?: string | undefined; nonDetect?: 'half' | 'dl' | 'sqrt2' }): void {
    const set = this.s.analytes;
    if (!set) return;
    if ('value' in choice && choice.value !== undefined) {
      this.s.analytes = { chosen: set.chosen.map((c) => (c === before ? choice.value! : c)), parked: set.parked };
      return;
    }
    const parked: Record<string, AnalyteChoices> = {};
    for (const [name, c] of Object.entries(set.parked)) {
      parked[name] = { ...c, readId: '', samples: { ...c.samples, ...('crs' in choice ? { crs: choice.crs } : {}), ...('nonDetect' in choice ? { nonDetect: choice.nonDetect } : {}) } };
    }
    this.s.analytes = { chosen: set.chosen, parked };
    this.parkedWork = {};
  }

  /** Which column became the value when the file left the choice open (several numeric columns); null otherwise. */
  valueNote = $state<string | null>(null);

  /** A reading choice that the file could not be read with, and why; the samples in use are unchanged. Cleared by the next good reading. */
  rejectedChoice = $state.raw<{ what: string; error: ShownError } | null>(null);

  /**
   * Reads s.source again with the current choices (in a worker). On success the samples and every
   * result are replaced; when the file cannot be read with these choices the error is shown instead
   * of samples.
   */
  async readSource(): Promise<void> {
    const src = this.s.source;
    if (!src) {
      this.readRuns.cancel();
      this.intake = null;
      this.intakeError = null;
      this.places = null;
      this.selected = null;
      this.dropResults();
      return;
    }
    const got = await this.readWith(src, this.s.samples);
    if (got.stale) return;
    if (got.intake) this.takeNewReading(got.intake);
    else {
      this.failIntake(got.error);
      this.dropResults();
    }
  }

  /** Reads a file with reading choices in a worker; `stale` when a newer read started meanwhile. */
  private async readWith(file: SourceFile, c: SampleChoices): Promise<{ intake: IntakeResult | null; error: ShownError | null; stale: boolean }> {
    const run = this.readRuns.begin();
    this.reading = file.fileName;
    const options: IntakeOptions = { fileName: file.fileName, value: c.value, crs: c.crs, nonDetect: c.nonDetect };
    try {
      const intake = await engine.readSamplesFile(file.text, options, run.signal);
      // Showing the answer is a task of its own: with many rows, taking it in and showing it held the
      // page for over 100 ms together.
      await nextTask();
      if (!run.current()) return { intake: null, error: null, stale: true };
      return { intake, error: null, stale: false };
    } catch (e) {
      const error = showError(e);
      return run.current() && error.code !== 'cancelled' ? { intake: null, error, stale: false } : { intake: null, error: null, stale: true };
    } finally {
      if (run.current()) this.reading = null;
    }
  }

  /** Samples read anew: a new reading id, the results of the old reading dropped. */
  private takeNewReading(intake: IntakeResult): void {
    this.rejectedChoice = null;
    this.s.readId = newReadId();
    this.takeIntake(intake);
    this.dropResults();
  }

  /** Shows read samples (and places the boundary against their CRS). */
  private takeIntake(intake: IntakeResult): void {
    this.selected = null;
    this.intake = intake;
    this.intakeError = null;
    this.places = placesOf(intake);
    if (this.s.samples.transform === 'log' && !(intake.report.summary.min > 0)) this.s.samples.transform = 'none';
    this.samplesVersion++;
    this.readBoundary();
  }

  private failIntake(error: ShownError | null): void {
    this.selected = null;
    this.intake = null;
    this.places = null;
    this.intakeError = error;
    this.samplesVersion++;
    this.readBoundary();
  }

  /** Boundary polygons of a file in WGS 84 and in the working CRS of the samples read. */
  private polygonsOf(b: SourceFile): { lonLat: Polygon[]; work: Polygon[] } {
    // Local coordinates: the boundary is read in the samples' own x, y (lonLat then holds x, y too).
    const local = this.planar;
    const lonLat = readPolygons(b.text, b.fileName, local ? { planar: true } : undefined);
    const work = !this.intake ? [] : local ? lonLat : projectPolygons(lonLat, this.intake.report.crs.work);
    return { lonLat, work };
  }

  readBoundary(): void {
    const b = this.s.boundary;
    if (!b) {
      this.boundary = null;
      this.boundaryError = null;
      return;
    }
    try {
      this.boundary = this.polygonsOf(b);
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

  /**
   * Figures of what is on screen, for the browser tests to compare before and after a reload: sums
   * over the surface and realisation layers, the candidate table, the cross-validation summary, the
   * suggested sites and the panel choices. Computed from the state; nothing is recomputed.
   */
  digest(): Record<string, unknown> {
    const sum = (a: ArrayLike<number> | undefined): number | null => {
      if (!a) return null;
      let t = 0;
      for (let k = 0; k < a.length; k++) if (a[k] === a[k]) t += a[k];
      return t;
    };
    const sf = this.surface;
    const sim = this.simulation;
    const design = suggestions.current;
    return {
      readId: this.s.readId,
      analyte: this.currentAnalyte,
      analytes: this.analyteNames,
      parked: Object.keys(this.parkedWork),
      rasters: this.covariateRasters.map((r) => r.name),
      samples: this.intake ? { n: this.intake.samples.x.length, value: sum(this.intake.samples.value), x: sum(this.intake.samples.x) } : null,
      boundary: this.s.boundary?.fileName ?? null,
      candidates: this.candidates.map((c) => [c.key, c.aic, c.rmse, c.msse]),
      chosen: this.s.structure.chosen,
      model: this.s.structure.model ? { anisotropy: this.s.structure.model.anisotropy ?? null, structures: this.s.structure.model.structures.length } : null,
      cv: this.cv ? { ...this.cv.summary } : null,
      surface: sf ? {
        done: sf.done, cells: sf.result.cells, nx: sf.grid.nx, ny: sf.grid.ny, mean: sum(sf.result.mean), sd: sum(sf.result.sd),
        pExceed: sum(sf.result.pExceed), fromSimulation: sf.fromSimulation ?? null, stale: this.surfaceStale,
      } : null,
      simulation: sim ? {
        count: sim.result.count, seed: sim.seed, mean: sum(sim.result.mean), kept: sim.result.realisations?.length ?? 0,
        first: sum(sim.result.realisations?.[0]), area: sim.result.area?.area ?? null, stale: this.simulationStale,
      } : null,
      suggestions: design ? design.suggestions.map((p) => [p.rank, p.x, p.y]) : null,
      choices: {
        simulation: { ...this.s.simulation }, next: { ...this.s.next }, support: this.s.surface.support,
        blockPoints: this.s.surface.blockPoints, threshold: this.s.surface.threshold, layer: this.s.surface.layer,
        colours: this.s.surface.colours,
      },
    };
  }
}

/**
 * The model as a key: its canonical form (parseModel's field order), so the model in use and the
 * same model saved and read back give the same key.
 */
function modelKey(model: CovarianceModel | null): string {
  if (!model) return 'null';
  const plain = $state.snapshot(model) as CovarianceModel;
  try {
    return JSON.stringify(parseModel(plain));
  } catch {
    return JSON.stringify(plain);
  }
}

/** A reading choice as the user would name it ("value column \"Zn\"", "coordinate system EPSG:32632"). */
function choiceText(choice: { value?: string; crs?: string | undefined; nonDetect?: string }): string {
  if ('value' in choice) return `value column "${choice.value ?? ''}"`;
  if ('crs' in choice) return choice.crs ? `coordinate system ${choice.crs}` : 'coordinate system detected from the file';
  return 'non-detect rule';
}

/** A named point on the page's clock ("gapwise:" + name), for the browser tests to print. */
function mark(name: string): void {
  try {
    performance.mark(`gapwise:${name}`);
  } catch {
    // No user timing here (some test environments): nothing to mark.
  }
}

/** WGS 84 positions of the samples for the map (from the working CRS, as the surface is drawn). */
function placesOf(result: IntakeResult): SamplePlaces {
  const { samples, report } = result;
  const n = samples.x.length;
  if (report.crs.work === LOCAL_CRS || report.crs.input === LOCAL_CRS) {
    return { lon: Float64Array.from(samples.x), lat: Float64Array.from(samples.y), placed: true, planar: true };
  }
  const t = createTransform(report.crs.work, 'EPSG:4326');
  const { x, y } = t.forwardMany(samples.x, samples.y);
  return { lon: x, lat: y, placed: true, planar: false };
}
