/**
 * Step 2, Structure: the empirical variograms of the samples on the modelling scale (residuals of
 * the covariate trend when covariates are chosen), the candidate models fitted and cross-validated in
 * workers, the model in use (chosen, edited, or kept from the richer fit) and its cross-validation,
 * which follows it. Engine work runs through LatestRequest: a newer request drops the older answer.
 */
import { GapwiseError } from '../../core/shared/errors.ts';
import type { Samples } from '../../core/shared/samples.ts';
import { parseModel, type CovarianceModel } from '../../core/covariance/model.ts';
import type { LeaveOneOutResult } from '../../core/validation/cross-validation.ts';
import {
  directionalVariograms, empiricalVariogram, variogramCloud, type EmpiricalVariogram, type VariogramCloud, type VariogramSet,
} from '../../core/fitting/variogram.ts';
import { chooseFitMethod } from '../../core/fitting/vecchia.ts';
import { MAX_EXACT_SAMPLES } from '../../core/shared/sizes.ts';
import { bestKey, withParts, type CandidateRow, type ModelParts } from './structure.ts';
import { RichFitState } from './rich-fit.svelte.ts';
import { LatestRequest } from './latest-request.ts';
import { attempt, idleTask, type Outcome, type ShownError, type TaskState } from './shown-error.ts';
import { residualSamples, samplesForModel } from './covariates.ts';
import * as engine from './engine.ts';
import type { Session } from './session.svelte.ts';

/** Samples from which fits use the nearest-neighbour likelihood and surfaces local neighbourhoods. */
export const MANY_SAMPLES = MAX_EXACT_SAMPLES;
/** From this many samples the variograms are computed in a worker (below, at once on this thread). */
export const ASYNC_VARIOGRAM_FROM = 3000;
/** Pairs drawn in the variogram cloud. */
const CLOUD_PAIRS = 6000;

/** The variograms a worker computed, for the settings `key`. */
export interface RemoteVariograms {
  key: string;
  set: VariogramSet | null;
  error: ShownError | null;
}

export class StructureState {
  /** Variograms from many samples (ASYNC_VARIOGRAM_FROM on), as the worker sent them. */
  variogramRemote = $state.raw<RemoteVariograms | null>(null);
  candidates = $state.raw<CandidateRow[]>([]);
  fitTask = $state<TaskState>(idleTask());
  /** How the candidates in the table were fitted. */
  fittedWith = $state.raw<{ likelihood: 'exact' | 'nnl'; n: number; automatic: boolean } | null>(null);
  /** What the candidates in the table were fitted for (see fitKey). */
  fittedFor = '';
  cv = $state.raw<LeaveOneOutResult | null>(null);
  cvError = $state.raw<ShownError | null>(null);
  /** The model the cross-validation figures belong to (see cvKey). */
  cvFor = '';
  /** The richer fit (direction-dependent range, or two ranges) of the candidate in use. */
  rich = new RichFitState();
  private variogramRuns = new LatestRequest();
  private fitRuns = new LatestRequest();
  private cvRuns = new LatestRequest();
  private cvTimer: ReturnType<typeof setTimeout> | null = null;

  constructor(private readonly app: Session) {}

  // ---------------------------------------------------------------- variograms

  /** True when the variogram views show least-squares residuals of the covariate trend. */
  get residualVariogram(): boolean {
    return !!this.app.samples.covariateSetup.value;
  }

  /**
   * Samples on the modelling scale (ln values for a log transform); with covariates chosen, the
   * least-squares residuals of those values on the covariates (what the variogram is computed from).
   */
  modelSamples = $derived.by((): Samples | null => {
    const intake = this.app.samples.intake;
    if (!intake) return null;
    const s = intake.samples;
    const cov = this.app.samples.covariateSetup.value;
    const log = this.app.s.samples.transform === 'log';
    if (cov) {
      const r = attempt(() => residualSamples(cov.samples, cov.trend, log));
      if (r.value) return r.value;
    }
    if (!log) return s;
    return { x: s.x, y: s.y, value: Float64Array.from(s.value, Math.log) };
  });

  /** What the variogram views are computed from (options as the structure step sets them). */
  variogramRequest = $derived.by(() => {
    const samples = this.modelSamples;
    if (!samples) return null;
    const s = this.app.s;
    const { lagWidth, maxLag, directional, cloud } = s.structure;
    const options = { lagWidth: lagWidth || undefined, maxLag: maxLag || undefined };
    return { samples, options, directional, cloud, key: `${s.readId}|${s.samples.transform}|${lagWidth}|${maxLag}|${directional}|${cloud}|${(s.samples.covariates ?? []).join('\u0000')}` };
  });

