/**
 * The samples as read, stored by column: typed arrays for the coordinates, values, flags and lines of
 * the accepted samples, and every source column of the file kept cell by cell in a compact form (plain
 * numbers as Float64 with the few other texts beside them, repeated texts as codes into their levels,
 * other texts as UTF-8 bytes). About 40 bytes a sample plus about 10 bytes a source cell, where one
 * object per row took several hundred; plain data of typed arrays, so it crosses postMessage by
 * transfer and IndexedDB by structured clone.
 *
 * Read it through the accessors: `table.length`, `rowAt(table, i)` (one SampleRow, for display),
 * `sampleId(table, i)`, `sampleIds(table)`; a column of the file per sample: io/sample-columns.ts (one
 * entry per sample).
 */
import type { ReadReport, SampleRow, SampleTable, StoredColumn } from './types.ts';

export type { SampleTable, StoredColumn } from './types.ts';
import type { ColumnMarks } from './numbers.ts';
import { LIST_NAMES, quoted } from './quote.ts';
import { GrowingArray, type TypedKind } from './growing-array.ts';
import { MAX_SAMPLE_BYTES, MAX_SAMPLE_ROWS } from './intake-limits.ts';

/** Flag bits of `SampleTable.flags`. */
export const FLAG_ND = 1;
export const FLAG_DUP = 2;
export const FLAG_OUTLIER = 4;

/** `decimals` code of a numbers column: the cell was empty. */
const EMPTY = 254;
/** `decimals` code of a numbers column: the cell's text is in `otherText`. */
const OTHER = 255;
/** Plain numbers with at most this many digits come back from their double exactly (IEEE 754: 15). */
const SAFE_DIGITS = 15;


const encoder = new TextEncoder();
const decoder = new TextDecoder();

const f64 = Float64Array as TypedKind<Float64Array>;
const u8 = Uint8Array as TypedKind<Uint8Array>;
const u32 = Uint32Array as TypedKind<Uint32Array>;
const plainRead = { value: 0 };

/** Powers of ten that doubles hold exactly (10^0 … 10^22). */
const POW10 = Array.from({ length: 23 }, (_, k) => Number(`1e${k}`));

/**
 * Reads a plain decimal number ("-12.50", "7") in one pass: sets `plain.value` and returns its digits
 * after the point, or -1 for any other text (exponents, "+1", "007", "-0", ".5", "1.", spaces). With at
 * most 15 digits the digits form an exact integer and one division by an exact power of ten is
 * correctly rounded, so the value is the one Number(s) gives (Clinger 1990, the exact fast path); longer
 * digit runs are read by Number and kept only when toFixed gives the text back.
 */
function plainDecimals(s: string, plain: { value: number }): number {
  const n = s.length;
  if (n === 0 || n > 40) return -1;
  const negative = s.charCodeAt(0) === 45;
  let i = negative ? 1 : 0;
  const intStart = i;
  let m = 0;
  let c = 0;
  while (i < n && (c = s.charCodeAt(i)) >= 48 && c <= 57) {
    m = m * 10 + (c - 48);
    i++;
  }
  const intDigits = i - intStart;
  if (intDigits === 0 || (intDigits > 1 && s.charCodeAt(intStart) === 48)) return -1;
  let decimals = 0;
  if (i < n) {
    if (c !== 46) return -1;
    i++;
    const f = i;
    while (i < n && (c = s.charCodeAt(i)) >= 48 && c <= 57) {
      m = m * 10 + (c - 48);
      i++;
    }
    if (i < n || i === f) return -1;
    decimals = i - f;
  }
  if (negative && m === 0) return -1;
  if (intDigits + decimals <= SAFE_DIGITS) {
    const v = decimals ? m / POW10[decimals] : m;
    plain.value = negative ? -v : v;
    return decimals;
  }
  const v = Number(s);
  if (decimals < 100 && v.toFixed(decimals) === s) {
    plain.value = v;
    return decimals;
  }
  return -1;
}

/**
 * Collects one source column cell by cell and chooses its stored form: it starts as numbers, turns to
 * texts when the first few thousand cells are mostly not plain numbers, and keeps texts as codes while
 * they repeat (few levels), else as UTF-8 bytes. `finish()` gives the StoredColumn.
 */
