/**
 * What every command shares: the command and I/O types, the screening caution, the sample options,
 * reading samples through the one intake (`readSamples`), reading a model file, writing outputs,
 * printing warnings and notes, the choice between exact kriging and local neighbourhoods for
 * predict, cv and grid (`readPredictionPath`), and progress lines for long runs.
 */
import { availableParallelism } from 'node:os';
import { GapwiseError, type Warning } from '../core/shared/errors.ts';
import { parseModel, type CovarianceModel } from '../core/covariance/model.ts';
import { SampleIntake, readSamples } from '../io/intake.ts';
import { openInputFile, readInputText } from './input-file.ts';
import { sampleLimitsText } from '../io/intake-limits.ts';
import { usualCoordinateColumn } from '../io/intake-columns.ts';
import { jsonErrorOffset } from '../io/geojson.ts';
import type { IntakeOptions, IntakeResult, NonDetectRule, DuplicateRule } from '../io/types.ts';
import { DEFAULT_LOCAL_NEIGHBOURS } from '../core/prediction/local-kriging.ts';
import { CHECK_COUNT, DEFAULT_TOLERANCE, EXACT_SAMPLE_LIMIT, LARGE_CHECK_COUNT, REFERENCE_NEIGHBOURS, chooseLeaveOneOutPath, choosePredictionPath, parseTolerance, type Tolerance } from '../core/prediction/path-choice.ts';
import { MAX_GROWN_NEIGHBOURS } from '../core/prediction/local-accuracy.ts';
import { booleanOption, numberOption, stringOption, type OptionSpec, type OptionValue } from './args.ts';
import { writeFileSafely, type OutputData } from './safe-write.ts';
import { MAX_EXACT_SAMPLES } from '../core/shared/sizes.ts';
import { cellCount, type Grid } from '../core/geometry/grid.ts';

/** Carried by every result, export and help text: the engine's one text. */
export { CAUTION } from '../core/shared/caution.ts';

/** Where a command writes; tests pass their own to capture the text. */
export interface CliIo {
  stdout(text: string): void;
  stderr(text: string): void;
  /** Relative file names resolve against this directory. */
  cwd: string;
  /** Texts held in memory by the name commands read them under (a --project's samples and model); read before the disk. */
  files?: Readonly<Record<string, string>>;
  /** Reading options from a --project; options given on the command line win. */
  intakeDefaults?: Partial<IntakeOptions>;
  /** stderr is a terminal: progress rewrites one line instead of printing a few plain ones. */
  stderrIsTerminal?: boolean;
  /** stdout is a terminal: its text is shown with control characters escaped (./terminal-text.ts). */
  stdoutIsTerminal?: boolean;
  /** --quiet: no progress lines and no notes (warnings and errors are still printed). */
  quiet?: boolean;
  /** Seconds a run lasts before progress lines start; default PROGRESS_AFTER_SECONDS (tests give 0 to see them). */
  progressAfterSeconds?: number;
  /** Most threads --workers may ask for; default the number of cores (tests check splits over more). */
  maxWorkers?: number;
  /**
   * Outputs kept in memory instead of written (one analyte's run inside a several-analyte run,
   * ./analytes.ts): writeOutput hands `--out`'s data here and writes no file.
   */
  capture?: (file: string, data: OutputData) => void;
}

export type OptionValues = Record<string, OptionValue>;

/** One command: its help and its work. `run` returns the exit code. */
export interface CommandSpec {
  name: string;
  /** One line for the tool's command list. */
  summary: string;
  usage: string;
  /** Paragraphs after the usage line. */
  description: string[];
  options: OptionSpec[];
  examples: string[];
  run(values: OptionValues, io: CliIo): Promise<number>;
}

