/**
 * The intake contract: what reading a samples file returns, shared by the app and the CLI.
 * Implemented by src/io/intake.ts (`readSamplesStream` for a file's bytes, `readSamples` for text). Everything
 * here is plain data (postMessage-safe).
 */
import type { Samples } from '../core/shared/samples.ts';
import type { Warning } from '../core/shared/errors.ts';
import type { ColumnMarks } from './numbers.ts';

export type NonDetectRule = 'half' | 'dl' | 'sqrt2';
export type DuplicateRule = 'merge' | 'keep';

export interface IntakeOptions {
  /** Shown in messages ("samples.csv, line 14, ..."). */
  fileName: string;
  /** Detected from the extension / content when absent. */
  format?: 'csv' | 'geojson';
  /** Value column (property); detected when there is exactly one numeric candidate. */
  value?: string;
  x?: string;
  y?: string;
  /** Input CRS: 'EPSG:NNNN' or a proj string. Detected from column names (and ranges) when absent. */
  crs?: string;
  /** Working CRS; default: input if projected, else the WGS 84 UTM zone of the centroid. */
  workCrs?: string;
  /** Non-detect substitution: DL/2 (default, common practice), DL, DL/√2. */
  nonDetect?: NonDetectRule;
  /** Duplicate locations: merged by their mean (default) or kept. */
  duplicates?: DuplicateRule;
  /** Distance in working-CRS metres under which two locations count as one (default 0.01). */
  duplicateTolerance?: number;
  /** When true, any rejected row makes the whole read fail with a GapwiseError (default false). */
  strict?: boolean;
}

/** One row that was rejected or changed; nothing is dropped without one. */
export interface ReportEntry {
  /** 1-based line (header = line 1) for CSV. */
  line?: number;
  /** Feature number for GeoJSON, counted from 1 in the order of the file. */
  feature?: number;
  /** The GeoJSON feature's own "id", when it has one. */
  id?: string;
  field?: string;
  raw?: string;
  action: 'rejected' | 'changed' | 'merged' | 'flagged';
  reason: string;
}

export interface CrsInfo {
  /** As given or detected: 'EPSG:4326', 'EPSG:32633', or a proj string. */
  input: string;
  inputIsGeographic: boolean;
  /** How the input CRS was chosen: 'given', or a sentence on the detection. */
  detection: string;
  work: string;
  /** Metres per working-CRS unit (1 for the CRSs Gapwise picks). */
  workUnit: string;
}

export interface ReadReport {
  fileName: string;
  format: 'csv' | 'geojson';
  rowsRead: number;
  rowsUsed: number;
  columns: string[];
  numericColumns: string[];
  valueColumn: string;
  /** Unit taken from the header, e.g. 'mg/kg' from 'Pb (mg/kg)'; '' when none. */
  unit: string;
  xColumn: string;
  yColumn: string;
  idColumn?: string;
  crs: CrsInfo;
  nonDetects: { count: number; rule: NonDetectRule; note: string };
  duplicates: { groups: number; rule: DuplicateRule; tolerance: number };
  /** Indices into `rows` / `samples` of values beyond 3 IQR from the quartiles (flagged, kept). */
  outliers: number[];
  /**
   * Every rejected, changed, merged or flagged row, in line (feature) order. The intake keeps them
   * compactly (io/read-notes.ts) and builds this array on its first read; JSON, a structured clone
   * and a spread see a plain array.
   */
  entries: ReportEntry[];
  warnings: Warning[];
  /** Suggestion text for a log transform when the data are positive and skewed; '' otherwise. */
  transformAdvice: string;
  summary: { n: number; min: number; max: number; mean: number; median: number; sd: number; skewness: number };
  /** CSV only: the delimiter used (',', ';' or '\t'). */
  delimiter?: string;
  /** CSV only: decimal mark per numeric column read ('.' or ','). */
  decimalMarks?: Record<string, string>;
  /** Column holding non-detect qualifiers ('<', 'ND', 'U'), when one was recognised. */
  qualifierColumn?: string;
  /** Column holding detection limits, when one was recognised. */
  detectionLimitColumn?: string;
  /** Lines (CSV) that held nothing and were skipped. */
  blankLines?: number[];
}

/** One accepted sample as read, in the input CRS, with its flags (`rowAt` of io/sample-table.ts, for display). */
export interface SampleRow {
  id: string;
  /** Input-CRS coordinates as read. */
  inputX: number;
  inputY: number;
  value: number;
  /** 'nd' non-detect, 'dup' merged duplicate, 'outlier'. */
  flags: string[];
  /** 1-based line (CSV) or feature number counted from 1 (GeoJSON) of the source row(s). */
  lines: number[];
  /** The whole source row as text, for display (never as HTML). */
  raw: Record<string, string>;
}

export interface IntakeResult {
  /** In the working CRS, after non-detect substitution and duplicate handling. */
  samples: Samples;
  /** The same samples as read (input CRS, flags, lines, source columns), by column: see io/sample-table.ts. */
  table: SampleTable;
  report: ReadReport;
}

/** One source column, cell by cell, in the form that suits its cells. */
export type StoredColumn =
  /** Plain decimal numbers: the value and its count of decimals (the cell is `value.toFixed(decimals)`); other cells as text. */
  | { kind: 'numbers'; length: number; values: Float64Array; decimals: Uint8Array; otherAt: Uint32Array; otherText: string[] }
  /** Few distinct texts: a code per cell into `levels`. */
  | { kind: 'codes'; length: number; codes: Uint32Array; levels: string[] }
  /** Many distinct texts: UTF-8 bytes, cell k is bytes[offsets[k]..offsets[k+1]). */
  | { kind: 'texts'; length: number; bytes: Uint8Array; offsets: Uint32Array };

/** The accepted samples and the source rows they came from. Plain data (see the file's header). */
export interface SampleTable {
  /** Number of samples (after duplicates were merged). */
  length: number;
  format: 'csv' | 'geojson';
  /** Input-CRS coordinates as read (the mean over a merged group). */
  inputX: Float64Array;
  inputY: Float64Array;
  /** Value after non-detect substitution (the mean over a merged group). */
  value: Float64Array;
  /** FLAG_ND | FLAG_DUP | FLAG_OUTLIER. */
  flags: Uint8Array;
  /** 1-based line (CSV) or feature number (GeoJSON) of the sample's first source row. */
  line: Uint32Array;
  /** Index of the sample's first source row in the stored columns. */
  record: Uint32Array;
  /** Merged samples: sample index and its source rows, records[start[k]..start[k+1]). */
  merged: { sample: Uint32Array; start: Uint32Array; records: Uint32Array };
  /** Line (CSV) or feature number (GeoJSON) of each stored source row. */
  recordLine: Uint32Array;
  /** Column names of the file, as in the read report. */
  columns: string[];
  /** One stored column per name of `columns`. */
  cells: StoredColumn[];
  /** Decimal marks of each column the intake looked at for numbers (null for the others). */
  marks: Array<ColumnMarks | null>;
  /** Index into `columns` of the ID column, -1 when there is none. */
  idColumn: number;
  /** GeoJSON: each source feature's own "id" ('' when it has none) and its position as read. */
  featureIds?: StoredColumn;
  geometry?: { lon: Float64Array; lat: Float64Array };
}
