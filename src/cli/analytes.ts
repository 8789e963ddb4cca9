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
import { GapwiseError, type Warning } from '../core/errors.ts';
import { parseModel, type CovarianceModel } from '../core/model.ts';
import { cellCount, type Grid } from '../core/grid.ts';
import type { SurfaceResult } from '../core/surface.ts';
import type { IntakeResult } from '../io/types.ts';
import { bandDescriptions, bandsGeoTiff } from '../io/geotiff.ts';
import { analyteGridCsvChunks } from '../io/grid-csv.ts';
import { DEFAULT_PADDING, planSurfaceGrid } from '../io/project.ts';
import { numberOption, stringOption } from './args.ts';
import {
  CAUTION, count, describePredictionPath, jsonText, naming, printNotes, printWarnings, progressLine, readPredictionPath,
  readSamplesFile, readText, readWorkers, writeOutput, type CliIo, type OptionValues,
} from './common.ts';
import { readBoundaryFile } from './boundary-file.ts';
import { computeSurfaceParallel } from './parallel.ts';

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

const UNSUPPORTED_IN_SET = ['project', 'support', 'realizations', 'levels', 'depth', 'seed', 'block-points'];

/** `grid` for several analytes (point support, GeoTIFF or CSV). */
export async function gridAnalytes(values: OptionValues, io: CliIo, request: string[] | typeof ALL_NUMERIC): Promise<number> {
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
  const thresholds = readAnalyteThresholds(values, names);
  for (const [name, t] of thresholds) {
    if (models.get(name)!.transform === 'log' && !(t > 0)) throw new GapwiseError('bad-option', `Option "--threshold" for "${name}" must be above 0 with a log model, got ${t}.`);
  }
  // One grid for all: planned from every analyte's sample locations.
  const x = Float64Array.from(intakes.flatMap((r) => Array.from(r.samples.x)));
  const y = Float64Array.from(intakes.flatMap((r) => Array.from(r.samples.y)));
  const boundaryPath = stringOption(values, 'boundary');
  const boundary = boundaryPath === undefined ? null : readBoundaryFile(io, boundaryPath, intakes[0]);
  const cell = numberOption(values, 'cell');
  const padding = numberOption(values, 'padding');
  if (cell !== undefined && !(cell > 0)) throw new GapwiseError('bad-option', `Option "--cell" expects a cell size above 0 m, got ${cell}.`);
  if (padding !== undefined && !(padding >= 0)) throw new GapwiseError('bad-option', `Option "--padding" expects a fraction of 0 or more, got ${padding}.`);
  const grid: Grid = planSurfaceGrid({
    x, y, padding: padding ?? DEFAULT_PADDING, cellSize: cell ?? 0, polygons: boundary ? boundary.polygons.map((p) => p.rings) : null,
  }, workCrs);
  const workers = readWorkers(values, io);
  const precision = format === 'csv' ? 'float64' as const : 'float32' as const;
  const surfaces: { name: string; unit: string; surface: SurfaceResult }[] = [];
  const warnings: Warning[] = [];
  for (let a = 0; a < names.length; a++) {
    const name = names[a];
    const intake = intakes[a];
    const n = intake.samples.value.length;
    const path = readPredictionPath(values, n);
    printWarnings(io, path.warnings);
    const threshold = thresholds.get(name);
    const surface = await naming({ samples: intake.report.fileName, model: modelPath }, () => computeSurfaceParallel({
      samples: intake.samples, model: models.get(name)!, grid, path: path.path,
      ...(path.path === 'local' ? { local: { neighbors: path.neighbors, globalMean: path.globalMean } } : {}),
      surface: { ...(threshold !== undefined ? { threshold } : {}), precision },
    }, { workers, onProgress: progressLine(io, `cells of ${name}`) }));
    printNotes(io, [`[${name}] ${describePredictionPath(path, n)}; ${count(cellCount(grid))} cells`]);
    warnings.push(...surface.warnings.map((w) => ({ ...w, message: `[${name}] ${w.message}` })));
    surfaces.push({ name, unit: intake.report.unit, surface });
  }
  let bands: string[] | undefined;
  if (format === 'tif') {
    const layers: ArrayLike<number>[] = [];
    const descriptions: string[] = [];
    for (const s of surfaces) {
      layers.push(s.surface.mean, s.surface.sd);
      if (s.surface.pExceed) layers.push(s.surface.pExceed);
      // As the one-analyte grid names them: the column name without its unit in brackets.
      descriptions.push(...bandDescriptions(s.surface, s.unit, s.name.replace(/\s*\([^)]*\)\s*$/, '')));
    }
    const tif = bandsGeoTiff({ grid, bands: layers, names: descriptions, workCrs, title: `Gapwise surfaces of ${surfaces.length} analytes.` });
    warnings.push(...tif.warnings);
    bands = tif.bands;
    await writeOutput(io, out, new Uint8Array(tif.buffer));
  } else {
    await writeOutput(io, out, analyteGridCsvChunks({ grid, workCrs, analytes: surfaces }));
  }
  printWarnings(io, warnings);
  io.stdout(jsonText({
    out, format, workCrs, analytes: names,
    grid: { x0: grid.x0, y0: grid.y0, cell: grid.cell, nx: grid.nx, ny: grid.ny, cells: cellCount(grid) },
    thresholds: Object.fromEntries(thresholds),
    ...(bands ? { bands } : {}),
    ranges: Object.fromEntries(surfaces.map((s) => [s.name, s.surface.range])),
    caution: CAUTION,
  }));
  return 0;
}
