/**
 * Which column of a samples table is which: the coordinates (by the names users give them: lon/lat,
 * x/y, easting/northing, or the names given in the options), the sample ID, a qualifier ("<", "ND",
 * "U"), a detection limit, and the value to map (the one numeric column, or the one named). Also each
 * column's decimal mark, settled once from its cells (numbers.ts chooseMarkFrom).
 */
import { GapwiseError } from '../core/shared/errors.ts';
import type { Warning } from '../core/shared/errors.ts';
import { chooseMarkFrom, isMissing, markEvidence, nonDetectLimit, parseColumnNumber } from './numbers.ts';
import type { ColumnMarks, MarkEvidence } from './numbers.ts';
import { cellText, plainDecimalsAt, plainNumberAt } from './sample-table.ts';
import { quoted, quotedList } from './quote.ts';
import { cellAt, type Table } from './intake-table.ts';
import type { IntakeOptions } from './types.ts';

/** Qualifier values that mean "not detected" (compared trimmed, case-insensitively). */
const ND_CODES = new Set(['<', 'nd', 'n.d.', 'u', 'uj', 'bdl', '<dl', '<lod', '<loq', '<mdl', '<rl', 'lt', 'non-detect', 'nondetect', 'not detected', 'below detection limit']);
/** Qualifier values that mean "detected". */
const DETECT_CODES = new Set(['', '=', 'd', 'det', 'detected', 'j', '>']);
const YES = new Set(['y', 'yes', 'true', '1']);
const NO = new Set(['n', 'no', 'false', '0']);

/**
 * Whether a qualifier cell says "not detected": codes like '<', 'ND', 'U' anywhere; yes/no answers
 * by the column's name ("non_detect" = yes means not detected, "detected" = no means not detected).
 * Returns null for a value it does not know.
 */
export function qualifierSaysNd(normalisedName: string, cell: string): boolean | null {
  const v = cell.trim().toLowerCase();
  if (ND_CODES.has(v)) return true;
  if (DETECT_CODES.has(v)) return false;
  if (YES.has(v) || NO.has(v)) {
    const negative = /(non|not|^nd$|_nd$|^nd_|censor|below|^lt$)/.test(normalisedName);
    return negative ? YES.has(v) : NO.has(v);
  }
  return null;
}
/** Value cells that say "not detected" without a number. */
export const ND_WORDS = new Set(['nd', 'n.d.', 'bdl', '<dl', '<lod', '<loq', '<mdl', 'non-detect', 'not detected', 'below detection limit']);

const LON = /^(lon|long|lng|longitude|lon_deg|long_deg|lng_deg|longitude_deg|lon_dd|longitude_dd|lon_wgs84|longitude_wgs84|lon_e)$/;
const LAT = /^(lat|latitude|lat_deg|latitude_deg|lat_dd|latitude_dd|lat_wgs84|latitude_wgs84|lat_n)$/;
const PLANAR_X = /^(x|easting|east|e|x_coord|xcoord|coord_x|x_m|utm_x|utm_e|utm_easting|x_utm|easting_m)$/;
const PLANAR_Y = /^(y|northing|north|n|y_coord|ycoord|coord_y|y_m|utm_y|utm_n|utm_northing|y_utm|northing_m)$/;
const ID = /^(id|sample|samples|sample_id|sampleid|sample_no|sample_number|sample_name|sample_code|name|site|site_id|station|station_id|point|point_id|label|code|fid|location_id|loc_id|well|well_id|borehole|plot|plot_id)$/;
const QUALIFIER = /(qualif|flag|detect|censor|^nd$|^q$|_q$|^lt$|remark)/;
const DL_COLUMN = /^(dl|lod|loq|mdl|rl|detection_limit|detection_limits|det_limit|reporting_limit|limit_of_detection)$|_dl$|^dl_/;

/** Examples of the coordinate names intake reads, for messages. */
export const USUAL_COORDINATE_NAMES = { x: 'lon, longitude, x, easting', y: 'lat, latitude, y, northing' } as const;

