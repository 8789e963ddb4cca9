/**
 * Delimited text to a table of strings with the physical line of every row (header = line 1 when the
 * file starts with it). Uses papaparse for quoting; chooses the delimiter among comma, semicolon and
 * tab by how consistently each splits the first lines; strips a UTF-8 byte-order mark; accepts CRLF,
 * CR and LF line ends; skips blank lines; keeps every cell as plain text (never interpreted).
 */
import Papa from 'papaparse';
import { GapwiseError } from '../core/shared/errors.ts';

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

/**
 * How every CSV in Gapwise is parsed (with a delimiter chosen by detectDelimiter): records end at LF
 * (text normalised first, or a CR before the LF taken off by the caller), RFC 4180 double quotes,
 * blank lines kept for the caller to count, every cell plain text.
 */
export const CSV_PARSE = {
  newline: '\n', quoteChar: '"', escapeChar: '"', skipEmptyLines: false, header: false, dynamicTyping: false,
} as const;

function parseWith(text: string, delimiter: Delimiter, preview = 0): Papa.ParseResult<string[]> {
  return Papa.parse<string[]>(text, { delimiter, ...CSV_PARSE, preview });
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

/** Text looked at before choosing the delimiter (at least this much, and 200 lines, or the whole file). */
const DETECT_CHARS = 1 << 20;
const DETECT_LINES = 200;
/** A row still open after this many characters (an unclosed quote, most likely) is refused. */
const MAX_ROW_CHARS = 1 << 20;

/**
 * Reads delimited text into a table chunk by chunk: push text, then `end()`. The rows are the same as
 * one papaparse pass over the whole text would give (papaparse's own chunked parsing: each chunk is
 * parsed up to its last complete row, the rest is carried into the next). `onRow` sees every data row
 * (after the header) as it is read, e.g. to enforce a row limit.
 */
export class CsvReader {
  private pending = '';
  private started = false;
  private endsWithNewline = false;
  private pendingCr = false;
  private anyText = false;
  private delimiter: Delimiter | null = null;
  private parser: Papa.Parser | null = null;
  private line = 1;
  private header: string[] | null = null;
  private headerLine = 0;
  private readonly rows: CsvRow[] = [];
  private readonly blankLines: number[] = [];
  /** Trailing header cells with no name, and whether any row has something in them. */
  private blankTail: number[] = [];
  private tailFilled = new Set<number>();

  constructor(
    private readonly fileName: string,
    private readonly fixedDelimiter?: Delimiter,
    private readonly onRow?: (row: CsvRow) => void,
    /** Text held before the delimiter is chosen and parsing starts (tests make it small). */
    private readonly detectChars = DETECT_CHARS,
    /** False: rows go only to `onRow` and the table's `rows` stay empty (a large file read by column). */
    private readonly keepRows = true,
  ) {}

  /** The header's cells as read (before empty or repeated names are renamed), once it has been read. */
  get headerCells(): string[] | null {
    return this.header;
  }

  /** The delimiter, once chosen. */
  get chosenDelimiter(): Delimiter | null {
    return this.delimiter;
  }

  push(chunk: string): void {
    let t = chunk;
    if (!this.started && t.length) {
      this.started = true;
      if (t.charCodeAt(0) === 0xfeff) t = t.slice(1);
    }
    if (this.pendingCr) t = '\r' + t;
    this.pendingCr = t.endsWith('\r');
    if (this.pendingCr) t = t.slice(0, -1);
    t = t.replace(/\r\n?/g, '\n');
    if (t.length === 0) return;
    this.endsWithNewline = t.endsWith('\n');
    if (!this.anyText && /\S/.test(t)) this.anyText = true;
    this.pending += t;
    if (this.delimiter === null) {
      if (this.pending.length < this.detectChars || countLines(this.pending, DETECT_LINES) < Math.min(DETECT_LINES, this.detectChars)) return;
      this.choose();
    }
    this.parse(false);
  }

  end(): CsvTable {
    if (this.pendingCr) {
      this.pendingCr = false;
      this.pending += '\n';
      this.endsWithNewline = true;
    }
    if (!this.anyText) throw new GapwiseError('bad-file', 'The file is empty; expected a header line and rows of samples.', { file: this.fileName });
    if (this.delimiter === null) this.choose();
    this.parse(true);
    return this.table();
  }

  private choose(): void {
    this.delimiter = this.fixedDelimiter ?? detectDelimiter(this.pending);
    this.parser = new Papa.Parser({ delimiter: this.delimiter, ...CSV_PARSE });
  }

  private parse(final: boolean): void {
    const input = this.pending;
    if (final && input === '' && this.endsWithNewline) {
      // One pass over the whole text ends with an empty row after the last line break; papaparse
      // gives none for the empty rest, so it is added here.
      this.blankLines.push(this.line);
      this.line++;
      return;
    }
    const parsed = (this.parser as Papa.Parser).parse(input, 0, !final) as unknown as Papa.ParseResult<string[]>;
    const cursor = final ? input.length : parsed.meta.cursor;
    this.pending = input.slice(cursor);
    if (!final && this.pending.length > MAX_ROW_CHARS) {
      throw new GapwiseError('bad-file', `A row that starts on line ${this.line} runs on for over ${MAX_ROW_CHARS.toLocaleString('en-US')} characters; a quoted field is probably never closed (expected a closing double quote).`, { file: this.fileName });
    }
    const unclosed = parsed.errors.find((e) => e.code === 'MissingQuotes');
    const data = parsed.data;
    // Only a quoted cell can hold a line break: without a quote in the text every row is one line.
    const quotes = input.indexOf('"') >= 0;
    for (let r = 0; r < data.length; r++) {
      const cells = data[r];
      const start = this.line;
      if (unclosed && unclosed.row === r) {
        throw new GapwiseError('bad-file', 'A quoted field that starts on this line is never closed; expected a closing double quote.', { file: this.fileName, row: start });
      }
      // A row spans one line plus every line break inside its quoted cells.
      let breaks = 0;
      if (quotes) {
        for (const c of cells) {
          for (let i = c.indexOf('\n'); i !== -1; i = c.indexOf('\n', i + 1)) breaks++;
        }
      }
      this.line += 1 + breaks;
      if (isBlank(cells)) {
        this.blankLines.push(start);
        continue;
      }
      if (this.header === null) {
        this.header = cells;
        this.headerLine = start;
        for (let k = cells.length - 1; k > 0 && cells[k].trim() === ''; k--) this.blankTail.push(k);
      } else {
        for (const k of this.blankTail) if ((cells[k] ?? '').trim() !== '') this.tailFilled.add(k);
        const row = { line: start, cells };
        this.onRow?.(row);
        if (this.keepRows) this.rows.push(row);
      }
    }
  }

  private table(): CsvTable {
    const { blankLines, rows } = this;
    // papaparse yields a final empty row for a trailing line break; it is not a line of the file.
    if (this.endsWithNewline && blankLines.length && blankLines[blankLines.length - 1] === this.line - 1) blankLines.pop();
    const header = this.header;
    if (header === null) throw new GapwiseError('bad-file', 'The file holds only blank lines; expected a header line and rows of samples.', { file: this.fileName });
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
    while (names.length > 1 && header[names.length - 1].trim() === '' && !this.tailFilled.has(names.length - 1)) {
      names.pop();
      renamed.pop();
    }
    return { delimiter: this.delimiter as Delimiter, header: names, headerLine: this.headerLine, rows, blankLines, renamed };
  }
}

/** Number of "\n" in `t`, counting up to `max`. */
function countLines(t: string, max: number): number {
  let n = 0;
  for (let i = t.indexOf('\n'); i !== -1 && n < max; i = t.indexOf('\n', i + 1)) n++;
  return n;
}

/**
 * Reads delimited text into a table. Throws GapwiseError 'bad-file' for an empty file or one whose
 * header has no names.
 */
export function readCsv(text: string, fileName: string, delimiter?: Delimiter): CsvTable {
  const reader = new CsvReader(fileName, delimiter);
  reader.push(text);
  return reader.end();
}
