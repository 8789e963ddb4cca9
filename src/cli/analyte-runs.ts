/**
 * Several analytes for `predict` and `cv`, and a model set for the one-analyte commands.
 *
 * Each analyte is run through the command's own one-analyte `run`, with its model taken from the set
 * (held in memory under the set's file name, so messages name the set) and its outputs kept in memory
 * (`CliIo.capture`); the analytes' outputs are then put side by side. Each analyte's numbers are thus
 * the one-analyte run's, digit for digit:
 * - `predict --value a,b`: the targets file once, then a_mean, a_sd, a_sd_obs (a_p_exceed) and the
 *   same for b; `--threshold` as for grid (one number for all, or NAME=T pairs).
 * - `cv --value a,b`: a table of each analyte's summary on stderr, JSON `{"analytes": {a: SUMMARY, ...}}`
 *   on stdout (SUMMARY as `cv --value a` prints it), and with --out one CSV of every analyte's rows,
 *   each as its own run writes it with the analyte's name in a first column `analyte`.
 * - A one-analyte command given a model set (`--model set.json --value a`) uses a's model from it
 *   (`modelFromSet`); `suggest` takes one analyte at a time (`refuseSeveralAnalytes`).
 */
import { GapwiseError } from '../core/shared/errors.ts';
import { formatCount, formatValue } from '../io/format.ts';
import { analyteColumnName } from '../io/grid-csv.ts';
import { SOFTWARE } from '../core/shared/version.ts';
import type { CovarianceModel } from '../core/covariance/model.ts';
import { projectIntake, type Project } from '../io/project.ts';
import { analyteReportHtml, type ReportInput } from '../io/report.ts';
import { prepareReport } from '../worker/report-data.ts';
import { booleanOption, numberOption, stringOption } from './args.ts';
import {
  CAUTION, jsonText, naming, printNotes, printWarnings, progressLine, readText, writeOutput, type CliIo, type OptionValues,
} from './common.ts';
import { readProjectFile } from './project-options.ts';
import { CSV_CAUTION, csvCell, readCsvTable, recordText, type CsvTable } from './csv.ts';
import type { OutputData } from './safe-write.ts';
import { ALL_NUMERIC, MAX_ANALYTES, readAnalyteThresholds, readModelSet, resolveAnalytes } from './analytes.ts';

type OneRun = (values: OptionValues, io: CliIo) => Promise<number>;

/** One analyte's run: what it printed on stdout and the outputs it wrote. */
interface AnalyteRun {
  name: string;
  stdout: string;
  outputs: Map<string, string>;
}

/** The model set's entries as JSON text, by analyte (after readModelSet has checked each one). */
function modelSetTexts(io: CliIo, file: string, names: readonly string[]): { texts: Map<string, string>; workCrs?: string } {
  const { workCrs } = readModelSet(io, file, names);
  const raw = readText(io, file);
  const json = JSON.parse(raw.charCodeAt(0) === 0xfeff ? raw.slice(1) : raw) as { analytes: Record<string, unknown> };
  return { texts: new Map(names.map((n) => [n, JSON.stringify(json.analytes[n])])), workCrs };
}

function outputText(data: OutputData): string {
  if (typeof data === 'string') return data;
  if (data instanceof Uint8Array) return new TextDecoder().decode(data);
  let text = '';
  for (const piece of data) text += typeof piece === 'string' ? piece : new TextDecoder().decode(piece);
  return text;
}

/**
 * Runs `runOne` once per analyte: --value NAME, the analyte's model from the set, `extra(name)` over
 * the options, outputs and stdout kept, notes and warnings prefixed [NAME], caution lines dropped
 * (the several-analyte run prints its own once).
 */
