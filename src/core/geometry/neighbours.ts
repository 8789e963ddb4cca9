/**
 * Nearest-neighbour queries on 2-D points: the k nearest samples to a point, and all samples within
 * a radius. Built on kdbush's static kd-tree (points kd-sorted by alternating median splits); the
 * k-nearest search walks that implicit tree depth-first, near half first, keeping the k best in a
 * bounded max-heap and skipping a far half whose splitting line is farther than the current k-th
 * distance (Friedman, Bentley & Finkel 1977, ACM TOMS 3:209).
 * Units: the caller's coordinates (metres). Cost: build O(n log n); a query about O(log n + k log k).
 */
import KDBush from 'kdbush';

/** Leaf size of the kd-tree: small leaves suit k-nearest queries better than kdbush's default 64. */
const NODE_SIZE = 16;

export class NeighbourIndex {
  /** Number of indexed points. */
  readonly size: number;
  private readonly tree: KDBush;
  private readonly ids: Uint16Array | Uint32Array;
  private readonly coords: Float64Array;
  // Bounded max-heap of the best candidates (squared distance, id), reused between queries.
  private heapDist = new Float64Array(64);
  private heapId = new Uint32Array(64);
  // Explicit DFS stack: left, right, axis and a lower bound on the squared distance per frame.
  private stackInt = new Int32Array(3 * 64);
  private stackBound = new Float64Array(64);

  /**
   * Indexes the points (x[i], y[i]); ids returned by queries are the positions i.
   * @throws Error when x and y differ in length or hold a non-finite coordinate.
   */
  constructor(x: ArrayLike<number>, y: ArrayLike<number>) {
    if (x.length !== y.length) throw new Error(`Expected x and y of equal length, got ${x.length} and ${y.length}.`);
    const n = x.length;
    this.size = n;
    const tree = new KDBush(n, NODE_SIZE, Float64Array);
    for (let i = 0; i < n; i++) {
      const xi = x[i];
      const yi = y[i];
      if (!Number.isFinite(xi) || !Number.isFinite(yi)) throw new Error(`Expected finite coordinates, got (${xi}, ${yi}) at position ${i}.`);
      tree.add(xi, yi);
    }
    tree.finish();
    this.tree = tree;
    this.ids = tree.ids as Uint16Array | Uint32Array;
    this.coords = tree.coords as Float64Array;
  }

  /** Ids of all points within distance r of (px, py) (boundary included), in no particular order. */
  within(px: number, py: number, r: number): number[] {
    if (this.size === 0) return [];
    return this.tree.within(px, py, r);
  }

  /**
   * Writes the ids of all points within distance r of (px, py) into `out` (which must have room for
   * them: `size` entries always suffice) and returns how many were written.
   */
  withinInto(px: number, py: number, r: number, out: Uint32Array): number {
    if (this.size === 0) return 0;
    return this.tree.withinInto(px, py, r, out);
  }

