/**
 * Several analytes in one run: `--value zinc,lead,copper`, or `--value '*'` for every numeric column
 * besides the coordinates. Each analyte is read from the samples file on its own (its own rows: a
 * row with no value for one analyte still counts for the others) and gets its own model.
 *
 * `fit` writes one model set (docs: README "Several analytes"):
 *   {"analytes": {"zinc": MODEL, "lead": MODEL}, "caution": "..."}
 * where each MODEL is exactly what `gapwise fit --value zinc` writes (a model file of its own, with
 * its "crs" and "data"), fitted by the same code with the same options.
 * `grid` reads such a set (--model) and computes each analyte's surfaces on one grid, planned from
 * the sample locations of all analytes together (or --boundary / --cell as given), with
 * `--threshold zinc=720,lead=530` (or one number for all). The GeoTIFF has mean, sd (and P(exceed))
 * bands per analyte, named by analyte; the grid CSV has the columns zinc_mean, zinc_sd,
 * zinc_p_exceed, lead_mean, ... Each analyte's numbers are those of a one-analyte run on the same grid.
 */
import { GapwiseError, type Warning } from '../core/shared/errors.ts';
import { parseModel, type CovarianceModel } from '../core/covariance/model.ts';
import { cellCount, type Grid } from '../core/geometry/grid.ts';
import type { SurfaceResult } from '../core/prediction/surface.ts';
import type { IntakeResult } from '../io/types.ts';
import { bandDescriptions, bandsGeoTiff, localAccuracyMetadata } from '../io/geotiff.ts';
import { analyteColumnName, analyteGridCsvChunks } from '../io/grid-csv.ts';
import { trendColumnCount } from '../core/covariance/trend.ts';
import { isCovariateTrend } from '../core/covariance/model.ts';
import { describeAccuracy, type LocalAccuracy, type LocalSettings } from '../core/prediction/local-accuracy.ts';
import { checkLocalSurface } from './local-check.ts';
import { DEFAULT_PADDING, planSurfaceGrid } from '../io/project.ts';
import { stringOption } from './args.ts';
import {
  CAUTION, count, describePredictionPath, gridFigures, jsonText, naming, printNotes, printWarnings, progressLine, readGridSpacing,
  readPredictionPath, readSamplesFile, readText, readWorkers, writeOutput, type CliIo, type OptionValues,
} from './common.ts';
import { readBoundaryFile } from './boundary-file.ts';
import { computeSurfaceParallel, type SurfaceJob } from './parallel.ts';
import { computeSurfacesShared } from './analyte-surfaces.ts';

/** `--value` naming every numeric column besides the coordinates. */
export const ALL_NUMERIC = '*';
/** Most analytes one run takes. */
export const MAX_ANALYTES = 64;

/** The analyte list `--value` asks for: null for one value column (the usual run). */
export function analyteRequest(values: OptionValues): string[] | typeof ALL_NUMERIC | null {
  const raw = stringOption(values, 'value');
  if (raw === undefined) return null;
  if (raw.trim() === ALL_NUMERIC) return ALL_NUMERIC;
  if (!raw.includes(',')) return null;
  const names = raw.split(',').map((s) => s.trim());
  if (names.some((s) => s === '')) {
    throw new GapwiseError('bad-option', `Option "--value" expects column names separated by commas (e.g. zinc,lead,copper), got "${raw}" with an empty name.`);
  }
  const seen = new Set<string>();
  for (const name of names) {
    if (seen.has(name)) throw new GapwiseError('bad-option', `Option "--value" names the column "${name}" twice; expected each analyte once.`);
    seen.add(name);
  }
  if (names.length > MAX_ANALYTES) throw new GapwiseError('bad-option', `Option "--value" names ${names.length} columns; expected at most ${MAX_ANALYTES}.`);
  return names;
}