export class ColumnBuilder {
  private kind: 'numbers' | 'codes' | 'texts' = 'numbers';
  private n = 0;
  private values: GrowingArray<Float64Array>;
  private decimals: GrowingArray<Uint8Array>;
  private otherAt: number[] | null = null;
  private otherText: string[] | null = null;
  // Made when the column turns to text.
  private codes!: GrowingArray<Uint32Array>;
  private levels: string[] = [];
  private index: Map<string, number> | null = null;
  private bytes!: GrowingArray<Uint8Array>;
  /** Start of each cell's bytes, then the end of the last: 0, end of cell 0, end of cell 1, … (the offsets). */
  private ends!: GrowingArray<Uint32Array>;
  private usedBytes = 0;

  /** @param rows Cells the column is expected to hold at most (MAX_SAMPLE_ROWS): the room reserved to grow in. */
  constructor(private readonly rows = MAX_SAMPLE_ROWS) {
    this.values = new GrowingArray(f64, rows);
    this.decimals = new GrowingArray(u8, rows);
  }

  get length(): number {
    return this.n;
  }

  push(text: string): void {
    if (this.kind === 'numbers') {
      this.pushNumber(text);
      this.n++;
      if (this.otherText !== null && this.n <= 4096 && this.otherText.length > 32 && this.otherText.length * 2 > this.n) this.toTexts();
      return;
    }
    if (this.kind === 'codes') this.pushCode(text);
    else this.pushText(text);
    this.n++;
  }

  private pushNumber(text: string): void {
    if (text === '') {
      this.values.push(NaN);
      this.decimals.push(EMPTY);
      return;
    }
    const d = plainDecimals(text, plainRead);
    if (d >= 0) {
      this.values.push(plainRead.value);
      this.decimals.push(d);
    } else {
      this.values.push(NaN);
      this.decimals.push(OTHER);
      (this.otherAt ??= []).push(this.n);
      // Long texts copied (as the levels are), so that one never keeps its whole parsed chunk alive.
      (this.otherText ??= []).push(text.length > 12 ? (' ' + text).slice(1) : text);
    }
  }

  private pushCode(text: string): void {
    if (this.index === null) this.index = new Map();
    let c = this.index.get(text);
    if (c === undefined) {
      if (this.levels.length >= 4096 && this.levels.length * 4 > this.n) {
        this.codesToTexts();
        this.pushText(text);
        return;
      }
      c = this.levels.length;
      // A copy, so that a level never keeps the parsed chunk it was cut from alive.
      this.levels.push((' ' + text).slice(1));
      this.index.set(text, c);
    }
    this.codes.push(c);
  }

  private pushText(text: string): void {
    let ascii = true;
    for (let i = 0; i < text.length; i++) {
      if (text.charCodeAt(i) >= 0x80) {
        ascii = false;
        break;
      }
    }
    if (ascii) {
      for (let i = 0; i < text.length; i++) this.bytes.push(text.charCodeAt(i));
      this.usedBytes += text.length;
    } else {
      const b = encoder.encode(text);
      for (let i = 0; i < b.length; i++) this.bytes.push(b[i]);
      this.usedBytes += b.length;
    }
    this.ends.push(this.usedBytes);
  }

  private toTexts(): void {
    const n = this.n;
    const all: string[] = [];
    let other = 0;
    for (let k = 0; k < n; k++) {
      const d = this.decimals.get(k);
      all.push(d === EMPTY ? '' : d === OTHER ? (this.otherText as string[])[other++] : this.values.get(k).toFixed(d));
    }
    this.kind = 'codes';
    this.codes = new GrowingArray(u32, this.rows);
    this.values = new GrowingArray(f64, 0);
    this.decimals = new GrowingArray(u8, 0);
    this.otherAt = null;
    this.otherText = null;
    this.n = 0;
    for (const t of all) {
      if (this.kind === 'codes') this.pushCode(t);
      else this.pushText(t);
      this.n++;
    }
  }

  private codesToTexts(): void {
    const codes = this.codes.take();
    const levels = this.levels;
    this.kind = 'texts';
    // UTF-8 of a column read from at most MAX_SAMPLE_BYTES (Latin-1 letters take two bytes each).
    this.bytes = new GrowingArray(u8, 2 * MAX_SAMPLE_BYTES);
    this.ends = new GrowingArray(u32, this.rows + 1);
    this.ends.push(0);
    this.levels = [];
    this.index = null;
    for (let k = 0; k < codes.length; k++) this.pushText(levels[codes[k]]);
  }

