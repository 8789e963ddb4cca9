// maxminOrder and orderedNeighbours against their definitions, computed by brute force.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { maxminOrder, orderedNeighbours } from '../../../src/core/fitting/maxmin-order.ts';
import { createRandom } from '../../../src/core/shared/random.ts';

const d2 = (x: ArrayLike<number>, y: ArrayLike<number>, i: number, j: number) => (x[i] - x[j]) ** 2 + (y[i] - y[j]) ** 2;
const coord = fc.integer({ min: -200, max: 200 }).map((v) => v * 0.5);

describe('maxminOrder', () => {
  it('maxminOrder picks, at every step, a point farthest from those already ordered (property, brute force)', () => {
    fc.assert(
      fc.property(fc.array(fc.tuple(coord, coord), { minLength: 1, maxLength: 60 }), (pts) => {
        const x = pts.map((p) => p[0]);
        const y = pts.map((p) => p[1]);
        const n = x.length;
        const order = maxminOrder(x, y);
        expect([...order].sort((a, b) => a - b)).toEqual([...Array(n).keys()]);
        // First: nearest the centroid (Guinness 2018).
        const cx = x.reduce((a, b) => a + b, 0) / n;
        const cy = y.reduce((a, b) => a + b, 0) / n;
        const dc = (i: number) => (x[i] - cx) ** 2 + (y[i] - cy) ** 2;
        expect(dc(order[0])).toBe(Math.min(...[...Array(n).keys()].map(dc)));
        const done = new Set<number>([order[0]]);
        const minDist = (i: number) => Math.min(...[...done].map((j) => d2(x, y, i, j)));
        for (let k = 1; k < n; k++) {
          let best = -1;
          for (let i = 0; i < n; i++) if (!done.has(i)) best = Math.max(best, minDist(i));
          expect(minDist(order[k])).toBe(best);
          done.add(order[k]);
        }
      }),
      { numRuns: 150, seed: 11 },
    );
  });

  it('maxminOrder spreads the first points over the area', () => {
    const rng = createRandom(4);
    const n = 5000;
    const x = new Float64Array(n);
    const y = new Float64Array(n);
    for (let i = 0; i < n; i++) { x[i] = rng.uniform() * 1000; y[i] = rng.uniform() * 1000; }
    const order = maxminOrder(x, y);
    // Each quarter of the square holds some of the first 16 points.
    const quarters = new Set<number>();
    for (let k = 0; k < 16; k++) quarters.add((x[order[k]] < 500 ? 0 : 1) + (y[order[k]] < 500 ? 0 : 2));
    expect(quarters.size).toBe(4);
  });
});

describe('orderedNeighbours', () => {
  it('orderedNeighbours lists the m nearest earlier points, nearest first (property, brute force)', () => {
    fc.assert(
      fc.property(
        fc.array(fc.tuple(coord, coord), { minLength: 1, maxLength: 150 }),
        fc.integer({ min: 1, max: 12 }),
        (pts, m) => {
          const x = Float64Array.from(pts.map((p) => p[0]));
          const y = Float64Array.from(pts.map((p) => p[1]));
          const nb = orderedNeighbours(x, y, m);
          for (let i = 0; i < x.length; i++) {
            const c = nb.count[i];
            expect(c).toBe(Math.min(i, m));
            const got = Array.from(nb.ids.subarray(i * m, i * m + c));
            for (const j of got) expect(j).toBeLessThan(i);
            expect(new Set(got).size).toBe(c);
            const want = [...Array(i).keys()].map((j) => d2(x, y, i, j)).sort((a, b) => a - b).slice(0, c);
            expect(got.map((j) => d2(x, y, i, j))).toEqual(want);
          }
        },
      ),
      { numRuns: 150, seed: 5 },
    );
  });

  it('orderedNeighbours agrees with brute force on 3,000 maxmin-ordered points', () => {
    const rng = createRandom(9);
    const n = 3000;
    const x0 = new Float64Array(n);
    const y0 = new Float64Array(n);
    for (let i = 0; i < n; i++) { x0[i] = rng.uniform() * 2000; y0[i] = rng.uniform() * 1000; }
    const order = maxminOrder(x0, y0);
    const x = Float64Array.from(order, (i) => x0[i]);
    const y = Float64Array.from(order, (i) => y0[i]);
    const m = 30;
    const nb = orderedNeighbours(x, y, m);
    for (let i = 0; i < n; i += 37) {
      const want = [...Array(i).keys()].sort((a, b) => d2(x, y, i, a) - d2(x, y, i, b)).slice(0, Math.min(i, m));
      expect(Array.from(nb.ids.subarray(i * m, i * m + nb.count[i]))).toEqual(want);
    }
  });
});
