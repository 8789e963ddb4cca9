/**
 * Duplicate locations among the read samples (quality.ts duplicateGroups: within a tolerance in the
 * working CRS): merged into one sample with the mean value and mean position, or kept, as the options
 * say; each merged row is noted. The samples are written over the parsed rows, in place.
 */
import type { Warning } from '../core/shared/errors.ts';
import { FLAG_DUP, FLAG_ND, cellText } from './sample-table.ts';
import type { ReadNotes } from './read-notes.ts';
import { duplicateGroups } from './quality.ts';
import { formatValue } from './format.ts';
import { LIST_NAMES } from './quote.ts';
import { listPlaces, placeOf, type Table } from './intake-table.ts';
import type { ValueColumns } from './intake-columns.ts';
import type { ParsedRows } from './intake-values.ts';
import type { WorkPositions } from './intake-crs.ts';
import type { DuplicateRule } from './types.ts';

/** The samples of a read, by column, each array of exactly `length` items (but `line`, see there). */
export interface IntakeSamples {
  length: number;
  inputX: Float64Array;
  inputY: Float64Array;
  value: Float64Array;
  /** Position in the working CRS. */
  sx: Float64Array;
  sy: Float64Array;
  flags: Uint8Array;
  line: Uint32Array;
  record: Uint32Array;
  /** How many groups of duplicate locations were found. */
  duplicateGroups: number;
  /** The merged samples, and the stored rows of each (records[start[k]] up to records[start[k + 1]]). */
  merged: { sample: Uint32Array; start: Uint32Array; records: Uint32Array };
}

/**
 * Finds the duplicate locations among the kept rows, warns about them, and writes the samples: a
 * group merged by its mean (rule 'merge') or each of its rows kept and flagged (rule 'keep').
 */
export function mergeDuplicates(
  table: Table, rows: ParsedRows, positions: WorkPositions, cols: ValueColumns, dupRule: DuplicateRule, tolerance: number, notes: ReadNotes, warnings: Warning[],
): IntakeSamples {
  const { x: px, y: py, value: pv, nd: pnd, record: prec } = rows;
  const { x: wx, y: wy } = positions;
  const { value: valueCol, valueName } = cols;
  const kept = rows.count;
  const kx = wx.subarray(0, kept);
  const ky = wy.subarray(0, kept);
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
  return {
    length: n, ...out, duplicateGroups: groups.length,
    merged: { sample: Uint32Array.from(mergedSample), start: Uint32Array.from(mergedSample.length ? mergedStart : []), records: Uint32Array.from(mergedRecords) },
  };
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
