/**
 * Sample intake: CSV or GeoJSON text to samples in a metric working CRS, with a read report that
 * accounts for every row (rejected, changed, merged or flagged, with its line or feature index, field,
 * raw text and reason). Shared by the app and the CLI; everything returned is plain data.
 *
 * This file reads the text or bytes into a table (intake-table.ts) and then takes the steps of a read
 * in order (samplesFromTable): find the columns (intake-columns.ts), read the rows' coordinates,
 * values and non-detects (intake-values.ts), find and check the CRS and project to the working CRS
 * (intake-crs.ts), merge or keep duplicate locations (intake-duplicates.ts), flag outliers and
 * summarise (quality.ts), and make the report.
 */
import { GapwiseError } from '../core/shared/errors.ts';
import type { Warning } from '../core/shared/errors.ts';
import { CsvReader } from './csv.ts';
import { readPointFeatures } from './geojson.ts';
import { MAX_SAMPLE_BYTES, MAX_SAMPLE_ROWS, megabytes } from './intake-limits.ts';
import { TextFromBytes, binaryKind } from './text-bytes.ts';
import type { ResolvedCrs } from './crs.ts';
import { ColumnBuilder, FLAG_OUTLIER, cellText, setOwn } from './sample-table.ts';
import type { SampleTable } from './sample-table.ts';
import { ReadNotes, lazyEntries } from './read-notes.ts';
import { outlierIndices, sortedCopy, summarise, transformAdvice } from './quality.ts';
import type { Summary } from './quality.ts';
import { RecordStore, listLines, placeOf, type Table } from './intake-table.ts';
import { ColumnMarksCache, findCoordinateColumns, findValueColumns, normaliseName, splitUnit, type CoordinateColumns, type ValueColumns } from './intake-columns.ts';
import { NON_DETECT_NOTE, RULE_FACTOR, RULE_TEXT, parseRows, refuseUnusableRows } from './intake-values.ts';
import { checkCoordinates, detectInputCrs, projectToWork, type CoordinateNames } from './intake-crs.ts';
import { mergeDuplicates, type IntakeSamples } from './intake-duplicates.ts';
import type { CrsInfo, IntakeOptions, IntakeResult, NonDetectRule, ReadReport, ReportEntry } from './types.ts';

export { NON_DETECT_NOTE } from './intake-values.ts';
export { normaliseName, splitUnit } from './intake-columns.ts';

export { quoted, quotedList } from './quote.ts';
import { LIST_NAMES, quoted } from './quote.ts';

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
  const rule: NonDetectRule = options.nonDetect ?? 'half';
  // Row notes, compactly: non-detects and outliers (by the hundred thousand in a large file) take a few bytes each.
  const notes = new ReadNotes();
  for (const e of table.entries) notes.add(e);
  const warnings: Warning[] = [...table.warnings];
  const norm = table.columns.map(normaliseName);
  const marks = new ColumnMarksCache(table);

  const coords = findCoordinateColumns(table, format, options, norm, warnings);
  const cols = findValueColumns(table, options, norm, coords, marks);
  const rows = parseRows(table, format, coords, cols, norm, marks, rule, notes, warnings);
  refuseUnusableRows(table, rows, notes, options);
  const { input, detection } = detectInputCrs(table, format, options, coords, rows, warnings);
  const names: CoordinateNames = format === 'csv'
    ? { xName: table.columns[coords.x], yName: table.columns[coords.y] }
    : { xName: 'geometry', yName: 'geometry' };
  checkCoordinates(table, input, rows, names, notes, warnings, options);
  const positions = projectToWork(table, input, rows, names, notes, warnings, options);
  const rowsUsed = rows.count;
  const samples = mergeDuplicates(table, rows, positions, cols, options.duplicates ?? 'merge', options.duplicateTolerance ?? 0.01, notes, warnings);
  const quality = checkQuality(samples, format, notes, warnings);
  if (rows.nonDetects) {
    warnings.push({ code: 'non-detects', message: `${rows.nonDetects} non-detect${rows.nonDetects === 1 ? '' : 's'} replaced by ${RULE_TEXT[rule]}. ${NON_DETECT_NOTE}` });
  }
  const rejectedRows = notes.count('rejected');
  if (rejectedRows) {
    warnings.push({ code: 'rejected-rows', message: `${rejectedRows} row${rejectedRows === 1 ? ' was' : 's were'} rejected; the read report lists each with its reason.` });
  }

  const read: ReadFacts = { table, format, options, coords, cols, names, marks, input, detection, work: positions.work, rowsUsed, nonDetects: rows.nonDetects };
  const report = readReport(read, samples, quality, warnings);
  const store = table.store;
  lazyEntries(report, () => notes.entries({ place: (rec) => placeOf(table, rec), raw: (rec) => cellText(store[cols.value], rec), field: cols.valueName }, cols.valueName, format));
  return { samples: { x: samples.sx, y: samples.sy, value: samples.value }, table: sampleTableOf(read, samples), report };
}

/**
 * Flags the outliers (beyond 3 interquartile ranges from the quartiles; kept) and warns about them,
 * about too few samples and about constant values. Returns the values' summary and the outliers.
 */
