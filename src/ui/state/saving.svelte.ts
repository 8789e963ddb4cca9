/**
 * Autosave of the session: the saved choices (`s`) on every change, the computed results beside them
 * (./saved-results.ts) and the covariate raster files; and the way back after a reload, which shows
 * the stored results and computes only what is wanted and was not stored (Session.resumeWork).
 */
import { untrack } from 'svelte';
import type { IntakeResult } from '../../io/types.ts';
import { newReadId, type SessionSnapshot } from './snapshot.ts';
import { createAutosave, type Autosave } from './autosave.ts';
import { RESULTS_VERSION, type SavedResults } from './saved-results.ts';
import { idleTask } from './shown-error.ts';
import type { Session } from './session.svelte.ts';

/** Which stored results came back (so only the rest is computed again). */
export interface ResultsBack {
  fit: boolean;
  surface: boolean;
}

export class SavingState {
  savedAt = $state<number | null>(null);
  saveError = $state<string | null>(null);
  readonly autosave: Autosave;

  constructor(private readonly app: Session, autosave?: Autosave) {
    this.autosave = autosave ?? createAutosave({
      onSaved: () => { this.savedAt = Date.now(); this.saveError = null; },
      onError: (e) => { this.saveError = `Autosave failed: ${(e as Error)?.message ?? String(e)}`; },
    });
  }

  /** Starts autosaving; call once from the root component (inside an effect root). */
  watch(): void {
    const app = this.app;
    $effect(() => {
      const snap = $state.snapshot(app.s) as SessionSnapshot;
      // Nothing to keep before a file is read (and after "Start over", which cleared the store).
      if (app.ready && snap.source) this.autosave.schedule(snap);
    });
    // The computed results follow, stored beside the choices.
    $effect(() => {
      const record = this.resultsRecord();
      // null deletes the stored results (samples that no longer read); nothing to do with no file at all.
      if (app.ready && (record || app.s.source)) untrack(() => this.autosave.scheduleResults(record));
    });
    // The covariate raster files follow, beside them.
    $effect(() => {
      const files = app.rasters.rasterFiles;
      if (app.ready) untrack(() => this.autosave.scheduleRasters(files));
    });
  }

  /**
   * The results to store with the current reading, or null when there is none (which deletes the
   * stored ones). A surface still arriving is left out: the last finished one is what a reload shows.
   */
  resultsRecord(): SavedResults | null {
    const own = this.ownResults();
    const parked = this.app.analytes.parkedWork;
    return own && Object.keys(parked).length > 0 ? { ...own, parked } : own;
  }

  /** The results of the analyte in use (the whole record with one analyte). */
  ownResults(): SavedResults | null {
    const { s, samples, structure, surface, realisations, design } = this.app;
    const intake = samples.intake;
    const readId = s.readId;
    if (!intake || !readId || !s.source) return null;
    const v = structure.variogramRemote;
    const sites = design.current;
    return {
      version: RESULTS_VERSION,
      readId,
      intake,
      variograms: v?.set ? { key: v.key, set: v.set } : null,
      fit: structure.candidates.length && structure.fittedFor
        ? { key: structure.fittedFor, rows: structure.candidates, fittedWith: structure.fittedWith, ms: structure.fitTask.ms }
        : null,
      cv: structure.cv && structure.cvFor ? { key: structure.cvFor, result: structure.cv } : null,
      surface: surface.shown?.done ? surface.shown : null,
      // A $state object is a proxy, which IndexedDB cannot clone: store a plain copy.
      rate: surface.rate ? $state.snapshot(surface.rate) : null,
      simulation: realisations.simulation,
      simRate: realisations.rate,
      suggestions: sites ? { result: sites, options: design.options } : null,
    };
  }

