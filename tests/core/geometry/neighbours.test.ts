// NeighbourIndex against brute force (the definition of nearest: sort all distances).
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { NeighbourIndex } from '../../../src/core/geometry/neighbours.ts';
import { createRandom } from '../../../src/core/shared/random.ts';

function bruteDist2(x: ArrayLike<number>, y: ArrayLike<number>, px: number, py: number): number[] {
  const d: number[] = [];
  for (let i = 0; i < x.length; i++) d.push((x[i] - px) ** 2 + (y[i] - py) ** 2);
  return d;
}

const coord = fc.double({ min: -1000, max: 1000, noNaN: true, noDefaultInfinity: true });
// Many repeated coordinates (duplicates and ties) on a coarse lattice.
const lattice = fc.integer({ min: -5, max: 5 }).map((v) => v * 10);

describe('NeighbourIndex', () => {
  it('nearest returns the k smallest distances, nearest first (property, against brute force)', () => {
    fc.assert(
      fc.property(
        fc.array(fc.tuple(fc.oneof(coord, lattice), fc.oneof(coord, lattice)), { minLength: 0, maxLength: 300 }),
        fc.tuple(coord, coord),
        fc.integer({ min: 0, max: 80 }),
        (pts, [px, py], k) => {
          const x = pts.map((p) => p[0]);
          const y = pts.map((p) => p[1]);
          const index = new NeighbourIndex(x, y);
          const d2 = new Float64Array(k);
          const ids = index.nearest(px, py, k, undefined, d2);
          const all = bruteDist2(x, y, px, py);
          const expected = [...all].sort((a, b) => a - b).slice(0, k);
          expect(ids.length).toBe(Math.min(k, x.length));
          expect(new Set(ids).size).toBe(ids.length);
          const got = Array.from(ids, (id) => all[id]);
          expect(got).toEqual(expected);
          expect(Array.from(d2.subarray(0, ids.length))).toEqual(expected);
        },
      ),
      { numRuns: 300, seed: 7 },
    );
  });

  it('nearest agrees with brute force on 20,000 random points and reuses a given buffer', () => {
    const rng = createRandom(11);
    const n = 20000;
    const x = new Float64Array(n);
    const y = new Float64Array(n);
    for (let i = 0; i < n; i++) { x[i] = rng.uniform() * 5000; y[i] = rng.uniform() * 3000; }
    const index = new NeighbourIndex(x, y);
    const buf = new Uint32Array(64);
    for (let q = 0; q < 30; q++) {
      const px = rng.uniform() * 6000 - 500;
      const py = rng.uniform() * 4000 - 500;
      const ids = index.nearest(px, py, 64, buf);
      expect(ids.buffer).toBe(buf.buffer);
      const all = bruteDist2(x, y, px, py);
      const order = Array.from(all.keys()).sort((a, b) => all[a] - all[b]).slice(0, 64);
      expect(Array.from(ids)).toEqual(order); // continuous coordinates: no ties, ids must match
    }
  });

  it('within returns exactly the points at distance ≤ r (property, against brute force)', () => {
    fc.assert(
      fc.property(
        fc.array(fc.tuple(fc.oneof(coord, lattice), fc.oneof(coord, lattice)), { minLength: 0, maxLength: 300 }),
        fc.tuple(coord, coord),
        fc.double({ min: 0, max: 800, noNaN: true }),
        (pts, [px, py], r) => {
          const x = pts.map((p) => p[0]);
          const y = pts.map((p) => p[1]);
          const got = new NeighbourIndex(x, y).within(px, py, r).sort((a, b) => a - b);
          const all = bruteDist2(x, y, px, py);
          const expected = [...all.keys()].filter((i) => all[i] <= r * r);
          expect(got).toEqual(expected);
        },
      ),
      { numRuns: 200, seed: 3 },
    );
  });

  it('NeighbourIndex rejects mismatched lengths and non-finite coordinates', () => {
    expect(() => new NeighbourIndex([1, 2], [1])).toThrow(/equal length/);
    expect(() => new NeighbourIndex([1, NaN], [1, 2])).toThrow(/finite/);
  });
});
