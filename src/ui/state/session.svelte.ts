/**
 * The app's state: the saved choices (`s`, a SessionSnapshot, autosaved on every change) and one
 * state per step, each holding what that step computes from them and how:
 *   samples       ./samples-step.svelte.ts   the file read and checked, reading choices, boundary
 *   structure     ./structure-step.svelte.ts variograms, candidate fits, the model in use, cross-validation
 *   surface       ./surface-step.svelte.ts   grid plan and the kriged surface
 *   rasters       ./covariate-rasters.svelte.ts  covariate rasters for a model with covariates
 *   realisations  ./realisations.svelte.ts   conditional realisations and their summaries
 *   design        ./design-step.svelte.ts    the next sample sites
 *   report        ./report-step.svelte.ts    each analyte's work for the report; opening a project
 *   analytes      ./analytes.svelte.ts       several analytes from one file
 *   saving        ./saving.svelte.ts         autosave and the way back after a reload
 * Engine work of every step goes through ./latest-request.ts (a newer request drops the older
 * answer; errors as data). The numerics run in src/core and, when heavy, in workers (./engine.ts).
 */
import { untrack } from 'svelte';
import { emptySnapshot, type SessionSnapshot, type StepId } from './snapshot.ts';
import type { Autosave } from './autosave.ts';
import { provideTestHook } from './test-hook.ts';
import * as engine from './engine.ts';
import { SamplesState } from './samples-step.svelte.ts';
import { StructureState } from './structure-step.svelte.ts';
import { SurfaceState } from './surface-step.svelte.ts';
import { RastersState } from './covariate-rasters.svelte.ts';
import { RealisationsState } from './realisations.svelte.ts';
import { DesignState, type DesignRunner } from './design-step.svelte.ts';
import { ReportState } from './report-step.svelte.ts';
import { AnalytesState } from './analytes.svelte.ts';
import { SavingState, type ResultsBack } from './saving.svelte.ts';
import { sessionDigest } from './digest.ts';

export { showError, type ShownError, type Outcome, type TaskState } from './shown-error.ts';
export { MANY_SAMPLES, ASYNC_VARIOGRAM_FROM } from './structure-step.svelte.ts';
export { placesOf, type SamplePlaces } from './samples-step.svelte.ts';
export type { SurfaceView } from './surface-step.svelte.ts';
export type { SimulationView } from './realisations.svelte.ts';
export type { AnalyteWork } from './report-step.svelte.ts';

export interface SessionOptions {
  /** Where the session is saved (default IndexedDB). */
  autosave?: Autosave;
  /** Runs a design request (default an engine worker). */
  design?: DesignRunner;
}

export class Session {
  /** Everything saved: the file text, choices, model, grid settings. */
  s = $state<SessionSnapshot>(emptySnapshot());
  /** False until the saved session has been read back. */
  ready = $state(false);

  readonly samples: SamplesState;
  readonly structure: StructureState;
  readonly surface: SurfaceState;
  readonly rasters: RastersState;
  readonly realisations: RealisationsState;
  readonly design: DesignState;
  readonly report: ReportState;
  readonly analytes: AnalytesState;
  readonly saving: SavingState;

  constructor(options: SessionOptions | Autosave = {}) {
    const o: SessionOptions = 'schedule' in options ? { autosave: options } : options;
    this.samples = new SamplesState(this);
    this.structure = new StructureState(this);
    this.surface = new SurfaceState(this);
    this.rasters = new RastersState(this);
    this.realisations = new RealisationsState(this);
    this.design = new DesignState(this, o.design);
    this.report = new ReportState(this);
    this.analytes = new AnalytesState(this);
    this.saving = new SavingState(this, o.autosave);
    provideTestHook({
      engineRequests: () => ({ ...engine.requestCounts() }),
      sessionDigest: () => this.digest(),
    });
  }

  open(step: StepId): void {
    this.s.step = step;
  }

  /** Drops every result computed from the samples (they changed). */
  dropResults(): void {
    this.structure.drop();
    this.realisations.drop();
    this.surface.drop();
  }

  /**
   * After a reload, an analyte switch or an opened project: with a model in use, the surface is
   * computed again when it was wanted and did not come back, and the comparison table is fitted again
   * when it did not (the chosen, possibly edited, model is kept).
   */
  resumeWork(back: ResultsBack): void {
    if (!this.s.structure.model) return;
    if (this.s.surface.wanted && !back.surface && !this.surface.interrupted) void this.surface.computeSurface();
    if (!back.fit) void this.structure.fit();
  }

  /** Starts autosaving and the work that follows the choices; call once from the root component (inside an effect root). */
  watch(): void {
    this.saving.watch();
    // Variograms of many samples follow their settings in a worker.
    $effect(() => {
      void this.structure.variogramRequest;
      untrack(() => void this.structure.refreshVariograms());
    });
    // Cross-validation follows the model in use.
    $effect(() => {
      void $state.snapshot(this.s.structure.model);
      void this.samples.intake;
      this.structure.scheduleCv();
    });
  }

  /** Reads the saved session back (see SavingState.restore). */
  restore(): Promise<boolean> {
    return this.saving.restore();
  }

  /** Writes any pending save now (e.g. before the page is hidden). */
  flush(): Promise<void> {
    return this.saving.flush();
  }

  /** Clears the saved session and every result. */
  async startOver(): Promise<void> {
    await this.saving.clear();
    this.samples.clear();
    this.s = emptySnapshot();
    this.dropResults();
    this.analytes.parkedWork = {};
    this.rasters.clearRasters();
    this.design.clear();
  }

  /**
   * Figures of what is on screen, for the browser tests to compare before and after a reload
   * (./digest.ts). Computed from the state; nothing is recomputed.
   */
  digest(): Record<string, unknown> {
    return sessionDigest(this);
  }
}