/** The analytes to map: the list given, or every numeric column of the samples file for '*'. */
export function resolveAnalytes(io: CliIo, values: OptionValues, request: string[] | typeof ALL_NUMERIC, workCrs?: string): string[] {
  if (request !== ALL_NUMERIC) return request;
  try {
    const { value: _all, ...rest } = values;
    const one = readSamplesFile(io, rest, workCrs);
    return [one.report.valueColumn];
  } catch (e) {
    const list = (e as { numericColumns?: unknown }).numericColumns;
    if (e instanceof GapwiseError && Array.isArray(list) && list.length > 0) {
      if (list.length > MAX_ANALYTES) throw new GapwiseError('bad-option', `The samples hold ${list.length} numeric columns; "--value *" maps at most ${MAX_ANALYTES}: name the analytes.`);
      return list as string[];
    }
    throw e;
  }
}

/** The io of one analyte's run inside a several-analyte run: its stdout is kept, its notes named. */
function analyteIo(io: CliIo, name: string, keep: (text: string) => void): CliIo {
  return {
    ...io,
    stdout: keep,
    stderr: (text: string) => io.stderr(text.replace(/^(note|warning): /gm, (m) => `${m}[${name}] `)),
  };
}

/**
 * `fit` for several analytes: runs the one-analyte fit (`fitOne`, the command's own run, model JSON
 * on stdout) once per analyte and writes the model set.
 */
export async function fitAnalytes(
  values: OptionValues, io: CliIo, request: string[] | typeof ALL_NUMERIC,
  fitOne: (values: OptionValues, io: CliIo) => Promise<number>,
): Promise<number> {
  const names = resolveAnalytes(io, values, request);
  const analytes: Record<string, unknown> = {};
  for (const name of names) {
    let text = '';
    const { out: _out, ...rest } = values;
    const code = await fitOne({ ...rest, value: name }, analyteIo(io, name, (t) => { text += t; }));
    if (code !== 0) return code;
    analytes[name] = JSON.parse(text);
  }
  printNotes(io, [`${names.length} analytes fitted: ${names.join(', ')}`]);
  await writeOutput(io, stringOption(values, 'out'), jsonText({ analytes, caution: CAUTION }));
  return 0;
}

/** A model set (or a one-analyte model file, for one analyte) read and checked. */
export function readModelSet(io: CliIo, file: string, names: readonly string[]): { models: Map<string, CovarianceModel>; workCrs?: string } {
  const raw = readText(io, file);
  let json: unknown;
  try {
    json = JSON.parse(raw.charCodeAt(0) === 0xfeff ? raw.slice(1) : raw);
  } catch {
    throw new GapwiseError('bad-model', 'The model set is not valid JSON; expected a file written by "gapwise fit --value a,b".', { file });
  }
  const set = (json as { analytes?: unknown }).analytes;
  if (typeof set !== 'object' || set === null || Array.isArray(set)) {
    throw new GapwiseError('bad-model', `Expected a model set with "analytes" (written by "gapwise fit --value ${names.join(',')}"), got a file without it.`, { file });
  }
  const entries = set as Record<string, unknown>;
  const models = new Map<string, CovarianceModel>();
  let workCrs: string | undefined;
  for (const name of names) {
    if (!(name in entries)) {
      throw new GapwiseError('bad-model', `The model set has no model for "${name}"; it has ${Object.keys(entries).map((k) => `"${k}"`).join(', ')}.`, { file });
    }
    try {
      models.set(name, parseModel(entries[name]));
    } catch (e) {
      if (e instanceof GapwiseError) {
        e.place.file = file;
        e.message = `analytes["${name}"]: ${e.message}`;
      }
      throw e;
    }
    const crs = (entries[name] as { crs?: { work?: unknown } }).crs;
    if (crs && typeof crs.work === 'string') {
      if (workCrs !== undefined && workCrs !== crs.work) {
        throw new GapwiseError('bad-model', `The models of the set use different working CRSs (${workCrs} and ${crs.work}); expected one.`, { file });
      }
      workCrs = crs.work;
    }
  }
  return { models, workCrs };
}

