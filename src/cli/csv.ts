/**
 * CSV text for the command line: writing cells and numbers, and reading a targets file record by
 * record while keeping each record's original text, so that `predict` can write the rows back
 * verbatim with its columns appended (RFC 4180 quoting; comma, semicolon or tab delimiters).
 */
import Papa from 'papaparse';
import { GapwiseError } from '../core/shared/errors.ts';
import { CSV_PARSE, detectDelimiter, normaliseText } from '../io/csv.ts';
import { csvLine, neutraliseFormula } from '../io/csv-cells.ts';

/** Cells are written by io/csv-cells.ts: quoted (RFC 4180), formula-leading text neutralised. */
export { csvCell, csvLine, CSV_CAUTION, FORMULA_NOTE, PIECE_CHARS, linePieces } from '../io/csv-cells.ts';

/** A number for a CSV: io/format.ts formatFullPrecision (up to 12 significant digits, NaN as empty, inf / -inf). */
export { formatFullPrecision } from '../io/format.ts';

export interface CsvRecord {
  /** The cells, unquoted. */
  cells: string[];
  /** The record exactly as it stood in the file, without its line ending. */
  raw: string;
  /** 1-based line where the record starts (header = line 1). */
  line: number;
}

export interface CsvTable {
  delimiter: string;
  /** The line ending the file uses ('\r\n' or '\n'). */
  newline: string;
  header: CsvRecord;
  records: CsvRecord[];
}

/**
 * A record to write back: its raw text when no cell is formula-leading text, else its cells written
 * again with those cells neutralised (so a targets file's `=HYPERLINK(…)` id does not reach the output
 * as a formula).
 */
export function recordText(record: CsvRecord, delimiter: string): string {
  return record.cells.some((c) => neutraliseFormula(c) !== c) ? csvLine(record.cells, delimiter) : record.raw;
}

/**
 * Splits CSV text into records with papaparse (the parser the samples intake uses), keeping the raw
 * text of each record from the parser's cursor. Blank lines are skipped.
 * Throws GapwiseError('bad-file') for an unclosed quote or a file without a header.
 */
export function readCsvTable(text: string, fileName: string): CsvTable {
  const unmarked = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  // Old Mac files end lines with a lone CR; read them as LF.
  const body = !unmarked.includes('\n') && unmarked.includes('\r') ? unmarked.replace(/\r/g, '\n') : unmarked;
  const newline = body.includes('\r\n') ? '\r\n' : '\n';
  // The same delimiter choice as the samples intake.
  const delimiter = detectDelimiter(normaliseText(body));
  const records: CsvRecord[] = [];
  let start = 0;
  let line = 1;
  Papa.parse<string[]>(body, {
    delimiter,
    // Records end at LF; a CR before it is the CRLF ending, taken off below, so files that mix CRLF
    // and LF lines split where a reader of either kind expects.
    ...CSV_PARSE,
    step: (row) => {
      const cursor = row.meta.cursor;
      let end = body[cursor - 1] === '\n' ? cursor - 1 : cursor;
      if (end > start && body[end - 1] === '\r') end--;
      const raw = body.slice(start, end);
      const cells = row.data;
      const last = cells.length - 1;
      if (end < cursor && body[end] === '\r' && !raw.endsWith('"') && cells[last].endsWith('\r')) cells[last] = cells[last].slice(0, -1);
      if (row.errors.some((e) => e.code === 'MissingQuotes')) {
        throw new GapwiseError('bad-file', 'A quoted cell is never closed; expected a closing double quote.', { file: fileName, row: line });
      }
      if (raw.trim() !== '') records.push({ cells, raw, line });
      // The next record starts after this one's line breaks, those inside quoted cells included.
      for (let i = body.indexOf('\n', start); i !== -1 && i < cursor; i = body.indexOf('\n', i + 1)) line++;
      start = cursor;
    },
  });
  const header = records.shift();
  if (!header) throw new GapwiseError('bad-file', 'The file is empty; expected a header line and at least one row.', { file: fileName });
  return { delimiter, newline, header, records };
}
