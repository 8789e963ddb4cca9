/**
 * Gapwise project files: one versioned JSON document ({"format": "gapwise-project", "version": 2})
 * holding everything needed to reproduce a result — the samples file text exactly as read with the
 * intake options, the boundary text, every modelling choice, the model, the grid, the threshold and
 * any suggested next samples, and the settings of conditional realisations with the area (and volume)
 * above the action level they gave. Results that can be recomputed (surfaces, cross-validation) are not
 * stored; the area figure is kept because it is what a report quotes and it costs a simulation to
 * redo. The schema is documented in docs/project-format.md.
 *
 * `saveProject` writes the text, `openProject` checks it (every problem is a GapwiseError naming the
 * file and the field) and brings version 1 files up to version 2. `projectIntake`, `projectBoundary`
 * and `projectGrid` turn a project back into what the engine takes, the same way the app does.
 */
import { GapwiseError, type Warning } from '../core/shared/errors.ts';
import { CAUTION } from '../core/shared/caution.ts';
import { parseModel, type CovarianceModel } from '../core/covariance/model.ts';
import { MAX_CELLS, gridBounds, gridForPolygons, planSurfaceGrid as planGrid, type Grid, type GridPlanOptions } from '../core/geometry/grid.ts';
import { MAX_REALISATIONS as MAX_COUNT, type ConditionalSimulationResult } from '../core/simulation/conditional-simulation.ts';
import { readSamples } from './intake.ts';
import { projectPolygons, readPolygons, type Polygon } from './boundary.ts';
import { LOCAL_CRS, checkGridInCrs } from './crs.ts';
import type { IntakeOptions, IntakeResult } from './types.ts';

export const PROJECT_FORMAT = 'gapwise-project';
/** The version this code writes. Versions 1 and 2 open. */
export const PROJECT_VERSION = 2;

/** A file carried inside the project, text exactly as read. */
export interface ProjectFile {
  fileName: string;
  text: string;
  /** True for the invented demo data, so every view can say so. */
  invented?: boolean;
}

/** Intake options as stored: everything readSamples takes except the file name. */
export type ProjectIntake = Omit<IntakeOptions, 'fileName'>;

export interface ProjectSamples extends ProjectFile {
  intake: ProjectIntake;
  /** Unit shown beside values; '' = the unit read from the header. */
  unit: string;
}

/** One row of the model comparison, as the app showed it. */
export interface ComparisonRow {
  key: string;
  label: string;
  /** null when the candidate could not be fitted. */
  model: CovarianceModel | null;
  logLikelihood: number | null;
  aic: number | null;
  /** Leave-one-out figures on the modelling scale. */
  rmse: number | null;
  msse: number | null;
  error?: string;
}

export interface ProjectStructure {
  /** 'log' fits ln(value); the model's own `transform` says the same. */
  transform: 'none' | 'log';
  /** Empirical variogram settings (metres); absent = automatic. */
  variogram: { lagWidth?: number; maxLag?: number; estimator?: 'matheron' | 'cressie-hawkins' };
  method: 'reml' | 'ml' | 'wls';
  /** Key of the chosen candidate ('' = none). */
  chosen: string;
  /** The candidates as compared when the model was chosen (optional). */
  comparison?: ComparisonRow[];
}

/** The grid the surfaces are computed on. */
export interface ProjectGrid {
  /** 'boundary': cells whose centre lies inside the boundary polygons; 'extent': the padded extent. */
  area: 'extent' | 'boundary';
  /** Padding around the samples' extent, as a fraction of its larger side ('extent' only). */
  padding: number;
  /** Cell size asked for in metres; 0 = automatic. */
  cellSize: number;
  /** The grid as computed (corner, cell, size); when present it is used as is. */
  geometry?: { x0: number; y0: number; cell: number; nx: number; ny: number };
}

/** One suggested next sample location. */
export interface Suggestion {
  rank: number;
  /** Working-CRS metres. */
  x: number;
  y: number;
  lon: number;
  lat: number;
  /** Expected benefit (reduction of the design criterion) of adding this site. */
  benefit: number;
  mean: number;
  sd: number;
  pExceed?: number;
}

/** How conditional realisations are (or were) drawn; plain data, as in the app and the CLI. */
export interface SimulationSettings {
  /** Number of realisations N. */
  count: number;
  /** Seed of the random numbers (a whole number; the same seed gives the same realisations). */
  seed: number;
  /** 'point': values at cell centres; 'block': cell averages over blockPoints × blockPoints points. */
  support: 'point' | 'block';
  /** Points per cell side for block support (1 for point support). */
  blockPoints: number;
  /** Depth of the layer in metres for the volume above the action level (null = no volume). */
  depth: number | null;
}

