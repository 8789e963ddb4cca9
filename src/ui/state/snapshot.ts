/**
 * The saved session: the file text as read, the user's choices, the chosen model and the grid
 * settings — as one JSON-able object with a version. The computed results (samples as read, candidate
 * table, surfaces, realisations, suggestions) are stored beside it (./saved-results.ts), tied to the
 * snapshot's `readId`, so a reload shows them again without recomputing.
 */
import type { CovarianceModel } from '../../core/covariance/model.ts';
import { parseModel } from '../../core/covariance/model.ts';
import type { NonDetectRule } from '../../io/types.ts';

const SNAPSHOT_VERSION = 1;

export type StepId = 'samples' | 'structure' | 'surface' | 'next' | 'report';
const STEP_IDS: readonly StepId[] = ['samples', 'structure', 'surface', 'next', 'report'];

export type FitMethod = 'reml' | 'wls';
export type SurfaceLayerId = 'mean' | 'sd' | 'exceed';
export type BasemapChoice = 'none' | 'osm' | 'custom';

export interface SourceFile {
  fileName: string;
  /** The file text exactly as read. */
  text: string;
  /** True for the invented demo data, so every view can label it. */
  invented: boolean;
}

export interface SampleChoices {
  value?: string;
  x?: string;
  y?: string;
  crs?: string;
  nonDetect?: NonDetectRule;
  /** The unit shown beside values; '' uses the unit read from the header. */
  unit: string;
  transform: 'none' | 'log';
  /** Local coordinates (no CRS) that the user says are metres; otherwise they are "coordinate units". */
  localMetres?: boolean;
  /** Sample columns chosen as covariates of the mean (kriging with external drift); none when absent. */
  covariates?: string[];
}

export interface StructureChoices {
  /** Lag width in working-CRS metres; 0 = automatic. */
  lagWidth: number;
  /** Largest lag in metres; 0 = automatic (half the largest distance). */
  maxLag: number;
  directional: boolean;
  cloud: boolean;
  method: FitMethod;
  /** Key of the candidate the user chose ('' = none yet). */
  chosen: string;
  /** The model in use (the chosen candidate, possibly edited). */
  model: CovarianceModel | null;
  /** Likelihood for the fits: 'auto' by sample count, 'exact' or 'nnl' (nearest-neighbour). */
  likelihood: 'auto' | 'exact' | 'nnl';
}

export interface SurfaceChoices {
  area: 'extent' | 'boundary';
  /** Padding around the samples' extent as a fraction of its larger side. */
  padding: number;
  /** Cell size in metres; 0 = automatic. */
  cellSize: number;
  /** Exceedance threshold in data units; null = none set. */
  threshold: number | null;
  layer: SurfaceLayerId;
  opacity: number;
  hideUncertain: boolean;
  /** Contour lines of the mean drawn over the map. */
  contours: boolean;
  /** Colours of the mean layer: 'auto' (spaced by ln(value) for log models, evenly otherwise), 'linear' or 'log'. */
  colours: 'auto' | 'linear' | 'log';
  /** sd level (data units) above which cells are hidden when hideUncertain is on. */
  sdLimit: number | null;
  /** The user asked for a surface; recomputed after a reload. */
  wanted: boolean;
  /** A surface was being computed (a reload then says it was interrupted: one still arriving is not stored). */
  running: boolean;
  /** Point values at cell centres, or cell (block) averages. */
  support: 'point' | 'block';
  /** Block support: discretisation points per cell side (1..16). */
  blockPoints: number;
  /** Point values from all samples ('exact'), local neighbourhoods ('local'), or 'auto' by estimated cost (core/prediction/path-choice.ts). */
  method: 'auto' | 'exact' | 'local';
}

/** Conditional realisations: how many, the seed, and the depth (m) for the volume. */
export interface SimulationChoices {
  count: number;
  /** A whole number; the same seed gives the same realisations. */
  seed: number;
  depth: number | null;
}

/** The Next samples panel's choices. */
export interface NextChoices {
  /** New sites asked for (1..500). */
  count: number;
  /** The design criterion, or 'auto' (chosen from the model and the action level). */
  mode: 'auto' | 'variance' | 'decision' | 'coverage';
  /** Least distance between new sites and samples, working-CRS units; 0 = none. */
  spacing: number;
}

export interface MapChoices {
  basemap: BasemapChoice;
  customUrl: string;
}

/**
 * One analyte's own part of the saved session: its reading (value column and the choices that go
 * with it), structure, surface (action level included), realisation and next-sample choices.
 */
export interface AnalyteChoices {
  /** The reading of the samples with this analyte as value ('' = not read yet: read on switching to it). */
  readId: string;
  samples: SampleChoices;
  structure: StructureChoices;
  surface: SurfaceChoices;
  simulation: SimulationChoices;
  next: NextChoices;
}

/**
 * Several analytes from one samples file: the value columns chosen (in the order shown) and, for each
 * one not in use now, its own choices. The analyte in use is `samples.value`, its choices those of the
 * snapshot itself.
 */
