/**
 * Cells of the CSV files Gapwise writes: RFC 4180 quoting, and text a spreadsheet would run as a
 * formula made inert. A TEXT cell that starts with =, +, -, @, a tab or a carriage return (after any
 * spaces) gets a leading apostrophe, which spreadsheets read as "this is text" (common practice for
 * CSV injection, as in OWASP's guidance). Numbers, negative ones included, are written as they are.
 * Every CSV Gapwise writes goes through `csvCell` / `csvLine` / `csvComment`, and its caution line
 * says so with `FORMULA_NOTE`.
 */
import { CAUTION } from '../core/shared/caution.ts';

/** What the caution line of a CSV says about its text cells. */
export const FORMULA_NOTE = "Text cells beginning with = + - @ or a tab or carriage return were prefixed with an apostrophe (') so that spreadsheets do not run them as formulas.";

/** The screening caution for a CSV file, with what was done to its text cells. */
export const CSV_CAUTION = `${CAUTION} ${FORMULA_NOTE}`;

/** A number as Gapwise writes one (also with a decimal comma, an exponent, or a non-finite value). */
const NUMBER = /^[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?$|^[+-]?(?:inf|infinity)$/i;
/** Text a spreadsheet may take for a formula: =, +, -, @ (after spaces), or a leading tab or carriage return. */
const FORMULA_START = /^(?: *[=+\-@]|[\t\r])/;

/** The text of a cell with a formula-leading text value prefixed by an apostrophe; numbers unchanged. */
export function neutraliseFormula(text: string): string {
  return FORMULA_START.test(text) && !NUMBER.test(text) ? `'${text}` : text;
}

/** One cell: formula-leading text neutralised, then quoted when it holds the delimiter, a quote or a line break (RFC 4180). */
export function csvCell(text: string, delimiter = ','): string {
  const safe = neutraliseFormula(text);
  if (safe.includes(delimiter) || /["\r\n]/.test(safe)) return `"${safe.replace(/"/g, '""')}"`;
  return safe;
}

/** One CSV line from cells. */
export function csvLine(cells: readonly string[], delimiter = ','): string {
  return cells.map((c) => csvCell(c, delimiter)).join(delimiter);
}

/**
 * A "# " comment line (most CSV readers skip it with a comment option). A reader without one splits it
 * into cells at the delimiter, so each piece after the first is neutralised as a cell would be; line
 * breaks become spaces and double quotes single ones, so that the comment stays one line of plain cells.
 */
export function csvComment(text: string, delimiter = ','): string {
  const flat = text.replace(/[\r\n]+/g, ' ').replace(/"/g, "'");
  return `# ${flat.split(delimiter).map((piece, i) => (i === 0 ? piece : neutraliseFormula(piece))).join(delimiter)}`;
}

/** Characters of text in one piece of `linePieces` (about a mebibyte). */
export const PIECE_CHARS = 1 << 20;

/**
 * Lines 0 … count − 1 (`lineAt(i)`), each followed by `newline`, in pieces of whole lines of about
 * `pieceChars` characters: a writer that takes the pieces one by one (writeOutput) never holds a large
 * output as one string. The pieces joined are the lines joined by `newline` with a final one.
 */
export function* linePieces(count: number, lineAt: (i: number) => string, newline = '\n', pieceChars = PIECE_CHARS): Generator<string> {
  let lines: string[] = [];
  let chars = 0;
  for (let i = 0; i < count; i++) {
    const line = lineAt(i);
    lines.push(line);
    chars += line.length + newline.length;
    if (chars >= pieceChars) {
      yield lines.join(newline) + newline;
      lines = [];
      chars = 0;
    }
  }
  if (lines.length) yield lines.join(newline) + newline;
}