/** The options every command that reads samples takes (same names, same defaults everywhere). */
export const SAMPLE_OPTIONS: OptionSpec[] = [
  { name: 'samples', kind: 'string', placeholder: 'FILE', help: `samples file: CSV (one row per sample) or GeoJSON points; ${sampleLimitsText()}`, required: true },
  { name: 'value', kind: 'string', placeholder: 'COL', help: 'column (or GeoJSON property) holding the measured value', defaultText: 'detected: the one numeric column besides the coordinates' },
  { name: 'x', kind: 'string', placeholder: 'COL', help: 'column of the x coordinate (longitude, easting)', defaultText: 'detected from usual names (lon, longitude, x, easting, e, ...)' },
  { name: 'y', kind: 'string', placeholder: 'COL', help: 'column of the y coordinate (latitude, northing)', defaultText: 'detected from usual names (lat, latitude, y, northing, n, ...)' },
  { name: 'crs', kind: 'string', placeholder: 'CRS', help: 'coordinate reference system of the samples: EPSG:NNNN or a proj string', defaultText: 'EPSG:4326 for lon/lat column names, local planar coordinates (coordinate units) for x/y, easting/northing' },
  { name: 'work-crs', kind: 'string', placeholder: 'CRS', help: 'metric CRS the numbers are computed in', defaultText: 'the input CRS when projected, else the WGS 84 UTM zone of the samples' },
  { name: 'non-detect', kind: 'string', placeholder: 'RULE', choices: ['half', 'dl', 'sqrt2'], help: 'value used for a non-detect such as "<5": half the detection limit, the limit, or the limit/√2', defaultText: 'half' },
  { name: 'duplicates', kind: 'string', placeholder: 'RULE', choices: ['merge', 'keep'], help: 'samples at the same location: merged into their mean, or kept (kept duplicates need a nugget)', defaultText: 'merge' },
];

/** The `--out FILE` option; `what` says what is written there. */
export function outOption(what: string, otherwise: string): OptionSpec {
  return { name: 'out', kind: 'string', placeholder: 'FILE', help: what, defaultText: otherwise };
}

/**
 * Reads a text file; a missing or unreadable file, a device, pipe or folder, or a file over the size
 * limit is the user's problem (exit 2), not a bug.
 */
export function readText(io: CliIo, file: string): string {
  const held = io.files?.[file];
  if (held !== undefined) return held;
  return readInputText(io.cwd, file);
}

/**
 * Writes `data` to `file` through a temporary file renamed onto the name (./safe-write.ts: never a
 * partial file under the name), or text to stdout when no file is given.
 */
export async function writeOutput(io: CliIo, file: string | undefined, data: OutputData): Promise<void> {
  if (file === undefined) {
    if (data instanceof Uint8Array) throw new Error('Binary output needs --out FILE; stdout takes text only.');
    if (typeof data === 'string') io.stdout(data);
    else {
      for (const piece of data) {
        if (typeof piece !== 'string') throw new Error('Binary output needs --out FILE; stdout takes text only.');
        io.stdout(piece);
      }
    }
    return;
  }
  if (io.capture) {
    io.capture(file, data);
    return;
  }
  await writeFileSafely(io.cwd, file, data, (text) => io.stderr(`note: ${text}\n`));
}

/** Prints warnings on stderr, each line prefixed with "warning: ". */
export function printWarnings(io: CliIo, warnings: readonly (Warning | string)[]): void {
  for (const w of warnings) io.stderr(`warning: ${typeof w === 'string' ? w : w.message}\n`);
}

/** Copies the entries of `from` that are defined onto `to`: an option not given stays out of the object. */
export function assignDefined<T extends object>(to: T, from: { [K in keyof T]?: T[K] | undefined }): T {
  for (const [key, value] of Object.entries(from)) if (value !== undefined) (to as Record<string, unknown>)[key] = value;
  return to;
}

/** Intake options from the common command-line options. */
function intakeOptions(values: OptionValues, file: string, workCrs?: string): IntakeOptions {
  return assignDefined<IntakeOptions>({ fileName: file }, {
    value: stringOption(values, 'value'),
    x: stringOption(values, 'x'),
    y: stringOption(values, 'y'),
    crs: stringOption(values, 'crs'),
    workCrs: workCrs ?? stringOption(values, 'work-crs'),
    nonDetect: stringOption(values, 'non-detect') as NonDetectRule | undefined,
    duplicates: stringOption(values, 'duplicates') as DuplicateRule | undefined,
  });
}

/**
 * Reads `--samples` through the one intake every command uses, and prints its warnings.
 * `workCrs` overrides `--work-crs` (predict and cv take the model's working CRS).
 */