  /** The column as stored; the builder is empty afterwards. */
  finish(): StoredColumn {
    const n = this.n;
    this.n = 0;
    if (this.kind === 'numbers') {
      const col: StoredColumn = {
        kind: 'numbers', length: n, values: this.values.take(), decimals: this.decimals.take(),
        otherAt: this.otherAt ? Uint32Array.from(this.otherAt) : new Uint32Array(0), otherText: this.otherText ?? [],
      };
      this.otherAt = null;
      this.otherText = null;
      return col;
    }
    if (this.kind === 'codes') return { kind: 'codes', length: n, codes: this.codes.take(), levels: this.levels };
    return { kind: 'texts', length: n, bytes: this.bytes.take(), offsets: this.ends.take() };
  }
}

/** The value of cell k when it is a plain decimal number ("12.5", "-3"), else NaN. */
export function plainNumberAt(col: StoredColumn, k: number): number {
  return col.kind === 'numbers' && col.decimals[k] < EMPTY ? col.values[k] : NaN;
}

/** Digits after the point of cell k when it is a plain decimal number, else -1. */
export function plainDecimalsAt(col: StoredColumn, k: number): number {
  return col.kind === 'numbers' && col.decimals[k] < EMPTY ? col.decimals[k] : -1;
}

function decodeBytes(bytes: Uint8Array, a: number, b: number): string {
  let ascii = true;
  for (let i = a; i < b; i++) {
    if (bytes[i] >= 0x80) {
      ascii = false;
      break;
    }
  }
  if (!ascii) return decoder.decode(bytes.subarray(a, b));
  let s = '';
  for (let i = a; i < b; i += 4096) s += String.fromCharCode.apply(null, bytes.subarray(i, Math.min(b, i + 4096)) as unknown as number[]);
  return s;
}

function numberCellText(values: Float64Array, decimals: Uint8Array, otherAt: ArrayLike<number>, otherText: string[], k: number): string {
  const d = decimals[k];
  if (d === EMPTY) return '';
  if (d !== OTHER) return values[k].toFixed(d);
  let lo = 0;
  let hi = otherAt.length - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (otherAt[mid] < k) lo = mid + 1;
    else if (otherAt[mid] > k) hi = mid - 1;
    else return otherText[mid];
  }
  throw new Error(`stored column has no text for cell ${k}`);
}

/** The text of cell k of a stored column, exactly as it was in the file. */
export function cellText(col: StoredColumn, k: number): string {
  if (col.kind === 'numbers') return numberCellText(col.values, col.decimals, col.otherAt, col.otherText, k);
  if (col.kind === 'codes') return col.levels[col.codes[k]];
  return decodeBytes(col.bytes, col.offsets[k], col.offsets[k + 1]);
}

/** "line 12" (CSV) or "feature 3" / "feature 3 (id "A-1")" (GeoJSON): where a source row is. */
function recordPlace(table: Pick<SampleTable, 'format' | 'recordLine' | 'featureIds'>, record: number): string {
  const n = table.recordLine[record];
  if (table.format === 'csv') return `line ${n}`;
  const id = table.featureIds ? cellText(table.featureIds, record) : '';
  return `feature ${n}${id !== '' ? ` (id ${quoted(id)})` : ''}`;
}

function recordId(table: SampleTable, record: number): string {
  if (table.idColumn >= 0) {
    const t = cellText(table.cells[table.idColumn], record);
    if (t.trim() !== '') return t;
  }
  return recordPlace(table, record);
}

/** Position of sample i among the merged samples, or -1. */
function mergedIndex(table: SampleTable, i: number): number {
  const s = table.merged.sample;
  let lo = 0;
  let hi = s.length - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (s[mid] < i) lo = mid + 1;
    else if (s[mid] > i) hi = mid - 1;
    else return mid;
  }
  return -1;
}

/** The source rows of sample i (one, or several for a merged sample). */
function sampleRecords(table: SampleTable, i: number): Uint32Array {
  const m = mergedIndex(table, i);
  if (m < 0) return table.record.subarray(i, i + 1);
  return table.merged.records.subarray(table.merged.start[m], table.merged.start[m + 1]);
}

/** The ID of sample i: its ID cell, else its place; a merged sample joins its rows' IDs with " + ". */
export function sampleId(table: SampleTable, i: number): string {
  const records = sampleRecords(table, i);
  if (records.length === 1) return recordId(table, records[0]);
  const shown = Array.from(records.subarray(0, LIST_NAMES), (r) => recordId(table, r)).join(' + ');
  return records.length > LIST_NAMES ? `${shown} + ${records.length - LIST_NAMES} more` : shown;
}