async function runEachAnalyte(
  values: OptionValues, io: CliIo, names: readonly string[], runOne: OneRun, extra: (name: string) => Partial<Record<string, OptionValues[string] | undefined>>,
): Promise<{ runs: AnalyteRun[]; code: number }> {
  const modelPath = stringOption(values, 'model') as string;
  const { texts } = modelSetTexts(io, modelPath, names);
  const runs: AnalyteRun[] = [];
  for (const name of names) {
    const run: AnalyteRun = { name, stdout: '', outputs: new Map() };
    const one: CliIo = {
      ...io,
      files: { ...io.files, [modelPath]: texts.get(name)! },
      stdout: (t) => { run.stdout += t; },
      stderr: (t) => {
        const kept = t.split('\n').filter((line) => !line.startsWith('caution: ')).join('\n');
        if (kept.trim() !== '') io.stderr(kept.replace(/^(note|warning): /gm, (m) => `${m}[${name}] `));
      },
      capture: (file, data) => { run.outputs.set(file, outputText(data)); },
    };
    const options: OptionValues = { ...values, value: name };
    for (const [k, v] of Object.entries(extra(name))) {
      if (v === undefined) delete options[k];
      else options[k] = v;
    }
    const code = await runOne(options, one);
    if (code !== 0) return { runs, code };
    runs.push(run);
  }
  return { runs, code: 0 };
}

/** Column-name bases of the analytes (as the grid CSV names them): unique, letters, digits and _. */
function analyteColumnBases(names: readonly string[]): string[] {
  const used = new Set<string>();
  return names.map((name) => {
    let base = analyteColumnName(name);
    for (let k = 2; used.has(base); k++) base = `${analyteColumnName(name)}_${k}`;
    used.add(base);
    return base;
  });
}

/** The analytes of a several-analyte request, each checked to be a column of the samples file. */
function analyteNames(io: CliIo, values: OptionValues, request: string[] | typeof ALL_NUMERIC): string[] {
  return resolveAnalytes(io, values, request, stringOption(values, 'work-crs'));
}

/** Each analyte's --threshold as a one-analyte option (absent when it has none). */
function thresholdFor(thresholds: Map<string, number>): (name: string) => { threshold: string | undefined } {
  return (name) => ({ threshold: thresholds.has(name) ? String(thresholds.get(name)) : undefined });
}

/**
 * The cells a one-analyte predict appended to each line of the targets file (header first): its
 * output is each record's text, the delimiter, then those cells, one record after another.
 */
function appendedCells(output: string, table: CsvTable, name: string): string[] {
  const d = table.delimiter;
  const cells: string[] = [];
  let pos = 0;
  for (const record of [table.header, ...table.records]) {
    const prefix = recordText(record, d) + d;
    const end = output.indexOf(table.newline, pos + prefix.length);
    if (!output.startsWith(prefix, pos) || end < 0) {
      throw new Error(`The predictions of "${name}" do not follow the targets file at line ${record.line}; expected each target's row as read.`);
    }
    cells.push(output.slice(pos + prefix.length, end));
    pos = end + table.newline.length;
  }
  return cells;
}

/** `predict` for several analytes: the targets once, then each analyte's columns named by analyte. */
export async function predictAnalytes(values: OptionValues, io: CliIo, request: string[] | typeof ALL_NUMERIC, predictOne: OneRun): Promise<number> {
  const names = analyteNames(io, values, request);
  const thresholds = readAnalyteThresholds(values, names);
  const out = stringOption(values, 'out');
  const key = out ?? '-';
  const { runs, code } = await runEachAnalyte(values, io, names, predictOne, (name) => ({ ...thresholdFor(thresholds)(name), out: key }));
  if (code !== 0) return code;
  const targetsPath = stringOption(values, 'targets') as string;
  const table = readCsvTable(readText(io, targetsPath), targetsPath);
  const d = table.delimiter;
  const bases = analyteColumnBases(names);
  const columns = runs.map((r) => appendedCells(r.outputs.get(key)!, table, r.name));
  const lines: string[] = [];
  [table.header, ...table.records].forEach((record, i) => {
    const parts = [recordText(record, d)];
    runs.forEach((_, a) => {
      // The header's appended names (mean, sd, sd_obs, p_exceed) prefixed by the analyte.
      parts.push(i === 0 ? columns[a][0].split(d).map((c) => csvCell(`${bases[a]}_${c}`, d)).join(d) : columns[a][i]);
    });
    lines.push(parts.join(d));
  });
  await writeOutput(io, out, lines.join(table.newline) + table.newline);
  io.stderr(`caution: ${CSV_CAUTION} Written by ${SOFTWARE}.\n`);
  return 0;
}

/** The summary keys of `cv`, in the order of its table. */
const CV_FIGURES = ['n', 'me', 'rmse', 'msse', 'coverage95'] as const;

