/**
 * The rows of a samples table read as numbers: the coordinates, and the value with its non-detects
 * ("<5", a qualifier column saying "ND" or "U", "ND" with a detection-limit column) replaced by a
 * fraction of the detection limit by the chosen rule. Every row not read as it stands is noted with
 * its place, field, raw text and reason (rejected, or changed when thousands separators were removed).
 * Plain decimal cells are read from the numbers the store kept (sample-table.ts), the others parsed
 * by their column's decimal mark (numbers.ts).
 */
import { GapwiseError } from '../core/shared/errors.ts';
import type { Warning } from '../core/shared/errors.ts';
import { isMissing, nonDetectLimit, parseColumnNumber } from './numbers.ts';
import type { ColumnMarks } from './numbers.ts';
import { cellText } from './sample-table.ts';
import type { ReadNotes } from './read-notes.ts';
import { quoted } from './quote.ts';
import { listPlaces, placeOf, type Table } from './intake-table.ts';
import { ND_WORDS, qualifierSaysNd, type ColumnMarksCache, type CoordinateColumns, type ValueColumns } from './intake-columns.ts';
import type { IntakeOptions, NonDetectRule, ReportEntry } from './types.ts';

/** The note every report carries on non-detect substitution. */
export const NON_DETECT_NOTE =
  'Replacing non-detects by a fraction of the detection limit is common practice but biases the mean, the variance and the variogram (Helsel 2006, Chemosphere 65:2434); treat results near the detection limit with care.';

export const RULE_TEXT: Record<NonDetectRule, string> = { half: 'DL/2', dl: 'DL', sqrt2: 'DL/√2' };
export const RULE_FACTOR: Record<NonDetectRule, number> = { half: 0.5, dl: 1, sqrt2: Math.SQRT1_2 };

/**
 * The rows read, by column, in file order: input coordinates, value, non-detect (1) or not (0), and
 * stored row. The first `count` entries are in use (later steps drop rows in place).
 */
export interface ParsedRows {
  x: Float64Array;
  y: Float64Array;
  value: Float64Array;
  nd: Uint8Array;
  record: Uint32Array;
  count: number;
  /** How many non-detects were replaced. */
  nonDetects: number;
}

/** Keeps the parsed rows for which keep(i) holds, in order. */
export function compactRows(rows: ParsedRows, keep: (i: number) => boolean): void {
  const { x, y, value, nd, record } = rows;
  let j = 0;
  for (let i = 0; i < rows.count; i++) {
    if (!keep(i)) continue;
    x[j] = x[i];
    y[j] = y[i];
    value[j] = value[i];
    nd[j] = nd[i];
    record[j] = record[i];
    j++;
  }
  rows.count = j;
}

/** Marks with which a plain decimal cell reads as the number the store kept. */
function pointOnly(m: ColumnMarks | null): boolean {
  return m !== null && m.mark === '.' && m.decided && !m.mixed;
}

/**
 * Reads one stored row at a time: its coordinates into `x`, `y`, its value into `value`, `nd`. A row
 * that cannot be read is noted as rejected and the read says false. Collects what the warnings say.
 */
class RowReader {
  x = 0;
  y = 0;
  value = 0;
  nd = false;
  ndCount = 0;
  readonly grouped: number[] = [];
  readonly missing: number[] = [];
  readonly unknownQualifiers = new Set<string>();
  private readonly xMarks: ColumnMarks | null;
  private readonly yMarks: ColumnMarks | null;
  private readonly vMarks: ColumnMarks;
  private readonly dlMarks: ColumnMarks | null;
  private readonly xPoint: boolean;
  private readonly yPoint: boolean;
  private readonly vPoint: boolean;
  private readonly qualifierName: string;
  private readonly factor: number;
  /** One text per distinct reason: a large file with many non-detects at a few limits keeps a few strings. */
  private readonly reasons = new Map<string, string>();

  constructor(
    private readonly table: Table,
    private readonly format: 'csv' | 'geojson',
    private readonly coords: CoordinateColumns,
    private readonly cols: ValueColumns,
    norm: string[],
    marks: ColumnMarksCache,
    private readonly rule: NonDetectRule,
    private readonly notes: ReadNotes,
  ) {
    this.xMarks = format === 'csv' ? marks.of(coords.x) : null;
    this.yMarks = format === 'csv' ? marks.of(coords.y) : null;
    this.vMarks = marks.of(cols.value);
    this.dlMarks = cols.detectionLimit >= 0 ? marks.of(cols.detectionLimit) : null;
    // A plain decimal cell ("12.5", "-3") reads as its stored number when the column's mark is a decided
    // point, and a whole number reads so under any mark: the same number parseColumnNumber gives.
    this.xPoint = pointOnly(this.xMarks);
    this.yPoint = pointOnly(this.yMarks);
    this.vPoint = pointOnly(this.vMarks);
    this.qualifierName = cols.qualifier >= 0 ? norm[cols.qualifier] : '';
    this.factor = RULE_FACTOR[rule];
  }

