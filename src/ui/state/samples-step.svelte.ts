/**
 * Step 1, Samples: the samples file read (in a worker) and checked before it replaces anything, the
 * reading choices (value column, CRS, non-detect rule, transform, covariates), the boundary and the
 * sample positions for the map. A file or a choice that fails leaves the work in use as it was and is
 * named beside it (`rejectedSource`, `rejectedChoice`, `rejectedBoundary`).
 */
import type { IntakeOptions, IntakeResult } from '../../io/types.ts';
import { readPolygons, projectPolygons, type Polygon } from '../../io/boundary.ts';
import { createTransform, LOCAL_CRS } from '../../io/crs.ts';
import type { Samples } from '../../core/shared/samples.ts';
import type { CovariateTrend } from '../../core/covariance/model.ts';
import { newReadId, type SampleChoices, type SourceFile } from './snapshot.ts';
import { LatestRequest } from './latest-request.ts';
import { nextTask } from './next-task.ts';
import { attempt, showError, type Outcome, type ShownError } from './shown-error.ts';
import { covariateCandidates, withChosenCovariates } from './covariates.ts';
import * as engine from './engine.ts';
import type { Session } from './session.svelte.ts';

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

/** A reading choice as the set-choice call takes it. */
export type ReadChoice = { value?: string; crs?: string | undefined; nonDetect?: 'half' | 'dl' | 'sqrt2' };

/** A file read with reading choices: the samples, or why not; `stale` when a newer read started meanwhile. */
export interface Reading {
  intake: IntakeResult | null;
  error: ShownError | null;
  stale: boolean;
}

export class SamplesState {
  /** The samples as read from s.source with s.samples; null before a file is read. */
  intake = $state.raw<IntakeResult | null>(null);
  intakeError = $state.raw<ShownError | null>(null);
  places = $state.raw<SamplePlaces | null>(null);
  /** Boundary polygons in WGS 84 and in the working CRS. */
  boundary = $state.raw<{ lonLat: Polygon[]; work: Polygon[] } | null>(null);
  boundaryError = $state.raw<ShownError | null>(null);
  /** Index (into intake.table and intake.samples) of the sample shown in the sample panel. */
  selected = $state<number | null>(null);
  /** Bumped whenever new samples are read, so the map refits its view. */
  samplesVersion = $state(0);
  /** The name of a file being read (in a worker), or null. */
  reading = $state<string | null>(null);
  /** A samples file that was refused, with why; the samples in use are unchanged. Cleared by the next success. */
  rejectedSource = $state.raw<{ fileName: string; error: ShownError } | null>(null);
  /** A boundary file that was refused, with why; the boundary in use is unchanged. */
  rejectedBoundary = $state.raw<{ fileName: string; error: ShownError } | null>(null);
  /** A reading choice that the file could not be read with, and why; the samples in use are unchanged. Cleared by the next good reading. */
  rejectedChoice = $state.raw<{ what: string; error: ShownError } | null>(null);
  /** Which column became the value when the file left the choice open (several numeric columns); null otherwise. */
  valueNote = $state<string | null>(null);
  private reads = new LatestRequest();

  constructor(private readonly app: Session) {}

  // ---------------------------------------------------------------- facts of the samples read

  get unit(): string {
    return this.app.s.samples.unit || this.intake?.report.unit || '';
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
    return !this.planar || this.app.s.samples.localMetres === true;
  }

  /** The length unit to print beside distances: "m", or "coordinate units" for local coordinates. */
  get lengthUnit(): string {
    return this.metres ? 'm' : 'coordinate units';
  }

  /** The area unit: "m²", or "square coordinate units". */
  get areaUnit(): string {
    return this.metres ? 'm²' : 'square coordinate units';
  }

  get invented(): boolean {
    return this.app.s.source?.invented === true;
  }

  // ---------------------------------------------------------------- covariates

  /** Covariate columns chosen (saved); none = constant mean. */
  get covariateNames(): string[] {
    return this.app.s.samples.covariates ?? [];
  }

  /** Chooses the covariate columns: the candidate table (fitted for other covariates) is dropped. */
  setCovariates(names: string[]): void {
    const next = [...new Set(names)];
    if (next.join('\u0000') === this.covariateNames.join('\u0000')) return;
    if (next.length > 0) this.app.s.samples.covariates = next;
    else delete this.app.s.samples.covariates;
    this.app.structure.dropCandidates();
  }

  /**
   * The samples (data units) with the encoded columns of the chosen covariates and the trend with its
   * levels recorded; value null with no covariate chosen, error for a column that cannot serve.
   */
  covariateSetup = $derived.by((): Outcome<{ samples: Samples; trend: CovariateTrend }> => {
    const intake = this.intake;
    // A column that became the value (or a coordinate) since it was chosen is no covariate.
    const names = intake ? (this.app.s.samples.covariates ?? []).filter((c) => covariateCandidates(intake).includes(c)) : [];
    if (!intake || names.length === 0) return { value: null, error: null };
    return attempt(() => withChosenCovariates(intake, names)!);
  });