/** Median, 5 % and 95 % quantiles and mean of a quantity over the realisations. */
export interface SpreadFigure {
  median: number;
  p05: number;
  p95: number;
  mean: number;
}

/** What the realisations gave: the area (and volume) above the action level with its spread. */
export interface SimulationSummary {
  /** The action level the area is counted above (data units). */
  threshold: number;
  /** Cell size of the grid (m) and cells inside the area. */
  cell: number;
  activeCells: number;
  area: SpreadFigure & { unit: 'm²' };
  /** With a depth: area × depth. */
  volume?: SpreadFigure & { unit: 'm³'; depth: number };
  /** Share of the mapped area above the level (0..1). */
  fraction: SpreadFigure;
  /** How the figure was made, in plain words (see simulationMethodText). */
  method: string;
  /** ISO 8601 time the realisations were drawn ('' = unknown). */
  made: string;
}

/** Realisation settings and, once drawn, their summary. */
export interface ProjectSimulation extends SimulationSettings {
  summary?: SimulationSummary;
}

export interface Project {
  format: typeof PROJECT_FORMAT;
  version: typeof PROJECT_VERSION;
  /** ISO 8601 time of saving. */
  saved: string;
  software: { name: string; version: string };
  title: string;
  caution: string;
  samples: ProjectSamples;
  boundary: ProjectFile | null;
  structure: ProjectStructure;
  /** The model in use (null before one is chosen). */
  model: CovarianceModel | null;
  grid: ProjectGrid;
  /** Action level in data units (null = none). */
  threshold: number | null;
  suggestions?: Suggestion[];
  /** Options the suggestions were made with, as given (plain data). */
  suggestOptions?: Record<string, unknown>;
  /** Conditional realisations: settings and the area above the action level they gave. */
  simulation?: ProjectSimulation;
  /**
   * Further analytes mapped from the same samples file, each with its own value column and work;
   * the top level is the analyte `samples.intake.value`. Absent with one analyte.
   */
  analytes?: ProjectAnalyte[];
  /** Covariate rasters the surfaces were computed with, named (the files themselves are not held). */
  covariateRasters?: ProjectRasterName[];
}

/** Another analyte of the project: what differs from the top level's. */
export interface ProjectAnalyte {
  /** Its value column. */
  value: string;
  unit: string;
  structure: ProjectStructure;
  model: CovarianceModel | null;
  threshold: number | null;
  suggestions?: Suggestion[];
  suggestOptions?: Record<string, unknown>;
  simulation?: ProjectSimulation;
}

/** A covariate raster by name: the covariate it serves and the file it was read from. */
export interface ProjectRasterName {
  covariate: string;
  fileName: string;
}

/**
 * The project of one analyte: the top level for its own value column, else the top level with that
 * analyte's value column and work in place. Null when the project has no such analyte.
 */
export function analyteProject(project: Project, value: string): Project | null {
  const own = project.samples.intake.value;
  const { analytes, ...base } = project;
  if (own === value) return base;
  const a = analytes?.find((x) => x.value === value);
  if (!a) return null;
  const p: Project = {
    ...base,
    samples: { ...base.samples, intake: { ...base.samples.intake, value: a.value }, unit: a.unit },
    structure: a.structure, model: a.model, threshold: a.threshold,
  };
  delete p.suggestions;
  delete p.suggestOptions;
  delete p.simulation;
  if (a.suggestions) p.suggestions = a.suggestions;
  if (a.suggestOptions) p.suggestOptions = a.suggestOptions;
  if (a.simulation) p.simulation = a.simulation;
  return p;
}

/** What a new project needs; everything else has a default. */
export interface ProjectParts {
  samples: { fileName: string; text: string; invented?: boolean; intake?: ProjectIntake; unit?: string };
  boundary?: ProjectFile | null;
  structure?: Partial<ProjectStructure>;
  model?: CovarianceModel | null;
  grid?: Partial<ProjectGrid>;
  threshold?: number | null;
  suggestions?: Suggestion[];
  suggestOptions?: Record<string, unknown>;
  simulation?: ProjectSimulation;
  title?: string;
  software?: { name: string; version: string };
  saved?: string;
  analytes?: ProjectAnalyte[];
  covariateRasters?: ProjectRasterName[];
}

/** Default padding around the samples (5 % of the larger side), as in the app. */
export const DEFAULT_PADDING = 0.05;