/** `--threshold 720` (every analyte) or `--threshold zinc=720,lead=530` (those named). */
export function readAnalyteThresholds(values: OptionValues, names: readonly string[]): Map<string, number> {
  const raw = values.threshold;
  const out = new Map<string, number>();
  if (raw === undefined) return out;
  if (typeof raw === 'number') {
    for (const n of names) out.set(n, raw);
    return out;
  }
  for (const part of String(raw).split(',')) {
    const eq = part.lastIndexOf('=');
    const name = part.slice(0, eq).trim();
    const v = Number(part.slice(eq + 1).trim());
    if (eq < 0 || name === '' || part.slice(eq + 1).trim() === '' || !Number.isFinite(v)) {
      throw new GapwiseError('bad-option', `Option "--threshold" expects a number or NAME=NUMBER pairs separated by commas (e.g. zinc=720,lead=530), got "${part.trim()}".`);
    }
    if (!names.includes(name)) throw new GapwiseError('bad-option', `Option "--threshold" names "${name}", which is not one of the analytes ${names.map((x) => `"${x}"`).join(', ')}.`);
    out.set(name, v);
  }
  return out;
}

/**
 * `--threshold` for the one-analyte commands: a number string becomes the number (as before), a
 * NAME=NUMBER list is refused (it needs several analytes).
 */
export function singleThreshold(values: OptionValues): OptionValues {
  const raw = values.threshold;
  if (typeof raw !== 'string') return values;
  const v = Number(raw.trim());
  if (raw.trim() === '' || !Number.isFinite(v)) {
    throw new GapwiseError('bad-option', `Option "--threshold" expects a number${raw.includes('=') ? ' with one analyte (NAME=NUMBER pairs need several analytes in --value)' : ''}, got "${raw}".`);
  }
  return { ...values, threshold: v };
}

const UNSUPPORTED_IN_SET = ['project', 'support', 'realisations', 'levels', 'depth', 'seed', 'block-points'];

/** What `grid` for several analytes reads before it computes: the analytes, their models and samples. */
interface AnalyteGridInput {
  out: string;
  format: 'tif' | 'csv';
  modelPath: string;
  names: string[];
  models: Map<string, CovarianceModel>;
  intakes: IntakeResult[];
  workCrs: string;
  thresholds: Map<string, number>;
}

/** Reads and checks the options, the model set and each analyte's samples. */
function readAnalyteGridInput(values: OptionValues, io: CliIo, request: string[] | typeof ALL_NUMERIC): AnalyteGridInput {
  for (const name of UNSUPPORTED_IN_SET) {
    if (values[name] !== undefined) throw new GapwiseError('bad-option', `Option "--${name}" is not available with several analytes; map them one at a time for it.`);
  }
  const out = stringOption(values, 'out') as string;
  const lower = out.toLowerCase();
  const format = lower.endsWith('.tif') || lower.endsWith('.tiff') ? 'tif' : lower.endsWith('.csv') ? 'csv' : null;
  if (!format) throw new GapwiseError('bad-option', `Option "--out ${out}" has an extension Gapwise cannot write for several analytes; expected .tif or .csv.`);
  const modelPath = stringOption(values, 'model') as string;
  const given = stringOption(values, 'work-crs');
  const names = resolveAnalytes(io, values, request, given);
  const { models, workCrs: modelCrs } = readModelSet(io, modelPath, names);
  if (given !== undefined && modelCrs !== undefined && given !== modelCrs) {
    throw new GapwiseError('bad-option', `Option "--work-crs ${given}" differs from the models' working CRS ${modelCrs}; the models' scales are in its units.`);
  }
  const intakes: IntakeResult[] = names.map((name) => readSamplesFile(io, { ...values, value: name }, given ?? modelCrs));
  const workCrs = intakes[0].report.crs.work;
  for (const [name, m] of models) {
    if (isCovariateTrend(m.trend)) {
      throw new GapwiseError('bad-option', `The model of "${name}" has covariates in its mean (${m.trend.covariates.join(', ')}); map it on its own with --covariate-raster, one analyte at a time.`);
    }
  }
  const thresholds = readAnalyteThresholds(values, names);
  for (const [name, t] of thresholds) {
    if (models.get(name)!.transform === 'log' && !(t > 0)) throw new GapwiseError('bad-option', `Option "--threshold" for "${name}" must be above 0 with a log model, got ${t}.`);
  }
  return { out, format, modelPath, names, models, intakes, workCrs, thresholds };
}