  // ---------------------------------------------------------------- reading files

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
    const s = this.app.s;
    s.source = file;
    s.samples = samples;
    delete s.analytes;
    this.app.analytes.parkedWork = {};
    s.structure.model = null;
    s.structure.chosen = '';
    s.structure.lagWidth = 0;
    s.structure.maxLag = 0;
    s.surface.wanted = false;
    s.surface.cellSize = 0;
    s.surface.threshold = null;
    s.surface.sdLimit = null;
    this.rejectedSource = null;
    this.takeNewReading(got.intake);
    this.valueNote = valueNote;
    return null;
  }

  /**
   * Changes one reading choice (value column, CRS, non-detect rule) and reads the file again. The
   * choice is taken only when the file reads with it: a choice the file cannot be read with (e.g. a
   * value column with no usable row) leaves the samples, the choices and every result as they were,
   * and is named in `rejectedChoice` beside them.
   */
  async setReadChoice(choice: ReadChoice): Promise<void> {
    const s = this.app.s;
    if (choice.value !== undefined) this.valueNote = null;
    const src = s.source;
    if (!src) return;
    // Another chosen analyte as value: switch to it, its work kept.
    if (choice.value !== undefined && s.analytes?.chosen.includes(choice.value)) {
      await this.app.analytes.switchAnalyte(choice.value);
      return;
    }
    const before = s.samples.value ?? this.intake?.report.valueColumn;
    const next = { ...($state.snapshot(s.samples) as SampleChoices) };
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
        s.samples = next;
        this.failIntake(got.error);
      }
      return;
    }
    this.rejectedChoice = null;
    s.samples = next;
    if ('value' in choice) {
      s.structure.model = null;
      s.structure.chosen = '';
      s.surface.threshold = null;
    }
    this.app.analytes.rereadAnalytes(before, choice);
    this.takeNewReading(got.intake);
  }

  /**
   * Reads s.source again with the current choices (in a worker). On success the samples and every
   * result are replaced; when the file cannot be read with these choices the error is shown instead
   * of samples.
   */
  async readSource(): Promise<void> {
    const src = this.app.s.source;
    if (!src) {
      this.reads.cancel();
      this.intake = null;
      this.intakeError = null;
      this.places = null;
      this.selected = null;
      this.app.dropResults();
      return;
    }
    const got = await this.readWith(src, this.app.s.samples);
    if (got.stale) return;
    if (got.intake) this.takeNewReading(got.intake);
    else {
      this.failIntake(got.error);
      this.app.dropResults();
    }
  }

  /** Reads a file with reading choices in a worker; `stale` when a newer read started (or a cancel came) meanwhile. */
  async readWith(file: SourceFile, c: SampleChoices): Promise<Reading> {
    this.reading = file.fileName;
    const options: IntakeOptions = { fileName: file.fileName, value: c.value, crs: c.crs, nonDetect: c.nonDetect };
    const answer = await this.reads.run(async (run) => {
      const intake = await engine.readSamplesFile(file.text, options, run.signal);
      // Showing the answer is a task of its own: with many rows, taking it in and showing it held the
      // page for over 100 ms together.
      await nextTask();
      return intake;
    });
    if (answer.status !== 'stale') this.reading = null;
    if (answer.status === 'done') return { intake: answer.value, error: null, stale: false };
    if (answer.status === 'error') return { intake: null, error: answer.error, stale: false };
    return { intake: null, error: null, stale: true };
  }

  /** Stops any read in progress (its answer is dropped). */
  cancelRead(): void {
    this.reads.cancel();
    this.reading = null;
  }

  /** Samples read anew: a new reading id, the results of the old reading dropped. */
  takeNewReading(intake: IntakeResult): void {
    this.rejectedChoice = null;
    this.app.s.readId = newReadId();
    this.takeIntake(intake);
    this.app.dropResults();
  }

  /** Shows read samples (and places the boundary against their CRS). */
  takeIntake(intake: IntakeResult): void {
    this.selected = null;
    this.intake = intake;
    this.intakeError = null;
    this.places = placesOf(intake);
    if (this.app.s.samples.transform === 'log' && !(intake.report.summary.min > 0)) this.app.s.samples.transform = 'none';
    this.samplesVersion++;
    this.readBoundary();
  }

  failIntake(error: ShownError | null): void {
    this.selected = null;
    this.intake = null;
    this.places = null;
    this.intakeError = error;
    this.samplesVersion++;
    this.readBoundary();
  }

  /** Puts the samples step back to its start (no file). */
  clear(): void {
    this.cancelRead();
    this.intake = null;
    this.intakeError = null;
    this.places = null;
    this.boundary = null;
    this.boundaryError = null;
    this.rejectedSource = null;
    this.rejectedBoundary = null;
    this.rejectedChoice = null;
    this.selected = null;
  }

  setTransform(t: 'none' | 'log'): void {
    const s = this.app.s;
    if (s.samples.transform === t) return;
    s.samples.transform = t;
    s.structure.model = null;
    s.structure.chosen = '';
    this.app.dropResults();
  }

  // ---------------------------------------------------------------- boundary

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
    this.app.s.boundary = file;
    this.app.s.surface.area = file ? 'boundary' : 'extent';
    return null;
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
    const b = this.app.s.boundary;
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
}

/** A reading choice as the user would name it ("value column \"Zn\"", "coordinate system EPSG:32632"). */
export function choiceText(choice: { value?: string; crs?: string | undefined; nonDetect?: string }): string {
  if ('value' in choice) return `value column "${choice.value ?? ''}"`;
  if ('crs' in choice) return choice.crs ? `coordinate system ${choice.crs}` : 'coordinate system detected from the file';
  return 'non-detect rule';
}

/** WGS 84 positions of the samples for the map (from the working CRS, as the surface is drawn). */
export function placesOf(result: IntakeResult): SamplePlaces {
  const { samples, report } = result;
  if (report.crs.work === LOCAL_CRS || report.crs.input === LOCAL_CRS) {
    return { lon: Float64Array.from(samples.x), lat: Float64Array.from(samples.y), placed: true, planar: true };
  }
  const t = createTransform(report.crs.work, 'EPSG:4326');
  const { x, y } = t.forwardMany(samples.x, samples.y);
  return { lon: x, lat: y, placed: true, planar: false };
}
