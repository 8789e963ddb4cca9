/**
 * Step 5, Report: each chosen analyte's work as the report and the project file take it, and an
 * opened project put back into the session (its samples read and checked first; then its suggested
 * sites, the surface and table computed again as after a reload, and its realisations drawn again
 * with the saved seed when the project holds their area).
 */
import type { OpenedProject } from '../../io/project.ts';
import type { LeaveOneOutResult } from '../../core/validation/cross-validation.ts';
import type { DesignResult } from '../../core/design/design.ts';
import type { LocalAccuracy } from '../../core/prediction/local-accuracy.ts';
import type { SessionSnapshot } from './snapshot.ts';
import type { CandidateRow } from './structure.ts';
import type { SurfaceView } from './surface-step.svelte.ts';
import type { SimulationView } from './realisations.svelte.ts';
import type { ShownError } from './shown-error.ts';
import { modelKey } from './structure-step.svelte.ts';
import { designFromProject } from './suggestions.svelte.ts';
import { snapshotFromProject } from '../components/report/session-project.ts';
import type { Session } from './session.svelte.ts';

/** One analyte's work as the report and the project file take it (see ReportState.analyteWork). */
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

/** How opening a project went: the error that kept it out, and a note to show beside it. */
export interface OpenOutcome {
  error: string | null;
  note: string | null;
}

export class ReportState {
  constructor(private readonly app: Session) {}

  /**
   * Each chosen analyte's work for the report and the project file, in the order chosen: the one in
   * use as on screen, the others as parked. A surface comes only finished and current (for a parked
   * analyte: from all samples, or from local neighbourhoods with the measured error kept beside it),
   * realisations only when drawn on that surface, cross-validation only for the model in use.
   */
  analyteWork(): AnalyteWork[] {
    const snap = $state.snapshot(this.app.s) as SessionSnapshot;
    const current = this.app.analytes.current;
    const out: AnalyteWork[] = [];
    for (const name of this.app.analytes.names) {
      const work = name === current ? this.currentWork(name, snap) : this.parkedWork(name, snap);
      if (work) out.push(work);
    }
    return out;
  }

  /** The work of the analyte in use, as on screen. */
  private currentWork(name: string, snap: SessionSnapshot): AnalyteWork {
    const { structure, surface: step, realisations, design } = this.app;
    const surface = step.exportSurface;
    const accuracy = step.accuracy;
    const sites = design.current;
    return {
      name, current: true, snapshot: snap, candidates: structure.candidates,
      surface: surface?.done && !step.stale ? surface : null,
      accuracy: surface && accuracy?.key === surface.key ? accuracy.accuracy : null,
      cv: structure.cv && structure.cvFor === structure.cvKey ? structure.cv : null,
      simulation: realisations.simulation && !realisations.stale ? realisations.simulation : null,
      suggestions: sites ? { result: sites, options: design.options } : null,
    };
  }

  /** The work of a parked analyte, as stored when it was parked. */
  private parkedWork(name: string, snap: SessionSnapshot): AnalyteWork | null {
    const c = snap.analytes?.parked[name];
    if (!c) return null;
    const snapshot: SessionSnapshot = { ...snap, readId: c.readId, samples: c.samples, structure: c.structure, surface: c.surface, simulation: c.simulation, next: c.next };
    const stored = this.app.analytes.parkedWork[name];
    const work = c.readId && stored?.readId === c.readId ? stored : null;
    // A surface from local neighbourhoods goes with its measured error (kept with the surface).
    const surface = work?.surface && (work.surface.local === null || work.surface.accuracy) ? work.surface : null;
    return {
      name, current: false, snapshot, candidates: work?.fit?.rows ?? [], surface, accuracy: surface?.accuracy ?? null,
      cv: work?.cv && work.cv.key === JSON.stringify([c.readId, modelKey(c.structure.model)]) ? work.cv.result : null,
      simulation: work?.simulation && surface && work.simulation.base === surface.key ? work.simulation : null,
      suggestions: work?.suggestions ?? null,
    };
  }

  /**
   * Puts a whole saved state in place (an opened project): its samples are read first, and only when
   * they can be used does it replace the session (every result dropped; the surface and the table are
   * computed again when the state has a model). Resolves with the error, or null.
   */
  async openSnapshot(next: SessionSnapshot): Promise<ShownError | null> {
    const app = this.app;
    if (!next.source) return null;
    const got = await app.samples.readWith(next.source, next.samples);
    if (got.stale) return null;
    if (!got.intake) {
      app.samples.rejectedSource = { fileName: next.source.fileName, error: got.error! };
      return got.error;
    }
    app.s = next;
    // The other analytes of an opened project are read when they are switched to.
    app.analytes.parkedWork = {};
    app.samples.rejectedSource = null;
    app.samples.takeNewReading(got.intake);
    app.resumeWork({ fit: false, surface: false });
    return null;
  }

  /**
   * An opened project replaces the work only when its samples read: then its suggested sites come
   * back as saved, and its realisations are drawn again with the saved seed and grid (the file holds
   * their settings and area, not the fields), which gives the same figures.
   */
  async openProject(opened: OpenedProject): Promise<OpenOutcome> {
    const app = this.app;
    const p = opened.project;
    const error = await this.openSnapshot(snapshotFromProject(p, $state.snapshot(app.s) as SessionSnapshot));
    if (error) return { error: `The project was not opened; its samples could not be used: ${error.message} The work in use is unchanged.`, note: null };
    app.design.set(designFromProject(p.suggestions, p.suggestOptions, p.threshold), p.suggestOptions ?? null);
    const missing = (p.covariateRasters ?? []).filter((r) => !app.rasters.covariateRasters.some((c) => c.name === r.covariate));
    const note = missing.length === 0 ? null
      : `The project names covariate raster${missing.length > 1 ? 's' : ''} it does not hold: ${missing.map((r) => `${r.fileName} for ${r.covariate}`).join(', ')}. Load ${missing.length > 1 ? 'them' : 'it'} again in step 3 (Surface) to compute the surface.`;
    if (p.simulation?.summary && app.samples.intake && app.s.structure.model) void app.realisations.simulate();
    return { error: null, note };
  }
}