export function readSamplesFile(io: CliIo, values: OptionValues, workCrs?: string): IntakeResult {
  const file = stringOption(values, 'samples');
  if (file === undefined) throw new GapwiseError('bad-option', 'Option "--samples FILE" is required.');
  const options = { ...io.intakeDefaults, ...intakeOptions(values, file, workCrs) };
  const held = io.files?.[file];
  let result: IntakeResult;
  try {
    if (held !== undefined) result = readSamples(held, options);
    else {
      // Streamed from the disk: the size and row limits stop a huge file early.
      const { size, chunks } = openInputFile(io.cwd, file);
      const intake = new SampleIntake(options, { totalBytes: size });
      for (const chunk of chunks) intake.push(chunk);
      result = intake.finish();
    }
  } catch (e) {
    if (e instanceof GapwiseError && e.place.file === undefined && e.code !== 'bad-option') e.place.file = file;
    throw e;
  }
  printWarnings(io, result.report.warnings);
  return result;
}

/** What a model file written by `gapwise fit` holds besides the model itself. */
export interface ModelFile {
  model: CovarianceModel;
  /** The working CRS the model's distances are in, when the file says. */
  workCrs?: string;
}

/** 1-based line and column of a character offset. */
function lineAndColumn(text: string, offset: number): { line: number; column: number } {
  let line = 1;
  let last = -1;
  for (let i = 0; i < offset && i < text.length; i++) {
    if (text[i] === '\n') {
      line++;
      last = i;
    }
  }
  return { line, column: offset - last };
}

/** Reads and checks a model JSON file (parseModel); problems name the file (exit 2). */
export function readModelFile(io: CliIo, file: string): ModelFile {
  const raw = readText(io, file);
  const text = raw.charCodeAt(0) === 0xfeff ? raw.slice(1) : raw;
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch {
    const offset = jsonErrorOffset(text);
    if (offset >= 0) {
      const { line, column } = lineAndColumn(text, offset);
      const near = text.slice(Math.max(0, offset - 15), offset + 15).replace(/\s+/g, ' ').trim();
      throw new GapwiseError('bad-model', `The model is not valid JSON at character ${column} (near "${near}"); expected a model as written by "gapwise fit".`, { file, row: line });
    }
    throw new GapwiseError('bad-model', 'The model is not valid JSON; expected a model as written by "gapwise fit".', { file });
  }
  let model: CovarianceModel;
  try {
    model = parseModel(json);
  } catch (e) {
    if (e instanceof GapwiseError) e.place.file = file;
    throw e;
  }
  const crs = (json as { crs?: { work?: unknown } }).crs;
  const out: ModelFile = { model };
  if (crs && typeof crs.work === 'string' && crs.work !== '') out.workCrs = crs.work;
  return out;
}

/**
 * The working CRS for predict and cv: the model's (its distances are in those units). A different
 * `--work-crs` is an error, since the model's scale would then be in the wrong units.
 */
export function modelWorkCrs(values: OptionValues, modelFile: ModelFile, file: string): string | undefined {
  const given = stringOption(values, 'work-crs');
  if (given !== undefined && modelFile.workCrs !== undefined && given !== modelFile.workCrs) {
    throw new GapwiseError('bad-option',
      `Option "--work-crs ${given}" differs from the model's working CRS ${modelFile.workCrs}; expected the same CRS the model was fitted in, or no --work-crs.`,
      { file });
  }
  return modelFile.workCrs ?? given;
}

/** Warns that a model file does not say which working CRS its distances are in (the samples' is then assumed). */
export function warnUnstatedWorkCrs(io: CliIo, modelFile: ModelFile, modelPath: string, workCrs: string): void {
  if (modelFile.workCrs === undefined) printWarnings(io, [`${modelPath} does not say which working CRS its distances are in; ${workCrs} is assumed.`]);
}

/** A model file and the samples read in its working CRS. */
export interface ModelAndSamples {
  modelPath: string;
  modelFile: ModelFile;
  model: CovarianceModel;
  intake: IntakeResult;
  /** The samples' working CRS (the model's when it says one). */
  workCrs: string;
}

/**
 * Reads `--model` and then `--samples` in the model's working CRS (modelWorkCrs), and warns when the
 * model does not say its CRS: the start of every command that predicts with a given model.
 */