  /** Warnings on columns that mix decimal points and commas. */
  mixedMarkWarnings(warnings: Warning[]): void {
    const { columns } = this.table;
    for (const [name, m] of [[columns[this.coords.x], this.xMarks], [columns[this.coords.y], this.yMarks], [this.cols.valueName, this.vMarks]] as Array<[string, ColumnMarks | null]>) {
      if (m?.mixed) warnings.push({ code: 'mixed-decimal-marks', message: `Column ${quoted(name)} mixes decimal points and decimal commas; each cell was read by its own mark and ambiguous ones were rejected.` });
    }
  }

  private reject(rec: number, field: string, raw: string, reason: string): void {
    this.notes.add({ ...placeOf(this.table, rec), field, raw, action: 'rejected', reason });
  }

  private cell(col: number, rec: number): string {
    return cellText(this.table.store[col], rec);
  }

  /** The number the store kept for a plain cell (see pointOnly), else NaN. */
  private storedNumber(col: number, point: boolean, rec: number): number {
    const b = this.table.store[col];
    if (b.kind !== 'numbers') return NaN;
    const d = b.decimals[rec];
    return d === 0 || (d < 254 && point) ? b.values[rec] : NaN;
  }

  private detectionLimitCell(rec: number): number | null {
    if (this.cols.detectionLimit < 0) return null;
    const p = parseColumnNumber(this.cell(this.cols.detectionLimit, rec), this.dlMarks as ColumnMarks);
    return p.ok ? p.value : null;
  }

  private nonDetectReason(dl: number, qualNote: string, value: number): string {
    const text = `non-detect below ${dl}${qualNote}: replaced by ${value} (${RULE_TEXT[this.rule]})`;
    const known = this.reasons.get(text);
    if (known !== undefined) return known;
    this.reasons.set(text, text);
    return text;
  }

  /** Reads the row's coordinates into x and y (GeoJSON: the feature's position). */
  readCoordinates(rec: number): boolean {
    const table = this.table;
    if (this.format === 'geojson') {
      this.x = (table.lon as Float64Array)[rec];
      this.y = (table.lat as Float64Array)[rec];
      return true;
    }
    const { x: xCol, y: yCol } = this.coords;
    const columns = table.columns;
    this.x = this.storedNumber(xCol, this.xPoint, rec);
    this.y = this.storedNumber(yCol, this.yPoint, rec);
    if (!Number.isNaN(this.x) && !Number.isNaN(this.y)) return true;
    const xs = this.cell(xCol, rec);
    const ys = this.cell(yCol, rec);
    if (isMissing(xs) || isMissing(ys)) {
      const [f, t] = isMissing(xs) ? [columns[xCol], xs] : [columns[yCol], ys];
      this.reject(rec, f, t, 'missing coordinate');
      this.missing.push(rec);
      return false;
    }
    const px1 = parseColumnNumber(xs, this.xMarks as ColumnMarks);
    if (!px1.ok) {
      this.reject(rec, columns[xCol], xs, `${quoted(xs)} ${px1.reason}`);
      return false;
    }
    const py1 = parseColumnNumber(ys, this.yMarks as ColumnMarks);
    if (!py1.ok) {
      this.reject(rec, columns[yCol], ys, `${quoted(ys)} ${py1.reason}`);
      return false;
    }
    if (px1.grouped || py1.grouped) {
      this.grouped.push(rec);
      this.notes.add({ ...placeOf(table, rec), field: px1.grouped ? columns[xCol] : columns[yCol], raw: px1.grouped ? xs : ys, action: 'changed', reason: `thousands separators removed: read as ${px1.grouped ? px1.value : py1.value}` });
    }
    this.x = px1.value;
    this.y = py1.value;
    return true;
  }

