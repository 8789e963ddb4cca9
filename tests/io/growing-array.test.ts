// A growing typed array gives the items pushed, in an array of exactly their number, whether it grows
// in place (a resizable buffer) or in chunks joined at the end; past its limit it goes on in chunks.
import { afterEach, describe, expect, it } from 'vitest';
import { GROW_IN_PLACE, GrowingArray, setGrowInPlace, type TypedKind } from '../../src/io/growing-array.ts';
import { ColumnBuilder, cellText } from '../../src/io/sample-table.ts';

const f64 = Float64Array as TypedKind<Float64Array>;
const u8 = Uint8Array as TypedKind<Uint8Array>;

function fill<T extends Float64Array | Uint8Array>(a: GrowingArray<T>, n: number, item: (k: number) => number): void {
  for (let k = 0; k < n; k++) a.push(item(k));
}

afterEach(() => {
  setGrowInPlace(true);
});

describe('GrowingArray', () => {
  const sizes = [0, 1, 15, 16, 17, GROW_IN_PLACE - 1, GROW_IN_PLACE, GROW_IN_PLACE + 1, 3 * GROW_IN_PLACE + 12_345];
  for (const inPlace of [true, false]) {
    it(`GrowingArray: take() gives every item pushed in an array of exactly their number (${inPlace ? 'growing in place' : 'in chunks'})`, () => {
      setGrowInPlace(inPlace);
      for (const n of sizes) {
        const a = new GrowingArray(f64, 1_000_000);
        fill(a, n, (k) => k * 0.5 - 7);
        expect(a.length).toBe(n);
        expect(a.get(n >> 1)).toBe(n ? (n >> 1) * 0.5 - 7 : undefined);
        const out = a.take();
        expect(out).toBeInstanceOf(Float64Array);
        expect(out.length).toBe(n);
        expect(out.buffer.byteLength).toBe(8 * n);
        for (let k = 0; k < n; k += 997) expect(out[k]).toBe(k * 0.5 - 7);
        if (n) expect(out[n - 1]).toBe((n - 1) * 0.5 - 7);
        expect(a.length).toBe(0);
      }
    });
  }

  it('GrowingArray: large arrays grow in one resizable buffer, cut to their items, that a structured clone keeps', () => {
    expect(setGrowInPlace(true)).toBe(true);
    const a = new GrowingArray(u8, 10_000_000);
    fill(a, 5 * GROW_IN_PLACE + 3, (k) => k & 255);
    const out = a.take();
    const buffer = out.buffer as ArrayBuffer & { resizable?: boolean };
    expect(buffer.resizable).toBe(true);
    expect(buffer.byteLength).toBe(5 * GROW_IN_PLACE + 3);
    const copy = structuredClone(out);
    expect(copy.length).toBe(out.length);
    expect(copy[5 * GROW_IN_PLACE + 2]).toBe((5 * GROW_IN_PLACE + 2) & 255);
  });

  it('GrowingArray: items past the limit go on in chunks and still all come back', () => {
    const limit = GROW_IN_PLACE * 2 + 100;
    const a = new GrowingArray(f64, limit);
    const n = limit * 3 + 7;
    fill(a, n, (k) => k);
    for (const k of [0, limit - 1, limit, limit + 1, n - 1]) expect(a.get(k)).toBe(k);
    const out = a.take();
    expect(out.length).toBe(n);
    let same = true;
    for (let k = 0; k < n; k++) same &&= out[k] === k;
    expect(same).toBe(true);
  });

  it('ColumnBuilder: a column of more than GROW_IN_PLACE texts reads back the same growing in place and in chunks', () => {
    const cells = Array.from({ length: 2 * GROW_IN_PLACE + 5 }, (_, i) => (i % 5 === 0 ? `Probe-ö${i}` : `S${i}`));
    const back: string[][] = [];
    for (const inPlace of [true, false]) {
      setGrowInPlace(inPlace);
      const b = new ColumnBuilder();
      for (const c of cells) b.push(c);
      const col = b.finish();
      expect(col.kind).toBe('texts');
      if (col.kind === 'texts') expect(col.offsets.length).toBe(cells.length + 1);
      back.push(cells.map((_, k) => cellText(col, k)));
    }
    expect(back[0]).toEqual(cells);
    expect(back[1]).toEqual(cells);
  });
});