export function readModelAndSamples(io: CliIo, values: OptionValues): ModelAndSamples {
  const modelPath = stringOption(values, 'model') as string;
  const modelFile = readModelFile(io, modelPath);
  const intake = readSamplesFile(io, values, modelWorkCrs(values, modelFile, modelPath));
  const workCrs = intake.report.crs.work;
  warnUnstatedWorkCrs(io, modelFile, modelPath, workCrs);
  return { modelPath, modelFile, model: modelFile.model, intake, workCrs };
}

/** A grid as the commands' JSON summaries give it: origin, cell size, columns, rows and cell count. */
export function gridFigures(grid: Grid): { x0: number; y0: number; cell: number; nx: number; ny: number; cells: number } {
  return { x0: grid.x0, y0: grid.y0, cell: grid.cell, nx: grid.nx, ny: grid.ny, cells: cellCount(grid) };
}

/** `--cell` and `--padding` of a grid, checked: a cell size above 0 m, a padding fraction of 0 or more. */
export function readGridSpacing(values: OptionValues): { cell?: number; padding?: number } {
  const cell = numberOption(values, 'cell');
  const padding = numberOption(values, 'padding');
  if (cell !== undefined && !(cell > 0)) throw new GapwiseError('bad-option', `Option "--cell" expects a cell size above 0 m, got ${cell}.`);
  if (padding !== undefined && !(padding >= 0)) throw new GapwiseError('bad-option', `Option "--padding" expects a fraction of 0 or more, got ${padding}.`);
  return assignDefined<{ cell?: number; padding?: number }>({}, { cell, padding });
}

/**
 * The index of a coordinate column among `names`: `preferred` (the samples' own column name) when
 * present, else the column the samples' intake would read as that coordinate (io/intake-columns.ts
 * usualCoordinateColumn: longitude / latitude names, then x / easting and y / northing); -1 when none.
 */
export function findUsualColumn(names: readonly string[], preferred: string | undefined, axis: 'x' | 'y'): number {
  if (preferred !== undefined) {
    const i = names.indexOf(preferred);
    if (i !== -1) return i;
  }
  return usualCoordinateColumn(names, axis);
}

/**
 * Runs engine work and, when it throws an input problem without a file, names the file it concerns:
 * the model file for 'bad-model', else the samples file ('too-few-samples', 'constant-values', ...).
 */
export function naming<T>(files: { samples?: string; model?: string }, work: () => T): T {
  try {
    return work();
  } catch (e) {
    const modelNumbers = e instanceof GapwiseError && e.code === 'non-finite'; // names a model parameter
    if (e instanceof GapwiseError && (modelNumbers || (e.kind === 'input' && e.code !== 'bad-option')) && e.place.file === undefined) {
      const file = e.code === 'bad-model' || modelNumbers ? files.model : files.samples;
      if (file !== undefined) e.place.file = file;
    }
    throw e;
  }
}

/** JSON text with two-space indentation and a final newline. */
export function jsonText(value: unknown): string {
  return `${JSON.stringify(value, null, 2)}\n`;
}

/** Prints notes (how the work was done) on stderr, each line prefixed with "note: "; none with --quiet. */
export function printNotes(io: CliIo, notes: readonly string[]): void {
  if (io.quiet) return;
  for (const n of notes) io.stderr(`note: ${n}\n`);
}

/** A count with thousands separators: 48211 → "48,211". */
export function count(n: number): string {
  return n.toLocaleString('en-US');
}

/** Most samples `--exact` accepts: the dense system takes 8·n² bytes (800 MB at 10,000) in each worker. */
const FORCED_EXACT_LIMIT = EXACT_SAMPLE_LIMIT;
/** Largest `--neighbours` (local-kriging.ts accepts up to 2,000). */
const MAX_NEIGHBOURS = 2000;