/** `cv` for several analytes: a table and JSON keyed by analyte; with --out one CSV of all rows. */
export async function cvAnalytes(values: OptionValues, io: CliIo, request: string[] | typeof ALL_NUMERIC, cvOne: OneRun): Promise<number> {
  const names = analyteNames(io, values, request);
  const out = stringOption(values, 'out');
  const { runs, code } = await runEachAnalyte(values, io, names, cvOne, () => (out !== undefined ? { out } : {}));
  if (code !== 0) return code;
  const summaries = runs.map((r) => {
    const { caution: _c, ...rest } = JSON.parse(r.stdout) as Record<string, unknown>;
    return rest;
  });
  if (out !== undefined) {
    const lines: string[] = [];
    runs.forEach((r, a) => {
      // Each row as the analyte's own run wrote it (a quoted id may hold a line break).
      const table = readCsvTable(r.outputs.get(out)!, out);
      if (a === 0) lines.push(`${csvCell('analyte')},${table.header.raw}`);
      for (const row of table.records) lines.push(`${csvCell(r.name)},${row.raw}`);
    });
    await writeOutput(io, out, `${lines.join('\n')}\n`);
    io.stderr(`caution: ${CSV_CAUTION} Written by ${SOFTWARE}.\n`);
  }
  io.stderr(cvTable(names, summaries));
  io.stdout(jsonText({ analytes: Object.fromEntries(names.map((n, a) => [n, summaries[a]])), caution: CAUTION }));
  return 0;
}

/** Each analyte's leave-one-out summary as a plain table (for reading; the JSON has every digit). */
function cvTable(names: readonly string[], summaries: ReadonlyArray<Record<string, unknown>>): string {
  const head = ['analyte', ...CV_FIGURES, 'scale'];
  const rows = names.map((name, a) => {
    const s = summaries[a];
    return [name, ...CV_FIGURES.map((k) => (k === 'n' ? formatCount(s[k] as number) : formatValue(s[k] as number))), String(s.scale)];
  });
  const widths = head.map((h, c) => Math.max(h.length, ...rows.map((r) => r[c].length)));
  const line = (cells: string[]) => cells.map((c, i) => (i === 0 ? c.padEnd(widths[i]) : c.padStart(widths[i]))).join('  ').trimEnd();
  return `${[line(head), ...rows.map(line)].join('\n')}\n`;
}

/**
 * A one-analyte command given a model set (`--model set.json --value zinc`): the io that holds the
 * analyte's model under the set's name. Any other model file: the io as it is.
 */
export function modelFromSet(values: OptionValues, io: CliIo): CliIo {
  const modelPath = stringOption(values, 'model');
  if (modelPath === undefined) return io;
  let json: unknown;
  try {
    const raw = readText(io, modelPath);
    json = JSON.parse(raw.charCodeAt(0) === 0xfeff ? raw.slice(1) : raw);
  } catch {
    return io; // the command's own reading says what is wrong
  }
  const set = (json as { analytes?: unknown } | null)?.analytes;
  if (typeof set !== 'object' || set === null || Array.isArray(set)) return io;
  const name = stringOption(values, 'value');
  const have = Object.keys(set);
  if (name === undefined) {
    throw new GapwiseError('bad-option', `The model file is a model set of ${have.length} analytes (${have.map((k) => `"${k}"`).join(', ')}); expected --value naming the analyte to use.`, { file: modelPath });
  }
  const { texts } = modelSetTexts(io, modelPath, [name]);
  return { ...io, files: { ...io.files, [modelPath]: texts.get(name)! } };
}

/** `suggest` chooses sites for one analyte: several are refused with what to do instead. */
export function refuseSeveralAnalytes(command: string, request: string[] | typeof ALL_NUMERIC): never {
  const what = request === ALL_NUMERIC ? 'every numeric column (--value *)' : `${request.length} analytes (${request.join(', ')})`;
  throw new GapwiseError('bad-option',
    `"gapwise ${command}" chooses sites for one analyte at a time, got ${what}; expected one --value NAME (a model set as --model gives that analyte's model), run once per analyte.`);
}

/** Options of `report` that need one analyte (realisations and their settings). */
const REPORT_ONE_ANALYTE = ['realisations', 'support', 'block-points', 'seed', 'depth', 'workers'];

/**
 * The project as a one-analyte project of `name` with `model`: the same samples text, reading
 * options (but the value column), grid and boundary. What belongs to the project's own analyte and
 * model (the comparison table, suggestions, realisations) is kept only for that analyte with that
 * model; the threshold is the analyte's from --threshold, else the project's for its own analyte.
 */
