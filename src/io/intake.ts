/**
 * Sample intake: CSV or GeoJSON text to samples in a metric working CRS, with a read report that
 * accounts for every row (rejected, changed, merged or flagged, with its line or feature index, field,
 * raw text and reason). Shared by the app and the CLI; everything returned is plain data.
 */
import { GapwiseError } from '../core/shared/errors.ts';
import type { Warning } from '../core/shared/errors.ts';
import { CsvReader } from './csv.ts';
import { readPointFeatures } from './geojson.ts';
import { MAX_SAMPLE_BYTES, MAX_SAMPLE_ROWS, megabytes } from './intake-limits.ts';
import { TextFromBytes, binaryKind } from './text-bytes.ts';
import { LOCAL_CRS, chooseWorkCrs, createTransform, resolveCrs } from './crs.ts';
import type { ResolvedCrs } from './crs.ts';
import { chooseMarkFrom, isMissing, markEvidence, nonDetectLimit, parseColumnNumber } from './numbers.ts';
import type { ColumnMarks, MarkEvidence } from './numbers.ts';
import { ColumnBuilder, FLAG_DUP, FLAG_ND, FLAG_OUTLIER, cellText, plainDecimalsAt, plainNumberAt, setOwn } from './sample-table.ts';
import type { SampleTable, StoredColumn } from './sample-table.ts';
import { GrowingArray, type TypedKind } from './growing-array.ts';
import { ReadNotes, lazyEntries } from './read-notes.ts';
import { duplicateGroups, outlierIndices, sortedCopy, summarise, transformAdvice } from './quality.ts';
import { formatValue } from './format.ts';
import type { CrsInfo, IntakeOptions, IntakeResult, NonDetectRule, ReadReport, ReportEntry } from './types.ts';

/** The note every report carries on non-detect substitution. */
export const NON_DETECT_NOTE =
  'Replacing non-detects by a fraction of the detection limit is common practice but biases the mean, the variance and the variogram (Helsel 2006, Chemosphere 65:2434); treat results near the detection limit with care.';