/** How the automatic choice is made, for help texts (generated from the constants it uses). */
export const AUTOMATIC_PATH_TEXT = `automatic: the cheaper of exact kriging and local neighbourhoods by estimated cost (samples, targets, threads); `
  + `a local run is checked against exact kriging at up to ${count(CHECK_COUNT)} seeded random targets (from ${count(MAX_EXACT_SAMPLES + 1)} samples: `
  + `against the ${count(REFERENCE_NEIGHBOURS)} nearest samples at ${count(LARGE_CHECK_COUNT)} targets), grown when it misses --tolerance, `
  + `or replaced by exact kriging; never exact above ${count(EXACT_SAMPLE_LIMIT)} samples`;

/** The options of predict, cv and grid that choose between exact kriging and local neighbourhoods. */
export const PREDICTION_PATH_OPTIONS: OptionSpec[] = [
  {
    name: 'neighbours', kind: 'number', placeholder: 'M',
    help: 'local neighbourhoods: each target is predicted from its M nearest samples (distance as the model measures it, anisotropy included); a whole number from 1 to 2,000; a given M is not grown',
    unit: 'samples', defaultText: `${DEFAULT_LOCAL_NEIGHBOURS}, grown up to ${MAX_GROWN_NEIGHBOURS} when the measured error misses --tolerance`,
  },
  {
    name: 'exact', kind: 'boolean',
    help: `exact kriging from all samples whatever their number (memory 8·n² bytes per worker; up to ${count(FORCED_EXACT_LIMIT)} samples)`,
    defaultText: AUTOMATIC_PATH_TEXT,
  },
  { name: 'local', kind: 'boolean', help: 'local neighbourhoods whatever the number of samples (their error is still measured and reported)', defaultText: 'automatic, as for --exact' },
  {
    name: 'tolerance', kind: 'string', placeholder: 'mean=P,sd=P',
    help: 'how close local neighbourhoods must come to exact kriging: largest difference of the mean and of the sd, in % of the prior sd of the surface (a part left out keeps its default; 0 takes exact kriging)',
    defaultText: `mean=${DEFAULT_TOLERANCE.mean},sd=${DEFAULT_TOLERANCE.sd}`,
  },
  {
    name: 'global-mean', kind: 'boolean',
    help: 'local neighbourhoods: use the mean (trend) estimated by GLS from all samples in every neighbourhood, as exact kriging does',
    defaultText: 'on (--local-mean turns it off)',
  },
  {
    name: 'local-mean', kind: 'boolean',
    help: 'local neighbourhoods: re-estimate the mean (trend) in each neighbourhood instead of using the GLS mean of all samples',
    defaultText: 'off',
  },
];

/** How predict, cv and grid compute (plain data). */
export interface PredictionPath {
  path: 'exact' | 'local';
  /** Samples per neighbourhood on the local path (min(M, n) are used). */
  neighbours: number;
  /** True when --neighbours was given (the neighbourhood is then not grown). */
  neighboursGiven: boolean;
  /** Local path: the GLS mean of all samples in every neighbourhood. */
  globalMean: boolean;
  /** True when cost and tolerance chose the path (no --exact, no --local). */
  automatic: boolean;
  /** Why this path, one clause. */
  reason: string;
  tolerance: Tolerance;
  /** Notes about options that do not apply to the chosen path. */
  warnings: string[];
}

/** The job the path is chosen for: targets (cells, points, or samples for leave-one-out) and threads. */
export interface PathJob {
  targets: number;
  threads?: number;
  /** Leave-one-out (cv) instead of prediction at targets. */
  leaveOneOut?: boolean;
}

/**
 * Reads --neighbours, --exact, --local, --tolerance, --global-mean and --local-mean for `n` samples
 * and chooses the path (core/prediction/path-choice.ts) unless --exact or --local says. Throws
 * GapwiseError('bad-option') for contradictory or out-of-range values.
 */
