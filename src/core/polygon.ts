/**
 * Plane polygon geometry for the engine: point-in-polygon, area and extent.
 *
 * A polygon is [outer ring, ...holes] with [x, y] vertices (closing vertex optional), the shape of
 * ./grid.ts `Polygon`. Inside test: the even–odd ray-crossing rule per ring (Shimrat 1962, ACM
 * algorithm 112; a point on an edge may fall either way); inside the outer ring and outside every
 * hole; polygons add. Area by the shoelace formula, holes subtracted.
 * Units: working-CRS metres (m² for areas). Cost O(vertices) per test.
 */
import type { Polygon, Ring } from './grid.ts';

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