/** A version-2 project from its parts, defaults filled in. */
export function createProject(parts: ProjectParts): Project {
  const s = parts.samples;
  const model = parts.model ?? null;
  const p: Project = {
    format: PROJECT_FORMAT,
    version: PROJECT_VERSION,
    saved: parts.saved ?? new Date().toISOString(),
    software: parts.software ?? { name: 'gapwise', version: 'unknown' },
    title: parts.title ?? '',
    caution: CAUTION,
    samples: { fileName: s.fileName, text: s.text, intake: { ...(s.intake ?? {}) }, unit: s.unit ?? '' },
    boundary: parts.boundary ? { ...parts.boundary } : null,
    structure: {
      transform: parts.structure?.transform ?? (model?.transform === 'log' ? 'log' : 'none'),
      variogram: { ...(parts.structure?.variogram ?? {}) },
      method: parts.structure?.method ?? methodOf(model),
      chosen: parts.structure?.chosen ?? '',
    },
    model,
    grid: {
      area: parts.grid?.area ?? (parts.boundary ? 'boundary' : 'extent'),
      padding: parts.grid?.padding ?? DEFAULT_PADDING,
      cellSize: parts.grid?.cellSize ?? 0,
    },
    threshold: parts.threshold ?? null,
  };
  if (s.invented) p.samples.invented = true;
  if (parts.structure?.comparison) p.structure.comparison = parts.structure.comparison;
  if (parts.grid?.geometry) p.grid.geometry = { ...parts.grid.geometry };
  if (parts.suggestions) p.suggestions = parts.suggestions.map((x) => ({ ...x }));
  if (parts.suggestOptions) p.suggestOptions = { ...parts.suggestOptions };
  if (parts.simulation) p.simulation = copySimulation(parts.simulation);
  if (parts.analytes?.length) p.analytes = JSON.parse(JSON.stringify(parts.analytes)) as ProjectAnalyte[];
  if (parts.covariateRasters?.length) p.covariateRasters = parts.covariateRasters.map((r) => ({ covariate: r.covariate, fileName: r.fileName }));
  return p;
}

function copySimulation(s: ProjectSimulation): ProjectSimulation {
  const out: ProjectSimulation = { count: s.count, seed: s.seed, support: s.support, blockPoints: s.blockPoints, depth: s.depth };
  if (s.summary) {
    const m = s.summary;
    out.summary = {
      threshold: m.threshold, cell: m.cell, activeCells: m.activeCells, area: { ...m.area },
      ...(m.volume ? { volume: { ...m.volume } } : {}), fraction: { ...m.fraction }, method: m.method, made: m.made,
    };
  }
  return out;
}

/**
 * The method behind the area figure in plain words, for the report and the project file: how the
 * realisations were drawn and conditioned, the back-transform of a log model, the support, and what
 * the interval does and does not include.
 */
export function simulationMethodText(o: { support: 'point' | 'block'; blockPoints: number; log: boolean; count: number }): string {
  const parts = [
    'Conditional Gaussian simulation on the grid: unconditional fields drawn by FFT circulant embedding, '
      + 'conditioned on the samples by kriging the residuals.',
  ];
  if (o.log) parts.push('The model is fitted to ln(value), so each realisation is back-transformed cell by cell (exp) to the data scale.');
  parts.push(o.support === 'block'
    ? `Each cell is the average of ${o.blockPoints} × ${o.blockPoints} points (block support).`
    : 'Each cell is the value at its centre (point support).');
  parts.push(`In each of the ${o.count} realisations the cells above the action level are counted and multiplied by the cell area; `
    + 'the figure is the median over the realisations and the interval their 5 % and 95 % quantiles.');
  parts.push('The interval reflects the model\'s uncertainty given the fitted covariance, not the uncertainty of the covariance parameters, '
    + 'nor sampling or laboratory error.');
  return parts.join(' ');
}

/**
 * The project's record of conditional realisations from a simulation result: its settings and, when
 * it counted the area above an action level, the summary (plain data, ready to save).
 */
export function projectSimulation(
  result: Pick<ConditionalSimulationResult, 'count' | 'support' | 'points' | 'area'>,
  settings: { seed: number; depth?: number | null; log: boolean; made?: string },
): ProjectSimulation {
  const out: ProjectSimulation = {
    count: result.count, seed: settings.seed, support: result.support, blockPoints: result.support === 'block' ? result.points : 1,
    depth: settings.depth ?? null,
  };
  const a = result.area;
  if (a) {
    const fig = (q: { median: number; p05: number; p95: number; mean: number }): SpreadFigure => ({ median: q.median, p05: q.p05, p95: q.p95, mean: q.mean });
    out.summary = {
      threshold: a.threshold, cell: Math.sqrt(a.cellArea), activeCells: a.activeCells,
      area: { ...fig(a.area), unit: 'm²' },
      ...(a.volume ? { volume: { ...fig(a.volume), unit: 'm³' as const, depth: a.volume.depth } } : {}),
      fraction: fig(a.fraction),
      method: simulationMethodText({ support: out.support, blockPoints: out.blockPoints, log: settings.log, count: result.count }),
      made: settings.made ?? '',
    };
    if (a.volume) out.depth = a.volume.depth;
  }
  return out;
}