export function readPredictionPath(values: OptionValues, n: number, job: PathJob = { targets: n }): PredictionPath {
  const exact = booleanOption(values, 'exact');
  const local = booleanOption(values, 'local');
  const given = numberOption(values, 'neighbours');
  const localMean = booleanOption(values, 'local-mean');
  if (exact && local) throw new GapwiseError('bad-option', 'Options "--exact" and "--local" contradict each other; expected at most one of them.');
  if (localMean && booleanOption(values, 'global-mean')) {
    throw new GapwiseError('bad-option', 'Options "--global-mean" and "--local-mean" contradict each other; expected at most one of them.');
  }
  if (given !== undefined && !(Number.isInteger(given) && given >= 1 && given <= MAX_NEIGHBOURS)) {
    throw new GapwiseError('bad-option', `Option "--neighbours" expects a whole number of samples from 1 to ${count(MAX_NEIGHBOURS)}, got ${given}.`);
  }
  if (exact && given !== undefined) {
    throw new GapwiseError('bad-option', 'Option "--neighbours" sets the size of local neighbourhoods; it does not apply with "--exact" (exact kriging uses all samples).');
  }
  const toleranceText = stringOption(values, 'tolerance');
  const tolerance = toleranceText === undefined ? { ...DEFAULT_TOLERANCE } : parseTolerance(toleranceText);
  const force = exact ? 'exact' as const : local ? 'local' as const : undefined;
  const neighbours = given ?? DEFAULT_LOCAL_NEIGHBOURS;
  const choice = job.leaveOneOut
    ? chooseLeaveOneOutPath({ samples: n, tolerance, ...(force ? { force } : {}) })
    : choosePredictionPath({ samples: n, targets: job.targets, threads: job.threads ?? 1, neighbours, tolerance, ...(force ? { force } : {}) });
  const warnings: string[] = [];
  if (choice.path === 'exact' && choice.automatic && given !== undefined) {
    warnings.push(`--neighbours ${given} is not used: exact kriging from all ${count(n)} samples was chosen (${choice.reason}); add --local to predict from neighbourhoods.`);
  }
  return {
    path: choice.path, neighbours, neighboursGiven: given !== undefined, globalMean: !localMean, automatic: choice.automatic,
    reason: choice.reason, tolerance, warnings,
  };
}

/**
 * The note that says how the numbers were computed and why, e.g. "predicted from the 64 nearest
 * samples at each target (local neighbourhoods, with the GLS mean of all samples); 48,211 samples;
 * chosen automatically: ... (--exact overrides)". cv passes its own `verb` and `nearest`.
 */
export function describePredictionPath(
  p: PredictionPath, n: number, verb = 'predicted', nearest = 'nearest samples at each target', knownMean = false,
): string {
  if (p.path === 'exact') {
    return `${verb} by exact kriging from all ${count(n)} samples${p.automatic ? `; chosen automatically: ${p.reason} (--local overrides)` : ' (--exact)'}`;
  }
  const m = Math.min(p.neighbours, n);
  const how = knownMean ? 'local neighbourhoods, around the known mean'
    : p.globalMean ? 'local neighbourhoods, with the GLS mean of all samples' : 'local neighbourhoods, the mean re-estimated in each';
  const why = p.automatic ? `; chosen automatically: ${p.reason} (--exact overrides)` : ' (--local)';
  return `${verb} from the ${m} ${nearest} (${how}); ${count(n)} samples${why}`;
}

/** Progress on stderr, called with the work done and the work in all. */
export interface ProgressLine {
  (done: number, total: number): void;
}

/** Seconds a run lasts before it prints progress. */
const PROGRESS_AFTER_SECONDS = 2;
/** Least time between two rewrites of the progress line on a terminal, in milliseconds. */
const TERMINAL_REFRESH_MS = 250;

/**
 * A progress callback for `what` ("cells", "realisations"), silent for the first `afterSeconds`
 * (default `io.progressAfterSeconds`, else PROGRESS_AFTER_SECONDS) so short runs stay quiet, and always with --quiet. On a terminal
 * (`io.stderrIsTerminal`) one line rewrites itself ("\rprogress: 43 % of 250,000 cells (12 s)") at
 * most four times a second and ends with a newline when the work is done; otherwise a plain line
 * is printed at each further tenth of the work. `now` (milliseconds) is injectable for tests.
 */