/** One grid for all: planned from every analyte's sample locations (or --boundary), with --cell and --padding. */
function planAnalyteGrid(values: OptionValues, io: CliIo, input: AnalyteGridInput): Grid {
  const { intakes } = input;
  const x = Float64Array.from(intakes.flatMap((r) => Array.from(r.samples.x)));
  const y = Float64Array.from(intakes.flatMap((r) => Array.from(r.samples.y)));
  const boundaryPath = stringOption(values, 'boundary');
  const boundary = boundaryPath === undefined ? null : readBoundaryFile(io, boundaryPath, intakes[0]);
  const { cell, padding } = readGridSpacing(values);
  return planSurfaceGrid({
    x, y, padding: padding ?? DEFAULT_PADDING, cellSize: cell ?? 0, polygons: boundary ? boundary.polygons.map((p) => p.rings) : null,
  }, input.workCrs);
}

/**
 * Each analyte's surfaces on the grid, from one pool of workers (./analyte-surfaces.ts) by the path its
 * own run would take; local neighbourhoods are measured against exact kriging and grown or replaced
 * when they miss, as in a one-analyte run. Prints what was done for each.
 */
async function computeAnalyteSurfaces(
  values: OptionValues, io: CliIo, input: AnalyteGridInput, grid: Grid,
): Promise<{ results: SurfaceResult[]; accuracies: Map<string, LocalAccuracy> }> {
  const { names, models, intakes, thresholds, modelPath } = input;
  const workers = readWorkers(values, io);
  const precision = input.format === 'csv' ? 'float64' as const : 'float32' as const;
  // The path and local settings each analyte's own run would take on this grid.
  const threads = Math.min(workers, grid.ny);
  const paths = intakes.map((intake) => readPredictionPath(values, intake.samples.value.length, { targets: cellCount(grid), threads }));
  for (const p of paths) printWarnings(io, p.warnings);
  const settings: LocalSettings[] = names.map((name, a) => ({
    neighbours: Math.min(paths[a].neighbours, intakes[a].samples.value.length),
    globalMean: paths[a].globalMean && trendColumnCount(models.get(name)!.trend ?? 'constant') > 0,
  }));
  const jobOf = (a: number, how: 'exact' | LocalSettings): SurfaceJob => {
    const threshold = thresholds.get(names[a]);
    return {
      samples: intakes[a].samples, model: models.get(names[a])!, grid, path: how === 'exact' ? 'exact' : 'local',
      ...(how !== 'exact' ? { local: { ...how } } : {}),
      surface: { ...(threshold !== undefined ? { threshold } : {}), precision },
    };
  };
  const failed = (a: number, e: unknown): never => naming({ samples: intakes[a].report.fileName, model: modelPath }, () => {
    if (e instanceof GapwiseError) e.message = `[${names[a]}] ${e.message}`;
    throw e;
  });
  // One pool of workers for every analyte (./analyte-surfaces.ts): each analyte's bands as a one-analyte run computes them.
  const jobs = names.map((_, a) => jobOf(a, paths[a].path === 'exact' ? 'exact' : settings[a]));
  const progress = names.map((name) => progressLine(io, `cells of ${name}`));
  let results: SurfaceResult[];
  try {
    results = await computeSurfacesShared(jobs, { workers, onProgress: (j, done, total) => progress[j]?.(done, total) });
  } catch (e) {
    const j = (e as { job?: number }).job;
    if (j === undefined) throw e;
    return failed(j, e);
  }
  // Local neighbourhoods: measured against exact kriging, grown or replaced when they miss, as in a one-analyte run.
  const notes: string[] = [];
  const accuracies = new Map<string, LocalAccuracy>();
  for (let a = 0; a < names.length; a++) {
    const n = intakes[a].samples.value.length;
    let used = paths[a];
    const extra: string[] = [];
    if (used.path === 'local') {
      const path = paths[a];
      const checked = await checkLocalSurface({
        samples: intakes[a].samples, model: models.get(names[a])!, grid, surface: results[a], settings: settings[a], tolerance: path.tolerance,
        grow: !path.neighboursGiven, exactFallback: path.automatic,
        rerun: (s) => computeSurfaceParallel(jobOf(a, s), { workers, onProgress: progress[a] }),
      }).catch((e: unknown) => failed(a, e));
      results[a] = checked.surface;
      used = checked.path === 'exact'
        ? { ...path, path: 'exact', reason: 'local neighbourhoods missed the tolerance' }
        : { ...path, neighbours: checked.settings.neighbours, globalMean: checked.settings.globalMean };
      if (checked.path === 'local') accuracies.set(names[a], checked.accuracy);
      extra.push(...checked.notes, `measured error of the local neighbourhoods ${describeAccuracy(checked.accuracy)}`);
    }
    notes.push(`[${names[a]}] ${describePredictionPath(used, n)}; ${count(cellCount(grid))} cells`, ...extra.map((t) => `[${names[a]}] ${t}`));
  }
  printNotes(io, notes);
  return { results, accuracies };
}