const RULE_TEXT: Record<NonDetectRule, string> = { half: 'DL/2', dl: 'DL', sqrt2: 'DL/√2' };
const RULE_FACTOR: Record<NonDetectRule, number> = { half: 0.5, dl: 1, sqrt2: Math.SQRT1_2 };

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
function qualifierSaysNd(normalisedName: string, cell: string): boolean | null {
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
const ND_WORDS = new Set(['nd', 'n.d.', 'bdl', '<dl', '<lod', '<loq', '<mdl', 'non-detect', 'not detected', 'below detection limit']);

const LON = /^(lon|long|lng|longitude|lon_deg|long_deg|lng_deg|longitude_deg|lon_dd|longitude_dd|lon_wgs84|longitude_wgs84|lon_e)$/;
const LAT = /^(lat|latitude|lat_deg|latitude_deg|lat_dd|latitude_dd|lat_wgs84|latitude_wgs84|lat_n)$/;
const PLANAR_X = /^(x|easting|east|e|x_coord|xcoord|coord_x|x_m|utm_x|utm_e|utm_easting|x_utm|easting_m)$/;
const PLANAR_Y = /^(y|northing|north|n|y_coord|ycoord|coord_y|y_m|utm_y|utm_n|utm_northing|y_utm|northing_m)$/;
const ID = /^(id|sample|samples|sample_id|sampleid|sample_no|sample_number|sample_name|sample_code|name|site|site_id|station|station_id|point|point_id|label|code|fid|location_id|loc_id|well|well_id|borehole|plot|plot_id)$/;
const QUALIFIER = /(qualif|flag|detect|censor|^nd$|^q$|_q$|^lt$|remark)/;
const DL_COLUMN = /^(dl|lod|loq|mdl|rl|detection_limit|detection_limits|det_limit|reporting_limit|limit_of_detection)$|_dl$|^dl_/;

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

/**
 * The file's rows as read, stored by column (see sample-table.ts): the cells of every data row that
 * reached the store, the line (CSV) or feature number (GeoJSON) of each, and which of them passed the
 * field-count check (`rows`, indices into the store in file order).
 */
interface Table {
  format: 'csv' | 'geojson';
  columns: string[];
  /** One stored column per name (the cells of each stored row). */
  store: StoredColumn[];
  /** Line or feature number of each stored row. */
  recordLine: Uint32Array;
  /** The stored rows that are read, in file order; null when they are all of them (0, 1, 2, …). */
  rows: Uint32Array | null;
  /** How many stored rows are read. */
  rowCount: number;
  /** GeoJSON: each feature's own id ('' when none) and position. */
  featureIds?: StoredColumn;
  lon?: Float64Array;
  lat?: Float64Array;
  delimiter: string;
  entries: ReportEntry[];
  warnings: Warning[];
  blankLines?: number[];
  legacyCrs?: string;
}

/** Cells of rows stored by column as they arrive. */
class RecordStore {
  readonly builders: ColumnBuilder[];
  private readonly lineChunks = new GrowingArray(Uint32Array as TypedKind<Uint32Array>, MAX_SAMPLE_ROWS + 1);
  n = 0;

  constructor(width: number) {
    this.builders = Array.from({ length: width }, () => new ColumnBuilder());
  }

  add(line: number, cells: readonly string[]): number {
    const k = this.n;
    this.lineChunks.push(line);
    const b = this.builders;
    for (let c = 0; c < b.length; c++) b[c].push(c < cells.length ? cells[c] : '');
    this.n++;
    return k;
  }

  /** The line or feature number of each stored row (once, at the end). */
  lines(): Uint32Array {
    return this.lineChunks.take();
  }
}

/** Where a stored row is, for a report entry. */
function placeOf(table: Table, rec: number): { line?: number; feature?: number; id?: string } {
  const n = table.recordLine[rec];
  if (table.format === 'csv') return { line: n };
  const id = table.featureIds ? cellText(table.featureIds, rec) : '';
  return id !== '' ? { feature: n, id } : { feature: n };
}

/** "lines 3, 7, 9" with at most `max` listed. */
function listPlaces(table: Table, recs: ArrayLike<number>, max = 12): string {
  if (recs.length === 0) return '';
  const kind = table.format === 'csv' ? 'line' : 'feature';
  const nums: number[] = [];
  for (let i = 0; i < Math.min(max, recs.length); i++) nums.push(table.recordLine[recs[i]]);
  const more = recs.length > max ? ` and ${(recs.length - max).toLocaleString('en-US')} more` : '';
  return `${kind}${recs.length > 1 ? 's' : ''} ${nums.join(', ')}${more}`;
}

/** "lines 3, 7" from line numbers. */
function listLines(lines: number[]): string {
  const more = lines.length > 12 ? ` and ${(lines.length - 12).toLocaleString('en-US')} more` : '';
  return `line${lines.length > 1 ? 's' : ''} ${lines.slice(0, 12).join(', ')}${more}`;
}

export { quoted, quotedList } from './quote.ts';
import { LIST_NAMES, quoted, quotedList } from './quote.ts';

function checkOptions(o: IntakeOptions): void {
  if (!o || typeof o !== 'object') throw new GapwiseError('bad-option', 'The intake options are missing; expected an object with at least fileName.');
  if (typeof o.fileName !== 'string') throw new GapwiseError('bad-option', `fileName is ${typeof o.fileName}; expected a string.`);
  if (o.format !== undefined && o.format !== 'csv' && o.format !== 'geojson') {
    throw new GapwiseError('bad-option', `format is ${quoted(String(o.format))}; expected "csv" or "geojson".`, { file: o.fileName });
  }
  if (o.nonDetect !== undefined && !Object.hasOwn(RULE_FACTOR, o.nonDetect)) {
    throw new GapwiseError('bad-option', `nonDetect is ${quoted(String(o.nonDetect))}; expected "half", "dl" or "sqrt2".`, { file: o.fileName });
  }
  if (o.duplicates !== undefined && o.duplicates !== 'merge' && o.duplicates !== 'keep') {
    throw new GapwiseError('bad-option', `duplicates is ${quoted(String(o.duplicates))}; expected "merge" or "keep".`, { file: o.fileName });
  }
  if (o.duplicateTolerance !== undefined && !(Number.isFinite(o.duplicateTolerance) && o.duplicateTolerance >= 0)) {
    throw new GapwiseError('bad-option', `duplicateTolerance is ${String(o.duplicateTolerance)}; expected a distance ≥ 0 in metres.`, { file: o.fileName });
  }
}

function detectFormat(text: string, o: IntakeOptions): 'csv' | 'geojson' {
  if (o.format) return o.format;
  if (/\.(geo)?json$/i.test(o.fileName)) return 'geojson';
  if (/\.(csv|tsv|txt)$/i.test(o.fileName)) return 'csv';
  return /^\ufeff?\s*\{/.test(text) ? 'geojson' : 'csv';
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

/** The text of cell `col` of the table's k-th row. */
function cellAt(table: Table, k: number, col: number): string {
  return cellText(table.store[col], table.rows ? table.rows[k] : k);
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

/** resolveCrs with the file named in the error's place. */
function resolveIn(crs: string, file: string, option: string): ResolvedCrs {
  try {
    return resolveCrs(crs);
  } catch (e) {
    if (e instanceof GapwiseError) throw new GapwiseError(e.code, `${option}: ${e.message}`, { ...e.place, file });
    throw e;
  }
}

/** Progress of a streamed read: bytes and data rows read so far, and the file's size when known. */
export interface IntakeProgress {
  bytes: number;
  rows: number;
  totalBytes?: number;
}

/** How a streamed read reports and what it knows beforehand. Not part of the (JSON-able) options. */
export interface IntakeStreamHooks {
  /** Called after each chunk (and once at the end of reading). */
  onProgress?: (progress: IntakeProgress) => void;
  /** The file's size when known (a File's size, fstat): refused at once when over the limit. */
  totalBytes?: number;
  /** Smaller limits than MAX_SAMPLE_BYTES and MAX_SAMPLE_ROWS (tests of the refusals). */
  limits?: { bytes?: number; rows?: number };
}

/** The chunks of a file: an async or plain iterable of byte arrays, or a web ReadableStream. */
export type ByteChunks = AsyncIterable<Uint8Array> | Iterable<Uint8Array> | ReadableStream<Uint8Array>;

function tooManyBytes(file: string, bytes: number, exact: boolean, limit: number): GapwiseError {
  return new GapwiseError('bad-file', `The file is ${exact ? '' : 'over '}${megabytes(bytes)}; expected a samples file of at most ${megabytes(limit)}.`, { file });
}

function tooManyRows(file: string, rows: number, limit: number): GapwiseError {
  return new GapwiseError('bad-file', `The file holds over ${(rows - 1).toLocaleString('en-US')} rows of samples; expected at most ${limit.toLocaleString('en-US')}.`, { file });
}

/** Limits of one read: MAX_SAMPLE_BYTES and MAX_SAMPLE_ROWS unless a test sets smaller ones. */
interface Limits {
  bytes: number;
  rows: number;
}

/**
 * Reads CSV text pushed in pieces straight into a RecordStore: rows are checked against the header's
 * field count as they come, and no row object outlives its chunk.
 */
class CsvCollector {
  private readonly reader: CsvReader;
  private store: RecordStore | null = null;
  private width0 = 0;
  /** Rows with more fields than the header and something in the extra ones: never read. */
  private readonly long: Array<{ line: number; count: number; raw: string }> = [];
  /** Stored rows with fewer fields than the header: read only if the header's width shrinks to them. */
  private readonly short: Array<{ record: number; line: number; count: number; raw: string }> = [];

  constructor(
    private readonly file: string,
    counter: { rows: number },
    limits: Limits,
  ) {
    this.reader = new CsvReader(file, undefined, (row) => {
      counter.rows++;
      if (counter.rows > limits.rows) throw tooManyRows(file, counter.rows, limits.rows);
      this.take(row.line, row.cells);
    }, undefined, false);
  }

  push(text: string): void {
    this.reader.push(text);
  }

  private take(line: number, cells: string[]): void {
    if (this.store === null) {
      this.width0 = (this.reader.headerCells as string[]).length;
      this.store = new RecordStore(this.width0);
    }
    const w = this.width0;
    if (cells.length > w) {
      for (let k = w; k < cells.length; k++) {
        if (cells[k].trim() !== '') {
          this.long.push({ line, count: cells.length, raw: cells.join(this.reader.chosenDelimiter as string) });
          return;
        }
      }
    }
    const record = this.store.add(line, cells);
    if (cells.length < w) this.short.push({ record, line, count: cells.length, raw: cells.join(this.reader.chosenDelimiter as string) });
  }

  /** The table once every piece was pushed. */
  end(): Table {
    const t = this.reader.end();
    const fileName = this.file;
    const width = t.header.length;
    const store = this.store ?? new RecordStore(this.width0 || width);
    const entries: ReportEntry[] = [];
    const warnings: Warning[] = [];
    const tab = t.delimiter === '\t' ? 'tab' : `${quoted(t.delimiter)}`;
    const dropped = new Set<number>();
    let a = 0;
    let b = 0;
    // Both lists are in file order: merged, the entries are too.
    while (a < this.long.length || b < this.short.length) {
      if (b >= this.short.length || (a < this.long.length && this.long[a].line < this.short[b].line)) {
        const r = this.long[a++];
        entries.push({ line: r.line, raw: r.raw, action: 'rejected', reason: `has ${r.count} fields but the header has ${width}; a value may hold an unquoted ${tab}` });
      } else {
        const r = this.short[b++];
        if (r.count >= width) continue;
        dropped.add(r.record);
        entries.push({ line: r.line, raw: r.raw, action: 'rejected', reason: `has ${r.count} field${r.count === 1 ? '' : 's'} but the header has ${width}` });
      }
    }
    let rows: Uint32Array | null = null;
    if (dropped.size) {
      rows = new Uint32Array(store.n - dropped.size);
      for (let k = 0, j = 0; k < store.n; k++) if (!dropped.has(k)) rows[j++] = k;
    }
    const rowCount = store.n - dropped.size;
    if (t.renamed.length) {
      const shown = t.renamed.slice(0, LIST_NAMES).map(([x, y]) => `${quoted(x)} → ${quoted(y)}`).join(', ');
      const more = t.renamed.length > LIST_NAMES ? ` and ${(t.renamed.length - LIST_NAMES).toLocaleString('en-US')} more` : '';
      warnings.push({ code: 'renamed-columns', message: `Header names that were empty or repeated were renamed: ${shown}${more}.` });
    }
    if (t.blankLines.length) {
      warnings.push({ code: 'blank-lines', message: `${t.blankLines.length} blank line${t.blankLines.length === 1 ? '' : 's'} skipped (${listLines(t.blankLines)}).` });
    }
    if (rowCount === 0 && entries.length === 0) {
      throw new GapwiseError('bad-file', 'The file has a header but no rows of samples; expected at least one row under it.', { file: fileName, row: t.headerLine });
    }
    return {
      format: 'csv', columns: t.header, store: store.builders.slice(0, width).map((b) => b.finish()), recordLine: store.lines(), rows, rowCount,
      delimiter: t.delimiter, entries, warnings, blankLines: t.blankLines,
    };
  }
}

function geojsonTable(text: string, fileName: string, limits: Limits): Table {
  const g = readPointFeatures(text, fileName);
  if (g.records.length > limits.rows) throw tooManyRows(fileName, g.records.length, limits.rows);
  const store = new RecordStore(g.columns.length);
  const featureIds = new ColumnBuilder();
  const n = g.records.length;
  const lon = new Float64Array(n);
  const lat = new Float64Array(n);
  const cells: string[] = new Array(g.columns.length);
  g.records.forEach((r, k) => {
    for (let c = 0; c < g.columns.length; c++) cells[c] = r.cells.get(g.columns[c]) ?? '';
    store.add(r.feature, cells);
    featureIds.push(r.id ?? '');
    lon[k] = r.lon;
    lat[k] = r.lat;
  });
  if (n === 0 && g.entries.length === 0) {
    throw new GapwiseError('bad-file', 'The FeatureCollection has no features; expected at least one Point or MultiPoint feature.', { file: fileName });
  }
  return {
    format: 'geojson', columns: g.columns, store: store.builders.map((b) => b.finish()), recordLine: store.lines(), rows: null, rowCount: n, featureIds: featureIds.finish(), lon, lat,
    delimiter: ',', entries: g.entries, warnings: [], legacyCrs: g.legacyCrs,
  };
}

/** Text that holds NUL characters is not text: say what it looks like. */
function refuseBinaryText(text: string, file: string): void {
  const nul = text.indexOf('\u0000');
  if (nul < 0 && !text.startsWith('\ufffdPNG')) return;
  // UTF-16 with a byte-order mark, decoded as UTF-8: two replacement characters, then NUL in every other place.
  if (text.startsWith('\ufffd\ufffd') && (text[3] === '\u0000' || text[2] === '\u0000')) {
    throw new GapwiseError('bad-file', 'The file is not a UTF-8 text file (it looks like UTF-16 text read as UTF-8); expected CSV or GeoJSON text read from its bytes.', { file });
  }
  const head = new Uint8Array(Math.min(text.length, 64));
  for (let i = 0; i < head.length; i++) head[i] = text.charCodeAt(i) === 0xfffd ? (i === 0 ? 0x89 : 0xff) : text.charCodeAt(i) & 0xff;
  const kind = binaryKind(head);
  throw new GapwiseError('bad-file', `The file is not a UTF-8 text file (it looks like ${kind ?? 'binary data: it holds NUL characters'}); expected CSV or GeoJSON text.`, { file });
}

/**
 * Reads samples from CSV or GeoJSON text. Detects the delimiter, decimal marks, coordinate, value,
 * ID and qualifier columns and the CRS; substitutes non-detects; projects to the working CRS; merges
 * (or keeps) duplicate locations; flags outliers; and reports every row it did not take as read.
 * The same reading as `readSamplesStream` on the text's UTF-8 bytes.
 *
 * Throws GapwiseError: 'bad-file' (not CSV/GeoJSON, empty, header only, beyond the size limits),
 * 'missing-column' (value column absent or ambiguous, coordinates not found), 'bad-crs', 'bad-value'
 * (most coordinates outside the CRS's valid range, or no usable row at all; with `strict`, any
 * rejected row), 'bad-option'.
 */
export function readSamples(text: string, options: IntakeOptions): IntakeResult {
  checkOptions(options);
  if (typeof text !== 'string') throw new GapwiseError('bad-file', `The file content is ${typeof text}; expected text.`, { file: options.fileName });
  const file = options.fileName;
  refuseBinaryText(text, file);
  if (text.length > MAX_SAMPLE_BYTES) throw tooManyBytes(file, text.length, false, MAX_SAMPLE_BYTES);
  const format = detectFormat(text, options);
  const limits = { bytes: MAX_SAMPLE_BYTES, rows: MAX_SAMPLE_ROWS };
  let table: Table;
  if (format === 'geojson') table = geojsonTable(text, file, limits);
  else {
    const reader = new CsvCollector(file, { rows: 0 }, limits);
    reader.push(text);
    table = reader.end();
  }
  return samplesFromTable(table, format, options);
}

async function* chunksOf(source: ByteChunks): AsyncGenerator<Uint8Array> {
  if (typeof (source as ReadableStream<Uint8Array>).getReader === 'function') {
    const reader = (source as ReadableStream<Uint8Array>).getReader();
    try {
      for (;;) {
        const { done, value } = await reader.read();
        if (done) return;
        yield value;
      }
    } finally {
      reader.releaseLock();
    }
  }
  yield* source as AsyncIterable<Uint8Array> | Iterable<Uint8Array>;
}

/**
 * Reads samples from the bytes of a file pushed chunk by chunk, then `finish()`: the text is decoded
 * as it comes (UTF-8, UTF-16 with a byte-order mark, Latin-1 with a warning; binary files refused by
 * what they look like), CSV rows are parsed as they come, and the size limits (MAX_SAMPLE_BYTES,
 * MAX_SAMPLE_ROWS) stop the read as soon as they are passed. The synchronous core of
 * `readSamplesStream` (the command line pushes chunks read from the file).
 */
export class SampleIntake {
  private readonly decoder: TextFromBytes;
  private readonly counter = { rows: 0 };
  private format: 'csv' | 'geojson' | null;
  private csv: CsvCollector | null = null;
  private readonly limits: Limits;
  private held = '';
  private bytes = 0;

  constructor(
    private readonly options: IntakeOptions,
    private readonly hooks: IntakeStreamHooks = {},
  ) {
    checkOptions(options);
    const file = options.fileName;
    this.limits = { bytes: hooks.limits?.bytes ?? MAX_SAMPLE_BYTES, rows: hooks.limits?.rows ?? MAX_SAMPLE_ROWS };
    if (hooks.totalBytes !== undefined && hooks.totalBytes > this.limits.bytes) throw tooManyBytes(file, hooks.totalBytes, true, this.limits.bytes);
    this.decoder = new TextFromBytes(file);
    this.format = options.format ?? (/\.(geo)?json$/i.test(file) ? 'geojson' : /\.(csv|tsv|txt)$/i.test(file) ? 'csv' : null);
  }

  /** Takes the next chunk of the file's bytes. */
  push(chunk: Uint8Array): void {
    this.bytes += chunk.length;
    if (this.bytes > this.limits.bytes) throw tooManyBytes(this.options.fileName, this.limits.bytes, false, this.limits.bytes);
    this.take(this.decoder.push(chunk), false);
    this.progress();
  }

  /** Reads what was pushed into samples. */
  finish(): IntakeResult {
    const file = this.options.fileName;
    this.take(this.decoder.end(), true);
    let table: Table;
    if (this.format === 'geojson') {
      table = geojsonTable(this.held, file, this.limits);
      this.held = '';
      this.counter.rows = table.rowCount + table.entries.filter((e) => e.action === 'rejected').length;
    } else {
      table = (this.csv ?? new CsvCollector(file, this.counter, this.limits)).end();
    }
    this.progress();
    table.warnings.unshift(...this.decoder.warnings);
    return samplesFromTable(table, this.format ?? 'csv', this.options);
  }

  private progress(): void {
    const { onProgress, totalBytes } = this.hooks;
    onProgress?.({ bytes: this.bytes, rows: this.counter.rows, ...(totalBytes !== undefined ? { totalBytes } : {}) });
  }

  private take(text: string, final: boolean): void {
    if (this.format === null) {
      this.held += text;
      // The format follows the first character that is not a space: "{" is GeoJSON.
      if (!final && !/\S/.test(this.held)) return;
      this.format = detectFormat(this.held, this.options);
      text = this.held;
      this.held = '';
    }
    if (this.format === 'geojson') this.held += text;
    else {
      if (this.csv === null) this.csv = new CsvCollector(this.options.fileName, this.counter, this.limits);
      if (text) this.csv.push(text);
    }
  }
}

/**
 * Reads samples from the bytes of a file as they arrive (the app's worker streams a File, tests give
 * arrays of chunks); see SampleIntake. Gives the same result as `readSamples` on the decoded text.
 */
export async function readSamplesStream(source: ByteChunks, options: IntakeOptions, hooks: IntakeStreamHooks = {}): Promise<IntakeResult> {
  const intake = new SampleIntake(options, hooks);
  for await (const chunk of chunksOf(source)) intake.push(chunk);
  return intake.finish();
}

/** The reading shared by `readSamples` and `readSamplesStream`, from the table on. */
function samplesFromTable(table: Table, format: 'csv' | 'geojson', options: IntakeOptions): IntakeResult {
  const file = options.fileName;
  const rule: NonDetectRule = options.nonDetect ?? 'half';
  const dupRule = options.duplicates ?? 'merge';
  const tolerance = options.duplicateTolerance ?? 0.01;
  const { columns } = table;
  const nRows = table.rowCount;
  const rowIndex = table.rows;
  // Row notes, compactly: non-detects and outliers (by the hundred thousand in a large file) take a few bytes each.
  const notes = new ReadNotes();
  for (const e of table.entries) notes.add(e);
  const warnings: Warning[] = [...table.warnings];
  const norm = columns.map(normaliseName);

  // --- coordinate columns (CSV) -------------------------------------------------------------
  let xCol = -1;
  let yCol = -1;
  let naming: 'geographic' | 'planar' | 'unknown' | 'geojson' = 'geojson';
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

  // --- ID, qualifier, detection-limit and value columns ---------------------------------------
  const taken = new Set<number>([xCol, yCol]);
  let idCol = norm.findIndex((n, i) => !taken.has(i) && ID.test(n));
  if (idCol >= 0) taken.add(idCol);
  const textLike = (i: number) => {
    let codes = 0;
    let filled = 0;
    for (let k = 0; k < Math.min(nRows, 2000); k++) {
      const v = cellAt(table, k, i).trim().toLowerCase();
      if (v === '') continue;
      filled++;
      if (ND_CODES.has(v) || DETECT_CODES.has(v) || YES.has(v) || NO.has(v)) codes++;
    }
    return filled === 0 || codes / filled >= 0.9;
  };
  const qualifierCandidates = norm.map((n, i) => i).filter((i) => !taken.has(i) && QUALIFIER.test(norm[i]) && !DL_COLUMN.test(norm[i]) && textLike(i));
  let dlCol = norm.findIndex((n, i) => !taken.has(i) && DL_COLUMN.test(n));
  if (dlCol >= 0) taken.add(dlCol);
  for (const q of qualifierCandidates) taken.add(q);

  const delimiter = table.delimiter;
  const marksCache = new Map<number, ColumnMarks>();
  const marksOf = (i: number) => {
    let m = marksCache.get(i);
    if (!m) {
      m = marksFor(table, i, delimiter);
      marksCache.set(i, m);
    }
    return m;
  };
  const numericColumns: string[] = [];
  for (let i = 0; i < columns.length; i++) {
    if (taken.has(i)) continue;
    const { share, filled } = numericShare(table, i, marksOf(i));
    if (filled > 0 && share >= 0.5) numericColumns.push(columns[i]);
  }
  let valueCol: number;
  if (options.value !== undefined) {
    valueCol = findColumn(columns, options.value);
    if (valueCol < 0) {
      throw new GapwiseError('missing-column', `There is no value column ${quoted(options.value)}; the numeric columns are ${numericColumns.length ? quotedList(numericColumns) : '(none)'}.`, { file, column: options.value });
    }
    if (valueCol === xCol || valueCol === yCol) {
      throw new GapwiseError('missing-column', `The value column ${quoted(columns[valueCol])} is also a coordinate column; expected one of ${quotedList(numericColumns)}.`, { file, column: options.value });
    }
    if (valueCol === idCol) idCol = -1;
    if (valueCol === dlCol) dlCol = -1;
  } else if (numericColumns.length === 1) {
    valueCol = columns.indexOf(numericColumns[0]);
  } else if (numericColumns.length === 0) {
    throw new GapwiseError('missing-column', `No column holds numbers to map; the columns are ${quotedList(columns)}. Expected one numeric value column.`, { file });
  } else {
    const several = new GapwiseError('missing-column', `Several columns hold numbers: ${quotedList(numericColumns)}; choose the one to map (in the app, the value column; on the command line, --value).`, { file });
    // The candidates, for a caller that maps every numeric column (gapwise --value '*').
    throw Object.assign(several, { numericColumns });
  }
  const valueName = columns[valueCol];
  // The qualifier that belongs to the value column: one naming it, else the only one.
  const base = normaliseName(valueName);
  let qualCol = qualifierCandidates.find((i) => norm[i].includes(base)) ?? (qualifierCandidates.length === 1 ? qualifierCandidates[0] : -1);
  if (qualCol === valueCol) qualCol = -1;

  // --- parse rows ---------------------------------------------------------------------------
  const xMarks = format === 'csv' ? marksOf(xCol) : null;
  const yMarks = format === 'csv' ? marksOf(yCol) : null;
  const vMarks = marksOf(valueCol);
  const dlMarks = dlCol >= 0 ? marksOf(dlCol) : null;
  for (const [name, m] of [[columns[xCol], xMarks], [columns[yCol], yMarks], [valueName, vMarks]] as Array<[string, ColumnMarks | null]>) {
    if (m?.mixed) warnings.push({ code: 'mixed-decimal-marks', message: `Column ${quoted(name)} mixes decimal points and decimal commas; each cell was read by its own mark and ambiguous ones were rejected.` });
  }
  // Parsed rows, by column: input coordinates, value, non-detect, stored row.
  let px = new Float64Array(nRows);
  let py = new Float64Array(nRows);
  let pv = new Float64Array(nRows);
  let pnd = new Uint8Array(nRows);
  let prec = new Uint32Array(nRows);
  let np = 0;
  const grouped: number[] = [];
  const missing: number[] = [];
  const unknownQualifiers = new Set<string>();
  let ndCount = 0;
  const factor = RULE_FACTOR[rule];
  // One text per distinct reason: a large file with many non-detects at a few limits keeps a few strings.
  const reasons = new Map<string, string>();
  const ndReason = (dl: number, qualNote: string, value: number) => {
    const text = `non-detect below ${dl}${qualNote}: replaced by ${value} (${RULE_TEXT[rule]})`;
    const known = reasons.get(text);
    if (known !== undefined) return known;
    reasons.set(text, text);
    return text;
  };
  let rec = 0;
  const reject = (field: string, raw: string, reason: string) => notes.add({ ...placeOf(table, rec), field, raw, action: 'rejected', reason });
  const cell = (col: number) => cellText(table.store[col], rec);
  const dlFromColumn = (): number | null => {
    if (dlCol < 0) return null;
    const p = parseColumnNumber(cell(dlCol), dlMarks as ColumnMarks);
    return p.ok ? p.value : null;
  };
  // A plain decimal cell ("12.5", "-3") reads as its stored number when the column's mark is a decided
  // point, and a whole number reads so under any mark: the same number parseColumnNumber gives.
  const pointOnly = (m: ColumnMarks | null) => m !== null && m.mark === '.' && m.decided && !m.mixed;
  const fastNumber = (col: number, point: boolean): number => {
    const b = table.store[col];
    if (b.kind !== 'numbers') return NaN;
    const d = b.decimals[rec];
    return d === 0 || (d < 254 && point) ? b.values[rec] : NaN;
  };
  const xPoint = pointOnly(xMarks);
  const yPoint = pointOnly(yMarks);
  const vPoint = pointOnly(vMarks);
  const lonOf = table.lon;
  const latOf = table.lat;
  for (let k = 0; k < nRows; k++) {
    rec = rowIndex ? rowIndex[k] : k;
    let x: number;
    let y: number;
    if (format === 'geojson') {
      x = (lonOf as Float64Array)[rec];
      y = (latOf as Float64Array)[rec];
    } else {
      x = fastNumber(xCol, xPoint);
      y = fastNumber(yCol, yPoint);
      if (Number.isNaN(x) || Number.isNaN(y)) {
        const xs = cell(xCol);
        const ys = cell(yCol);
        if (isMissing(xs) || isMissing(ys)) {
          const [f, t] = isMissing(xs) ? [columns[xCol], xs] : [columns[yCol], ys];
          reject(f, t, 'missing coordinate');
          missing.push(rec);
          continue;
        }
        const px1 = parseColumnNumber(xs, xMarks as ColumnMarks);
        if (!px1.ok) {
          reject(columns[xCol], xs, `${quoted(xs)} ${px1.reason}`);
          continue;
        }
        const py1 = parseColumnNumber(ys, yMarks as ColumnMarks);
        if (!py1.ok) {
          reject(columns[yCol], ys, `${quoted(ys)} ${py1.reason}`);
          continue;
        }
        if (px1.grouped || py1.grouped) {
          grouped.push(rec);
          notes.add({ ...placeOf(table, rec), field: px1.grouped ? columns[xCol] : columns[yCol], raw: px1.grouped ? xs : ys, action: 'changed', reason: `thousands separators removed: read as ${px1.grouped ? px1.value : py1.value}` });
        }
        x = px1.value;
        y = py1.value;
      }
    }
    const qualVerdict = qualCol >= 0 ? qualifierSaysNd(norm[qualCol], cell(qualCol)) : false;
    const qualSaysNd = qualVerdict === true;
    if (qualVerdict === null) unknownQualifiers.add(cell(qualCol).trim());
    let value = fastNumber(valueCol, vPoint);
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
      vs = cell(valueCol);
      ndText = nonDetectLimit(vs);
      if (ndText !== null) {
        const p = parseColumnNumber(ndText, vMarks);
        if (!p.ok) {
          reject(valueName, vs, `the detection limit ${quoted(ndText)} ${p.reason}`);
          continue;
        }
        nd = true;
        dl = p.value;
      } else if (isMissing(vs) || ND_WORDS.has(vs.trim().toLowerCase())) {
        const fromCol = qualSaysNd || ND_WORDS.has(vs.trim().toLowerCase()) ? dlFromColumn() : null;
        if (fromCol === null) {
          if (isMissing(vs)) {
            reject(valueName, vs, qualSaysNd ? 'non-detect without a detection limit' : 'missing value');
            missing.push(rec);
          } else reject(valueName, vs, 'non-detect without a detection limit; expected "<limit" or a detection-limit column');
          continue;
        }
        nd = true;
        dl = fromCol;
      } else {
        const p = parseColumnNumber(vs, vMarks);
        if (!p.ok) {
          reject(valueName, vs, `${quoted(vs)} ${p.reason}`);
          continue;
        }
        if (p.grouped) {
          grouped.push(rec);
          notes.add({ ...placeOf(table, rec), field: valueName, raw: vs, action: 'changed', reason: `thousands separators removed: read as ${p.value}` });
        }
        if (qualSaysNd) {
          nd = true;
          dl = p.value;
        } else value = p.value;
      }
    }
    if (nd) {
      if (vs === '' && ndText === null) vs = cell(valueCol);
      if (!(dl > 0)) {
        reject(valueName, vs, `non-detect with detection limit ${dl}; expected a limit above 0`);
        continue;
      }
      value = dl * factor;
      ndCount++;
      const qualNote = qualSaysNd && ndText === null ? ` (qualifier ${quoted(cell(qualCol).trim())} in ${quoted(columns[qualCol])})` : '';
      // The note's raw text is the value cell's (vs), read again from the store when the entries are built.
      notes.nonDetect(rec, ndReason(dl, qualNote, value));
    }
    px[np] = x;
    py[np] = y;
    pv[np] = value;
    pnd[np] = nd ? 1 : 0;
    prec[np] = rec;
    np++;
  }
  if (grouped.length) {
    warnings.push({ code: 'thousands-separator', message: `Thousands separators were removed on ${listPlaces(table, grouped)}; check those numbers.` });
  }
  if (missing.length) {
    warnings.push({ code: 'missing-values', message: `${missing.length} row${missing.length === 1 ? '' : 's'} with a missing value or coordinate skipped (${listPlaces(table, missing)}).` });
  }
  if (unknownQualifiers.size) {
    warnings.push({ code: 'unknown-qualifier', message: `Qualifier values ${[...unknownQualifiers].slice(0, 8).map((v) => `${quoted(v)}`).join(', ')} in ${quoted(columns[qualCol])} were taken as detected.` });
  }
  const rejectedCount = notes.count('rejected');
  if (np === 0) {
    const first = notes.firstRejected;
    const detail = first ? ` The first rejected (at the place named): ${first.reason}.` : '';
    throw new GapwiseError('bad-value', `None of the ${nRows + (table.entries.filter((e) => e.action === 'rejected').length)} rows could be used; expected at least one row with coordinates and a value.${detail}`, { file, row: first?.line, feature: first?.feature, column: first?.field, raw: first?.raw });
  }
  if (options.strict && rejectedCount) {
    const first = notes.firstRejected as ReportEntry;
    throw new GapwiseError('bad-value', `${rejectedCount} row${rejectedCount === 1 ? ' was' : 's were'} rejected; the first (at the place named): ${first.reason}.`, { file, row: first.line, feature: first.feature, column: first.field, raw: first.raw });
  }

  // --- CRS ----------------------------------------------------------------------------------
  let input: ResolvedCrs;
  let detection: string;
  if (options.crs !== undefined) {
    input = resolveIn(options.crs, file, 'Coordinate system');
    detection = 'given';
    if (naming === 'geographic' && !input.geographic) {
      warnings.push({ code: 'crs-names-disagree', message: `The columns ${quoted(columns[xCol])} and ${quoted(columns[yCol])} are named like longitude/latitude, but the given CRS ${input.key} is projected; the values are read as ${input.key} coordinates.` });
    } else if (naming === 'planar' && input.geographic) {
      warnings.push({ code: 'crs-names-disagree', message: `The columns ${quoted(columns[xCol])} and ${quoted(columns[yCol])} are named like planar coordinates, but the given CRS ${input.key} is longitude/latitude; the values are read as degrees.` });
    }
    if (format === 'geojson' && !input.geographic) {
      warnings.push({ code: 'geojson-crs', message: `GeoJSON positions are WGS 84 longitude/latitude (RFC 7946), but the CRS ${input.key} was given; the positions are read in ${input.key}.` });
    }
  } else if (format === 'geojson') {
    if (table.legacyCrs && !/CRS84$|EPSG:{1,2}4326$/i.test(table.legacyCrs)) {
      input = resolveIn(table.legacyCrs, file, 'The file\'s "crs" member');
      detection = `from the file's "crs" member (${table.legacyCrs})`;
      warnings.push({ code: 'geojson-crs', message: `The GeoJSON declares the CRS ${quoted(table.legacyCrs)}; RFC 7946 allows only WGS 84 longitude/latitude, but the declared CRS was used.` });
    } else {
      input = resolveCrs('EPSG:4326');
      detection = 'GeoJSON positions are WGS 84 longitude/latitude (RFC 7946)';
    }
  } else if (naming === 'geographic') {
    input = resolveCrs('EPSG:4326');
    detection = `columns ${quoted(columns[xCol])} and ${quoted(columns[yCol])} are named like longitude/latitude, so WGS 84 (EPSG:4326) was assumed`;
  } else {
    let degrees = true;
    for (let i = 0; i < np && degrees; i++) degrees = Math.abs(px[i]) <= 180 && Math.abs(py[i]) <= 90;
    if (naming === 'planar') {
      input = resolveCrs(LOCAL_CRS);
      detection = `columns ${quoted(columns[xCol])} and ${quoted(columns[yCol])} are named like planar coordinates and no CRS was given, so they were taken as local planar coordinates (in coordinate units)`;
      warnings.push({ code: 'crs-needed', message: `No CRS was given for the planar columns ${quoted(columns[xCol])} and ${quoted(columns[yCol])}: distances are in the file's coordinate units (metres only once you say so), and the samples are drawn on a plain planar map but cannot be placed on the earth or exported with a georeference. Give their CRS, e.g. EPSG:32633 (in the app under Coordinate system; on the command line with --crs).${degrees ? ' Their values all lie within ±180/±90: if they are longitude/latitude, give EPSG:4326.' : ''}` });
    } else if (degrees) {
      input = resolveCrs('EPSG:4326');
      detection = `the names ${quoted(columns[xCol])} and ${quoted(columns[yCol])} say nothing about the CRS; all values lie within longitude −180…180 and latitude −90…90, so WGS 84 (EPSG:4326) was assumed`;
      warnings.push({ code: 'crs-guessed', message: `The CRS was guessed from the coordinate ranges: ${detection}. Give --crs if this is wrong.` });
    } else {
      input = resolveCrs(LOCAL_CRS);
      detection = `the names ${quoted(columns[xCol])} and ${quoted(columns[yCol])} say nothing about the CRS and the values exceed longitude/latitude ranges, so they were taken as local planar coordinates (in coordinate units)`;
      warnings.push({ code: 'crs-guessed', message: `The CRS was guessed from the coordinate ranges: ${detection}. Give --crs to place the samples on the earth.` });
    }
  }
  for (const n of input.notes) warnings.push({ code: 'crs-note', message: n });

  // Range checks in the input CRS.
  const xName = format === 'csv' ? columns[xCol] : 'geometry';
  const yName = format === 'csv' ? columns[yCol] : 'geometry';
  /** Keeps the parsed rows for which keep(i) holds, in order. */
  const compact = (keep: (i: number) => boolean) => {
    let j = 0;
    for (let i = 0; i < np; i++) {
      if (!keep(i)) continue;
      px[j] = px[i];
      py[j] = py[i];
      pv[j] = pv[i];
      pnd[j] = pnd[i];
      prec[j] = prec[i];
      j++;
    }
    np = j;
  };
  if (input.geographic) {
    const inRange = (x: number, y: number) => y >= -90 && y <= 90 && x >= -180 && x <= 180;
    const bad: number[] = [];
    for (let i = 0; i < np; i++) if (!inRange(px[i], py[i])) bad.push(i);
    if (bad.length) {
      const p = bad[0];
      const latBad = !(py[p] >= -90 && py[p] <= 90);
      const what = (q: number) => (!(py[q] >= -90 && py[q] <= 90) ? `latitude ${py[q]} is outside −90…90` : `longitude ${px[q]} is outside −180…180`);
      if (bad.length * 2 > np) {
        // Most rows are out of range: a whole-file problem, said with the hint that holds, if any.
        // Swapping is a whole-column matter: it must also leave the good rows good.
        let allSwapped = true;
        for (let i = 0; i < np && allSwapped; i++) allSwapped = inRange(py[i], px[i]);
        const swapped = allSwapped ? bad.length : 0;
        const projected = bad.filter((q) => Math.abs(px[q]) > 360 || Math.abs(py[q]) > 360).length;
        const hint = swapped * 2 > np
          ? ' Most rows would be in range with the two columns swapped: check the column order (on the command line, --x and --y name them).'
          : projected * 2 > np
            ? ' Most values look like projected coordinates (metres), not degrees: give their CRS (in the app under Coordinate system; on the command line with --crs).'
            : '';
        const at = placeOf(table, prec[p]);
        throw new GapwiseError('bad-value', `${bad.length.toLocaleString('en-US')} of ${np.toLocaleString('en-US')} rows are outside WGS 84 longitude/latitude; the first: ${what(p)}; expected degrees in ${input.key}.${hint}`, {
          file,
          row: at.line,
          feature: at.feature,
          column: latBad ? yName : xName,
          raw: String(latBad ? py[p] : px[p]),
        });
      }
      // A few rows out of range: each is rejected with its line; the rest are read.
      for (const q of bad) {
        const qLat = !(py[q] >= -90 && py[q] <= 90);
        notes.add({ ...placeOf(table, prec[q]), field: qLat ? yName : xName, raw: String(qLat ? py[q] : px[q]), action: 'rejected', reason: `${what(q)}; expected degrees in ${input.key}` });
      }
      const firstText = what(p);
      const at = placeOf(table, prec[p]);
      const firstRaw = String(latBad ? py[p] : px[p]);
      compact((i) => inRange(px[i], py[i]));
      if (options.strict) {
        throw new GapwiseError('bad-value', `${bad.length} row${bad.length === 1 ? ' was' : 's were'} rejected; the first (at the place named): ${firstText}.`, { file, row: at.line, feature: at.feature, column: latBad ? yName : xName, raw: firstRaw });
      }
    }
  } else if (input.key !== LOCAL_CRS) {
    if (input.bbox) {
      const [north, west, south, east] = input.bbox;
      const t = createTransform(input.key, 'EPSG:4326');
      const margin = 1;
      const lonIn = (lon: number) => (west <= east ? lon >= west - margin && lon <= east + margin : lon >= west - margin || lon <= east + margin);
      const outside: number[] = [];
      const places: Array<[number, number]> = [];
      for (let i = 0; i < np; i++) {
        const [lon, lat] = t.forward(px[i], py[i]);
        if (!(lat <= north + margin && lat >= south - margin && lonIn(lon))) {
          outside.push(i);
          places.push([lon, lat]);
        }
      }
      if (outside.length * 2 < np) {
        // A few rows far outside the CRS's area of use (a mistyped coordinate): each is rejected with
        // its line, as it would otherwise stretch the map, the grid and the working CRS over it.
        const drop = new Set(outside);
        outside.forEach((q, k) => {
          const [lon, lat] = places[k];
          const where = Number.isFinite(lon) && Number.isFinite(lat) ? `: at latitude ${lat.toFixed(2)}°, longitude ${lon.toFixed(2)}°` : '';
          notes.add({ ...placeOf(table, prec[q]), field: xName, raw: `${px[q]}, ${py[q]}`, action: 'rejected', reason: `more than 1° outside the area of use of ${input.key} (${input.name})${where}, where the other samples are inside` });
        });
        if (options.strict && outside.length) {
          const at = placeOf(table, prec[outside[0]]);
          throw new GapwiseError('bad-value', `${outside.length} row${outside.length === 1 ? ' was' : 's were'} rejected; the first (at the place named): ${px[outside[0]]}, ${py[outside[0]]} is outside the area of use of ${input.key}.`, { file, row: at.line, feature: at.feature, column: xName, raw: `${px[outside[0]]}, ${py[outside[0]]}` });
        }
        compact((i) => !drop.has(i));
      } else {
        warnings.push({ code: 'outside-area', message: `${outside.length} sample${outside.length === 1 ? ' lies' : 's lie'} outside the area of use of ${input.key} (${input.name}) on ${listPlaces(table, outside.map((q) => prec[q]))}; check the CRS.` });
      }
    }
    if (input.utm) {
      const off: number[] = [];
      for (let i = 0; i < np; i++) if (px[i] < 100_000 || px[i] > 900_000) off.push(prec[i]);
      if (off.length) warnings.push({ code: 'utm-easting', message: `UTM eastings outside 100–900 km on ${listPlaces(table, off)}: those samples lie outside the zone of ${input.key}; check the CRS and the x column.` });
    }
  }

  // --- working CRS and projection -------------------------------------------------------------
  let work: ResolvedCrs;
  try {
    const requested = options.workCrs !== undefined ? resolveIn(options.workCrs, file, 'Working coordinate system') : undefined;
    const choice = chooseWorkCrs(input, px.subarray(0, np), py.subarray(0, np), requested);
    work = choice.work;
    warnings.push(...choice.warnings);
  } catch (e) {
    if (e instanceof GapwiseError) throw new GapwiseError(e.code, e.message, { ...e.place, file });
    throw e;
  }
  let toWork: ReturnType<typeof createTransform>;
  try {
    toWork = createTransform(input.key, work.key);
  } catch (e) {
    if (e instanceof GapwiseError) throw new GapwiseError(e.code, e.message, { ...e.place, file });
    throw e;
  }
  const wx = new Float64Array(np);
  const wy = new Float64Array(np);
  {
    let j = 0;
    for (let i = 0; i < np; i++) {
      const [a, b] = toWork.forward(px[i], py[i]);
      if (!Number.isFinite(a) || !Number.isFinite(b)) {
        notes.add({ ...placeOf(table, prec[i]), field: xName, raw: `${px[i]}, ${py[i]}`, action: 'rejected', reason: `cannot be projected from ${input.key} to ${work.key}` });
        continue;
      }
      px[j] = px[i];
      py[j] = py[i];
      pv[j] = pv[i];
      pnd[j] = pnd[i];
      prec[j] = prec[i];
      wx[j] = a;
      wy[j] = b;
      j++;
    }
    np = j;
  }
  if (np === 0) {
    throw new GapwiseError('bad-value', `None of the samples could be projected from ${input.key} to ${work.key}; check the CRS.`, { file });
  }
  const kept = np;
  const kx = wx.subarray(0, kept);
  const ky = wy.subarray(0, kept);

  // --- samples, duplicates ------------------------------------------------------------------
  const groups = duplicateGroups(kx, ky, tolerance);
  const merge = dupRule === 'merge' && groups.length > 0;
  let n = kept;
  if (merge) for (const g of groups) n -= g.length - 1;
  // Said before the rows are merged in place (they name the groups' rows).
  if (groups.length) {
    const text = groups.slice(0, LIST_NAMES).map((g) => listPlaces(table, g.map((j) => prec[j]))).join('; ') + (groups.length > LIST_NAMES ? `; and ${(groups.length - LIST_NAMES).toLocaleString('en-US')} more` : '');
    warnings.push(
      dupRule === 'merge'
        ? { code: 'duplicates-merged', message: `${groups.length} duplicate location${groups.length === 1 ? '' : 's'} (within ${tolerance} m) merged by their mean value: ${text}.` }
        : { code: 'duplicates-kept', message: `${groups.length} duplicate location${groups.length === 1 ? '' : 's'} (within ${tolerance} m) kept as separate samples: ${text}. Kriging needs a nugget (measurement error) to use them.` },
    );
  }
  // The samples are written over the parsed rows, in place: sample o comes from rows i ≥ o, and a
  // merged group is read whole at its first row, before anything is written at or after it. The flags
  // take the place of the non-detect marks. No second copy of the largest arrays.
  const out = { inputX: px, inputY: py, value: pv, sx: wx, sy: wy, flags: pnd, line: new Uint32Array(n), record: prec };
  const mergedSample: number[] = [];
  const mergedStart: number[] = [0];
  const mergedRecords: number[] = [];
  // The rows in groups, in ascending order, and each one's group: walked with i below.
  const members = groupMembers(groups);
  let nextMember = 0;
  for (let i = 0, o = 0; i < kept; i++) {
    let g: number[] | null = null;
    if (nextMember < members.row.length && members.row[nextMember] === i) g = groups[members.group[nextMember++]];
    if (g && merge) {
      if (g[0] !== i) continue;
      let mx = 0;
      let my = 0;
      let mv = 0;
      let ix = 0;
      let iy = 0;
      let anyNd = false;
      for (const j of g) {
        mx += kx[j];
        my += ky[j];
        mv += pv[j];
        ix += px[j];
        iy += py[j];
        anyNd ||= pnd[j] === 1;
      }
      const m = g.length;
      for (const j of g) {
        notes.add({ ...placeOf(table, prec[j]), field: valueName, raw: cellText(table.store[valueCol], prec[j]), action: 'merged', reason: `same location as ${listPlaces(table, g.filter((k) => k !== j).map((k) => prec[k]))} (within ${tolerance} m): merged into one sample with the mean value ${formatValue(mv / m, 4)}` });
      }
      out.inputX[o] = ix / m;
      out.inputY[o] = iy / m;
      out.value[o] = mv / m;
      out.sx[o] = mx / m;
      out.sy[o] = my / m;
      out.flags[o] = FLAG_DUP | (anyNd ? FLAG_ND : 0);
      out.record[o] = prec[g[0]];
      out.line[o] = table.recordLine[prec[g[0]]];
      mergedSample.push(o);
      for (const j of g) mergedRecords.push(prec[j]);
      mergedStart.push(mergedRecords.length);
      o++;
    } else {
      if (merge) {
        out.inputX[o] = px[i];
        out.inputY[o] = py[i];
        out.value[o] = pv[i];
        out.sx[o] = kx[i];
        out.sy[o] = ky[i];
        out.record[o] = prec[i];
      }
      out.flags[o] = (pnd[i] ? FLAG_ND : 0) | (g ? FLAG_DUP : 0);
      out.line[o] = table.recordLine[prec[i]];
      o++;
    }
  }

  out.inputX = fit(out.inputX, n);
  out.inputY = fit(out.inputY, n);
  out.value = fit(out.value, n);
  out.sx = fit(out.sx, n);
  out.sy = fit(out.sy, n);
  out.flags = fit(out.flags, n);
  out.record = fit(out.record, n);
  // --- quality ------------------------------------------------------------------------------
  const sv = out.value;
  const sortedValues = sortedCopy(sv);
  const outliers = outlierIndices(sv, 3, sortedValues);
  for (const i of outliers) {
    out.flags[i] |= FLAG_OUTLIER;
    notes.outlier(out.line[i], sv[i]);
  }
  if (outliers.length) {
    warnings.push({ code: 'outliers', message: `${outliers.length} value${outliers.length === 1 ? '' : 's'} beyond 3 interquartile ranges from the quartiles (flagged, kept): ${outliers.slice(0, 12).map((i) => `${sv[i]} (${format === 'csv' ? 'line' : 'feature'} ${out.line[i]})`).join(', ')}${outliers.length > 12 ? ` and ${outliers.length - 12} more` : ''}.` });
  }
  const summary = summarise(sv, sortedValues);
  if (summary.n < 3) {
    warnings.push({ code: 'too-few-samples', message: `Only ${summary.n} sample${summary.n === 1 ? '' : 's'} after reading; fitting a model needs at least 3 and will be refused (predicting with a given model still works).` });
  } else if (summary.min === summary.max) {
    warnings.push({ code: 'constant-values', message: `All ${summary.n} values are ${summary.min}; there is no variation to fit, so fitting will be refused (predicting with a given model still works).` });
  }
  if (ndCount) {
    warnings.push({ code: 'non-detects', message: `${ndCount} non-detect${ndCount === 1 ? '' : 's'} replaced by ${RULE_TEXT[rule]}. ${NON_DETECT_NOTE}` });
  }
  const rejectedRows = notes.count('rejected');
  if (rejectedRows) {
    warnings.push({ code: 'rejected-rows', message: `${rejectedRows} row${rejectedRows === 1 ? ' was' : 's were'} rejected; the read report lists each with its reason.` });
  }

  const crs: CrsInfo = {
    input: input.key,
    inputIsGeographic: input.geographic,
    detection,
    work: work.key,
    workUnit: work.unitName,
  };
  const decimalMarks: Record<string, string> = {};
  if (format === 'csv') {
    setOwn(decimalMarks, columns[xCol], (xMarks as ColumnMarks).mark);
    setOwn(decimalMarks, columns[yCol], (yMarks as ColumnMarks).mark);
    setOwn(decimalMarks, valueName, vMarks.mark);
  }
  const report: ReadReport = {
    fileName: file,
    format,
    rowsRead: nRows + table.entries.filter((e) => e.action === 'rejected').length,
    rowsUsed: kept,
    columns: [...columns],
    numericColumns,
    valueColumn: valueName,
    unit: splitUnit(valueName).unit,
    xColumn: xName,
    yColumn: yName,
    idColumn: idCol >= 0 ? columns[idCol] : undefined,
    crs,
    nonDetects: { count: ndCount, rule, note: NON_DETECT_NOTE },
    duplicates: { groups: groups.length, rule: dupRule, tolerance },
    outliers,
    // Built from the notes when first read (below).
    entries: [],
    warnings,
    transformAdvice: transformAdvice(summary),
    summary,
    ...(format === 'csv' ? { delimiter, decimalMarks, blankLines: table.blankLines } : {}),
    ...(qualCol >= 0 ? { qualifierColumn: columns[qualCol] } : {}),
    ...(dlCol >= 0 ? { detectionLimitColumn: columns[dlCol] } : {}),
  };
  const sampleTable: SampleTable = {
    length: n,
    format,
    inputX: out.inputX,
    inputY: out.inputY,
    // The same array as samples.value (both read-only after the read): one copy fewer of the largest files.
    value: out.value,
    flags: out.flags,
    line: out.line,
    record: out.record,
    merged: { sample: Uint32Array.from(mergedSample), start: Uint32Array.from(mergedSample.length ? mergedStart : []), records: Uint32Array.from(mergedRecords) },
    recordLine: table.recordLine,
    columns: [...columns],
    cells: table.store,
    marks: columns.map((_, i) => marksCache.get(i) ?? null),
    idColumn: idCol,
    ...(table.featureIds ? { featureIds: table.featureIds } : {}),
    ...(table.lon && table.lat ? { geometry: { lon: table.lon, lat: table.lat } } : {}),
  };
  const store = table.store;
  lazyEntries(report, () => notes.entries({ place: (rec) => placeOf(table, rec), raw: (rec) => cellText(store[valueCol], rec), field: valueName }, valueName, format));
  return { samples: { x: out.sx, y: out.sy, value: out.value }, table: sampleTable, report };
}

/**
 * The first n items of `a`: `a` itself when it holds exactly n, a view of them when at most an eighth
 * of it would be left unused (no copy of a large array for a few rejected or merged rows), else a copy.
 */
function fit<T extends Float64Array | Uint8Array | Uint32Array>(a: T, n: number): T {
  if (a.length === n) return a;
  return (8 * (a.length - n) <= a.length ? a.subarray(0, n) : a.slice(0, n)) as T;
}

/** The rows of all groups in ascending order, and the group of each. */
function groupMembers(groups: number[][]): { row: Uint32Array; group: Uint32Array } {
  let count = 0;
  for (const g of groups) count += g.length;
  const rows = new Uint32Array(count);
  const of = new Uint32Array(count);
  let k = 0;
  groups.forEach((g, j) => {
    for (const i of g) {
      rows[k] = i;
      of[k++] = j;
    }
  });
  const order = new Uint32Array(count);
  for (let a = 0; a < count; a++) order[a] = a;
  order.sort((a, b) => rows[a] - rows[b]);
  return { row: order.map((a) => rows[a]), group: order.map((a) => of[a]) };
}

export { rowAt, sampleId, sampleIds } from './sample-table.ts';