/**
 * The column intake would read as the x (or y) coordinate among `columns`: a longitude (latitude)
 * name first, else a planar one (x, easting, …), compared as normaliseName gives them; -1 when none.
 * The command line finds the coordinates of targets and sites files with it, so they follow the same
 * rule as the samples.
 */
export function usualCoordinateColumn(columns: readonly string[], axis: 'x' | 'y'): number {
  const norm = columns.map(normaliseName);
  const [geographic, planar] = axis === 'x' ? [LON, PLANAR_X] : [LAT, PLANAR_Y];
  const i = norm.findIndex((n) => geographic.test(n));
  return i !== -1 ? i : norm.findIndex((n) => planar.test(n));
}

/** Lowercase, unit removed, spaces and dashes as underscores: 'Sample ID' → 'sample_id'. */
export function normaliseName(name: string): string {
  return splitUnit(name).base.toLowerCase().trim().replace(/[\s\-.]+/g, '_');
}

/** 'Pb (mg/kg)' → { base: 'Pb', unit: 'mg/kg' }; also square brackets. */
export function splitUnit(header: string): { base: string; unit: string } {
  const m = /^(.*?)\s*[([]\s*([^)\]]*?)\s*[)\]]\s*$/.exec(header);
  if (m && m[1].trim() !== '' && m[2] !== '') return { base: m[1].trim(), unit: m[2] };
  return { base: header.trim(), unit: '' };
}

/** Finds a column by exact name, then case-insensitively, then by its name without the unit. */
function findColumn(columns: string[], want: string): number {
  let i = columns.indexOf(want);
  if (i >= 0) return i;
  const w = want.trim().toLowerCase();
  i = columns.findIndex((c) => c.toLowerCase() === w);
  if (i >= 0) return i;
  const wn = normaliseName(want);
  return columns.findIndex((c) => normaliseName(c) === wn);
}

function missingColumn(file: string, what: string, want: string, columns: string[]): GapwiseError {
  return new GapwiseError('missing-column', `There is no ${what} column ${quoted(want)}; the columns are ${quotedList(columns)}.`, { file, column: want });
}

/** Share of non-missing cells (of the first 2000 rows) of a column that read as numbers or "<number" non-detects. */
function numericShare(table: Table, col: number, marks: ColumnMarks): { share: number; filled: number } {
  let filled = 0;
  let ok = 0;
  const limit = Math.min(table.rowCount, 2000);
  for (let k = 0; k < limit; k++) {
    const raw = cellAt(table, k, col);
    if (isMissing(raw)) continue;
    filled++;
    const nd = nonDetectLimit(raw);
    const text = nd ?? raw;
    if (parseColumnNumber(text, marks).ok || ND_WORDS.has(raw.trim().toLowerCase())) ok++;
  }
  return { share: filled ? ok / filled : 0, filled };
}

/** What a plain decimal cell (value v, d digits after the point) says about the decimal mark (as markEvidence). */
function plainEvidence(v: number, d: number): MarkEvidence {
  if (d === 0) return 'none';
  const whole = Math.trunc(Math.abs(v));
  return d === 3 && whole >= 1 && whole <= 999 ? 'ambiguous' : '.';
}

function marksFor(table: Table, col: number, delimiter: string): ColumnMarks {
  // Lazily: with a comma delimiter the mark is settled without looking at a cell.
  const b = table.store[col];
  function* evidence(): Generator<MarkEvidence> {
    for (let k = 0; k < table.rowCount; k++) {
      const rec = table.rows ? table.rows[k] : k;
      const d = plainDecimalsAt(b, rec);
      yield d >= 0 ? plainEvidence(plainNumberAt(b, rec), d) : markEvidence(cellText(b, rec));
    }
  }
  return chooseMarkFrom(evidence(), delimiter);
}