  /**
   * Reads the saved session back and shows the results stored with it, computing only what is
   * wanted and was not stored (or did not pass the checks on load). Resolves true when there was a
   * saved session.
   */
  async restore(): Promise<boolean> {
    const app = this.app;
    // Marks on the page's clock (performance.mark) say where a reload spends its time; the browser
    // test prints them.
    mark('restore-start');
    // The raster files are asked for at once too (one more read that overlaps the others).
    const rasters = this.autosave.loadRasters();
    const saved = await this.autosave.load();
    mark('snapshot-read');
    const results = saved?.source ? await this.loadResults(saved) : null;
    if (saved) {
      // A surface still arriving when the page closed was not stored: say so rather than start it again unasked.
      const interrupted = saved.surface.running;
      saved.surface.running = false;
      app.s = saved;
      app.surface.interrupted = interrupted;
      await this.takeSavedSamples(saved, results?.intake ?? null);
    }
    app.analytes.parkedWork = results?.parked ?? {};
    if (saved && app.samples.intake) await app.rasters.restoreRasters(await rasters);
    app.ready = true;
    if (saved && app.samples.intake) {
      const back = results ? this.showResults(results) : { fit: false, surface: false };
      mark('results-shown');
      app.resumeWork(back);
    }
    return saved !== null;
  }

  /** The results stored with a saved session (its analyte in use and the parked ones). */
  private async loadResults(saved: SessionSnapshot): Promise<SavedResults | null> {
    if (!saved.readId) saved.readId = newReadId();
    const parked = saved.analytes
      ? Object.fromEntries(Object.entries(saved.analytes.parked).filter(([, c]) => c.readId).map(([name, c]) => [name, c.readId]))
      : undefined;
    const results = await this.autosave.loadResults({ readId: saved.readId, fileName: saved.source!.fileName, parked });
    mark('results-read');
    return results;
  }

  /** The saved samples: as stored with the results, or read again from the saved file. */
  private async takeSavedSamples(saved: SessionSnapshot, intake: IntakeResult | null): Promise<void> {
    const samples = this.app.samples;
    if (intake) {
      samples.takeIntake(intake);
    } else if (saved.source) {
      const got = await samples.readWith(saved.source, this.app.s.samples);
      if (got.intake) samples.takeIntake(got.intake);
      else samples.failIntake(got.error);
    }
  }

  /** Puts stored results on screen (the intake is already taken); says which parts came back. */
  showResults(r: SavedResults): ResultsBack {
    const { structure, surface, realisations, design } = this.app;
    if (r.variograms) structure.variogramRemote = { key: r.variograms.key, set: r.variograms.set, error: null };
    const fit = !!r.fit && r.fit.key === structure.fitKey;
    if (fit && r.fit) {
      structure.candidates = r.fit.rows;
      structure.fittedWith = r.fit.fittedWith;
      structure.fittedFor = r.fit.key;
      structure.fitTask = { ...idleTask(), status: 'done', done: r.fit.rows.length, total: r.fit.rows.length, ms: r.fit.ms };
    }
    if (r.cv && r.cv.key === structure.cvKey) {
      structure.cv = r.cv.result;
      structure.cvFor = r.cv.key;
    }
    if (r.rate !== null) surface.rate = r.rate;
    if (r.simRate !== null) realisations.rate = r.simRate;
    // Surfaces and realisations come back as they were on screen, stale or not (the views say so).
    const shown = r.surface;
    if (shown) {
      surface.shown = { ...shown, bands: 1 };
      surface.task = { ...idleTask(), status: 'done', done: shown.result.cells, total: shown.result.cells, ms: shown.ms ?? 0 };
    }
    if (r.simulation) {
      realisations.simulation = r.simulation;
      realisations.task = { ...idleTask(), status: 'done', done: r.simulation.result.count, total: r.simulation.result.count, what: 'realisations', ms: r.simulation.ms };
    }
    if (r.suggestions) design.set(r.suggestions.result, r.suggestions.options);
    return { fit, surface: !!shown };
  }

  /** Writes any pending save now (e.g. before the page is hidden). */
  flush(): Promise<void> {
    return this.autosave.flush();
  }

  /** Clears the stored session and every stored result. */
  async clear(): Promise<void> {
    await this.autosave.clear();
    this.savedAt = null;
  }
}

/** A named point on the page's clock ("gapwise:" + name), for the browser tests to print. */
function mark(name: string): void {
  try {
    performance.mark(`gapwise:${name}`);
  } catch {
    // No user timing here (some test environments): nothing to mark.
  }
}
