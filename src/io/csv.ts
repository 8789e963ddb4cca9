/**
 * Delimited text to a table of strings with the physical line of every row (header = line 1 when the
 * file starts with it). Uses papaparse for quoting; chooses the delimiter among comma, semicolon and
 * tab by how consistently each splits the first lines; strips a UTF-8 byte-order mark; accepts CRLF,
 * CR and LF line ends; skips blank lines; keeps every cell as plain text (never interpreted).
 */
import Papa from 'papaparse';
import { GapwiseError } from '../core/errors.ts';

export type Delimiter = ',' | ';' | '\t';

export interface CsvRow {
  /** 1-based physical line where the row starts. */
  line: number;
  cells: string[];
}

export interface CsvTable {
  delimiter: Delimiter;
  header: string[];
  /** Line of the header row. */
  headerLine: number;
  rows: CsvRow[];
  /** Lines that held nothing (or only delimiters and spaces), skipped. */
  blankLines: number[];
  /** Header names that were empty or repeated and were renamed: [original, new]. */
  renamed: Array<[string, string]>;
}

const CANDIDATES: Delimiter[] = [',', ';', '\t'];
const SAMPLE_LINES = 60;

/** Removes a UTF-8 byte-order mark and normalises line ends to "\n". */
export function normaliseText(text: string): string {
  let t = text;
  if (t.charCodeAt(0) === 0xfeff) t = t.slice(1);
  return t.replace(/\r\n?/g, '\n');
}

function parseWith(text: string, delimiter: Delimiter, preview = 0): Papa.ParseResult<string[]> {
  return Papa.parse<string[]>(text, {
    delimiter,
    newline: '\n',
    quoteChar: '"',
    escapeChar: '"',
    skipEmptyLines: false,
    header: false,
    dynamicTyping: false,
    preview,
  });
}

function isBlank(cells: string[]): boolean {
  for (const c of cells) if (c.trim() !== '') return false;
  return true;
}

/**
 * Chooses the delimiter: the candidate whose header splits into at least two fields and whose first
 * data rows most often match the header's field count; ties go to the one giving more fields.
 */
export function detectDelimiter(text: string): Delimiter {
  let best: Delimiter = ',';
  let bestScore = -1;
  let bestFields = 0;
  for (const d of CANDIDATES) {
    const rows = parseWith(text, d, SAMPLE_LINES).data.filter((r) => !isBlank(r));
    if (rows.length === 0) continue;
    const width = rows[0].length;
    if (width < 2) continue;
    const data = rows.slice(1);
    const matching = data.filter((r) => r.length === width || (r.length > width && isBlank(r.slice(width)))).length;
    const score = data.length ? matching / data.length : 0.5;
    if (score > bestScore || (score === bestScore && width > bestFields)) {
      best = d;
      bestScore = score;
      bestFields = width;
    }
  }
  return best;
}

/**
 * Reads delimited text into a table. Throws GapwiseError 'bad-file' for an empty file or one whose
 * header has no names.
 */
export function readCsv(text: string, fileName: string, delimiter?: Delimiter): CsvTable {
  const t = normaliseText(text);
  if (t.trim() === '') throw new GapwiseError('bad-file', 'The file is empty; expected a header line and rows of samples.', { file: fileName });
  const d = delimiter ?? detectDelimiter(t);
  const parsed = parseWith(t, d);
  const data = parsed.data;
  const unclosed = parsed.errors.find((e) => e.code === 'MissingQuotes');
  let line = 1;
  let header: string[] | null = null;
  let headerLine = 0;
  const rows: CsvRow[] = [];
  const blankLines: number[] = [];
  for (let r = 0; r < data.length; r++) {
    const cells = data[r];
    const start = line;
    if (unclosed && unclosed.row === r) {
      throw new GapwiseError('bad-file', `A quoted field that starts on line ${start} is never closed; expected a closing double quote.`, { file: fileName, row: start });
    }
    // A row spans one line plus every line break inside its quoted cells.
    let breaks = 0;
    for (const c of cells) {
      for (let i = c.indexOf('\n'); i !== -1; i = c.indexOf('\n', i + 1)) breaks++;
    }
    line += 1 + breaks;
    if (isBlank(cells)) {
      blankLines.push(start);
      continue;
    }
    if (header === null) {
      header = cells;
      headerLine = start;
    } else {
      rows.push({ line: start, cells });
    }
  }
  // papaparse yields a final empty row for a trailing line break; it is not a line of the file.
  if (t.endsWith('\n') && blankLines.length && blankLines[blankLines.length - 1] === line - 1) blankLines.pop();
  if (header === null) throw new GapwiseError('bad-file', 'The file holds only blank lines; expected a header line and rows of samples.', { file: fileName });
  const renamed: Array<[string, string]> = [];
  const seen = new Set<string>();
  const names = header.map((h, i) => {
    let name = h.trim();
    const original = name;
    if (name === '') name = `column ${i + 1}`;
    if (seen.has(name)) {
      let k = 2;
      while (seen.has(`${name} (${k})`)) k++;
      name = `${name} (${k})`;
    }
    seen.add(name);
    if (name !== original) renamed.push([original, name]);
    return name;
  });
  // Trailing empty header cells (a delimiter at the end of the header line) are not columns.
  while (names.length > 1 && header[names.length - 1].trim() === '' && rows.every((r) => (r.cells[names.length - 1] ?? '').trim() === '')) {
    names.pop();
    renamed.pop();
  }
  return { delimiter: d, header: names, headerLine, rows, blankLines, renamed };
}