function methodOf(model: CovarianceModel | null): 'reml' | 'ml' | 'wls' {
  const m = model?.fit?.method;
  return m === 'ml' || m === 'wls' ? m : 'reml';
}

/** The project as JSON text (two-space indentation, final newline). */
export function saveProject(project: Project): string {
  // Check before writing, so a file that cannot be opened again is never written.
  validateV2(JSON.parse(JSON.stringify(project)) as unknown, '(project being saved)');
  return `${JSON.stringify(project, null, 2)}\n`;
}

// ------------------------------------------------------------------------------------------ reading

type Obj = Record<string, unknown>;
const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);

class Checker {
  constructor(readonly file: string) {}

  fail(path: string, expected: string, got: unknown): never {
    const shown = got === undefined ? 'nothing' : JSON.stringify(got)?.slice(0, 60) ?? String(got);
    throw new GapwiseError('bad-file', `The project field "${path}" is ${shown}; expected ${expected}.`, { file: this.file });
  }

  obj(v: unknown, path: string): Obj {
    if (!isObj(v)) this.fail(path, 'an object', v);
    return v;
  }

  str(v: unknown, path: string, allowEmpty = true): string {
    if (typeof v !== 'string' || (!allowEmpty && v === '')) this.fail(path, allowEmpty ? 'text' : 'non-empty text', v);
    return v;
  }

  optStr(v: unknown, path: string): string | undefined {
    return v === undefined ? undefined : this.str(v, path);
  }

  num(v: unknown, path: string, min = -Infinity, what = 'a number'): number {
    if (typeof v !== 'number' || !Number.isFinite(v) || v < min) this.fail(path, what, v);
    return v;
  }

  nullableNum(v: unknown, path: string): number | null {
    if (v === null || v === undefined) return null;
    return this.num(v, path);
  }

  oneOf<T extends string>(v: unknown, path: string, options: readonly T[]): T {
    if (typeof v !== 'string' || !(options as readonly string[]).includes(v)) this.fail(path, `one of ${options.map((o) => `"${o}"`).join(', ')}`, v);
    return v as T;
  }

  model(v: unknown, path: string): CovarianceModel | null {
    if (v === null || v === undefined) return null;
    try {
      return parseModel(v);
    } catch (e) {
      if (e instanceof GapwiseError) throw new GapwiseError('bad-model', `The project field "${path}": ${e.message}`, { file: this.file });
      throw e;
    }
  }
}

function readIntake(c: Checker, v: unknown, path: string): ProjectIntake {
  const o = v === undefined ? {} : c.obj(v, path);
  const out: ProjectIntake = {};
  for (const k of ['value', 'x', 'y', 'crs', 'workCrs'] as const) {
    const s = c.optStr(o[k], `${path}.${k}`);
    if (s !== undefined) out[k] = s;
  }
  if (o.format !== undefined) out.format = c.oneOf(o.format, `${path}.format`, ['csv', 'geojson'] as const);
  if (o.nonDetect !== undefined) out.nonDetect = c.oneOf(o.nonDetect, `${path}.nonDetect`, ['half', 'dl', 'sqrt2'] as const);
  if (o.duplicates !== undefined) out.duplicates = c.oneOf(o.duplicates, `${path}.duplicates`, ['merge', 'keep'] as const);
  if (o.duplicateTolerance !== undefined) out.duplicateTolerance = c.num(o.duplicateTolerance, `${path}.duplicateTolerance`, 0, 'a distance of 0 m or more');
  if (o.strict !== undefined) {
    if (typeof o.strict !== 'boolean') c.fail(`${path}.strict`, 'true or false', o.strict);
    out.strict = o.strict;
  }
  return out;
}

function readFileEntry(c: Checker, v: unknown, path: string): ProjectFile {
  const o = c.obj(v, path);
  const f: ProjectFile = { fileName: c.str(o.fileName, `${path}.fileName`, false), text: c.str(o.text, `${path}.text`) };
  if (o.invented === true) f.invented = true;
  return f;
}

function readSuggestions(c: Checker, v: unknown): Suggestion[] | undefined {
  if (v === undefined || v === null) return undefined;
  if (!Array.isArray(v)) c.fail('suggestions', 'an array', v);
  return v.map((s, i) => {
    const p = `suggestions[${i}]`;
    const o = c.obj(s, p);
    const out: Suggestion = {
      rank: c.num(o.rank, `${p}.rank`, 1, 'a rank of 1 or more'),
      x: c.num(o.x, `${p}.x`), y: c.num(o.y, `${p}.y`),
      lon: c.num(o.lon, `${p}.lon`), lat: c.num(o.lat, `${p}.lat`),
      benefit: c.num(o.benefit, `${p}.benefit`),
      mean: c.num(o.mean, `${p}.mean`), sd: c.num(o.sd, `${p}.sd`, 0, 'an sd of 0 or more'),
    };
    if (o.pExceed !== undefined && o.pExceed !== null) out.pExceed = c.num(o.pExceed, `${p}.pExceed`, 0, 'a probability in [0, 1]');
    return out;
  });
}

