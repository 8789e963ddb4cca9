/**
 * Plane polygon geometry for the engine: point-in-polygon, area and extent.
 *
 * A polygon is [outer ring, ...holes] with [x, y] vertices (closing vertex optional), the shape of
 * ./grid.ts `Polygon`. Inside test: the even–odd ray-crossing rule per ring (Shimrat 1962, ACM
 * algorithm 112; a point on an edge may fall either way); inside the outer ring and outside every
 * hole; polygons add. Area by the shoelace formula, holes subtracted.
 * Units: working-CRS metres (m² for areas). Cost O(vertices) per test.
 */
/** A ring of [x, y] vertices (closed or not); a polygon is an outer ring and its holes. */
export type Ring = ReadonlyArray<ReadonlyArray<number>>;
export type Polygon = ReadonlyArray<Ring>;

/** Even–odd ray test against one ring. */
function insideRing(x: number, y: number, ring: Ring): boolean {
  let inside = false;
  const n = ring.length;
  for (let i = 0, j = n - 1; i < n; j = i++) {
    const xi = ring[i][0], yi = ring[i][1];
    const xj = ring[j][0], yj = ring[j][1];
    if (yi > y !== yj > y && x < ((xj - xi) * (y - yi)) / (yj - yi) + xi) inside = !inside;
  }
  return inside;
}

/** True when (x, y) is inside the polygon's outer ring and outside every hole. */
export function pointInPolygon(x: number, y: number, polygon: Polygon): boolean {
  if (polygon.length === 0 || !insideRing(x, y, polygon[0])) return false;
  for (let r = 1; r < polygon.length; r++) if (insideRing(x, y, polygon[r])) return false;
  return true;
}

/** True when (x, y) is inside any of the polygons. */
export function pointInPolygons(x: number, y: number, polygons: ReadonlyArray<Polygon>): boolean {
  for (const p of polygons) if (pointInPolygon(x, y, p)) return true;
  return false;
}

/** Signed shoelace area of a ring (positive counter-clockwise), m². */
export function ringArea(ring: Ring): number {
  let s = 0;
  for (let i = 0, j = ring.length - 1; i < ring.length; j = i++) s += ring[j][0] * ring[i][1] - ring[i][0] * ring[j][1];
  return s / 2;
}

/** Area of the polygons (outer rings minus holes), m². Overlapping polygons count twice. */
export function polygonsArea(polygons: ReadonlyArray<Polygon>): number {
  let a = 0;
  for (const p of polygons) {
    if (p.length === 0) continue;
    a += Math.abs(ringArea(p[0]));
    for (let r = 1; r < p.length; r++) a -= Math.abs(ringArea(p[r]));
  }
  return a;
}

/** Bounding box of the outer rings; null for no vertices. */
export function polygonsExtent(polygons: ReadonlyArray<Polygon>): { xmin: number; ymin: number; xmax: number; ymax: number } | null {
  let xmin = Infinity, ymin = Infinity, xmax = -Infinity, ymax = -Infinity;
  for (const p of polygons) {
    if (p.length === 0) continue;
    for (const v of p[0]) {
      if (v[0] < xmin) xmin = v[0];
      if (v[0] > xmax) xmax = v[0];
      if (v[1] < ymin) ymin = v[1];
      if (v[1] > ymax) ymax = v[1];
    }
  }
  return xmin <= xmax ? { xmin, ymin, xmax, ymax } : null;
}

/** Where a ring crosses itself: the two edges (index k joins vertex k to k + 1) and a point they share. */
export interface RingCrossing {
  edgeA: number;
  edgeB: number;
  x: number;
  y: number;
}

function orientation(ax: number, ay: number, bx: number, by: number, cx: number, cy: number): number {
  const v = (bx - ax) * (cy - ay) - (by - ay) * (cx - ax);
  return v > 0 ? 1 : v < 0 ? -1 : 0;
}

function onSegment(ax: number, ay: number, bx: number, by: number, cx: number, cy: number): boolean {
  return Math.min(ax, bx) <= cx && cx <= Math.max(ax, bx) && Math.min(ay, by) <= cy && cy <= Math.max(ay, by);
}

