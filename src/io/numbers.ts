/**
 * Strict number reading for field files: a cell is a whole number or an error, never a prefix
 * ("637l80.0" is an error, not 637). Knows decimal points and decimal commas, thousands grouping
 * (accepted only when the column's decimal mark is known, so that the grouping cannot be misread),
 * non-detects written as "<0.5" / "< 0.5", and the usual spellings of a missing value.
 */

export type DecimalMark = '.' | ',';

/** Spellings of "no value" in field spreadsheets (compared case-insensitively, trimmed). */
const MISSING = new Set(['', 'na', 'n/a', 'nan', 'null', 'none', '-', '--', '—', '?', '#n/a', 'missing', 'no data', 'no value']);

/** True when the trimmed cell is a usual spelling of a missing value. */
export function isMissing(raw: string): boolean {
  return MISSING.has(raw.trim().toLowerCase());
}

export type NumberResult =
  | { ok: true; value: number; grouped: boolean }
  | { ok: false; reason: string };

const EXP = '(?:[eE][+-]?\\d+)?';
const PLAIN: Record<DecimalMark, RegExp> = {
  '.': new RegExp(`^[+-]?(?:\\d+(?:\\.\\d*)?|\\.\\d+)${EXP}$`),
  ',': new RegExp(`^[+-]?(?:\\d+(?:,\\d*)?|,\\d+)${EXP}$`),
};
/** Digits grouped by threes with the other mark (or a space / apostrophe), optional fraction. */
const GROUPED: Record<DecimalMark, RegExp> = {
  '.': /^[+-]?\d{1,3}(?:(,)\d{3}|([ \u00a0\u202f'])\d{3})+(?:\.\d+)?$/,
  ',': /^[+-]?\d{1,3}(?:(\.)\d{3}|([ \u00a0\u202f'])\d{3})+(?:,\d+)?$/,
};

/**
 * Reads one cell as a number with the given decimal mark. Thousands grouping with the other mark
 * (or spaces) is accepted and reported as `grouped`. Anything else is an error with a reason.
 */
export function parseNumber(raw: string, mark: DecimalMark): NumberResult {
  const s = raw.trim();
  if (s === '') return { ok: false, reason: 'is empty' };
  if (s.length > 64) return { ok: false, reason: 'is too long to be a number' };
  if (PLAIN[mark].test(s)) {
    const v = Number(mark === ',' ? s.replace(',', '.') : s);
    if (!Number.isFinite(v)) return { ok: false, reason: 'is too large to be a number' };
    return { ok: true, value: v, grouped: false };
  }
  if (GROUPED[mark].test(s)) {
    const other = mark === '.' ? ',' : '.';
    const digits = s.split(other).join('').replace(/[ \u00a0\u202f']/g, '');
    const v = Number(mark === ',' ? digits.replace(',', '.') : digits);
    if (Number.isFinite(v)) return { ok: true, value: v, grouped: true };
  }
  const other = mark === '.' ? ',' : '.';
  if (PLAIN[other].test(s) && s.includes(other)) {
    return { ok: false, reason: `uses a decimal ${other === ',' ? 'comma' : 'point'} where this column uses a decimal ${mark === ',' ? 'comma' : 'point'}` };
  }
  return { ok: false, reason: 'is not a number' };
}

/** A non-detect such as "<0.5", "< 0.5", "<0,5": the detection limit as text, or null. */
export function nonDetectLimit(raw: string): string | null {
  const m = /^<\s*([+-]?[\d.,]+(?:[eE][+-]?\d+)?)$/.exec(raw.trim());
  return m ? m[1] : null;
}

/** What one cell says about the column's decimal mark. */
export type MarkEvidence = '.' | ',' | 'ambiguous' | 'none';

/**
 * Evidence a single cell gives about the decimal mark: "12,5" or "0,250" can only be a decimal
 * comma; "3.75" only a decimal point; "1,234" could be either (a grouped thousand or a decimal);
 * "1.234.567" can only be grouping (so the other mark is the decimal).
 */
const PLAIN_INTEGER = /^\s*[+-]?\d*\s*$/;

export function markEvidence(raw: string): MarkEvidence {
  if (PLAIN_INTEGER.test(raw)) return 'none';
  let s = raw.trim();
  const nd = nonDetectLimit(s);
  if (nd !== null) s = nd;
  s = s.replace(/^[+-]/, '').replace(/[eE][+-]?\d+$/, '');
  const hasDot = s.includes('.');
  const hasComma = s.includes(',');
  if (!/^[\d.,]+$/.test(s) || (!hasDot && !hasComma)) return 'none';
  if (hasDot && hasComma) {
    // The last mark is the decimal one: "1.234,5" → comma, "1,234.5" → point.
    return s.lastIndexOf(',') > s.lastIndexOf('.') ? ',' : '.';
  }
  const m = hasDot ? '.' : ',';
  const parts = s.split(m);
  if (parts.length > 2) {
    // Several of one mark: grouping, so the decimal mark must be the other one.
    return /^\d{1,3}$/.test(parts[0]) && parts.slice(1).every((p) => /^\d{3}$/.test(p)) ? (m === '.' ? ',' : '.') : 'none';
  }
  const [int, frac] = parts;
  if (frac.length === 3 && /^[1-9]\d{0,2}$/.test(int)) return 'ambiguous';
  return m;
}

export interface ColumnMarks {
  mark: DecimalMark;
  /** True when the column holds cells that only one mark explains and others only the other mark. */
  mixed: boolean;
  /** When the mark could not be decided, cells of the 'ambiguous' kind must be rejected. */
  decided: boolean;
}

/**
 * Chooses a column's decimal mark from its cells. With a comma delimiter the mark is always '.'.
 * Otherwise the cells' evidence decides; with no evidence the delimiter's custom does (semicolon →
 * comma, tab → point), and cells like "1.234" that the custom cannot settle stay ambiguous.
 */
export function chooseMark(cells: Iterable<string>, delimiter: string): ColumnMarks {
  if (delimiter === ',') return { mark: '.', mixed: false, decided: true };
  function* evidence(): Generator<MarkEvidence> {
    for (const c of cells) yield markEvidence(c);
  }
  return chooseMarkFrom(evidence(), delimiter);
}

/** `chooseMark` from each cell's `markEvidence` (a caller that knows the evidence without the text). */
export function chooseMarkFrom(evidence: Iterable<MarkEvidence>, delimiter: string): ColumnMarks {
  if (delimiter === ',') return { mark: '.', mixed: false, decided: true };
  let dot = 0;
  let comma = 0;
  for (const e of evidence) {
    if (e === '.') dot++;
    else if (e === ',') comma++;
  }
  if (dot > 0 && comma > 0) return { mark: comma >= dot ? ',' : '.', mixed: true, decided: true };
  if (comma > 0) return { mark: ',', mixed: false, decided: true };
  if (dot > 0) return { mark: '.', mixed: false, decided: true };
  return { mark: delimiter === ';' ? ',' : '.', mixed: false, decided: false };
}

/**
 * Reads a cell of a column whose marks were chosen by `chooseMark`: ambiguous cells in an undecided
 * column are errors when they use the mark the custom does not expect ("1.234" in a semicolon file with
 * nothing else to go by; "1,234" there is 1.234), and in a mixed column
 * each unambiguous cell is read by its own mark.
 */
export function parseColumnNumber(raw: string, marks: ColumnMarks): NumberResult {
  if (marks.decided && !marks.mixed) return parseNumber(raw, marks.mark);
  const e = markEvidence(raw);
  // "1,234" in a semicolon file reads by the file's custom (decimal comma); "1.234" there could be
  // a grouped thousand or a decimal point, and nothing in the column settles it.
  if (e === 'ambiguous' && !marks.decided && !raw.includes(marks.mark)) {
    const [a, b] = [raw.trim().replace(/[.,]/, ''), raw.trim().replace(/[.,]/, '.')];
    return { ok: false, reason: `is ambiguous: it could be ${a} (thousands separator) or ${b} (decimal mark), and nothing else in the column tells which` };
  }
  if (marks.mixed && (e === '.' || e === ',')) return parseNumber(raw, e);
  if (marks.mixed && e === 'ambiguous') {
    return { ok: false, reason: 'is ambiguous in a column that mixes decimal points and decimal commas' };
  }
  return parseNumber(raw, marks.mark);
}