/** Writes the analytes' surfaces: a GeoTIFF with mean, sd (and P(exceed)) bands per analyte, or the grid CSV. */
async function writeAnalyteFile(
  io: CliIo, input: AnalyteGridInput, grid: Grid, surfaces: Array<{ name: string; unit: string; surface: SurfaceResult }>, accuracies: Map<string, LocalAccuracy>,
): Promise<{ bands?: string[]; warnings: Warning[] }> {
  const { out, workCrs } = input;
  if (input.format !== 'tif') {
    await writeOutput(io, out, analyteGridCsvChunks({ grid, workCrs, analytes: surfaces }));
    return { warnings: [] };
  }
  const layers: ArrayLike<number>[] = [];
  const descriptions: string[] = [];
  for (const s of surfaces) {
    layers.push(s.surface.mean, s.surface.sd);
    if (s.surface.pExceed) layers.push(s.surface.pExceed);
    // As the one-analyte grid names them: the column name without its unit in brackets.
    descriptions.push(...bandDescriptions(s.surface, s.unit, s.name.replace(/\s*\([^)]*\)\s*$/, '')));
  }
  // The measured error of each local analyte, its items prefixed by the analyte's column name.
  const metadata: Record<string, string> = {};
  for (const [name, acc] of accuracies) {
    for (const [k, v] of Object.entries(localAccuracyMetadata(acc))) metadata[`${analyteColumnName(name).toUpperCase()}_${k}`] = v;
  }
  const tif = bandsGeoTiff({
    grid, bands: layers, names: descriptions, workCrs, title: `Gapwise surfaces of ${surfaces.length} analytes.`,
    ...(accuracies.size > 0 ? { metadata } : {}),
  });
  await writeOutput(io, out, new Uint8Array(tif.buffer));
  return { bands: tif.bands, warnings: [...tif.warnings] };
}

/** `grid` for several analytes (point support, GeoTIFF or CSV). */
export async function gridAnalytes(values: OptionValues, io: CliIo, request: string[] | typeof ALL_NUMERIC): Promise<number> {
  const input = readAnalyteGridInput(values, io, request);
  const { out, format, workCrs, names, intakes, thresholds } = input;
  const grid = planAnalyteGrid(values, io, input);
  const { results, accuracies } = await computeAnalyteSurfaces(values, io, input, grid);
  const surfaces = names.map((name, a) => ({ name, unit: intakes[a].report.unit, surface: results[a] }));
  const warnings: Warning[] = [];
  for (const s of surfaces) warnings.push(...s.surface.warnings.map((w) => ({ ...w, message: `[${s.name}] ${w.message}` })));
  const written = await writeAnalyteFile(io, input, grid, surfaces, accuracies);
  warnings.push(...written.warnings);
  const bands = written.bands;
  printWarnings(io, warnings);
  io.stdout(jsonText({
    out, format, workCrs, analytes: names,
    grid: gridFigures(grid),
    thresholds: Object.fromEntries(thresholds),
    ...(bands ? { bands } : {}),
    ranges: Object.fromEntries(surfaces.map((s) => [s.name, s.surface.range])),
    ...(accuracies.size > 0 ? { localError: Object.fromEntries(accuracies) } : {}),
    caution: CAUTION,
  }));
  return 0;
}