function readComparison(c: Checker, v: unknown): ComparisonRow[] | undefined {
  if (v === undefined || v === null) return undefined;
  if (!Array.isArray(v)) c.fail('structure.comparison', 'an array', v);
  return v.map((r, i) => {
    const p = `structure.comparison[${i}]`;
    const o = c.obj(r, p);
    const row: ComparisonRow = {
      key: c.str(o.key, `${p}.key`), label: c.str(o.label, `${p}.label`),
      model: c.model(o.model, `${p}.model`),
      logLikelihood: c.nullableNum(o.logLikelihood, `${p}.logLikelihood`),
      aic: c.nullableNum(o.aic, `${p}.aic`),
      rmse: c.nullableNum(o.rmse, `${p}.rmse`),
      msse: c.nullableNum(o.msse, `${p}.msse`),
    };
    if (typeof o.error === 'string') row.error = o.error;
    return row;
  });
}

function validateV2(input: unknown, file: string): Project {
  const c = new Checker(file);
  const o = c.obj(input, '(top level)');
  const sw = o.software === undefined ? { name: 'gapwise', version: 'unknown' } : c.obj(o.software, 'software');
  const s = c.obj(o.samples, 'samples');
  const st = o.structure === undefined ? {} : c.obj(o.structure, 'structure');
  const g = o.grid === undefined ? {} : c.obj(o.grid, 'grid');
  const vg = st.variogram === undefined ? {} : c.obj(st.variogram, 'structure.variogram');
  const samplesFile = readFileEntry(c, s, 'samples');
  const model = c.model(o.model, 'model');
  const project: Project = {
    format: PROJECT_FORMAT,
    version: PROJECT_VERSION,
    saved: o.saved === undefined ? '' : c.str(o.saved, 'saved'),
    software: { name: c.str(sw.name ?? 'gapwise', 'software.name'), version: c.str(sw.version ?? 'unknown', 'software.version') },
    title: o.title === undefined ? '' : c.str(o.title, 'title'),
    caution: CAUTION,
    samples: { ...samplesFile, intake: readIntake(c, s.intake, 'samples.intake'), unit: s.unit === undefined ? '' : c.str(s.unit, 'samples.unit') },
    boundary: o.boundary === undefined || o.boundary === null ? null : readFileEntry(c, o.boundary, 'boundary'),
    structure: {
      transform: st.transform === undefined ? (model?.transform ?? 'none') : c.oneOf(st.transform, 'structure.transform', ['none', 'log'] as const),
      variogram: {},
      method: st.method === undefined ? methodOf(model) : c.oneOf(st.method, 'structure.method', ['reml', 'ml', 'wls'] as const),
      chosen: st.chosen === undefined ? '' : c.str(st.chosen, 'structure.chosen'),
    },
    model,
    grid: {
      area: g.area === undefined ? 'extent' : c.oneOf(g.area, 'grid.area', ['extent', 'boundary'] as const),
      padding: g.padding === undefined ? DEFAULT_PADDING : c.num(g.padding, 'grid.padding', 0, 'a fraction of 0 or more'),
      cellSize: g.cellSize === undefined ? 0 : c.num(g.cellSize, 'grid.cellSize', 0, 'a cell size of 0 (automatic) or more metres'),
    },
    threshold: c.nullableNum(o.threshold, 'threshold'),
  };
  if (vg.lagWidth !== undefined) project.structure.variogram.lagWidth = c.num(vg.lagWidth, 'structure.variogram.lagWidth', 0, 'a length of 0 or more metres');
  if (vg.maxLag !== undefined) project.structure.variogram.maxLag = c.num(vg.maxLag, 'structure.variogram.maxLag', 0, 'a length of 0 or more metres');
  if (vg.estimator !== undefined) project.structure.variogram.estimator = c.oneOf(vg.estimator, 'structure.variogram.estimator', ['matheron', 'cressie-hawkins'] as const);
  const comparison = readComparison(c, st.comparison);
  if (comparison) project.structure.comparison = comparison;
  if (model && project.structure.transform !== model.transform) {
    c.fail('structure.transform', `"${model.transform}", the model's transform`, project.structure.transform);
  }
  if (g.geometry !== undefined && g.geometry !== null) {
    const ge = c.obj(g.geometry, 'grid.geometry');
    const cell = c.num(ge.cell, 'grid.geometry.cell', Number.MIN_VALUE, 'a positive cell size in metres');
    const int = (v: unknown, p: string) => {
      const n = c.num(v, p, 1, 'a whole number of cells, 1 or more');
      if (!Number.isInteger(n)) c.fail(p, 'a whole number of cells, 1 or more', v);
      return n;
    };
    project.grid.geometry = { x0: c.num(ge.x0, 'grid.geometry.x0'), y0: c.num(ge.y0, 'grid.geometry.y0'), cell, nx: int(ge.nx, 'grid.geometry.nx'), ny: int(ge.ny, 'grid.geometry.ny') };
    const cells = project.grid.geometry.nx * project.grid.geometry.ny;
    if (cells > MAX_CELLS) c.fail('grid.geometry.nx', `nx × ny of at most ${MAX_CELLS.toLocaleString('en')} cells`, `${ge.nx} × ${ge.ny}`);
  }
  if (project.grid.area === 'boundary' && !project.boundary) c.fail('grid.area', '"extent" when the project has no boundary', 'boundary');
  const suggestions = readSuggestions(c, o.suggestions);
  if (suggestions) project.suggestions = suggestions;
  if (o.suggestOptions !== undefined) project.suggestOptions = c.obj(o.suggestOptions, 'suggestOptions');
  const simulation = readSimulation(c, o.simulation);
  if (simulation) project.simulation = simulation;
  if (o.analytes !== undefined && o.analytes !== null) project.analytes = readAnalytes(c, o.analytes, o, project);
  if (o.covariateRasters !== undefined && o.covariateRasters !== null) {
    if (!Array.isArray(o.covariateRasters)) c.fail('covariateRasters', 'a list of {covariate, fileName}', o.covariateRasters);
    project.covariateRasters = (o.covariateRasters as unknown[]).map((r, k) => {
      const e = c.obj(r, `covariateRasters[${k}]`);
      return { covariate: c.str(e.covariate, `covariateRasters[${k}].covariate`), fileName: c.str(e.fileName, `covariateRasters[${k}].fileName`) };
    });
  }
  return project;
}