/** Each column's decimal marks, settled the first time they are asked for. */
export class ColumnMarksCache {
  private readonly known = new Map<number, ColumnMarks>();

  constructor(private readonly table: Table) {}

  /** The marks of column `col`. */
  of(col: number): ColumnMarks {
    let m = this.known.get(col);
    if (!m) {
      m = marksFor(this.table, col, this.table.delimiter);
      this.known.set(col, m);
    }
    return m;
  }

  /** The marks of every column asked for so far, null for the others (what the sample table keeps). */
  all(): Array<ColumnMarks | null> {
    return this.table.columns.map((_, i) => this.known.get(i) ?? null);
  }
}

/** The coordinate columns of a CSV table (-1 for GeoJSON, whose positions are the geometry's), and what their names say. */
export interface CoordinateColumns {
  x: number;
  y: number;
  naming: 'geographic' | 'planar' | 'unknown' | 'geojson';
}

/**
 * The x and y columns: those the options name, else the usual names of longitude/latitude, else of
 * planar coordinates. Throws 'missing-column' when one is not found or both are the same column.
 */
export function findCoordinateColumns(table: Table, format: 'csv' | 'geojson', options: IntakeOptions, norm: string[], warnings: Warning[]): CoordinateColumns {
  const file = options.fileName;
  const { columns } = table;
  let xCol = -1;
  let yCol = -1;
  let naming: CoordinateColumns['naming'] = 'geojson';
  if (format === 'csv') {
    if (options.x !== undefined) {
      xCol = findColumn(columns, options.x);
      if (xCol < 0) throw missingColumn(file, 'x', options.x, columns);
    }
    if (options.y !== undefined) {
      yCol = findColumn(columns, options.y);
      if (yCol < 0) throw missingColumn(file, 'y', options.y, columns);
    }
    if (xCol < 0) xCol = norm.findIndex((n) => LON.test(n));
    if (yCol < 0) yCol = norm.findIndex((n) => LAT.test(n));
    if (xCol < 0 || yCol < 0) {
      if (xCol < 0) xCol = norm.findIndex((n) => PLANAR_X.test(n));
      if (yCol < 0) yCol = norm.findIndex((n) => PLANAR_Y.test(n));
    }
    if (xCol < 0 || yCol < 0) {
      throw new GapwiseError('missing-column', `No ${xCol < 0 ? 'x (longitude or easting)' : 'y (latitude or northing)'} column was found among ${quotedList(columns)}; expected names like lon/lat, longitude/latitude, x/y or easting/northing (on the command line, --x and --y name other columns).`, { file });
    }
    if (xCol === yCol) throw new GapwiseError('missing-column', `The x and y columns are both ${quoted(columns[xCol])}; expected two different columns.`, { file, column: columns[xCol] });
    const nx = norm[xCol];
    const ny = norm[yCol];
    if (LON.test(nx) && LAT.test(ny)) naming = 'geographic';
    else if (PLANAR_X.test(nx) && PLANAR_Y.test(ny)) naming = 'planar';
    else if (LON.test(ny) && LAT.test(nx)) naming = 'geographic';
    else naming = 'unknown';
  } else if (options.x !== undefined || options.y !== undefined) {
    warnings.push({ code: 'option-ignored', message: 'The x and y options are ignored for GeoJSON: positions come from each feature\'s geometry.' });
  }
  return { x: xCol, y: yCol, naming };
}

/** The value column and the columns that go with it (-1 when there is none). */
export interface ValueColumns {
  value: number;
  valueName: string;
  id: number;
  qualifier: number;
  detectionLimit: number;
  /** Names of the columns (besides coordinates, ID, qualifiers and detection limit) that hold mostly numbers. */
  numericColumns: string[];
}