/** A point shared by segments ab and cd, or null (orientation tests, exact for touching and collinear overlap). */
function segmentsMeet(ax: number, ay: number, bx: number, by: number, cx: number, cy: number, dx: number, dy: number): [number, number] | null {
  const o1 = orientation(ax, ay, bx, by, cx, cy), o2 = orientation(ax, ay, bx, by, dx, dy);
  const o3 = orientation(cx, cy, dx, dy, ax, ay), o4 = orientation(cx, cy, dx, dy, bx, by);
  if (o1 !== o2 && o3 !== o4) {
    const den = (bx - ax) * (dy - cy) - (by - ay) * (dx - cx);
    if (den === 0) return [cx, cy];
    const t = ((cx - ax) * (dy - cy) - (cy - ay) * (dx - cx)) / den;
    return [ax + t * (bx - ax), ay + t * (by - ay)];
  }
  if (o1 === 0 && onSegment(ax, ay, bx, by, cx, cy)) return [cx, cy];
  if (o2 === 0 && onSegment(ax, ay, bx, by, dx, dy)) return [dx, dy];
  if (o3 === 0 && onSegment(cx, cy, dx, dy, ax, ay)) return [ax, ay];
  if (o4 === 0 && onSegment(cx, cy, dx, dy, bx, by)) return [bx, by];
  return null;
}

/**
 * The first place where a closed ring (first vertex repeated last) crosses or touches itself, other than
 * at the vertex two neighbouring edges share; null for a simple ring. Repeated consecutive vertices are
 * skipped. A sweep over edges sorted by their western end: O(m log m + pairs whose x-ranges overlap).
 */
export function ringSelfCrossing(ring: Ring): RingCrossing | null {
  const edges: number[] = [];
  for (let k = 0; k + 1 < ring.length; k++) {
    if (ring[k][0] !== ring[k + 1][0] || ring[k][1] !== ring[k + 1][1]) edges.push(k);
  }
  const m = edges.length;
  if (m < 3) return null;
  const west = (k: number) => Math.min(ring[k][0], ring[k + 1][0]);
  const east = (k: number) => Math.max(ring[k][0], ring[k + 1][0]);
  const order = edges.slice().sort((a, b) => west(a) - west(b));
  // Neighbours in the cleaned edge list share a vertex; so do the first and the last.
  const position = new Map<number, number>();
  edges.forEach((k, i) => position.set(k, i));
  const adjacent = (a: number, b: number) => {
    const d = Math.abs(position.get(a)! - position.get(b)!);
    return d === 1 || d === m - 1;
  };
  let active: number[] = [];
  let best: RingCrossing | null = null;
  for (const e of order) {
    const w = west(e);
    active = active.filter((a) => east(a) >= w);
    for (const a of active) {
      const [p, q] = a < e ? [a, e] : [e, a];
      const hit = segmentsMeet(ring[p][0], ring[p][1], ring[p + 1][0], ring[p + 1][1], ring[q][0], ring[q][1], ring[q + 1][0], ring[q + 1][1]);
      if (!hit) continue;
      if (adjacent(p, q)) {
        // Neighbours meet at their shared vertex; only an overlap beyond it is a crossing.
        const shared = position.get(q)! - position.get(p)! === 1 ? ring[q] : ring[p];
        const o = orientation(ring[p][0], ring[p][1], ring[p + 1][0], ring[p + 1][1], ring[q][0], ring[q][1]) === 0
          && orientation(ring[p][0], ring[p][1], ring[p + 1][0], ring[p + 1][1], ring[q + 1][0], ring[q + 1][1]) === 0;
        if (!o) continue;
        // Collinear neighbours: they overlap when they fold back on each other.
        const [sx, sy] = [shared[0], shared[1]];
        const other1 = position.get(q)! - position.get(p)! === 1 ? ring[p] : ring[p + 1];
        const other2 = position.get(q)! - position.get(p)! === 1 ? ring[q + 1] : ring[q];
        const dot = (other1[0] - sx) * (other2[0] - sx) + (other1[1] - sy) * (other2[1] - sy);
        if (dot <= 0) continue;
      }
      if (!best || p < best.edgeA || (p === best.edgeA && q < best.edgeB)) best = { edgeA: p, edgeB: q, x: hit[0], y: hit[1] };
    }
    active.push(e);
  }
  return best;
}
