/**
 * What the read report's table lists: every note, or the rejected ones only, at most LIST_LIMIT of
 * them (a 10-million-row file can carry hundreds of thousands of notes; a table of them all would hold
 * the page for seconds). The counts above the table always cover every note.
 */
import type { ReportEntry } from '../../io/types.ts';

/** Most notes the table lists; the rest are counted below it. */
export const LIST_LIMIT = 500;

export function listedNotes(entries: readonly ReportEntry[], filter: 'all' | 'rejected', limit = LIST_LIMIT): { listed: ReportEntry[]; total: number } {
  const listed: ReportEntry[] = [];
  let total = 0;
  for (const e of entries) {
    if (filter === 'rejected' && e.action !== 'rejected') continue;
    if (listed.length < limit) listed.push(e);
    total++;
  }
  return { listed, total };
}
