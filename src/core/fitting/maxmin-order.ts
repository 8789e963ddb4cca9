/**
 * Maxmin ordering of 2-D points and each point's nearest earlier neighbours in that order: the
 * skeleton of the nearest-neighbour (Vecchia) likelihood.
 *
 * Maxmin (Guinness 2018, Technometrics 60:415): the first point is the one nearest the centroid;
 * each next point is the one whose distance to the nearest already-ordered point is largest. Early
 * points then spread over the whole area and later ones fill in, so conditioning each point on a
 * few earlier neighbours sees both long and short distances. Computed exactly with an indexed max-heap
 * of "distance to the ordered set": ordering point p at distance d can only lower the keys of points
 * within d of p (every key is ≤ d), found with a kd-tree radius query.
 * Earlier neighbours: for position i, the m nearest points among positions 0..i−1, found in kd-trees
 * over prefixes of the order of doubling size (a prefix holding position i is at most twice as long,
 * so a k-nearest query of about 2m, filtered to earlier positions, finds them).
 * Units: the caller's coordinates. Cost: ordering about O(n log² n); neighbours O(n·m·log n) time,
 * n·m·4 bytes.
 */
import { NeighbourIndex } from '../geometry/neighbours.ts';

/**
 * The maxmin order of the points: order[k] is the index of the k-th point. Deterministic (ties go
 * to the lower index). Coincident points come last among their neighbours (distance 0).
 */
export function maxminOrder(x: ArrayLike<number>, y: ArrayLike<number>): Uint32Array {
  const n = x.length;
  if (y.length !== n) throw new Error(`Expected x and y of equal length, got ${n} and ${y.length}.`);
  const order = new Uint32Array(n);
  if (n === 0) return order;
  let cx = 0;
  let cy = 0;
  for (let i = 0; i < n; i++) {
    cx += x[i];
    cy += y[i];
  }
  cx /= n;
  cy /= n;
  let first = 0;
  let bestD = Infinity;
  for (let i = 0; i < n; i++) {
    const d = (x[i] - cx) ** 2 + (y[i] - cy) ** 2;
    if (d < bestD) {
      bestD = d;
      first = i;
    }
  }

  // Indexed max-heap over unordered points, keyed by squared distance to the ordered set.
  const key = new Float64Array(n).fill(Infinity);
  const heap = new Uint32Array(n);
  const where = new Int32Array(n).fill(-1); // position in heap, −1 once ordered
  let size = 0;
  const above = (a: number, b: number): boolean => key[a] > key[b] || (key[a] === key[b] && a < b);
  const siftDown = (pos: number): void => {
    const item = heap[pos];
    for (;;) {
      let c = 2 * pos + 1;
      if (c >= size) break;
      if (c + 1 < size && above(heap[c + 1], heap[c])) c++;
      if (!above(heap[c], item)) break;
      heap[pos] = heap[c];
      where[heap[pos]] = pos;
      pos = c;
    }
    heap[pos] = item;
    where[item] = pos;
  };
  for (let i = 0; i < n; i++) {
    if (i === first) continue;
    heap[size] = i;
    where[i] = size;
    size++;
  }
  // Keys start as the distance to the first point; then heapify.
  const index = new NeighbourIndex(x, y);
  for (let i = 0; i < n; i++) key[i] = (x[i] - x[first]) ** 2 + (y[i] - y[first]) ** 2;
  for (let pos = (size >> 1) - 1; pos >= 0; pos--) siftDown(pos);
  order[0] = first;
  where[first] = -1;

  const found = new Uint32Array(n);
  for (let k = 1; k < n; k++) {
    const p = heap[0];
    const d2 = key[p];
    // Pop p.
    size--;
    if (size > 0) {
      heap[0] = heap[size];
      where[heap[0]] = 0;
      siftDown(0);
    }
    where[p] = -1;
    order[k] = p;
    if (d2 === 0) continue; // every remaining key is 0: nothing can decrease
    const px = x[p];
    const py = y[p];
    const count = index.withinInto(px, py, Math.sqrt(d2), found);
    for (let t = 0; t < count; t++) {
      const q = found[t];
      const pos = where[q];
      if (pos < 0) continue;
      const dq = (x[q] - px) ** 2 + (y[q] - py) ** 2;
      if (dq < key[q]) {
        key[q] = dq;
        siftDown(pos); // a smaller key moves down a max-heap
      }
    }
  }
  return order;
}

/** Each ordered position's earlier neighbours, in ordered positions (not original indices). */
export interface OrderedNeighbours {
  /** Number of points. */
  n: number;
  /** Largest neighbour count m. */
  m: number;
  /** count[i] = min(i, m): neighbours of position i. */
  count: Uint16Array;
  /** ids[i·m + j], j < count[i]: positions of the neighbours of position i, nearest first. */
  ids: Uint32Array;
}

/**
 * For points already in the order of evaluation (ox, oy), the up to m nearest earlier points of
 * each position (ties broken arbitrarily). Positions below m take all earlier points.
 */
export function orderedNeighbours(ox: Float64Array, oy: Float64Array, m: number): OrderedNeighbours {
  const n = ox.length;
  if (oy.length !== n) throw new Error(`Expected x and y of equal length, got ${n} and ${oy.length}.`);
  if (!(Number.isInteger(m) && m >= 1 && m <= 65535)) throw new Error(`Expected a neighbour count between 1 and 65535, got ${m}.`);
  const count = new Uint16Array(n);
  const ids = new Uint32Array(n * m);

  // Small positions: all earlier points, sorted by distance.
  const direct = Math.min(n, 2 * m + 1);
  const cand: number[] = [];
  for (let i = 0; i < direct; i++) {
    cand.length = 0;
    for (let j = 0; j < i; j++) cand.push(j);
    const dist = (j: number) => (ox[j] - ox[i]) ** 2 + (oy[j] - oy[i]) ** 2;
    cand.sort((a, b) => dist(a) - dist(b) || a - b);
    const c = Math.min(m, i);
    for (let t = 0; t < c; t++) ids[i * m + t] = cand[t];
    count[i] = c;
  }
  if (direct >= n) return { n, m, count, ids };

  // Prefix trees of doubling size, each built when first needed.
  let treeSize = 0;
  let tree: NeighbourIndex | null = null;
  let buf = new Uint32Array(4 * m + 2);
  for (let i = direct; i < n; i++) {
    if (i >= treeSize) {
      treeSize = Math.min(n, Math.max(2 * i, 4 * m));
      tree = new NeighbourIndex(ox.subarray(0, treeSize), oy.subarray(0, treeSize));
    }
    let want = Math.min(treeSize, 2 * m + 2);
    for (;;) {
      if (buf.length < want) buf = new Uint32Array(want);
      const got = tree!.nearest(ox[i], oy[i], want, buf);
      let c = 0;
      for (let t = 0; t < got.length && c < m; t++) {
        const j = got[t];
        if (j < i) ids[i * m + c++] = j;
      }
      if (c === m || want >= treeSize) {
        count[i] = c;
        break;
      }
      want = Math.min(treeSize, want * 2);
    }
  }
  return { n, m, count, ids };
}
