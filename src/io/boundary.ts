/**
 * Boundary and exclusion areas from GeoJSON: Polygon and MultiPolygon geometries (with holes), as a
 * bare geometry, a Feature or a FeatureCollection. Rings must be closed (first position = last) and
 * have at least four positions and must not cross or touch themselves. Point-in-polygon by the even-odd rule over all rings, so holes
 * exclude; polygons can be projected to the working CRS.
 */
import { pointInPolygon as corePointInPolygon, ringSelfCrossing } from '../core/geometry/polygon.ts';
import * as gjv from 'geojson-validation';
import { GapwiseError } from '../core/shared/errors.ts';
import { createTransform } from './crs.ts';
import { parseJson, propertyText, validationProblem } from './geojson.ts';

/** One polygon: rings[0] is the outer ring, the rest are holes; positions [x, y] (lon/lat or metres). */
export interface Polygon {
  rings: Array<Array<[number, number]>>;
  /** Index of the feature it came from (0 for a bare geometry). */
  feature: number;
  /** The feature's properties as text. */
  properties: Record<string, string>;
}

function isObject(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function geometryError(fileName: string, feature: number, message: string, raw?: string): GapwiseError {
  return new GapwiseError('bad-geometry', message, { file: fileName, feature, column: 'geometry', raw });
}

function readRings(coords: unknown, fileName: string, feature: number, label: string, planar: boolean): Array<Array<[number, number]>> {
  if (!Array.isArray(coords) || coords.length === 0) {
    throw geometryError(fileName, feature, `Feature ${feature}: the ${label} has no rings; expected an array of closed rings.`);
  }
  return coords.map((ring, r) => {
    const what = r === 0 ? 'outer ring' : `hole ${r}`;
    if (!Array.isArray(ring)) throw geometryError(fileName, feature, `Feature ${feature}: the ${label}'s ${what} is not an array of positions.`);
    const pts: Array<[number, number]> = [];
    for (const p of ring) {
      if (!Array.isArray(p) || p.length < 2 || typeof p[0] !== 'number' || typeof p[1] !== 'number' || !Number.isFinite(p[0]) || !Number.isFinite(p[1])) {
        throw geometryError(fileName, feature, `Feature ${feature}: the ${label}'s ${what} has a position that is not [${planar ? 'x, y' : 'longitude, latitude'}] numbers.`, propertyText(p).slice(0, 100));
      }
      if (!planar && (p[1] < -90 || p[1] > 90 || p[0] < -180 || p[0] > 180)) {
        throw geometryError(fileName, feature, `Feature ${feature}: the ${label}'s ${what} has the position [${p[0]}, ${p[1]}] outside longitude −180…180, latitude −90…90.`, propertyText(p));
      }
      pts.push([p[0], p[1]]);
    }
    if (pts.length < 4) {
      throw geometryError(fileName, feature, `Feature ${feature}: the ${label}'s ${what} has ${pts.length} positions; expected at least 4 (a closed ring repeats its first position).`);
    }
    const [a, b] = [pts[0], pts[pts.length - 1]];
    if (a[0] !== b[0] || a[1] !== b[1]) {
      throw geometryError(fileName, feature, `Feature ${feature}: the ${label}'s ${what} is not closed: it starts at [${a[0]}, ${a[1]}] and ends at [${b[0]}, ${b[1]}]; expected the first and last positions to be equal.`);
    }
    const crossing = ringSelfCrossing(pts);
    if (crossing) {
      const edge = (k: number) => `${k + 1} ([${pts[k][0]}, ${pts[k][1]}] to [${pts[k + 1][0]}, ${pts[k + 1][1]}])`;
      const at = `[${Number(crossing.x.toFixed(7))}, ${Number(crossing.y.toFixed(7))}]`;
      throw geometryError(fileName, feature, `Feature ${feature}: the ${label}'s ${what} crosses itself at ${at}, where edge ${edge(crossing.edgeA)} meets edge ${edge(crossing.edgeB)}; expected a ring that does not cross or touch itself (inside and outside are ambiguous otherwise).`);
    }
    return pts;
  });
}

function polygonsOf(g: unknown, fileName: string, feature: number, properties: Record<string, string>, out: Polygon[], planar: boolean): void {
  if (!isObject(g)) throw geometryError(fileName, feature, `Feature ${feature} has no geometry; expected a Polygon or MultiPolygon.`);
  if (g.type === 'Polygon') {
    out.push({ rings: readRings(g.coordinates, fileName, feature, 'Polygon', planar), feature, properties });
  } else if (g.type === 'MultiPolygon') {
    if (!Array.isArray(g.coordinates)) throw geometryError(fileName, feature, `Feature ${feature}: the MultiPolygon has no coordinates array.`);
    for (const c of g.coordinates) out.push({ rings: readRings(c, fileName, feature, 'MultiPolygon', planar), feature, properties });
  } else if (g.type === 'GeometryCollection' && Array.isArray(g.geometries)) {
    for (const sub of g.geometries) polygonsOf(sub, fileName, feature, properties, out, planar);
    return;
  } else {
    throw geometryError(fileName, feature, `Feature ${feature} has a ${String(g.type).slice(0, 40)} geometry; expected a Polygon or MultiPolygon.`, String(g.type).slice(0, 40));
  }
  const problem = validationProblem(g, g.type === 'Polygon' ? gjv.isPolygon : gjv.isMultiPolygon);
  if (problem) throw geometryError(fileName, feature, `Feature ${feature}: the ${String(g.type)} is not valid GeoJSON (${problem}).`);
}

/**
 * Reads boundary or exclusion polygons (WGS 84 longitude/latitude, RFC 7946) from GeoJSON text;
 * with `planar`, positions are local x, y in the samples' own coordinates (no range check).
 * Throws GapwiseError 'bad-file' for text that is not JSON or not GeoJSON, and 'bad-geometry' (with
 * the feature index) for a ring that is not closed, too short, or has bad positions.
 */
export function readPolygons(text: string, fileName: string, options: { planar?: boolean } = {}): Polygon[] {
  const planar = options.planar === true;
  const obj = parseJson(text, fileName);
  if (!isObject(obj)) throw new GapwiseError('bad-file', 'The boundary file is not a GeoJSON object; expected a Polygon, MultiPolygon, Feature or FeatureCollection.', { file: fileName });
  const out: Polygon[] = [];
  if (obj.type === 'FeatureCollection') {
    if (!Array.isArray(obj.features)) throw new GapwiseError('bad-file', 'The FeatureCollection has no "features" array.', { file: fileName });
    obj.features.forEach((f: unknown, i: number) => {
      if (!isObject(f) || f.type !== 'Feature') throw geometryError(fileName, i, `Feature ${i} is not a GeoJSON Feature.`);
      polygonsOf(f.geometry, fileName, i, textProps(f.properties), out, planar);
    });
  } else if (obj.type === 'Feature') {
    polygonsOf(obj.geometry, fileName, 0, textProps(obj.properties), out, planar);
  } else if (obj.type === 'Polygon' || obj.type === 'MultiPolygon' || obj.type === 'GeometryCollection') {
    polygonsOf(obj, fileName, 0, {}, out, planar);
  } else {
    throw new GapwiseError('bad-file', `The boundary file is a ${String(obj.type).slice(0, 40)}; expected a Polygon, MultiPolygon, Feature or FeatureCollection.`, { file: fileName });
  }
  if (out.length === 0) throw new GapwiseError('bad-geometry', 'The boundary file holds no polygons; expected at least one Polygon or MultiPolygon.', { file: fileName });
  return out;
}

function textProps(p: unknown): Record<string, string> {
  const out: Record<string, string> = {};
  if (isObject(p)) for (const [k, v] of Object.entries(p)) out[k] = propertyText(v);
  return out;
}

/** True when (x, y) is inside the polygon's outer ring and outside every hole (even–odd rule). */
export function pointInPolygon(x: number, y: number, polygon: Pick<Polygon, 'rings'>): boolean {
  return corePointInPolygon(x, y, polygon.rings);
}

/** True when (x, y) is inside any of the polygons. */
export function pointInPolygons(x: number, y: number, polygons: ReadonlyArray<Pick<Polygon, 'rings'>>): boolean {
  for (const p of polygons) if (corePointInPolygon(x, y, p.rings)) return true;
  return false;
}

/**
 * Projects polygons from WGS 84 longitude/latitude (or `fromCrs`) to `toCrs`. Edges are densified so
 * that no edge spans more than `maxStepDegrees` before projection (straight lines in lon/lat are
 * curves in most projections). Throws GapwiseError 'bad-geometry' when a position cannot be projected.
 */
export function projectPolygons(polygons: Polygon[], toCrs: string, fromCrs = 'EPSG:4326', maxStepDegrees = 0.01): Polygon[] {
  const t = createTransform(fromCrs, toCrs);
  const densify = fromCrs === 'EPSG:4326' && maxStepDegrees > 0;
  return polygons.map((p) => ({
    feature: p.feature,
    properties: p.properties,
    rings: p.rings.map((ring) => {
      const out: Array<[number, number]> = [];
      for (let i = 0; i < ring.length; i++) {
        const [x0, y0] = ring[i];
        const steps = densify && i + 1 < ring.length ? Math.min(1000, Math.max(1, Math.ceil(Math.max(Math.abs(ring[i + 1][0] - x0), Math.abs(ring[i + 1][1] - y0)) / maxStepDegrees - 1e-9))) : 1;
        for (let s = 0; s < steps; s++) {
          const f = s / steps;
          const x = i + 1 < ring.length ? x0 + f * (ring[i + 1][0] - x0) : x0;
          const y = i + 1 < ring.length ? y0 + f * (ring[i + 1][1] - y0) : y0;
          const q = t.forward(x, y);
          if (!Number.isFinite(q[0]) || !Number.isFinite(q[1])) {
            throw new GapwiseError('bad-geometry', `Feature ${p.feature}: the position [${x}, ${y}] cannot be projected to ${toCrs}.`, { feature: p.feature, column: 'geometry' });
          }
          out.push(q);
          if (i + 1 >= ring.length) break;
        }
      }
      return out;
    }),
  }));
}