export function progressLine(io: CliIo, what: string, options: { afterSeconds?: number; now?: () => number } = {}): ProgressLine {
  if (io.quiet) return () => {};
  const now = options.now ?? (() => performance.now());
  const after = (options.afterSeconds ?? io.progressAfterSeconds ?? PROGRESS_AFTER_SECONDS) * 1000;
  const start = now();
  const text = (percent: number, elapsed: number, total: number) => `progress: ${percent} % of ${count(total)} ${what} (${Math.round(elapsed / 1000)} s)`;
  if (io.stderrIsTerminal) {
    let shown = false;
    let last = -Infinity;
    let width = 0;
    return (done, total) => {
      if (!(total > 0)) return;
      const t = now();
      const elapsed = t - start;
      const finished = done >= total;
      if (elapsed < after || (!finished && t - last < TERMINAL_REFRESH_MS)) return;
      if (finished && !shown) return;
      last = t;
      shown = true;
      const line = text(Math.floor((100 * Math.min(done, total)) / total), elapsed, total);
      io.stderr(`\r${line.padEnd(width)}${finished ? '\n' : ''}`);
      width = line.length;
      if (finished) shown = false;
    };
  }
  let printed = 0;
  return (done, total) => {
    if (!(total > 0)) return;
    const tenth = Math.floor((10 * done) / total);
    if (tenth <= printed) return;
    const elapsed = now() - start;
    if (elapsed < after) return;
    printed = tenth;
    io.stderr(`${text(tenth * 10, elapsed, total)}\n`);
  };
}

/**
 * Progress of work whose total is not known ahead (likelihood passes of a fit): "progress: 240
 * likelihood passes (14 s)", silent for the first `io.progressAfterSeconds` (default
 * PROGRESS_AFTER_SECONDS), then every 5 s as plain
 * lines or a rewriting line on a terminal (ended by `done()`); nothing with --quiet.
 */
export function activityLine(io: CliIo, what: string, options: { now?: () => number } = {}): { step(): void; done(): void } {
  if (io.quiet) return { step: () => {}, done: () => {} };
  const now = options.now ?? (() => performance.now());
  const start = now();
  const after = (io.progressAfterSeconds ?? PROGRESS_AFTER_SECONDS) * 1000;
  let steps = 0;
  let last = -Infinity;
  let open = false;
  const every = io.stderrIsTerminal ? TERMINAL_REFRESH_MS : 5000;
  return {
    step() {
      steps++;
      const t = now();
      if (t - start < after || t - last < every) return;
      last = t;
      const line = `progress: ${count(steps)} ${what} (${Math.round((t - start) / 1000)} s)`;
      if (io.stderrIsTerminal) {
        io.stderr(`\r${line}`);
        open = true;
      } else {
        io.stderr(`${line}\n`);
      }
    },
    done() {
      if (open) io.stderr(`\r${`progress: ${count(steps)} ${what} (${Math.round((now() - start) / 1000)} s)`}\n`);
      open = false;
    },
  };
}

/**
 * --workers N: threads to share the work, a whole number from 1 to 256; default one per core. More
 * threads than cores only add memory (each holds its own copy of the work) and switching, so a
 * larger N is capped at the number of cores (`io.maxWorkers`) with a warning on stderr.
 */
export function readWorkers(values: OptionValues, io?: CliIo): number {
  const w = numberOption(values, 'workers');
  if (w === undefined) return availableParallelism();
  const cores = io?.maxWorkers ?? availableParallelism();
  if (!(Number.isInteger(w) && w >= 1 && w <= 256)) {
    throw new GapwiseError('bad-option', `Option "--workers" expects a whole number of threads from 1 to 256, got ${w}.`);
  }
  if (w > cores) {
    if (io) printWarnings(io, [`--workers ${w} is more than the ${cores} cores of this machine; ${cores} worker thread${cores === 1 ? '' : 's'} are used (more threads only take more memory).`]);
    return cores;
  }
  return w;
}

/** The option every command takes to silence progress lines and notes. */
const QUIET_OPTION: OptionSpec = {
  name: 'quiet', kind: 'boolean', help: 'no progress lines and no notes on stderr; warnings and errors are still printed',
};

/** The command with --quiet: the option is listed, and when given the command runs with `io.quiet`. */
export function withQuiet(command: CommandSpec): CommandSpec {
  if (command.options.some((o) => o.name === 'quiet')) return command;
  return {
    ...command,
    options: [...command.options, QUIET_OPTION],
    run(values, io) {
      const { quiet, ...rest } = values;
      return command.run(rest, quiet === true ? { ...io, quiet: true } : io);
    },
  };
}