  /** Reads the row's value into value and nd: a non-detect becomes the rule's fraction of its detection limit. */
  readValue(rec: number): boolean {
    const { value: valueCol, valueName, qualifier: qualCol } = this.cols;
    const qualVerdict = qualCol >= 0 ? qualifierSaysNd(this.qualifierName, this.cell(qualCol, rec)) : false;
    const qualSaysNd = qualVerdict === true;
    if (qualVerdict === null) this.unknownQualifiers.add(this.cell(qualCol, rec).trim());
    let value = this.storedNumber(valueCol, this.vPoint, rec);
    let nd = false;
    let dl = NaN;
    let vs = '';
    let ndText: string | null = null;
    if (!Number.isNaN(value)) {
      if (qualSaysNd) {
        nd = true;
        dl = value;
      }
    } else {
      vs = this.cell(valueCol, rec);
      ndText = nonDetectLimit(vs);
      if (ndText !== null) {
        const p = parseColumnNumber(ndText, this.vMarks);
        if (!p.ok) {
          this.reject(rec, valueName, vs, `the detection limit ${quoted(ndText)} ${p.reason}`);
          return false;
        }
        nd = true;
        dl = p.value;
      } else if (isMissing(vs) || ND_WORDS.has(vs.trim().toLowerCase())) {
        const fromCol = qualSaysNd || ND_WORDS.has(vs.trim().toLowerCase()) ? this.detectionLimitCell(rec) : null;
        if (fromCol === null) {
          if (isMissing(vs)) {
            this.reject(rec, valueName, vs, qualSaysNd ? 'non-detect without a detection limit' : 'missing value');
            this.missing.push(rec);
          } else this.reject(rec, valueName, vs, 'non-detect without a detection limit; expected "<limit" or a detection-limit column');
          return false;
        }
        nd = true;
        dl = fromCol;
      } else {
        const p = parseColumnNumber(vs, this.vMarks);
        if (!p.ok) {
          this.reject(rec, valueName, vs, `${quoted(vs)} ${p.reason}`);
          return false;
        }
        if (p.grouped) {
          this.grouped.push(rec);
          this.notes.add({ ...placeOf(this.table, rec), field: valueName, raw: vs, action: 'changed', reason: `thousands separators removed: read as ${p.value}` });
        }
        if (qualSaysNd) {
          nd = true;
          dl = p.value;
        } else value = p.value;
      }
    }
    if (nd) {
      if (vs === '' && ndText === null) vs = this.cell(valueCol, rec);
      if (!(dl > 0)) {
        this.reject(rec, valueName, vs, `non-detect with detection limit ${dl}; expected a limit above 0`);
        return false;
      }
      value = dl * this.factor;
      this.ndCount++;
      const qualNote = qualSaysNd && ndText === null ? ` (qualifier ${quoted(this.cell(qualCol, rec).trim())} in ${quoted(this.table.columns[qualCol])})` : '';
      // The note's raw text is the value cell's (vs), read again from the store when the entries are built.
      this.notes.nonDetect(rec, this.nonDetectReason(dl, qualNote, value));
    }
    this.value = value;
    this.nd = nd;
    return true;
  }

  /** Warnings on what the rows said: thousands separators, missing cells, qualifier values not known. */
  rowWarnings(warnings: Warning[]): void {
    const table = this.table;
    if (this.grouped.length) {
      warnings.push({ code: 'thousands-separator', message: `Thousands separators were removed on ${listPlaces(table, this.grouped)}; check those numbers.` });
    }
    const missing = this.missing;
    if (missing.length) {
      warnings.push({ code: 'missing-values', message: `${missing.length} row${missing.length === 1 ? '' : 's'} with a missing value or coordinate skipped (${listPlaces(table, missing)}).` });
    }
    if (this.unknownQualifiers.size) {
      warnings.push({ code: 'unknown-qualifier', message: `Qualifier values ${[...this.unknownQualifiers].slice(0, 8).map((v) => `${quoted(v)}`).join(', ')} in ${quoted(table.columns[this.cols.qualifier])} were taken as detected.` });
    }
  }
}

/**
 * Reads every row of the table that passed the field-count check: coordinates, value and
 * non-detects. Rejected and changed rows are noted in `notes`; the warnings about them are added.
 */
export function parseRows(
  table: Table, format: 'csv' | 'geojson', coords: CoordinateColumns, cols: ValueColumns, norm: string[], marks: ColumnMarksCache,
  rule: NonDetectRule, notes: ReadNotes, warnings: Warning[],
): ParsedRows {
  const reader = new RowReader(table, format, coords, cols, norm, marks, rule, notes);
  reader.mixedMarkWarnings(warnings);
  const nRows = table.rowCount;
  const rowIndex = table.rows;
  const px = new Float64Array(nRows);
  const py = new Float64Array(nRows);
  const pv = new Float64Array(nRows);
  const pnd = new Uint8Array(nRows);
  const prec = new Uint32Array(nRows);
  let np = 0;
  for (let k = 0; k < nRows; k++) {
    const rec = rowIndex ? rowIndex[k] : k;
    if (!reader.readCoordinates(rec) || !reader.readValue(rec)) continue;
    px[np] = reader.x;
    py[np] = reader.y;
    pv[np] = reader.value;
    pnd[np] = reader.nd ? 1 : 0;
    prec[np] = rec;
    np++;
  }
  reader.rowWarnings(warnings);
  return { x: px, y: py, value: pv, nd: pnd, record: prec, count: np, nonDetects: reader.ndCount };
}

/**
 * Refuses a read with no usable row ('bad-value', naming the first rejection), and with `strict` a
 * read with any rejected row.
 */
export function refuseUnusableRows(table: Table, rows: ParsedRows, notes: ReadNotes, options: IntakeOptions): void {
  const file = options.fileName;
  const rejectedCount = notes.count('rejected');
  if (rows.count === 0) {
    const first = notes.firstRejected;
    const detail = first ? ` The first rejected (at the place named): ${first.reason}.` : '';
    throw new GapwiseError('bad-value', `None of the ${table.rowCount + (table.entries.filter((e) => e.action === 'rejected').length)} rows could be used; expected at least one row with coordinates and a value.${detail}`, { file, row: first?.line, feature: first?.feature, column: first?.field, raw: first?.raw });
  }
  if (options.strict && rejectedCount) {
    const first = notes.firstRejected as ReportEntry;
    throw new GapwiseError('bad-value', `${rejectedCount} row${rejectedCount === 1 ? ' was' : 's were'} rejected; the first (at the place named): ${first.reason}.`, { file, row: first.line, feature: first.feature, column: first.field, raw: first.raw });
  }
}
