/**
 * The table a samples file is read into before it becomes samples: the cells of every data row stored
 * by column (see sample-table.ts), the line (CSV) or feature number (GeoJSON) of each row, and the
 * places of rows named in the read report ("lines 3, 7, 9"). Filled by intake.ts's CSV and GeoJSON
 * readers, read by the intake steps (intake-columns.ts, intake-values.ts, intake-crs.ts,
 * intake-duplicates.ts).
 */
import { ColumnBuilder, cellText } from './sample-table.ts';
import type { StoredColumn } from './sample-table.ts';
import { GrowingArray, type TypedKind } from './growing-array.ts';
import { MAX_SAMPLE_ROWS } from './intake-limits.ts';
import type { Warning } from '../core/shared/errors.ts';
import type { ReportEntry } from './types.ts';

/**
 * The file's rows as read, stored by column (see sample-table.ts): the cells of every data row that
 * reached the store, the line (CSV) or feature number (GeoJSON) of each, and which of them passed the
 * field-count check (`rows`, indices into the store in file order).
 */
export interface Table {
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
export class RecordStore {
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
export function placeOf(table: Table, rec: number): { line?: number; feature?: number; id?: string } {
  const n = table.recordLine[rec];
  if (table.format === 'csv') return { line: n };
  const id = table.featureIds ? cellText(table.featureIds, rec) : '';
  return id !== '' ? { feature: n, id } : { feature: n };
}

/** "lines 3, 7, 9" with at most `max` listed. */
export function listPlaces(table: Table, recs: ArrayLike<number>, max = 12): string {
  if (recs.length === 0) return '';
  const kind = table.format === 'csv' ? 'line' : 'feature';
  const nums: number[] = [];
  for (let i = 0; i < Math.min(max, recs.length); i++) nums.push(table.recordLine[recs[i]]);
  const more = recs.length > max ? ` and ${(recs.length - max).toLocaleString('en-US')} more` : '';
  return `${kind}${recs.length > 1 ? 's' : ''} ${nums.join(', ')}${more}`;
}

/** "lines 3, 7" from line numbers. */
export function listLines(lines: number[]): string {
  const more = lines.length > 12 ? ` and ${(lines.length - 12).toLocaleString('en-US')} more` : '';
  return `line${lines.length > 1 ? 's' : ''} ${lines.slice(0, 12).join(', ')}${more}`;
}

/** The text of cell `col` of the table's k-th row. */
export function cellAt(table: Table, k: number, col: number): string {
  return cellText(table.store[col], table.rows ? table.rows[k] : k);
}