function checkQuality(samples: IntakeSamples, format: 'csv' | 'geojson', notes: ReadNotes, warnings: Warning[]): { summary: Summary; outliers: number[] } {
  const sv = samples.value;
  const sortedValues = sortedCopy(sv);
  const outliers = outlierIndices(sv, 3, sortedValues);
  for (const i of outliers) {
    samples.flags[i] |= FLAG_OUTLIER;
    notes.outlier(samples.line[i], sv[i]);
  }
  if (outliers.length) {
    warnings.push({ code: 'outliers', message: `${outliers.length} value${outliers.length === 1 ? '' : 's'} beyond 3 interquartile ranges from the quartiles (flagged, kept): ${outliers.slice(0, 12).map((i) => `${sv[i]} (${format === 'csv' ? 'line' : 'feature'} ${samples.line[i]})`).join(', ')}${outliers.length > 12 ? ` and ${outliers.length - 12} more` : ''}.` });
  }
  const summary = summarise(sv, sortedValues);
  if (summary.n < 3) {
    warnings.push({ code: 'too-few-samples', message: `Only ${summary.n} sample${summary.n === 1 ? '' : 's'} after reading; fitting a model needs at least 3 and will be refused (predicting with a given model still works).` });
  } else if (summary.min === summary.max) {
    warnings.push({ code: 'constant-values', message: `All ${summary.n} values are ${summary.min}; there is no variation to fit, so fitting will be refused (predicting with a given model still works).` });
  }
  return { summary, outliers };
}

/** What the steps of a read found, for the report and the sample table. */
interface ReadFacts {
  table: Table;
  format: 'csv' | 'geojson';
  options: IntakeOptions;
  coords: CoordinateColumns;
  cols: ValueColumns;
  names: CoordinateNames;
  marks: ColumnMarksCache;
  input: ResolvedCrs;
  detection: string;
  work: ResolvedCrs;
  /** Rows read and projected (before duplicates were merged). */
  rowsUsed: number;
  nonDetects: number;
}

/** The read report (its entries are filled in from the notes when first read). */
function readReport(read: ReadFacts, samples: IntakeSamples, quality: { summary: Summary; outliers: number[] }, warnings: Warning[]): ReadReport {
  const { table, format, options, coords, cols, input, work } = read;
  const { columns } = table;
  const { summary, outliers } = quality;
  const crs: CrsInfo = {
    input: input.key,
    inputIsGeographic: input.geographic,
    detection: read.detection,
    work: work.key,
    workUnit: work.unitName,
  };
  const decimalMarks: Record<string, string> = {};
  if (format === 'csv') {
    setOwn(decimalMarks, columns[coords.x], read.marks.of(coords.x).mark);
    setOwn(decimalMarks, columns[coords.y], read.marks.of(coords.y).mark);
    setOwn(decimalMarks, cols.valueName, read.marks.of(cols.value).mark);
  }
  return {
    fileName: options.fileName,
    format,
    rowsRead: table.rowCount + table.entries.filter((e) => e.action === 'rejected').length,
    rowsUsed: read.rowsUsed,
    columns: [...columns],
    numericColumns: cols.numericColumns,
    valueColumn: cols.valueName,
    unit: splitUnit(cols.valueName).unit,
    xColumn: read.names.xName,
    yColumn: read.names.yName,
    idColumn: cols.id >= 0 ? columns[cols.id] : undefined,
    crs,
    nonDetects: { count: read.nonDetects, rule: options.nonDetect ?? 'half', note: NON_DETECT_NOTE },
    duplicates: { groups: samples.duplicateGroups, rule: options.duplicates ?? 'merge', tolerance: options.duplicateTolerance ?? 0.01 },
    outliers,
    // Built from the notes when first read (samplesFromTable).
    entries: [],
    warnings,
    transformAdvice: transformAdvice(summary),
    summary,
    ...(format === 'csv' ? { delimiter: table.delimiter, decimalMarks, blankLines: table.blankLines } : {}),
    ...(cols.qualifier >= 0 ? { qualifierColumn: columns[cols.qualifier] } : {}),
    ...(cols.detectionLimit >= 0 ? { detectionLimitColumn: columns[cols.detectionLimit] } : {}),
  };
}

/** The sample table: the samples with their rows, flags and the file's cells, for exports and the report. */
function sampleTableOf(read: ReadFacts, samples: IntakeSamples): SampleTable {
  const { table } = read;
  return {
    length: samples.length,
    format: read.format,
    inputX: samples.inputX,
    inputY: samples.inputY,
    // The same array as samples.value (both read-only after the read): one copy fewer of the largest files.
    value: samples.value,
    flags: samples.flags,
    line: samples.line,
    record: samples.record,
    merged: samples.merged,
    recordLine: table.recordLine,
    columns: [...table.columns],
    cells: table.store,
    marks: read.marks.all(),
    idColumn: read.cols.id,
    ...(table.featureIds ? { featureIds: table.featureIds } : {}),
    ...(table.lon && table.lat ? { geometry: { lon: table.lon, lat: table.lat } } : {}),
  };
}

export { rowAt, sampleId, sampleIds } from './sample-table.ts';