export interface AnalyteSet {
  chosen: string[];
  parked: Record<string, AnalyteChoices>;
}

/** Analytes that may be chosen at once (each keeps its samples, model and surfaces in memory). */
export const MAX_ANALYTES = 12;

export interface SessionSnapshot {
  version: typeof SNAPSHOT_VERSION;
  step: StepId;
  source: SourceFile | null;
  /**
   * Names one reading of `source` with the current reading choices: a new id whenever the samples
   * are read differently (another file, value column, CRS, non-detect rule); '' with no source.
   * Stored results belong to the reading whose id they carry.
   */
  readId: string;
  boundary: SourceFile | null;
  samples: SampleChoices;
  structure: StructureChoices;
  surface: SurfaceChoices;
  simulation: SimulationChoices;
  next: NextChoices;
  map: MapChoices;
  /** Several analytes chosen (absent = one analyte, the value column). */
  analytes?: AnalyteSet;
}

/** The analyte's own parts of a snapshot (plain copies). */
export function analyteChoicesOf(s: SessionSnapshot): AnalyteChoices {
  const copy = <T>(v: T): T => JSON.parse(JSON.stringify(v)) as T;
  return {
    readId: s.readId, samples: copy(s.samples), structure: copy(s.structure), surface: copy(s.surface),
    simulation: copy(s.simulation), next: copy(s.next),
  };
}

/** A fresh reading id (random; only compared for equality). */
export function newReadId(): string {
  const c = globalThis.crypto;
  if (c && typeof c.randomUUID === 'function') return c.randomUUID();
  return `${Date.now().toString(36)}-${Math.random().toString(36).slice(2)}`;
}

/** A fresh session: nothing loaded, every choice at its default. */
export function emptySnapshot(): SessionSnapshot {
  return {
    version: SNAPSHOT_VERSION,
    step: 'samples',
    source: null,
    readId: '',
    boundary: null,
    samples: { unit: '', transform: 'none' },
    structure: { lagWidth: 0, maxLag: 0, directional: false, cloud: false, method: 'reml', chosen: '', model: null, likelihood: 'auto' },
    surface: {
      area: 'extent', padding: 0.05, cellSize: 0, threshold: null, layer: 'mean', opacity: 0.8,
      hideUncertain: false, contours: false, colours: 'auto', sdLimit: null, wanted: false, running: false, support: 'point', blockPoints: 4,
      method: 'auto',
    },
    simulation: { count: 100, seed: 1, depth: null },
    next: { count: 8, mode: 'auto', spacing: 0 },
    map: { basemap: 'none', customUrl: '' },
  };
}

type Obj = Record<string, unknown>;
const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);
const str = (v: unknown, d: string): string => (typeof v === 'string' ? v : d);
const optStr = (v: unknown): string | undefined => (typeof v === 'string' && v !== '' ? v : undefined);
const num = (v: unknown, d: number, min = -Infinity, max = Infinity): number =>
  typeof v === 'number' && Number.isFinite(v) && v >= min && v <= max ? v : d;
const bool = (v: unknown, d: boolean): boolean => (typeof v === 'boolean' ? v : d);
const oneOf = <T extends string>(v: unknown, options: readonly T[], d: T): T =>
  typeof v === 'string' && (options as readonly string[]).includes(v) ? (v as T) : d;
const optNum = (v: unknown): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null);

function readSource(v: unknown): SourceFile | null {
  if (!isObj(v) || typeof v.text !== 'string' || typeof v.fileName !== 'string') return null;
  return { fileName: v.fileName, text: v.text, invented: v.invented === true };
}

function readModel(v: unknown): CovarianceModel | null {
  if (v === null || v === undefined) return null;
  try {
    return parseModel(v);
  } catch {
    return null;
  }
}

/**
 * Checks a stored value and returns a complete snapshot, each missing or malformed field replaced by
 * its default; null when the value is not a snapshot of this version at all.
 */
export function parseSnapshot(input: unknown): SessionSnapshot | null {
  if (!isObj(input) || input.version !== SNAPSHOT_VERSION) return null;
  const d = emptySnapshot();
  const source = readSource(input.source);
  const own = readAnalyteChoices(input, d);
  const snapshot: SessionSnapshot = {
    version: SNAPSHOT_VERSION,
    step: oneOf(input.step, STEP_IDS, d.step),
    source,
    // '' for a snapshot written before reading ids existed: no stored results can match it.
    readId: source ? own.readId : '',
    boundary: readSource(input.boundary),
    samples: own.samples,
    structure: own.structure,
    surface: own.surface,
    simulation: own.simulation,
    next: own.next,
    map: {
      basemap: oneOf(isObj(input.map) ? input.map.basemap : undefined, ['none', 'osm', 'custom'] as const, 'none'),
      customUrl: str(isObj(input.map) ? input.map.customUrl : undefined, ''),
    },
  };
  const analytes = source ? readAnalyteSet(input.analytes, own.samples.value, d) : null;
  if (analytes) snapshot.analytes = analytes;
  return snapshot;
}