  /**
   * The k nearest points to (px, py), nearest first (ties in any order).
   * @param out optional buffer for the ids (length ≥ min(k, size)); the result is a view of it.
   * @param outDist2 optional buffer receiving the squared distances, in the same order.
   * @returns the ids of the min(k, size) nearest points.
   */
  nearest(px: number, py: number, k: number, out?: Uint32Array, outDist2?: Float64Array): Uint32Array {
    const n = this.size;
    const want = Math.min(Math.max(0, Math.floor(k)), n);
    const result = out && out.length >= want ? out.subarray(0, want) : new Uint32Array(want);
    if (want === 0) return result;
    if (this.heapDist.length < want) {
      this.heapDist = new Float64Array(want);
      this.heapId = new Uint32Array(want);
    }
    const hd = this.heapDist;
    const hi = this.heapId;
    const { ids, coords } = this;
    let count = 0;
    let worst = Infinity; // squared distance of the heap root once the heap is full

    let si = this.stackInt;
    let sb = this.stackBound;
    let sp = 0;
    si[0] = 0; si[1] = n - 1; si[2] = 0; sb[0] = 0; sp = 1;

    while (sp > 0) {
      sp--;
      const left = si[3 * sp];
      const right = si[3 * sp + 1];
      const axis = si[3 * sp + 2];
      if (count === want && sb[sp] >= worst) continue;

      if (right - left <= NODE_SIZE) {
        for (let i = left; i <= right; i++) {
          const dx = coords[2 * i] - px;
          const dy = coords[2 * i + 1] - py;
          const d2 = dx * dx + dy * dy;
          if (count < want) {
            heapPush(hd, hi, count, d2, ids[i]);
            count++;
            if (count === want) worst = hd[0];
          } else if (d2 < worst) {
            heapReplaceTop(hd, hi, want, d2, ids[i]);
            worst = hd[0];
          }
        }
        continue;
      }

      const m = (left + right) >> 1;
      const mx = coords[2 * m];
      const my = coords[2 * m + 1];
      {
        const dx = mx - px;
        const dy = my - py;
        const d2 = dx * dx + dy * dy;
        if (count < want) {
          heapPush(hd, hi, count, d2, ids[m]);
          count++;
          if (count === want) worst = hd[0];
        } else if (d2 < worst) {
          heapReplaceTop(hd, hi, want, d2, ids[m]);
          worst = hd[0];
        }
      }
      const diff = axis === 0 ? px - mx : py - my;
      const plane2 = diff * diff;
      // Make room for two frames.
      if (3 * (sp + 2) > si.length) {
        const grownInt = new Int32Array(si.length * 2);
        grownInt.set(si);
        const grownBound = new Float64Array(sb.length * 2);
        grownBound.set(sb);
        si = this.stackInt = grownInt;
        sb = this.stackBound = grownBound;
      }
      const parentBound = sb[sp];
      // Far half first on the stack so the near half is searched first.
      if (diff <= 0) {
        // Query at or left of/below the split: near half is [left, m−1].
        if (m + 1 <= right) { si[3 * sp] = m + 1; si[3 * sp + 1] = right; si[3 * sp + 2] = 1 - axis; sb[sp] = Math.max(parentBound, plane2); sp++; }
        if (left <= m - 1) { si[3 * sp] = left; si[3 * sp + 1] = m - 1; si[3 * sp + 2] = 1 - axis; sb[sp] = parentBound; sp++; }
      } else {
        if (left <= m - 1) { si[3 * sp] = left; si[3 * sp + 1] = m - 1; si[3 * sp + 2] = 1 - axis; sb[sp] = Math.max(parentBound, plane2); sp++; }
        if (m + 1 <= right) { si[3 * sp] = m + 1; si[3 * sp + 1] = right; si[3 * sp + 2] = 1 - axis; sb[sp] = parentBound; sp++; }
      }
    }

    // Heap-sort in place: repeatedly move the largest to the end.
    for (let end = count - 1; end > 0; end--) {
      const d = hd[0];
      const id = hi[0];
      hd[0] = hd[end]; hi[0] = hi[end];
      hd[end] = d; hi[end] = id;
      siftDown(hd, hi, end, 0);
    }
    for (let i = 0; i < count; i++) result[i] = hi[i];
    if (outDist2) for (let i = 0; i < count && i < outDist2.length; i++) outDist2[i] = hd[i];
    return result;
  }
}

function heapPush(hd: Float64Array, hi: Uint32Array, size: number, d: number, id: number): void {
  let i = size;
  while (i > 0) {
    const parent = (i - 1) >> 1;
    if (hd[parent] >= d) break;
    hd[i] = hd[parent];
    hi[i] = hi[parent];
    i = parent;
  }
  hd[i] = d;
  hi[i] = id;
}

function heapReplaceTop(hd: Float64Array, hi: Uint32Array, size: number, d: number, id: number): void {
  hd[0] = d;
  hi[0] = id;
  siftDown(hd, hi, size, 0);
}

function siftDown(hd: Float64Array, hi: Uint32Array, size: number, start: number): void {
  let i = start;
  const d = hd[i];
  const id = hi[i];
  for (;;) {
    let c = 2 * i + 1;
    if (c >= size) break;
    if (c + 1 < size && hd[c + 1] > hd[c]) c++;
    if (hd[c] <= d) break;
    hd[i] = hd[c];
    hi[i] = hi[c];
    i = c;
  }
  hd[i] = d;
  hi[i] = id;
}