/** Whether a column's cells (of the first 2000 rows) are, at least 9 in 10, qualifier codes or yes/no answers. */
function holdsQualifierCodes(table: Table, col: number): boolean {
  let codes = 0;
  let filled = 0;
  for (let k = 0; k < Math.min(table.rowCount, 2000); k++) {
    const v = cellAt(table, k, col).trim().toLowerCase();
    if (v === '') continue;
    filled++;
    if (ND_CODES.has(v) || DETECT_CODES.has(v) || YES.has(v) || NO.has(v)) codes++;
  }
  return filled === 0 || codes / filled >= 0.9;
}

/**
 * The ID, qualifier, detection-limit and value columns: the value is the column the options name, or
 * the only numeric column left; its qualifier is the one naming it, else the only one. Throws
 * 'missing-column' when the named value column is absent or a coordinate, or when no column or
 * several hold numbers (the error then carries `numericColumns`).
 */
export function findValueColumns(table: Table, options: IntakeOptions, norm: string[], coords: CoordinateColumns, marks: ColumnMarksCache): ValueColumns {
  const { columns } = table;
  const taken = new Set<number>([coords.x, coords.y]);
  let idCol = norm.findIndex((n, i) => !taken.has(i) && ID.test(n));
  if (idCol >= 0) taken.add(idCol);
  const qualifierCandidates = norm.map((_, i) => i).filter((i) => !taken.has(i) && QUALIFIER.test(norm[i]) && !DL_COLUMN.test(norm[i]) && holdsQualifierCodes(table, i));
  let dlCol = norm.findIndex((n, i) => !taken.has(i) && DL_COLUMN.test(n));
  if (dlCol >= 0) taken.add(dlCol);
  for (const q of qualifierCandidates) taken.add(q);

  const numericColumns: string[] = [];
  for (let i = 0; i < columns.length; i++) {
    if (taken.has(i)) continue;
    const { share, filled } = numericShare(table, i, marks.of(i));
    if (filled > 0 && share >= 0.5) numericColumns.push(columns[i]);
  }
  const valueCol = chooseValueColumn(columns, options, numericColumns, coords);
  if (valueCol === idCol) idCol = -1;
  if (valueCol === dlCol) dlCol = -1;
  const valueName = columns[valueCol];
  // The qualifier that belongs to the value column: one naming it, else the only one.
  const base = normaliseName(valueName);
  let qualCol = qualifierCandidates.find((i) => norm[i].includes(base)) ?? (qualifierCandidates.length === 1 ? qualifierCandidates[0] : -1);
  if (qualCol === valueCol) qualCol = -1;
  return { value: valueCol, valueName, id: idCol, qualifier: qualCol, detectionLimit: dlCol, numericColumns };
}

/** The value column: the one the options name, else the only numeric column. */
function chooseValueColumn(columns: string[], options: IntakeOptions, numericColumns: string[], coords: CoordinateColumns): number {
  const file = options.fileName;
  if (options.value !== undefined) {
    const valueCol = findColumn(columns, options.value);
    if (valueCol < 0) {
      throw new GapwiseError('missing-column', `There is no value column ${quoted(options.value)}; the numeric columns are ${numericColumns.length ? quotedList(numericColumns) : '(none)'}.`, { file, column: options.value });
    }
    if (valueCol === coords.x || valueCol === coords.y) {
      throw new GapwiseError('missing-column', `The value column ${quoted(columns[valueCol])} is also a coordinate column; expected one of ${quotedList(numericColumns)}.`, { file, column: options.value });
    }
    return valueCol;
  }
  if (numericColumns.length === 1) return columns.indexOf(numericColumns[0]);
  if (numericColumns.length === 0) {
    throw new GapwiseError('missing-column', `No column holds numbers to map; the columns are ${quotedList(columns)}. Expected one numeric value column.`, { file });
  }
  const several = new GapwiseError('missing-column', `Several columns hold numbers: ${quotedList(numericColumns)}; choose the one to map (in the app, the value column; on the command line, --value).`, { file });
  // The candidates, for a caller that maps every numeric column (gapwise --value '*').
  throw Object.assign(several, { numericColumns });
}