/**
 * The further analytes: each is checked as the whole project would be with its value column and
 * work in place of the top level's (a problem names the entry and the analyte).
 */
function readAnalytes(c: Checker, v: unknown, top: Obj, project: Project): ProjectAnalyte[] {
  if (!Array.isArray(v)) c.fail('analytes', 'a list of analytes', v);
  const seen = new Set([project.samples.intake.value ?? '']);
  return (v as unknown[]).map((entry, k) => {
    const where = `analytes[${k}]`;
    const a = c.obj(entry, where);
    const value = c.str(a.value, `${where}.value`);
    if (value === '' || seen.has(value)) c.fail(`${where}.value`, 'a value column not named before in the project', value);
    seen.add(value);
    const samples = c.obj(top.samples, 'samples');
    const whole = {
      ...top, analytes: undefined,
      samples: { ...samples, intake: { ...c.obj(samples.intake ?? {}, 'samples.intake'), value }, unit: a.unit },
      structure: a.structure, model: a.model, threshold: a.threshold,
      suggestions: a.suggestions, suggestOptions: a.suggestOptions, simulation: a.simulation,
    };
    let checked: Project;
    try {
      checked = validateV2(whole, c.file);
    } catch (e) {
      if (e instanceof GapwiseError) throw new GapwiseError(e.code, `In ${where} (${value}): ${e.message}`, e.place);
      throw e;
    }
    const out: ProjectAnalyte = {
      value, unit: checked.samples.unit, structure: checked.structure, model: checked.model, threshold: checked.threshold,
    };
    if (checked.suggestions) out.suggestions = checked.suggestions;
    if (checked.suggestOptions) out.suggestOptions = checked.suggestOptions;
    if (checked.simulation) out.simulation = checked.simulation;
    return out;
  });
}

function readSpread(c: Checker, v: unknown, path: string, min: number): SpreadFigure {
  const o = c.obj(v, path);
  const what = min === 0 ? 'a number of 0 or more' : 'a number';
  const f: SpreadFigure = {
    median: c.num(o.median, `${path}.median`, min, what), p05: c.num(o.p05, `${path}.p05`, min, what),
    p95: c.num(o.p95, `${path}.p95`, min, what), mean: c.num(o.mean, `${path}.mean`, min, what),
  };
  if (f.p05 > f.median) c.fail(`${path}.p05`, `at most the median ${f.median}`, f.p05);
  if (f.p95 < f.median) c.fail(`${path}.p95`, `at least the median ${f.median}`, f.p95);
  return f;
}