/**
 * The analytes chosen, checked: names unique and non-empty, the one in use among them, at most
 * MAX_ANALYTES; a parked analyte whose choices do not name it as value is dropped. Null when fewer
 * than two remain.
 */
function readAnalyteSet(v: unknown, current: string | undefined, d: SessionSnapshot): AnalyteSet | null {
  if (!isObj(v) || !Array.isArray(v.chosen) || current === undefined) return null;
  const names = [...new Set(v.chosen.filter((c): c is string => typeof c === 'string' && c !== ''))].slice(0, MAX_ANALYTES);
  if (!names.includes(current)) return null;
  const parkedIn = isObj(v.parked) ? v.parked : {};
  const parked: Record<string, AnalyteChoices> = {};
  const chosen: string[] = [];
  for (const name of names) {
    if (name === current) {
      chosen.push(name);
      continue;
    }
    const p = parkedIn[name];
    if (!isObj(p)) continue;
    const choices = readAnalyteChoices(p, d);
    if (choices.samples.value !== name) continue;
    parked[name] = choices;
    chosen.push(name);
  }
  return chosen.length >= 2 ? { chosen, parked } : null;
}

/** One analyte's choices from stored data, each missing or malformed field at its default. */
function readAnalyteChoices(input: Obj, d: SessionSnapshot): AnalyteChoices {
  const s = isObj(input.samples) ? input.samples : {};
  const st = isObj(input.structure) ? input.structure : {};
  const su = isObj(input.surface) ? input.surface : {};
  const sim = isObj(input.simulation) ? input.simulation : {};
  const nx = isObj(input.next) ? input.next : {};
  const whole = (v: unknown, dflt: number, min: number, max: number): number => {
    const n = num(v, dflt, min, max);
    return Number.isInteger(n) ? n : dflt;
  };
  const nonDetect = oneOf(s.nonDetect, ['half', 'dl', 'sqrt2'] as const, 'half');
  return {
    readId: str(input.readId, ''),
    samples: {
      value: optStr(s.value),
      x: optStr(s.x),
      y: optStr(s.y),
      crs: optStr(s.crs),
      nonDetect: s.nonDetect === undefined ? undefined : nonDetect,
      unit: str(s.unit, ''),
      transform: oneOf(s.transform, ['none', 'log'] as const, 'none'),
      ...(s.localMetres === true ? { localMetres: true } : {}),
      ...(Array.isArray(s.covariates) && s.covariates.length > 0 && s.covariates.every((c) => typeof c === 'string' && c !== '')
        ? { covariates: [...new Set(s.covariates as string[])].slice(0, 20) } : {}),
    },
    structure: {
      lagWidth: num(st.lagWidth, 0, 0),
      maxLag: num(st.maxLag, 0, 0),
      directional: bool(st.directional, false),
      cloud: bool(st.cloud, false),
      method: oneOf(st.method, ['reml', 'wls'] as const, 'reml'),
      chosen: str(st.chosen, ''),
      model: readModel(st.model),
      likelihood: oneOf(st.likelihood, ['auto', 'exact', 'nnl'] as const, 'auto'),
    },
    surface: {
      area: oneOf(su.area, ['extent', 'boundary'] as const, 'extent'),
      padding: num(su.padding, d.surface.padding, 0, 1),
      cellSize: num(su.cellSize, 0, 0),
      threshold: optNum(su.threshold),
      layer: oneOf(su.layer, ['mean', 'sd', 'exceed'] as const, 'mean'),
      opacity: num(su.opacity, d.surface.opacity, 0, 1),
      hideUncertain: bool(su.hideUncertain, false),
      contours: bool(su.contours, false),
      colours: oneOf(su.colours, ['auto', 'linear', 'log'] as const, 'auto'),
      sdLimit: optNum(su.sdLimit),
      wanted: bool(su.wanted, false),
      running: bool(su.running, false),
      support: oneOf(su.support, ['point', 'block'] as const, 'point'),
      blockPoints: whole(su.blockPoints, d.surface.blockPoints, 1, 16),
      method: oneOf(su.method, ['auto', 'exact', 'local'] as const, 'auto'),
    },
    simulation: {
      count: whole(sim.count, d.simulation.count, 1, 10_000),
      seed: whole(sim.seed, d.simulation.seed, -(2 ** 31), 2 ** 31),
      depth: typeof sim.depth === 'number' && Number.isFinite(sim.depth) && sim.depth > 0 ? sim.depth : null,
    },
    next: {
      count: whole(nx.count, d.next.count, 1, 500),
      mode: oneOf(nx.mode, ['auto', 'variance', 'decision', 'coverage'] as const, 'auto'),
      spacing: num(nx.spacing, 0, 0),
    },
  };
}

/** JSON text of a snapshot (plain data only: no typed arrays, no functions). */
export function serialiseSnapshot(snapshot: SessionSnapshot): string {
  return JSON.stringify(snapshot);
}

/** The snapshot stored as text, or null when the text is not a readable snapshot. */
export function deserialiseSnapshot(text: string): SessionSnapshot | null {
  try {
    return parseSnapshot(JSON.parse(text));
  } catch {
    return null;
  }
}