function analyteProject(project: Project, own: string, name: string, model: CovarianceModel, threshold: number | undefined, title?: string): Project {
  const same = name === own && project.model !== null && JSON.stringify(project.model) === JSON.stringify(model);
  const p: Project = {
    ...project,
    title: title !== undefined ? `${title} — ${name}` : project.title ? `${project.title} — ${name}` : '',
    samples: { ...project.samples, intake: { ...project.samples.intake, value: name }, unit: name === own ? project.samples.unit : '' },
    structure: {
      ...project.structure,
      transform: model.transform === 'log' ? 'log' : 'none',
      comparison: same ? project.structure.comparison : [],
      chosen: same ? project.structure.chosen : '',
    },
    model,
    threshold: threshold ?? (name === own ? project.threshold : null),
  };
  if (!same) {
    delete p.suggestions;
    delete p.suggestOptions;
    delete p.simulation;
  }
  return p;
}

/**
 * `report` for several analytes (or one analyte with a model set): one document, a section per
 * analyte with everything a one-analyte report of `analyteProject(...)` shows.
 */
export async function reportAnalytes(
  values: OptionValues, io: CliIo, request: string[] | typeof ALL_NUMERIC, software: { name: string; version: string },
): Promise<number> {
  for (const name of REPORT_ONE_ANALYTE) {
    if (values[name] !== undefined) throw new GapwiseError('bad-option', `Option "--${name}" is not available with several analytes; report them one at a time for it.`);
  }
  const file = stringOption(values, 'project') as string;
  const modelPath = stringOption(values, 'model');
  if (modelPath === undefined) {
    throw new GapwiseError('bad-option', 'Option "--value" with a report of several analytes needs "--model FILE", a model set written by "gapwise fit --value a,b".');
  }
  const { project } = readProjectFile(io, file);
  const samplesName = `${file}:${project.samples.fileName}`;
  const base = naming({ samples: samplesName }, () => projectIntake(project));
  const own = base.report.valueColumn;
  const names = request === ALL_NUMERIC ? base.report.numericColumns.slice(0, MAX_ANALYTES + 1) : request;
  if (names.length > MAX_ANALYTES) throw new GapwiseError('bad-option', `The samples hold more than ${MAX_ANALYTES} numeric columns; "--value *" reports at most ${MAX_ANALYTES}: name the analytes.`);
  const { models, workCrs } = readModelSet(io, modelPath, names);
  const projectCrs = project.samples.intake.workCrs ?? base.report.crs.work;
  if (workCrs !== undefined && workCrs !== projectCrs) {
    throw new GapwiseError('bad-option', `The model set's working CRS ${workCrs} differs from the project's ${projectCrs}; the models' scales are in its units.`, { file: modelPath });
  }
  const thresholds = readAnalyteThresholds(values, names);
  const cell = numberOption(values, 'cell');
  if (cell !== undefined && !(cell > 0)) throw new GapwiseError('bad-option', `Option "--cell" expects a cell size above 0 m, got ${cell}.`);
  const title = stringOption(values, 'title');
  const created = new Date().toISOString();
  const sections: { name: string; input: ReportInput }[] = [];
  for (const name of names) {
    const p = analyteProject(project, own, name, models.get(name)!, thresholds.get(name), title);
    const input = naming({ samples: samplesName, model: modelPath }, () => {
      try {
        return prepareReport(p, {
          software, created,
          compare: !booleanOption(values, 'no-compare'),
          onCompareProgress: progressLine(io, `candidate models of ${name}`),
          ...(cell !== undefined ? { cellSize: cell } : {}),
        });
      } catch (e) {
        if (e instanceof GapwiseError && e.code !== 'missing-column') e.message = `[${name}] ${e.message}`;
        throw e;
      }
    });
    printWarnings(io, (input.warnings ?? []).map((w) => `[${name}] ${w.message}`));
    sections.push({ name, input });
  }
  const documentTitle = title ?? (project.title || `Screening maps of ${names.join(', ')}`);
  await writeOutput(io, stringOption(values, 'out'), analyteReportHtml(sections, documentTitle));
  printNotes(io, [`${names.length} analytes reported: ${names.join(', ')}`]);
  io.stderr(`caution: ${CAUTION}\n`);
  return 0;
}