function readSimulation(c: Checker, v: unknown): ProjectSimulation | undefined {
  if (v === undefined || v === null) return undefined;
  const o = c.obj(v, 'simulation');
  const whole = (x: unknown, path: string, min: number, max: number, what: string) => {
    const n = c.num(x, path, min, what);
    if (!Number.isInteger(n) || n > max) c.fail(path, what, x);
    return n;
  };
  const support = o.support === undefined ? 'point' : c.oneOf(o.support, 'simulation.support', ['point', 'block'] as const);
  const out: ProjectSimulation = {
    count: whole(o.count, 'simulation.count', 1, MAX_COUNT, `a whole number of realisations from 1 to ${MAX_COUNT}`),
    seed: o.seed === undefined ? 1 : whole(o.seed, 'simulation.seed', -(2 ** 31), 2 ** 31, 'a whole number'),
    support,
    blockPoints: support === 'point' ? 1 : o.blockPoints === undefined ? 4 : whole(o.blockPoints, 'simulation.blockPoints', 1, 16, 'a whole number of points from 1 to 16'),
    depth: o.depth === undefined || o.depth === null ? null : c.num(o.depth, 'simulation.depth', Number.MIN_VALUE, 'a depth above 0 m'),
  };
  if (o.summary !== undefined && o.summary !== null) {
    const m = c.obj(o.summary, 'simulation.summary');
    const area = readSpread(c, m.area, 'simulation.summary.area', 0);
    const summary: SimulationSummary = {
      threshold: c.num(m.threshold, 'simulation.summary.threshold'),
      cell: c.num(m.cell, 'simulation.summary.cell', Number.MIN_VALUE, 'a positive cell size in metres'),
      activeCells: whole(m.activeCells, 'simulation.summary.activeCells', 0, Number.MAX_SAFE_INTEGER, 'a whole number of cells'),
      area: { ...area, unit: 'm²' },
      fraction: { median: 0, p05: 0, p95: 0, mean: 0 },
      method: m.method === undefined ? '' : c.str(m.method, 'simulation.summary.method'),
      made: m.made === undefined ? '' : c.str(m.made, 'simulation.summary.made'),
    };
    // The share of the area follows from the area when a file leaves it out.
    const mapped = summary.activeCells * summary.cell * summary.cell;
    const share = (a: number) => (mapped > 0 ? a / mapped : 0);
    summary.fraction = m.fraction === undefined
      ? { median: share(area.median), p05: share(area.p05), p95: share(area.p95), mean: share(area.mean) }
      : readSpread(c, m.fraction, 'simulation.summary.fraction', 0);
    if (m.volume !== undefined && m.volume !== null) {
      const vo = c.obj(m.volume, 'simulation.summary.volume');
      summary.volume = { ...readSpread(c, vo, 'simulation.summary.volume', 0), unit: 'm³', depth: c.num(vo.depth, 'simulation.summary.volume.depth', Number.MIN_VALUE, 'a depth above 0 m') };
    }
    out.summary = summary;
  }
  return out;
}

/**
 * Version 1, the first shape: the samples with their reading options flat beside the text, the
 * model, one cell size and the threshold; no boundary, no structure settings, no grid geometry.
 *   {"format": "gapwise-project", "version": 1,
 *    "samples": {"fileName", "text", "value"?, "x"?, "y"?, "crs"?, "nonDetect"?},
 *    "model": {...} | null, "cell": 0 | metres, "threshold": number | null}
 */
function migrateV1(o: Obj, c: Checker): Obj {
  const s = c.obj(o.samples, 'samples');
  const intake: Obj = {};
  for (const k of ['value', 'x', 'y', 'crs', 'nonDetect']) if (s[k] !== undefined) intake[k] = s[k];
  const model = o.model as Obj | null | undefined;
  return {
    format: PROJECT_FORMAT,
    version: PROJECT_VERSION,
    saved: o.saved,
    software: o.software,
    title: o.title,
    samples: { fileName: s.fileName, text: s.text, intake, unit: '' },
    boundary: null,
    structure: { transform: isObj(model) && model.transform === 'log' ? 'log' : 'none', variogram: {}, chosen: '' },
    model: model ?? null,
    grid: { area: 'extent', padding: DEFAULT_PADDING, cellSize: o.cell ?? 0 },
    threshold: o.threshold ?? null,
  };
}

/** A checked project and what was done to it on the way in. */
export interface OpenedProject {
  project: Project;
  /** The version the file had (1 or 2). */
  fileVersion: number;
  warnings: Warning[];
}

/**
 * Reads project text: checks the format and version, migrates version 1, validates every field.
 * Throws GapwiseError ('bad-file' with the field, 'bad-model') naming `fileName`.
 */
