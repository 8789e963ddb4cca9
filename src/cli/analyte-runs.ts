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
import { GapwiseError } from '../core/errors.ts';
import { formatCount, formatValue } from '../io/format.ts';
import { analyteColumnName } from '../io/grid-csv.ts';
import { SOFTWARE } from '../core/version.ts';
import { stringOption } from './args.ts';
import { CAUTION, jsonText, readText, writeOutput, type CliIo, type OptionValues } from './common.ts';
import { CSV_CAUTION, csvCell, readCsvTable, recordText, type CsvTable } from './csv.ts';
import type { OutputData } from './safe-write.ts';
import { ALL_NUMERIC, readAnalyteThresholds, readModelSet, resolveAnalytes } from './analytes.ts';

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
export function analyteColumnBases(names: readonly string[]): string[] {
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
export function cvTable(names: readonly string[], summaries: ReadonlyArray<Record<string, unknown>>): string {
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
