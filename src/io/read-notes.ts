/**
 * The read report's notes on single rows, kept compactly while a file is read: a non-detect or an
 * outlier (the notes a large file has by the hundred thousand) takes a few bytes in typed arrays (its
 * row, and an index into the shared reasons or its value), any other note (rejections, merges,
 * thousands separators: few) is kept as its ReportEntry. `entries()` builds every ReportEntry in line
 * order, only when asked; the counts and the first rejection are known without building them.
 * About 10 bytes a compact note, where a ReportEntry object took a few hundred.
 */
import type { ReportEntry } from './types.ts';
import { GrowingArray, type TypedKind } from './growing-array.ts';
import { MAX_SAMPLE_ROWS } from './intake-limits.ts';

/** The reason of every outlier note. */
export const OUTLIER_REASON = 'outlier: beyond 3 interquartile ranges from the quartiles; kept';

const PLAIN = 0;
const NON_DETECT = 1;
const OUTLIER = 2;

const u8 = Uint8Array as TypedKind<Uint8Array>;
const u32 = Uint32Array as TypedKind<Uint32Array>;
const f64 = Float64Array as TypedKind<Float64Array>;

/** What a non-detect note needs to become a ReportEntry: where its stored row is, and its raw text. */
export interface NonDetectPlace {
  /** The place of stored row `record` ({ line } or { feature, id? }). */
  place(record: number): { line?: number; feature?: number; id?: string };
  /** The value cell's text of stored row `record`. */
  raw(record: number): string;
  /** The value column's name. */
  field: string;
}

export class ReadNotes {
  private readonly plain: ReportEntry[] = [];
  /** Per note, in the order noted: its kind, then two numbers whose meaning depends on it. */
  private readonly kind = new GrowingArray(u8, 2 * MAX_SAMPLE_ROWS);
  /** PLAIN: index into `plain`; NON_DETECT: stored row; OUTLIER: line or feature number. */
  private readonly first = new GrowingArray(u32, 2 * MAX_SAMPLE_ROWS);
  /** NON_DETECT: index into `reasons`; OUTLIER: index into `values`. */
  private readonly second = new GrowingArray(u32, 2 * MAX_SAMPLE_ROWS);
  private readonly reasons: string[] = [];
  private readonly reasonIndex = new Map<string, number>();
  private readonly values = new GrowingArray(f64, MAX_SAMPLE_ROWS);
  private readonly counts = { rejected: 0, changed: 0, merged: 0, flagged: 0 };
  private firstRejection: ReportEntry | undefined;
  private done: { kind: Uint8Array; first: Uint32Array; second: Uint32Array; values: Float64Array } | null = null;

  /** Notes one entry as it stands. */
  add(entry: ReportEntry): void {
    this.note(PLAIN, this.plain.length, 0);
    this.plain.push(entry);
    this.counts[entry.action]++;
    if (entry.action === 'rejected' && this.firstRejection === undefined) this.firstRejection = entry;
  }

  /** Notes a non-detect replaced by a value (action 'changed'); the reason is shared by all notes that give it. */
  nonDetect(record: number, reason: string): void {
    let k = this.reasonIndex.get(reason);
    if (k === undefined) {
      k = this.reasons.length;
      this.reasons.push(reason);
      this.reasonIndex.set(reason, k);
    }
    this.note(NON_DETECT, record, k);
    this.counts.changed++;
  }

  /** Notes an outlier (action 'flagged') at line or feature `place` with its value. */
  outlier(place: number, value: number): void {
    this.note(OUTLIER, place, this.values.length);
    this.values.push(value);
    this.counts.flagged++;
  }

  /** The notes as arrays of exactly their length (once: nothing is noted after the report is made). */
  private settled(): { kind: Uint8Array; first: Uint32Array; second: Uint32Array; values: Float64Array } {
    this.done ??= { kind: this.kind.take(), first: this.first.take(), second: this.second.take(), values: this.values.take() };
    return this.done;
  }

  private note(kind: number, first: number, second: number): void {
    if (this.done) throw new Error('ReadNotes: a note was added after the entries were built.');
    this.kind.push(kind);
    this.first.push(first);
    this.second.push(second);
  }

  /** Notes of one action. */
  count(action: ReportEntry['action']): number {
    return this.counts[action];
  }

  /** Every note. */
  get length(): number {
    return this.done ? this.done.kind.length : this.kind.length;
  }

  /** The first rejection noted, if any. */
  get firstRejected(): ReportEntry | undefined {
    return this.firstRejection;
  }

  /**
   * Every note as a ReportEntry, sorted by line (or feature), notes of one line in the order noted.
   * `format` says whether outliers are placed by line (CSV) or feature (GeoJSON).
   */
  entries(nonDetects: NonDetectPlace, outlierField: string, format: 'csv' | 'geojson'): ReportEntry[] {
    const { kind, first, second, values } = this.settled();
    const n = kind.length;
    const out: ReportEntry[] = new Array(n);
    for (let k = 0; k < n; k++) {
      const a = first[k];
      const b = second[k];
      if (kind[k] === PLAIN) out[k] = this.plain[a];
      else if (kind[k] === NON_DETECT) {
        out[k] = { ...nonDetects.place(a), field: nonDetects.field, raw: nonDetects.raw(a), action: 'changed', reason: this.reasons[b] };
      } else {
        out[k] = { ...(format === 'csv' ? { line: a } : { feature: a }), field: outlierField, raw: String(values[b]), action: 'flagged', reason: OUTLIER_REASON };
      }
    }
    return out.sort((x, y) => (x.line ?? x.feature ?? 0) - (y.line ?? y.feature ?? 0));
  }
}

/**
 * Gives `report` an enumerable `entries` property built by `make` on its first read (JSON, structured
 * clone, spread and plain reads all see an array) and kept from then on as a plain data property.
 */
export function lazyEntries<R extends { entries: ReportEntry[] }>(report: R, make: () => ReportEntry[]): R {
  const settle = (value: ReportEntry[]) => {
    Object.defineProperty(report, 'entries', { value, enumerable: true, writable: true, configurable: true });
    return value;
  };
  Object.defineProperty(report, 'entries', {
    enumerable: true,
    configurable: true,
    get: () => settle(make()),
    set: (value: ReportEntry[]) => settle(value),
  });
  return report;
}
