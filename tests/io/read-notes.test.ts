// The read report's notes kept compactly: the entries built from them are the ones a row-by-row list
// gave (same objects, same order by line, same counts), and every way of reading a report sees them.
import { describe, expect, it } from 'vitest';
import { readSamples } from '../../src/io/intake.ts';
import { OUTLIER_REASON, ReadNotes, lazyEntries } from '../../src/io/read-notes.ts';
import type { ReportEntry } from '../../src/io/types.ts';

// Lines 2–17: sixteen rows; line 4 a non-detect "<20", line 6 a non-detect by its qualifier, line 8 no
// value (rejected), lines 10 and 11 at one place (merged), line 12 a thousands separator, line 15 far out.
const CSV = [
  'id,x,y,Pb,Pb_qualifier',
  'A,500100,5300200,10,',
  'B,500110,5300205,12,',
  'C,500120,5300210,<20,',
  'D,500130,5300215,11,',
  'E,500140,5300220,24,U',
  'F,500150,5300225,13,',
  'G,500160,5300230,,',
  'H,500170,5300235,9,',
  'I,500180,5300240,14,',
  'J,500180,5300240,16,',
  'K,500190,5300245,"1,100",',
  'L,500200,5300250,12,',
  'M,500210,5300255,11,',
  'N,500220,5300260,9000,',
  'O,500230,5300265,10,',
  'P,500240,5300270,12,',
].join('\n');

describe('ReadNotes', () => {
  it('readSamples: the entries built from the compact notes are every note, in line order, with their reasons', () => {
    const r = readSamples(CSV, { fileName: 'notes.csv', crs: 'EPSG:32632' });
    const e = r.report.entries;
    expect(e.map((x) => [x.line, x.action])).toEqual([
      [4, 'changed'], [6, 'changed'], [8, 'rejected'], [10, 'merged'], [11, 'merged'], [12, 'changed'], [12, 'flagged'], [15, 'flagged'],
    ]);
    expect(e[0]).toEqual({ line: 4, field: 'Pb', raw: '<20', action: 'changed', reason: 'non-detect below 20: replaced by 10 (DL/2)' });
    expect(e[1]).toEqual({ line: 6, field: 'Pb', raw: '24', action: 'changed', reason: 'non-detect below 24 (qualifier "U" in "Pb_qualifier"): replaced by 12 (DL/2)' });
    expect(e[2]).toEqual({ line: 8, field: 'Pb', raw: '', action: 'rejected', reason: 'missing value' });
    expect(e[5]).toEqual({ line: 12, field: 'Pb', raw: '1,100', action: 'changed', reason: 'thousands separators removed: read as 1100' });
    expect(e[6]).toEqual({ line: 12, field: 'Pb', raw: '1100', action: 'flagged', reason: OUTLIER_REASON });
    expect(e[7]).toEqual({ line: 15, field: 'Pb', raw: '9000', action: 'flagged', reason: OUTLIER_REASON });
    // The counts the warnings give agree with the entries.
    expect(r.report.nonDetects.count).toBe(2);
    expect(r.report.warnings.find((w) => w.code === 'rejected-rows')?.message).toContain('1 row was rejected');
    expect(r.report.outliers.length).toBe(e.filter((x) => x.action === 'flagged').length);
  });

  it('readSamples: JSON, a structured clone and a spread of the report all hold the same entries', () => {
    const a = readSamples(CSV, { fileName: 'notes.csv', crs: 'EPSG:32632' }).report;
    const b = readSamples(CSV, { fileName: 'notes.csv', crs: 'EPSG:32632' }).report;
    const c = readSamples(CSV, { fileName: 'notes.csv', crs: 'EPSG:32632' }).report;
    const json = JSON.parse(JSON.stringify(a)) as typeof a;
    const cloned = structuredClone(b);
    const spread = { ...c };
    expect(json.entries.length).toBe(8);
    expect(cloned.entries).toEqual(json.entries);
    expect(spread.entries).toEqual(json.entries);
    // The key keeps its place in the report (the JSON read report prints it there).
    expect(Object.keys(json).indexOf('entries')).toBe(Object.keys(a).indexOf('entries'));
    expect(Object.keys(a).indexOf('entries')).toBe(Object.keys(a).indexOf('outliers') + 1);
  });

  it('ReadNotes: counts, the first rejection and the built entries of mixed notes', () => {
    const notes = new ReadNotes();
    notes.add({ line: 9, raw: 'x', action: 'rejected', reason: 'has 2 fields but the header has 3' });
    notes.nonDetect(3, 'non-detect below 5: replaced by 2.5 (DL/2)');
    notes.nonDetect(1, 'non-detect below 5: replaced by 2.5 (DL/2)');
    notes.outlier(7, 812.5);
    notes.add({ line: 7, field: 'v', raw: '1', action: 'rejected', reason: 'second' });
    expect(notes.count('rejected')).toBe(2);
    expect(notes.count('changed')).toBe(2);
    expect(notes.count('flagged')).toBe(1);
    expect(notes.length).toBe(5);
    expect(notes.firstRejected?.reason).toBe('has 2 fields but the header has 3');
    const entries = notes.entries({ place: (rec) => ({ line: rec + 2 }), raw: (rec) => `<5#${rec}`, field: 'v' }, 'v', 'csv');
    expect(entries).toEqual([
      { line: 3, field: 'v', raw: '<5#1', action: 'changed', reason: 'non-detect below 5: replaced by 2.5 (DL/2)' },
      { line: 5, field: 'v', raw: '<5#3', action: 'changed', reason: 'non-detect below 5: replaced by 2.5 (DL/2)' },
      { line: 7, field: 'v', raw: '812.5', action: 'flagged', reason: OUTLIER_REASON },
      { line: 7, field: 'v', raw: '1', action: 'rejected', reason: 'second' },
      { line: 9, raw: 'x', action: 'rejected', reason: 'has 2 fields but the header has 3' },
    ]);
    expect(() => notes.outlier(1, 1)).toThrow(/after the entries were built/);
  });

  it('lazyEntries: builds the entries once, on the first read, and then holds them as a plain property', () => {
    let built = 0;
    const report = lazyEntries({ entries: [] as ReportEntry[], after: 1 }, () => {
      built++;
      return [{ line: 2, action: 'rejected', reason: 'r' }];
    });
    expect(built).toBe(0);
    expect(report.entries.length).toBe(1);
    expect(report.entries).toBe(report.entries);
    expect(built).toBe(1);
    expect(Object.getOwnPropertyDescriptor(report, 'entries')?.value).toBe(report.entries);
    expect(Object.keys(report)).toEqual(['entries', 'after']);
  });
});
