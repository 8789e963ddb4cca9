// reportHtml with hostile text in every string field it takes (file and column names, units, CRS
// text, sample ids, notes, warnings, model labels, the title, the software name): the same elements
// and attributes as the report of harmless text, so no text from a file can add markup.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { reportHtml } from '../../src/io/report.ts';
import { elementOutline, fillStrings, fullReportInput, HOSTILE_TEXT } from '../helpers/hostile-report.ts';

const hostileString = fc.oneof(
  fc.constantFrom(...HOSTILE_TEXT),
  fc.tuple(fc.string({ minLength: 1 }), fc.constantFrom(...HOSTILE_TEXT), fc.string()).map(([a, h, b]) => a + h + b),
  fc.string({ minLength: 1, unit: fc.constantFrom('<', '>', '"', "'", '&', '=', '/', ' ', 'a', ']', '!', '-', '\u0000') }),
);

describe('reportHtml with hostile text', () => {
  const clean = fullReportInput();
  // Distinct strings, so fields compared with each other (the chosen candidate's key) differ in both.
  const count = fillStrings(clean, (k) => `plain text ${k}`);
  const cleanOutline = elementOutline(reportHtml(clean));

  it('fullReportInput reaches many string fields and a report with every part', () => {
    expect(count).toBeGreaterThan(60);
    const html = reportHtml(fullReportInput());
    for (const part of ['id="area-above"', 'Suggested next samples</h2>', 'Fit note', 'Chosen to sharpen the map', '<small>', 'class="warn"', 'table class="entries"']) {
      expect(html).toContain(part);
    }
  });

  it('reportHtml writes the unit from a CSV header as text in the suggested-sites headings', () => {
    const input = fullReportInput();
    input.project.samples.unit = HOSTILE_TEXT[1];
    const html = reportHtml(input);
    expect(html).not.toMatch(/<meta http-equiv=.?refresh/i);
    expect(html).not.toMatch(/<img/i);
    expect(html).toContain('<th>mean (Pb (mg/kg&lt;meta http-equiv=refresh content=&quot;0;url=https://example.invalid/&quot;&gt;&lt;img src=x onerror=window.__gapwisePwned=1&gt;))</th>');
  });

  it('reportHtml gives the elements and attributes of the clean report whatever text fills its string fields (property)', () => {
    fc.assert(fc.property(fc.array(hostileString, { minLength: 1, maxLength: 40 }), (texts) => {
      const input = fullReportInput();
      fillStrings(input, (k) => `${texts[k % texts.length]} ${k}`);
      const html = reportHtml(input);
      expect(elementOutline(html)).toEqual(cleanOutline);
      expect(html).not.toMatch(/<(script|iframe|img|object|form|base|link|a\s+href="j)/i);
    }), { numRuns: 60 });
  });
});