/** The IDs of all samples (for tables and markers of a size that is shown anyway). */
export function sampleIds(table: SampleTable): string[] {
  const out: string[] = new Array(table.length);
  for (let i = 0; i < table.length; i++) out[i] = sampleId(table, i);
  return out;
}

/** The flags of sample i as words: 'nd', 'dup', 'outlier' (a merged sample: 'dup' first). */
export function sampleFlags(table: SampleTable, i: number): string[] {
  const f = table.flags[i];
  const flags: string[] = [];
  if (mergedIndex(table, i) >= 0) {
    flags.push('dup');
    if (f & FLAG_ND) flags.push('nd');
  } else {
    if (f & FLAG_ND) flags.push('nd');
    if (f & FLAG_DUP) flags.push('dup');
  }
  if (f & FLAG_OUTLIER) flags.push('outlier');
  return flags;
}

/**
 * Sets an own property even for names like "__proto__" (a plain assignment would change the
 * object's prototype instead): column names come from the file.
 */
export function setOwn(o: Record<string, string>, key: string, value: string): void {
  if (key === '__proto__') Object.defineProperty(o, key, { value, enumerable: true, writable: true, configurable: true });
  else o[key] = value;
}

/** Sample i as one object, for display: the first source row's cells as text (never as HTML). */
export function rowAt(table: SampleTable, i: number): SampleRow {
  if (!(i >= 0 && i < table.length)) throw new RangeError(`Sample ${i} is outside 0…${table.length - 1}.`);
  const records = sampleRecords(table, i);
  const first = records[0];
  const raw: Record<string, string> = {};
  for (let c = 0; c < table.columns.length; c++) setOwn(raw, table.columns[c], cellText(table.cells[c], first));
  if (table.geometry) setOwn(raw, 'geometry', `${table.geometry.lon[first]}, ${table.geometry.lat[first]}`);
  return {
    id: sampleId(table, i),
    inputX: table.inputX[i],
    inputY: table.inputY[i],
    value: table.value[i],
    flags: sampleFlags(table, i),
    lines: Array.from(records, (r) => table.recordLine[r]),
    raw,
  };
}


/**
 * Checks that a value is a SampleTable whose arrays agree in length (saved results, worker answers);
 * false for anything else.
 */
export function isSampleTable(v: unknown): v is SampleTable {
  if (typeof v !== 'object' || v === null) return false;
  const t = v as Partial<SampleTable>;
  const n = t.length;
  if (typeof n !== 'number' || !Number.isInteger(n) || n < 0) return false;
  const f64 = (a: unknown, len: number) => a instanceof Float64Array && a.length === len;
  const u32 = (a: unknown) => a instanceof Uint32Array;
  if (!f64(t.inputX, n) || !f64(t.inputY, n) || !f64(t.value, n)) return false;
  if (!(t.flags instanceof Uint8Array) || t.flags.length !== n || !u32(t.line) || t.line!.length !== n || !u32(t.record) || t.record!.length !== n) return false;
  if (!u32(t.recordLine) || !Array.isArray(t.columns) || !Array.isArray(t.cells) || t.cells.length !== t.columns.length) return false;
  if (!Array.isArray(t.marks) || t.marks.length !== t.columns.length) return false;
  const records = t.recordLine!.length;
  if (!t.merged || !u32(t.merged.sample) || !u32(t.merged.start) || !u32(t.merged.records)) return false;
  for (let i = 0; i < n; i++) if (t.record![i] >= records) return false;
  return t.cells.every((c) => typeof c === 'object' && c !== null && (c as StoredColumn).length === records);
}

/** The buffers of a table, to transfer it across postMessage. */
export function tableBuffers(table: SampleTable): ArrayBuffer[] {
  const out = new Set<ArrayBuffer>();
  const add = (a: ArrayBufferView) => {
    if (a.buffer instanceof ArrayBuffer && a.buffer.byteLength > 0) out.add(a.buffer);
  };
  for (const a of [table.inputX, table.inputY, table.value, table.flags, table.line, table.record, table.recordLine, table.merged.sample, table.merged.start, table.merged.records]) add(a);
  for (const c of [...table.cells, ...(table.featureIds ? [table.featureIds] : [])]) {
    if (c.kind === 'numbers') [c.values, c.decimals, c.otherAt].forEach(add);
    else if (c.kind === 'codes') add(c.codes);
    else [c.bytes, c.offsets].forEach(add);
  }
  if (table.geometry) [table.geometry.lon, table.geometry.lat].forEach(add);
  return [...out];
}
