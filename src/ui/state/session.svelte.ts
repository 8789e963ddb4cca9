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
import { emptySnapshot, type SessionSnapshot, type SourceFile, type StepId } from './snapshot.ts';
import { createAutosave, type Autosave } from './autosave.ts';

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

/** Sample positions for the map (WGS 84), aligned with intake.rows and intake.samples. */
export interface SamplePlaces {
  lon: Float64Array;
  lat: Float64Array;
  /** False when the CRS is unknown (local planar): the samples cannot be placed on the map. */
  placed: boolean;
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
    this.onSamplesChanged?.();
    this.savedAt = null;
  }

  // ---------------------------------------------------------------- steps

  open(step: StepId): void {
    this.s.step = step;
  }

  // ---------------------------------------------------------------- samples

  /** Hook for the later steps: results that depend on the samples are dropped when they change. */
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
      this.onSamplesChanged?.();
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
    this.onSamplesChanged?.();
  }

  readBoundary(): void {
    const b = this.s.boundary;
    if (!b) {
      this.boundary = null;
      this.boundaryError = null;
      return;
    }
    try {
      const lonLat = readPolygons(b.text, b.fileName);
      const work = this.intake && this.intake.report.crs.work !== LOCAL_CRS
        ? projectPolygons(lonLat, this.intake.report.crs.work)
        : [];
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
    this.onSamplesChanged?.();
  }
}

/** WGS 84 positions of the samples for the map (from the working CRS, as the surface is drawn). */
export function placesOf(result: IntakeResult): SamplePlaces {
  const { samples, report } = result;
  const n = samples.x.length;
  if (report.crs.work === LOCAL_CRS || report.crs.input === LOCAL_CRS) {
    return { lon: new Float64Array(n), lat: new Float64Array(n), placed: false };
  }
  const t = createTransform(report.crs.work, 'EPSG:4326');
  const { x, y } = t.forwardMany(samples.x, samples.y);
  return { lon: x, lat: y, placed: true };
}
