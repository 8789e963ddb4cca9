import { describe, expect, it } from 'vitest';
import { LIST_LIMIT, listedNotes } from '../../../src/ui/state/read-report-view.ts';
import type { ReportEntry } from '../../../src/io/types.ts';

const note = (line: number, action: ReportEntry['action']): ReportEntry => ({ line, field: 'Pb', raw: '<5', action, reason: 'test note' });

describe('listedNotes', () => {
  it('listedNotes lists at most the limit, in file order, and counts every note the filter keeps', () => {
    const entries = Array.from({ length: 1200 }, (_, i) => note(i + 2, i % 3 === 0 ? 'rejected' : 'changed'));
    const all = listedNotes(entries, 'all');
    expect(all.total).toBe(1200);
    expect(all.listed).toHaveLength(LIST_LIMIT);
    expect(all.listed.map((e) => e.line)).toEqual(entries.slice(0, LIST_LIMIT).map((e) => e.line));
    const rejected = listedNotes(entries, 'rejected', 100);
    expect(rejected.total).toBe(400);
    expect(rejected.listed).toHaveLength(100);
    expect(rejected.listed.every((e) => e.action === 'rejected')).toBe(true);
    expect(listedNotes(entries.slice(0, 7), 'all')).toEqual({ listed: entries.slice(0, 7), total: 7 });
  });
});
