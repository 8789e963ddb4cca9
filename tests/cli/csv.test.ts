import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { csvCell, csvLine, formatFullPrecision, linePieces, readCsvTable, recordText } from '../../src/cli/csv.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';

describe('readCsvTable', () => {
  it('readCsvTable keeps each record\'s raw text and its starting line', () => {
    const text = 'id,x,y\r\n"a, quoted",1,2\r\n\r\n"multi\r\nline",3,4\r\nlast,5,6';
    const t = readCsvTable(text, 't.csv');
    expect(t.delimiter).toBe(',');
    expect(t.newline).toBe('\r\n');
    expect(t.header.cells).toEqual(['id', 'x', 'y']);
    expect(t.records.map((r) => r.raw)).toEqual(['"a, quoted",1,2', '"multi\r\nline",3,4', 'last,5,6']);
    expect(t.records.map((r) => r.line)).toEqual([2, 4, 6]);
    expect(t.records[0].cells).toEqual(['a, quoted', '1', '2']);
    expect(t.records[1].cells).toEqual(['multi\r\nline', '3', '4']);
  });

  it('readCsvTable detects a semicolon delimiter and strips a byte-order mark', () => {
    const t = readCsvTable('\ufeffname;E;N\nP1;"500,5";10\n', 't.csv');
    expect(t.delimiter).toBe(';');
    expect(t.header.cells).toEqual(['name', 'E', 'N']);
    expect(t.records[0].cells).toEqual(['P1', '500,5', '10']);
  });

  it('readCsvTable rejects an unclosed quote with its line, and an empty file', () => {
    try {
      readCsvTable('a,b\n1,2\n"open,3\n', 'bad.csv');
      expect.fail('accepted an unclosed quote');
    } catch (e) {
      expect((e as GapwiseError).describe()).toBe('bad.csv, line 3: A quoted cell is never closed; expected a closing double quote.');
    }
    expect(() => readCsvTable('\n\n', 'e.csv')).toThrow(/empty/);
  });

  it('readCsvTable reads back what csvLine writes (property)', () => {
    const cell = fc.string({ unit: fc.constantFrom('a', 'b', ',', '"', '\n', ' ', '1', 'é') });
    fc.assert(fc.property(fc.array(fc.array(cell, { minLength: 3, maxLength: 3 }), { minLength: 1, maxLength: 5 }), (rows) => {
      const text = [csvLine(['h1', 'h2', 'h3']), ...rows.map((r) => csvLine(r))].join('\n');
      const t = readCsvTable(text, 'p.csv');
      // Rows whose cells are all empty or blank are skipped as blank lines.
      const kept = rows.filter((r) => csvLine(r).trim() !== '');
      expect(t.records.map((r) => r.cells)).toEqual(kept);
      expect(t.records.map((r) => r.raw)).toEqual(kept.map((r) => csvLine(r)));
    }));
  });
});

describe('csvCell', () => {
  it('csvCell quotes only cells that need it', () => {
    expect(csvCell('plain')).toBe('plain');
    expect(csvCell('a,b')).toBe('"a,b"');
    expect(csvCell('say "hi"')).toBe('"say ""hi"""');
    expect(csvCell('a;b', ';')).toBe('"a;b"');
  });
});

describe('recordText', () => {
  it('recordText gives a record back verbatim unless a cell is formula-leading text, which is then neutralised', () => {
    const t = readCsvTable('id;x;y\nP1;"500,5";-10\n=HYPERLINK("https://example.invalid");1;2\n', 't.csv');
    expect(recordText(t.records[0], ';')).toBe('P1;"500,5";-10');
    expect(recordText(t.records[1], ';')).toBe('"\'=HYPERLINK(""https://example.invalid"")";1;2');
  });
});

describe('formatFullPrecision', () => {
  it('formatFullPrecision keeps 12 significant digits and drops float noise', () => {
    expect(formatFullPrecision(173.40000000000003)).toBe('173.4');
    expect(formatFullPrecision(5312345.123456789)).toBe('5312345.12346');
    expect(formatFullPrecision(11.2490007)).toBe('11.2490007');
    expect(formatFullPrecision(-0.000012345)).toBe('-0.000012345');
    expect(formatFullPrecision(NaN)).toBe('');
    expect(formatFullPrecision(0)).toBe('0');
  });
});

describe('readCsvTable line endings', () => {
  it('readCsvTable splits a file that mixes CRLF and LF lines at every line end, keeping raw text without the ending', () => {
    const t = readCsvTable('id,x\r\na,1\nb,"2"\r\nc,3', 'm.csv');
    expect(t.newline).toBe('\r\n');
    expect(t.records.map((r) => r.cells)).toEqual([['a', '1'], ['b', '2'], ['c', '3']]);
    expect(t.records.map((r) => r.raw)).toEqual(['a,1', 'b,"2"', 'c,3']);
    expect(t.records.map((r) => r.line)).toEqual([2, 3, 4]);
  });
});

describe('linePieces', () => {
  it('linePieces: whole lines in pieces whose bytes are the lines joined with a final line end', () => {
    const lines = Array.from({ length: 1000 }, (_, i) => `S${i},${(i * 0.37).toFixed(2)},"ü ${i}"`);
    for (const newline of ['\n', '\r\n']) {
      const pieces = [...linePieces(lines.length, (i) => lines[i], newline, 300)];
      expect(pieces.length).toBeGreaterThan(50);
      for (const p of pieces) expect(p.endsWith(newline)).toBe(true);
      expect(Buffer.from(pieces.join('')).equals(Buffer.from(lines.join(newline) + newline))).toBe(true);
    }
    expect([...linePieces(3, (i) => String(i))]).toEqual(['0\n1\n2\n']);
    expect([...linePieces(0, () => 'never')]).toEqual([]);
  });
});