  /** True while the variograms of many samples are being computed in a worker. */
  get variogramPending(): boolean {
    const r = this.variogramRequest;
    return !!r && r.samples.x.length >= ASYNC_VARIOGRAM_FROM && this.variogramRemote?.key !== r.key;
  }

  /**
   * Starts the worker request for the current variogram settings (many samples only: about a second
   * per 10⁷ pairs would stall the page). Fewer samples are computed on this thread as they are read.
   */
  async refreshVariograms(): Promise<void> {
    const r = this.variogramRequest;
    if (!r || r.samples.x.length < ASYNC_VARIOGRAM_FROM || this.variogramRemote?.key === r.key) return;
    const answer = await this.variogramRuns.run((run) => engine.variograms(
      { samples: r.samples, options: r.options, directional: r.directional, cloudPairs: r.cloud ? CLOUD_PAIRS : undefined }, run.signal,
    ));
    if (answer.status === 'done') this.variogramRemote = { key: r.key, set: answer.value, error: null };
    else if (answer.status === 'error') this.variogramRemote = { key: r.key, set: null, error: answer.error };
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

  /** Unit of semivariances, nugget and sill: the data unit squared, or ln units for a log model. */
  get semivarianceUnit(): string {
    if (this.app.s.samples.transform === 'log') return '(ln units)²';
    const unit = this.app.samples.unit;
    return unit ? `(${unit})²` : '';
  }

  // ---------------------------------------------------------------- candidates

  /** What the candidate table is fitted for: the reading, the transform and the covariates. */
  get fitKey(): string {
    const s = this.app.s;
    return `${s.readId}|${s.samples.transform}|${(s.samples.covariates ?? []).join('\u0000')}`;
  }

  get best(): string {
    return bestKey(this.candidates);
  }

  /** 'auto' chooses by sample count (MANY_SAMPLES); 'exact' or 'nnl' overrides (saved). */
  get fitLikelihood(): 'auto' | 'exact' | 'nnl' {
    return this.app.s.structure.likelihood;
  }

  set fitLikelihood(v: 'auto' | 'exact' | 'nnl') {
    this.app.s.structure.likelihood = v;
  }

  /** The fitted candidates other than the chosen one, as curves to draw over the variogram. */
  get comparisonCurves(): Array<{ key: string; label: string; model: CovarianceModel }> {
    const chosen = this.app.s.structure.chosen;
    return this.candidates
      .filter((r) => r.model && r.key !== chosen)
      .map((r) => ({ key: r.key, label: r.label, model: r.model! }));
  }

  /** Fits every candidate model (in workers); keeps the user's choice and any edited model. */
  async fit(): Promise<void> {
    const intake = this.app.samples.intake;
    if (!intake) return;
    const fitKey = this.fitKey;
    const t0 = performance.now();
    this.fitTask = { ...idleTask(), status: 'running', total: 7 };
    const n = intake.samples.x.length;
    const likelihood = chooseFitMethod(n, this.fitLikelihood === 'auto' ? undefined : this.fitLikelihood);
    const answer = await this.fitRuns.run((run) => {
      const cov = this.app.samples.covariateSetup;
      if (cov.error) throw new GapwiseError(cov.error.code as never, cov.error.message);
      return engine.fitCandidateRows(
        {
          samples: cov.value?.samples ?? intake.samples, method: this.app.s.structure.method, transform: this.app.s.samples.transform, likelihood,
          ...(cov.value ? { trend: cov.value.trend } : {}),
        },
        (done, total, what) => { if (run.current()) this.fitTask = { ...this.fitTask, done, total, what: what ?? '' }; },
        run.signal,
      );
    });
    if (answer.status === 'stale') return;
    const ms = performance.now() - t0;
    if (answer.status !== 'done') {
      this.fitTask = { ...this.fitTask, status: answer.status, error: answer.error, ms };
      return;
    }
    const rows = answer.value;
    this.candidates = rows;
    this.fittedFor = fitKey;
    this.fittedWith = { likelihood, n, automatic: this.fitLikelihood === 'auto' };
    this.keepChoice(rows);
    this.fitTask = { ...this.fitTask, status: 'done', done: rows.length, ms };
  }

  /**
   * After a fit: the candidate chosen before stays chosen (its refitted model in use unless the model
   * was edited by hand); with none, the best one is chosen.
   */
  private keepChoice(rows: CandidateRow[]): void {
    const st = this.app.s.structure;
    const kept = rows.find((r) => r.key === st.chosen && r.model);
    if (kept) {
      if (!st.model || st.model.fit?.method !== 'manual') st.model = kept.model;
      return;
    }
    const best = rows.find((r) => r.key === bestKey(rows));
    st.chosen = best?.key ?? '';
    if (!st.model || st.model.fit?.method !== 'manual' || !best) st.model = best?.model ?? null;
  }

  cancelFit(): void {
    this.fitRuns.cancel();
    this.fitTask = { ...this.fitTask, status: 'cancelled' };
  }

  /** Drops the candidate table (it was fitted for other samples or covariates). */
  dropCandidates(): void {
    this.candidates = [];
    this.fittedFor = '';
  }

  // ---------------------------------------------------------------- the model in use

  /** What the richer fit is for: the reading and the transform. */
  get richKey(): string {
    return this.fitKey;
  }

  /** Runs the richer fit the user chose; its kept model becomes the model in use. */
  fitRich(): Promise<void> {
    const s = this.app.s;
    const row = this.candidates.find((r) => r.key === s.structure.chosen);
    return this.rich.run({
      samples: this.app.samples.intake?.samples ?? null, transform: s.samples.transform, chosen: s.structure.chosen,
      chosenModel: row?.model ?? null, key: this.fitKey,
    }, (model) => this.useModel(model));
  }

  /** Puts a fitted model (from the richer fit's comparison) in use; the candidate choice stays. */
  useModel(model: CovarianceModel): void {
    this.app.s.structure.model = model;
  }

  /** The user picks a candidate: it becomes the model in use (any edit is dropped). */
  choose(key: string): void {
    const row = this.candidates.find((r) => r.key === key);
    if (!row?.model) return;
    this.app.s.structure.chosen = key;
    this.app.s.structure.model = row.model;
  }

  /** Edits nugget, sill or scale of the model in use. */
  editModel(change: Partial<Pick<ModelParts, 'nugget' | 'sill' | 'scale'>>): void {
    const m = this.app.s.structure.model;
    if (!m) return;
    this.app.s.structure.model = withParts($state.snapshot(m) as CovarianceModel, change);
  }

  /** Puts back the fitted version of the chosen candidate. */
  resetModel(): void {
    this.choose(this.app.s.structure.chosen);
  }

  /** The samples the model in use is cross-validated and mapped with (its covariates encoded). */
  samplesFor(model: CovarianceModel | null): Samples {
    return samplesForModel(this.app.samples.intake!, model ? ($state.snapshot(model) as CovarianceModel) : null);
  }

  // ---------------------------------------------------------------- cross-validation

  /** What the cross-validation of the model in use is computed from. */
  get cvKey(): string {
    return JSON.stringify([this.app.s.readId, modelKey(this.app.s.structure.model)]);
  }

  /** The sample values on the scale the cross-validation worked on (ln values for a log model). */
  get cvObserved(): Float64Array {
    const values = this.app.samples.intake?.samples.value;
    if (!values) return new Float64Array(0);
    return this.cv?.scale === 'log' ? Float64Array.from(values, Math.log) : values;
  }

  /** Cross-validates the model in use, shortly after it last changed. */
  scheduleCv(): void {
    if (this.cvTimer !== null) clearTimeout(this.cvTimer);
    this.cvTimer = setTimeout(() => void this.runCv(), 150);
  }

  /** Cross-validates the model in use now (figures already shown for this very model are kept). */
  async runCv(): Promise<void> {
    const model = this.app.s.structure.model;
    const intake = this.app.samples.intake;
    if (!model || !intake) {
      this.cvRuns.cancel();
      this.cv = null;
      this.cvFor = '';
      return;
    }
    const key = this.cvKey;
    // Figures for this very model are on screen already (e.g. brought back after a reload).
    if (this.cv && this.cvFor === key) return;
    const answer = await this.cvRuns.run((run) => engine.crossValidate(this.samplesFor(model), $state.snapshot(model) as CovarianceModel, run.signal));
    if (answer.status === 'done') {
      this.cv = answer.value;
      this.cvFor = key;
      this.cvError = null;
    } else if (answer.status === 'error') {
      this.cv = null;
      this.cvError = answer.error;
    }
  }

  /** Drops every result of this step (the samples changed). */
  drop(): void {
    this.rich.reset();
    this.fitRuns.cancel();
    this.dropCandidates();
    this.fitTask = idleTask();
    this.cvRuns.cancel();
    this.cv = null;
    this.cvFor = '';
    this.cvError = null;
  }
}

/**
 * The model as a key: its canonical form (parseModel's field order), so the model in use and the
 * same model saved and read back give the same key.
 */
export function modelKey(model: CovarianceModel | null): string {
  if (!model) return 'null';
  const plain = $state.snapshot(model) as CovarianceModel;
  try {
    return JSON.stringify(parseModel(plain));
  } catch {
    return JSON.stringify(plain);
  }
}
