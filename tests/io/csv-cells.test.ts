// csvCell / csvLine / csvComment: RFC 4180 quoting, formula-leading text made inert with a leading
// apostrophe (common practice against CSV injection: cells beginning with = + - @ tab or CR), numbers
// left as they are.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { CSV_CAUTION, FORMULA_NOTE, csvCell, csvComment, csvLine, neutraliseFormula } from '../../src/io/csv-cells.ts';
import { readCsvTable } from '../../src/cli/csv.ts';
import { CAUTION } from '../../src/core/shared/caution.ts';

/** Starts like a formula to a spreadsheet (common practice: = + - @, tab, CR; spaces before them). */
const FORMULA_LIKE = /^(?: *[=+\-@]|[\t\r])/;
const NUMBER_LIKE = /^[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?$|^[+-]?(?:inf|infinity)$/i;

describe('neutraliseFormula', () => {
  it('neutraliseFormula prefixes formula-leading text with an apostrophe and leaves numbers and other text', () => {
    const cases: Array<[string, string]> = [
      ['=HYPERLINK("https://example.invalid","x")', '\'=HYPERLINK("https://example.invalid","x")'],
      ['@SUM(A1:A9)', "'@SUM(A1:A9)"],
      ['+cmd|\' /C calc\'!A0', "'+cmd|' /C calc'!A0"],
      ['-2+3+cmd', "'-2+3+cmd"],
      ['-', "'-"],
      ['  =1+1', "'  =1+1"],
      ['\t=1', "'\t=1"],
      ['\r=1', "'\r=1"],
      ['-12.5', '-12.5'],
      ['+5', '+5'],
      ['-1e-3', '-1e-3'],
      ['-3,25', '-3,25'],
      ['-inf', '-inf'],
      ['-Infinity', '-Infinity'],
      ['S-01', 'S-01'],
      ['2024-01-01', '2024-01-01'],
      ['', ''],
    ];
    for (const [text, expected] of cases) expect(neutraliseFormula(text), JSON.stringify(text)).toBe(expected);
  });
});

describe('csvCell', () => {
  it('csvCell neutralises before quoting: a formula in quotes is still text', () => {
    expect(csvCell('=1+1')).toBe("'=1+1");
    expect(csvCell('=SUM(1,2)')).toBe('"\'=SUM(1,2)"');
    expect(csvCell('\r=1')).toBe('"\'\r=1"');
    expect(csvCell('-7.25')).toBe('-7.25');
    expect(csvLine(['S1', '=HYPERLINK("x")', '-3', '@a'])).toBe('S1,"\'=HYPERLINK(""x"")",-3,\'@a');
  });

  it('csvLine cells read back as the text or the apostrophe and the text, never as formula-leading text (property)', () => {
    const cell = fc.string({ unit: fc.constantFrom('=', '+', '-', '@', '\t', '\r', '\n', ' ', ',', '"', '1', '.', 'e', 'a') });
    fc.assert(fc.property(fc.array(cell, { minLength: 2, maxLength: 4 }), (cells) => {
      fc.pre(cells.some((c) => c.trim() !== ''));
      const t = readCsvTable(`${csvLine(cells.map((_, i) => `h${i}`))}\n${csvLine(cells)}\n`, 'p.csv');
      t.records[0].cells.forEach((got, i) => {
        expect(got === cells[i] || got === `'${cells[i]}`).toBe(true);
        if (FORMULA_LIKE.test(got)) expect(got).toMatch(NUMBER_LIKE);
      });
    }));
  });
});

describe('csvComment', () => {
  it('csvComment keeps a comment one line whose pieces between delimiters are not formula-leading', () => {
    const line = csvComment(`${CSV_CAUTION} unit mg,=HYPERLINK("https://example.invalid"),@x\n=2`);
    expect(line.startsWith(`# ${CAUTION} ${FORMULA_NOTE}`)).toBe(true);
    expect(line).not.toMatch(/[\r\n"]/);
    for (const piece of line.split(',').slice(1)) expect(piece).not.toMatch(FORMULA_LIKE);
    expect(line).toContain(",'=HYPERLINK('https://example.invalid'),'@x =2");
  });
});
