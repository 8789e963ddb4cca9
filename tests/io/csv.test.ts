// Delimited text to rows with their physical lines; expected values read off the test strings.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { CsvReader, detectDelimiter, normaliseText, readCsv } from '../../src/io/csv.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';

describe('detectDelimiter', () => {
  it('detectDelimiter: picks comma, semicolon or tab by consistent field counts', () => {
    expect(detectDelimiter('a,b,c\n1,2,3\n')).toBe(',');
    expect(detectDelimiter('a;b;c\n1,5;2,5;3\n')).toBe(';');
    expect(detectDelimiter('a\tb\n1,5\t2\n')).toBe('\t');
    expect(detectDelimiter('name,x,y\n"a;b",1,2\n"c;d",3,4\n')).toBe(',');
    expect(detectDelimiter('name;x;y\n"a,b";1;2\n"c,d";3;4\n')).toBe(';');
  });
});

describe('normaliseText', () => {
  it('normaliseText: strips a byte-order mark and turns CRLF and CR into LF', () => {
    expect(normaliseText('\ufeffa\r\nb\rc\n')).toBe('a\nb\nc\n');
  });
});

describe('readCsv', () => {
  it('readCsv: counts physical lines across quoted line breaks and blank lines', () => {
    const t = readCsv('\n\nid,v\n"a\nb",1\n\n"c",2\n', 'f.csv');
    expect(t.headerLine).toBe(3);
    expect(t.rows).toEqual([
      { line: 4, cells: ['a\nb', '1'] },
      { line: 7, cells: ['c', '2'] },
    ]);
    expect(t.blankLines).toEqual([1, 2, 6]);
  });

  it('readCsv: old Mac CR line ends read like LF', () => {
    const t = readCsv('id,v\r1,2\r3,4\r', 'f.csv');
    expect(t.rows.map((r) => r.line)).toEqual([2, 3]);
  });

  it('readCsv: empty and repeated header names are renamed and reported', () => {
    const t = readCsv('a,,a\n1,2,3\n', 'f.csv');
    expect(t.header).toEqual(['a', 'column 2', 'a (2)']);
    expect(t.renamed).toEqual([['', 'column 2'], ['a', 'a (2)']]);
  });

  it('readCsv: an empty file and a blank-only file are bad-file errors naming the file', () => {
    for (const text of ['', '\n \n\t\n']) {
      try {
        readCsv(text, 'empty.csv');
        expect.fail('no error');
      } catch (e) {
        expect(e).toBeInstanceOf(GapwiseError);
        expect((e as GapwiseError).code).toBe('bad-file');
        expect((e as GapwiseError).place.file).toBe('empty.csv');
      }
    }
  });

  it('readCsv: keeps cell text exactly, HTML included', () => {
    const t = readCsv('<b>x</b>,y\n"<script>alert(1)</script>",&amp;\n', 'h.csv');
    expect(t.header).toEqual(['<b>x</b>', 'y']);
    expect(t.rows[0].cells).toEqual(['<script>alert(1)</script>', '&amp;']);
  });
});

describe('CsvReader', () => {
  it('CsvReader: text pushed in random pieces, parsed chunk by chunk, gives the table of one pass over the whole text', () => {
    const tokens = fc.constantFrom('a', 'b1', '2.5', '', ' ', '"', '""', '"x,y"', '"multi\nline"', '\n', '\r\n', '\r', ',', ';', '\t', 'é', '\ufeff');
    const text = fc.array(tokens, { maxLength: 150 }).map((a) => a.join(''));
    const outcome = (f: () => unknown) => {
      try {
        return f();
      } catch (e) {
        if (!(e instanceof GapwiseError)) throw e;
        return e.toJSON();
      }
    };
    fc.assert(
      fc.property(text, fc.array(fc.integer({ min: 0, max: 200 }), { maxLength: 12 }), fc.constantFrom(',', ';', '\t') as fc.Arbitrary<',' | ';' | '\t'>, (t, cuts, d) => {
        const whole = outcome(() => readCsv(t, 'c.csv', d));
        const points = [...new Set(cuts.map((c) => Math.min(c, t.length)))].sort((x, y) => x - y);
        const streamed = outcome(() => {
          // Parsing starts after 1 character, so every push after the first is parsed on its own.
          const reader = new CsvReader('c.csv', d, undefined, 1);
          let from = 0;
          for (const p of [...points, t.length]) {
            reader.push(t.slice(from, p));
            from = p;
          }
          return reader.end();
        });
        expect(streamed).toEqual(whole);
      }),
      { numRuns: 500 },
    );
  });
});
