// The column store of the intake: every cell comes back as the exact text it was, in whichever form
// the column chose; the accessors give what one object per row gave.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { ColumnBuilder, FLAG_DUP, FLAG_ND, cellText, isSampleTable, rowAt, sampleFlags, sampleId, tableBuffers } from '../../src/io/sample-table.ts';
import { sourceColumn } from '../../src/io/sample-columns.ts';
import { readSamples } from '../../src/io/intake.ts';

function roundTrip(cells: string[]): { kind: string; back: string[] } {
  const b = new ColumnBuilder();
  for (const c of cells) b.push(c);
  const col = b.finish();
  expect(col.length).toBe(cells.length);
  const back = cells.map((_, k) => cellText(col, k));
  return { kind: col.kind, back };
}

describe('ColumnBuilder', () => {
  it('ColumnBuilder: plain numbers are stored as numbers and come back with their own digits', () => {
    const cells = ['12.50', '-3', '0.000123', '7', '', '1e5', '007', '-0', '-0.0', '+4', '.5', '3.', '12345678901234567890', '0.1234567890123456789', '<5', 'n/a'];
    const { kind, back } = roundTrip(cells);
    expect(kind).toBe('numbers');
    expect(back).toEqual(cells);
  });

  it('ColumnBuilder: a column of words becomes codes into its levels; one of distinct texts becomes UTF-8 bytes', () => {
    const words = Array.from({ length: 500 }, (_, i) => ['sand', 'clay', 'loam', 'ü-grün'][i % 4]);
    const w = roundTrip(words);
    expect(w.kind).toBe('codes');
    expect(w.back).toEqual(words);
    const ids = Array.from({ length: 20_000 }, (_, i) => (i % 7 === 0 ? `Bohrung-ä${i}` : `S${i}x`));
    const t = roundTrip(ids);
    expect(t.kind).toBe('texts');
    expect(t.back).toEqual(ids);
  });

  it('ColumnBuilder: a column that starts with numbers and turns to text within its first rows is stored as text', () => {
    const cells = [...Array.from({ length: 40 }, (_, i) => String(i)), ...Array.from({ length: 200 }, (_, i) => `w${i % 9}`)];
    const r = roundTrip(cells);
    expect(r.kind).toBe('codes');
    expect(r.back).toEqual(cells);
  });

  it('ColumnBuilder: a plain decimal cell is stored as the number Number() reads from it (fast-check)', () => {
    const decimal = fc.tuple(fc.boolean(), fc.bigInt({ min: 0n, max: 10n ** 20n }), fc.integer({ min: 0, max: 20 }))
      .map(([neg, digits, d]) => {
        const t = digits.toString().padStart(d + 1, '0');
        return `${neg ? '-' : ''}${d ? `${t.slice(0, -d)}.${t.slice(-d)}` : t}`;
      });
    fc.assert(fc.property(fc.array(decimal, { minLength: 1, maxLength: 50 }), (cells) => {
      const b = new ColumnBuilder();
      for (const c of cells) b.push(c);
      const col = b.finish();
      if (col.kind !== 'numbers') throw new Error(`kind ${col.kind}`);
      cells.forEach((c, k) => {
        if (col.decimals[k] < 254) expect(Object.is(col.values[k], Number(c)), `${c} read as ${col.values[k]}`).toBe(true);
        expect(cellText(col, k)).toBe(c);
      });
    }), { numRuns: 300 });
  });

  it('ColumnBuilder: any strings come back exactly (fast-check)', () => {
    fc.assert(fc.property(fc.array(fc.oneof(fc.string(), fc.double({ noNaN: true }).map(String), fc.integer().map(String), fc.constantFrom('', '1.50', '-0', '<2')), { maxLength: 300 }), (cells) => {
      expect(roundTrip(cells).back).toEqual(cells);
    }), { numRuns: 200 });
  });
});

describe('sample table accessors', () => {
  const text = 'id,lon,lat,Pb (mg/kg),soil,depth\n'
    + 'A,11.25,48.5,12.5,sand,0.5\n'
    + 'B,11.26,48.51,<5,clay,1\n'
    + 'C,11.25,48.5,20,loam,x\n'
    + ',11.27,48.52,7,sand,2\n';

  it('rowAt: a merged duplicate gives its rows\' ids, lines, flags and the first row\'s cells', () => {
    const r = readSamples(text, { fileName: 'm.csv', value: 'Pb (mg/kg)' });
    expect(r.table.length).toBe(3);
    const merged = rowAt(r.table, 0);
    expect(merged).toMatchObject({ id: 'A + C', lines: [2, 4], flags: ['dup'], raw: { id: 'A', soil: 'sand', 'Pb (mg/kg)': '12.5' } });
    expect(merged.value).toBe(16.25);
    expect(rowAt(r.table, 1)).toMatchObject({ id: 'B', lines: [3], flags: ['nd'], value: 2.5, raw: { 'Pb (mg/kg)': '<5' } });
    // An empty ID cell: the sample is named by its line.
    expect(sampleId(r.table, 2)).toBe('line 5');
    expect(r.table.flags[0] & FLAG_DUP).toBe(FLAG_DUP);
    expect(r.table.flags[1] & FLAG_ND).toBe(FLAG_ND);
    expect(sampleFlags(r.table, 2)).toEqual([]);
    expect(() => rowAt(r.table, 3)).toThrow(RangeError);
  });

  it('sourceColumn: numeric columns as numbers per sample (NaN where a cell is none), text columns as codes and levels', () => {
    const r = readSamples(text, { fileName: 'm.csv', value: 'Pb (mg/kg)' });
    expect(sourceColumn(r, 'soil')).toEqual({ kind: 'text', codes: Uint32Array.from([0, 1, 0]), levels: ['sand', 'clay'] });
    const depth = sourceColumn(r, 'depth');
    expect(depth?.kind).toBe('numeric');
    expect(Array.from((depth as { values: Float64Array }).values)).toEqual([0.5, 1, 2]);
    const lon = sourceColumn(r, 'lon') as { kind: 'numeric'; values: Float64Array };
    expect(Array.from(lon.values)).toEqual([11.25, 11.26, 11.27]);
    expect(() => sourceColumn(r, 'nothing')).toThrow(/no column "nothing"/);
  });

  it('sourceColumn: decimal commas of a semicolon file are read with the column\'s mark', () => {
    const r = readSamples('id;x;y;v;depth\nA;1;1;1,5;0,25\nB;2;5;2;1,5\nC;9;3;3;n/a\n', { fileName: 's.csv', value: 'v' });
    const depth = sourceColumn(r, 'depth') as { kind: 'numeric'; values: Float64Array };
    expect(depth.kind).toBe('numeric');
    expect(Array.from(depth.values)).toEqual([0.25, 1.5, NaN]);
  });

  it('isSampleTable and tableBuffers: a table survives structured cloning and lists each buffer once', () => {
    const r = readSamples(text, { fileName: 'm.csv', value: 'Pb (mg/kg)' });
    const copy = structuredClone(r.table);
    expect(isSampleTable(copy)).toBe(true);
    expect(rowAt(copy, 0)).toEqual(rowAt(r.table, 0));
    expect(isSampleTable({ ...copy, inputX: new Float64Array(1) })).toBe(false);
    const buffers = tableBuffers(r.table);
    expect(new Set(buffers).size).toBe(buffers.length);
    expect(buffers).toContain(r.table.inputX.buffer);
  });
});