export function openProject(text: string, fileName: string): OpenedProject {
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  let json: unknown;
  try {
    json = JSON.parse(body);
  } catch (e) {
    throw new GapwiseError('bad-file', `The project is not valid JSON (${(e as Error).message}); expected a Gapwise project file.`, { file: fileName });
  }
  const c = new Checker(fileName);
  if (!isObj(json) || json.format !== PROJECT_FORMAT) {
    const got = isObj(json) ? JSON.stringify(json.format ?? null) : 'not an object';
    throw new GapwiseError('bad-file', `The file's "format" is ${got}; expected "${PROJECT_FORMAT}" (a Gapwise project file).`, { file: fileName });
  }
  const version = typeof json.version === 'number' ? json.version : NaN;
  if (!Number.isInteger(version) || version < 1) c.fail('version', `a version number (1 to ${PROJECT_VERSION})`, json.version);
  if (version > PROJECT_VERSION) {
    throw new GapwiseError('bad-file', `The project has version ${version}, written by a newer Gapwise; this one reads versions 1 to ${PROJECT_VERSION}.`, { file: fileName });
  }
  const warnings: Warning[] = [];
  let current: Obj = json;
  if (version === 1) {
    current = migrateV1(json, c);
    warnings.push({ code: 'project-migrated', message: `${fileName} is a version 1 project; it was read as version ${PROJECT_VERSION} (grid over the samples' extent with 5 % padding; no boundary).` });
  }
  return { project: validateV2(current, fileName), fileVersion: version, warnings };
}

// ------------------------------------------------------------------- back to the engine's inputs

/** Reads the project's samples exactly as the app does: the stored text with the stored options. */
export function projectIntake(project: Project): IntakeResult {
  return readSamples(project.samples.text, { ...project.samples.intake, fileName: project.samples.fileName });
}

/** The boundary polygons in WGS 84 and in the working CRS (null without a boundary). */
export function projectBoundary(project: Project, workCrs: string): { lonLat: Polygon[]; work: Polygon[] } | null {
  const b = project.boundary;
  if (!b) return null;
  const lonLat = readPolygons(b.text, b.fileName);
  if (workCrs === LOCAL_CRS) {
    throw new GapwiseError('bad-crs', 'The samples have local planar coordinates with no CRS, so a longitude/latitude boundary cannot be placed over them; give the samples\' CRS.', { file: b.fileName });
  }
  return { lonLat, work: projectPolygons(lonLat, workCrs) };
}

export { roundCell, type GridPlanOptions } from '../core/geometry/grid.ts';

/** The grid a surface is computed on (see core/geometry/grid.ts planSurfaceGrid: one plan for app, files and CLI). */
export function planSurfaceGrid(o: GridPlanOptions, workCrs?: string): Grid {
  const grid = planGrid(o).grid;
  if (workCrs !== undefined) checkGridInCrs(gridBounds(grid), workCrs);
  return grid;
}

/**
 * The project's grid: the stored geometry when there is one (with the boundary mask recomputed from
 * the boundary), else planned from the samples as the app plans it. `overrides.cellSize` (a new
 * cell size) replans. Throws 'bad-file' when a stored geometry does not match its boundary.
 */
export function projectGrid(
  project: Project, intake: IntakeResult, boundary: { work: Polygon[] } | null, overrides: { cellSize?: number } = {},
): Grid {
  const g = project.grid;
  const polygons = g.area === 'boundary' && boundary ? boundary.work.map((p) => p.rings) : null;
  const replan = overrides.cellSize !== undefined && overrides.cellSize !== g.geometry?.cell;
  if (g.geometry && !replan) {
    const geo = g.geometry;
    if (!polygons) return { x0: geo.x0, y0: geo.y0, cell: geo.cell, nx: geo.nx, ny: geo.ny };
    const masked = gridForPolygons(polygons, geo.cell);
    if (masked.x0 !== geo.x0 || masked.y0 !== geo.y0 || masked.nx !== geo.nx || masked.ny !== geo.ny) {
      throw new GapwiseError('bad-file',
        `The project's grid (corner ${geo.x0}, ${geo.y0}; ${geo.nx} × ${geo.ny} cells) does not match its boundary at ${geo.cell} m (corner ${masked.x0}, ${masked.y0}; ${masked.nx} × ${masked.ny}); expected the grid the boundary gives.`,
        { file: project.samples.fileName });
    }
    return masked;
  }
  return planSurfaceGrid({
    x: intake.samples.x, y: intake.samples.y, padding: g.padding,
    cellSize: overrides.cellSize ?? g.cellSize, polygons,
  }, intake.report.crs.work);
}

/** The grid's geometry as stored in a project. */
export function gridGeometry(grid: Grid): NonNullable<ProjectGrid['geometry']> {
  return { x0: grid.x0, y0: grid.y0, cell: grid.cell, nx: grid.nx, ny: grid.ny };
}
