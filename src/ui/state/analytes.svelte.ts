/**
 * Several analytes from one file: the value columns chosen to map, the one in use, and the work of
 * the others parked (their reading, fit, surfaces, realisations, suggestions) so that switching back
 * shows it again without recomputing. Autosaved with the results.
 */
import { analyteChoicesOf, MAX_ANALYTES, newReadId, type AnalyteChoices, type SessionSnapshot } from './snapshot.ts';
import type { SavedResults } from './saved-results.ts';
import { choiceText, type ReadChoice } from './samples-step.svelte.ts';
import type { ShownError } from './shown-error.ts';
import type { Session } from './session.svelte.ts';

export class AnalytesState {
  /** The work of each chosen analyte not in use now, by value column. */
  parkedWork = $state.raw<Record<string, SavedResults>>({});
  /** True while switching to an analyte whose samples are being read. */
  switching = $state<string | null>(null);

  constructor(private readonly app: Session) {}

  /** The value columns that can be chosen as analytes: the file's numeric columns but the coordinates. */
  get options(): string[] {
    const r = this.app.samples.intake?.report;
    if (!r) return [];
    const options = r.numericColumns.filter((c) => c !== r.xColumn && c !== r.yColumn);
    return options.includes(r.valueColumn) ? options : [r.valueColumn, ...options];
  }

  /** The analytes chosen, in use first among them as listed; one (the value column) when none were chosen. */
  get names(): string[] {
    const set = this.app.s.analytes;
    if (set) return set.chosen;
    const v = this.app.s.samples.value ?? this.app.samples.intake?.report.valueColumn;
    return v ? [v] : [];
  }

  /** The analyte in use (the value column), or '' before a file is read. */
  get current(): string {
    return this.app.s.samples.value ?? this.app.samples.intake?.report.valueColumn ?? '';
  }

  /** The action level of each chosen analyte (its own), for the switch. */
  get thresholds(): Record<string, number | null> {
    const out: Record<string, number | null> = {};
    const s = this.app.s;
    for (const name of this.names) {
      out[name] = name === this.current ? s.surface.threshold : s.analytes?.parked[name]?.surface.threshold ?? null;
    }
    return out;
  }

  /**
   * Chooses the analytes (value columns) to map from this file; the one in use always stays. An
   * analyte added starts with no model and no action level; one removed loses its work.
   */
  setAnalytes(names: readonly string[]): void {
    const s = this.app.s;
    const current = this.current;
    if (!current || !s.source) return;
    const wanted = new Set([...names, current]);
    const chosen = this.options.filter((c) => wanted.has(c)).slice(0, MAX_ANALYTES);
    if (!chosen.includes(current)) chosen[chosen.length - 1] = current;
    if (chosen.length < 2) {
      delete s.analytes;
      this.parkedWork = {};
      return;
    }
    const before = s.analytes?.parked ?? {};
    const parked: Record<string, AnalyteChoices> = {};
    for (const name of chosen) if (name !== current) parked[name] = before[name] ?? this.freshAnalyte(name);
    s.samples.value = current;
    s.analytes = { chosen, parked };
    this.parkedWork = Object.fromEntries(Object.entries(this.parkedWork).filter(([name]) => name in parked));
  }

  /** Choices for an analyte added now: the file's reading choices, everything else at its start. */
  private freshAnalyte(name: string): AnalyteChoices {
    const c = analyteChoicesOf($state.snapshot(this.app.s) as SessionSnapshot);
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
   * Puts another chosen analyte in use: the one in use is parked with its work; the other's choices
   * and stored work come back as they were (nothing recomputed). An analyte not read yet (just
   * added, or from an opened project) is read first; when its samples cannot be used nothing changes.
   */
  async switchAnalyte(name: string): Promise<ShownError | null> {
    const app = this.app;
    const current = this.current;
    const set = app.s.analytes;
    const src = app.s.source;
    if (!set || !src || !current || name === current || !set.chosen.includes(name)) return null;
    const target = set.parked[name] ?? this.freshAnalyte(name);
    const work = this.parkedWork[name];
    const stored = target.readId && work && work.readId === target.readId ? work : null;
    let intake = stored?.intake ?? null;
    if (!intake) {
      this.switching = name;
      const got = await app.samples.readWith(src, target.samples);
      if (this.switching === name) this.switching = null;
      if (got.stale || this.current !== current || app.s.source !== src) return null;
      if (!got.intake) {
        app.samples.rejectedChoice = { what: choiceText({ value: name }), error: got.error! };
        return got.error;
      }
      intake = got.intake;
    }
    this.park(current, name);
    app.s.readId = stored ? target.readId : newReadId();
    app.s.samples = target.samples;
    app.s.structure = target.structure;
    app.s.surface = { ...target.surface, running: false };
    app.s.simulation = target.simulation;
    app.s.next = target.next;
    app.samples.valueNote = null;
    app.samples.rejectedChoice = null;
    app.surface.interrupted = false;
    app.dropResults();
    app.samples.takeIntake(intake);
    const back = stored ? app.saving.showResults(stored) : { fit: false, surface: false };
    app.resumeWork(back);
    return null;
  }

  /** Parks the analyte in use with its work (taken before the samples change: suggestions belong to them). */
  private park(current: string, next: string): void {
    const set = this.app.s.analytes!;
    const own = this.app.saving.ownResults();
    const parked = { ...set.parked, [current]: analyteChoicesOf($state.snapshot(this.app.s) as SessionSnapshot) };
    delete parked[next];
    const parkedWork = { ...this.parkedWork };
    delete parkedWork[next];
    if (own) parkedWork[current] = own;
    else delete parkedWork[current];
    this.parkedWork = parkedWork;
    this.app.s.analytes = { chosen: [...set.chosen], parked };
  }

  /**
   * After a reading choice changed: the analytes' list follows a new value column, and a changed CRS
   * or non-detect rule applies to every analyte, whose samples are then read again on switching.
   */
  rereadAnalytes(before: string | undefined, choice: ReadChoice): void {
    const s = this.app.s;
    const set = s.analytes;
    if (!set) return;
    if ('value' in choice && choice.value !== undefined) {
      s.analytes = { chosen: set.chosen.map((c) => (c === before ? choice.value! : c)), parked: set.parked };
      return;
    }
    const parked: Record<string, AnalyteChoices> = {};
    for (const [name, c] of Object.entries(set.parked)) {
      parked[name] = { ...c, readId: '', samples: { ...c.samples, ...('crs' in choice ? { crs: choice.crs } : {}), ...('nonDetect' in choice ? { nonDetect: choice.nonDetect } : {}) } };
    }
    s.analytes = { chosen: set.chosen, parked };
    this.parkedWork = {};
  }
}
