/**
 * Contours of a surface as GeoJSON (RFC 7946): isolines (MultiLineString per level) and filled bands
 * (MultiPolygon per interval between levels) of the mean and of P(exceed), reprojected from the
 * working CRS to WGS 84 longitude/latitude, exteriors counter-clockwise (right-hand rule).
 *
 * Marching squares by d3-contour on the cell-centre values. The field is padded with one ring of
 * NaN cells, and cells outside the mask are NaN; d3-contour reads NaN as −∞, so every contour
 * closes on the centres of the outermost active cells. Isolines are those rings without the segments
 * that touch that edge (an end on an active cell centre next to a missing cell): they end at the last
 * crossing inside the data.
 * Bands [lo, hi] are the set f ≥ 0 of f = min(v − lo, hi − v), contoured at 0, so band edges sit on
 * the same linear interpolation as the isolines wherever a cell edge crosses only one of the levels.
 * Where a step between neighbouring cells exceeds half the narrowest band, the field is first
 * refined bilinearly (2 to 4 points per cell), so bands stay close to tiling the area.
 * Coordinates: d3 point (x, y) of the padded field is the working-CRS point
 * (x0 + (x − 1)·cell, y0 − (y − 1)·cell); positions are rounded to 1e-7 degrees (about 1 cm). For
 * local coordinates with no CRS the positions stay the local x, y (rounded to 1e-6 units) and the
 * collection says so (`coordinates: "local"`): such a file is GeoJSON in form, not RFC 7946 lon/lat.
 * Cost: O(nx·ny) per level.
 */
import { contours as d3Contours } from 'd3-contour';
import type { Feature, FeatureCollection, MultiLineString, MultiPolygon, Position } from 'geojson';
import { GapwiseError } from '../core/shared/errors.ts';
import { CAUTION } from '../core/shared/caution.ts';
import { SOFTWARE } from '../core/shared/version.ts';
import type { Grid } from '../core/geometry/grid.ts';
import { createTransform, LOCAL_CRS } from './crs.ts';

export type ContourSurface = 'mean' | 'sd' | 'pExceed';

/** Default probability levels for P(exceed). */
export const PROBABILITY_LEVELS: readonly number[] = [0.1, 0.25, 0.5, 0.75, 0.9];

export interface ContourInput {
  grid: Grid;
  /** nx·ny values, row-major from the top; NaN (or masked) = no value. */
  values: ArrayLike<number>;
  surface: ContourSurface;
  /** Working CRS of the grid. */
  workCrs: string;
  /** Data unit (mean, sd); ignored for pExceed. */
  unit?: string;
  /** Contour levels; default: about `count` round values over the range (PROBABILITY_LEVELS for pExceed). */
  levels?: readonly number[];
  count?: number;
  /** Action level, named in the pExceed properties. */
  threshold?: number;
  /** Filled bands as well as isolines (default true); isolines alone cost one pass per level. */
  bands?: boolean;
}

export interface ContourProperties {
  kind: 'isoline' | 'band';
  surface: ContourSurface;
  /** Isolines: the level. */
  level?: number;
  /** Bands: the interval [min, max]; null for an open end. */
  min?: number | null;
  max?: number | null;
  /** 'probability' for pExceed. */
  unit: string;
  label: string;
  threshold?: number;
  caution: string;
}

/** Round values (multiples of 1, 2 or 5 × 10^k) strictly inside (min, max), about `count` of them. */
export function contourLevels(min: number, max: number, count = 8): number[] {
  if (!Number.isFinite(min) || !Number.isFinite(max) || !(max > min)) return [];
  const raw = (max - min) / Math.max(1, count);
  const p = 10 ** Math.floor(Math.log10(raw));
  const f = raw / p;
  const step = (f < 1.5 ? 1 : f < 3 ? 2 : f < 7 ? 5 : 10) * p;
  const out: number[] = [];
  for (let k = Math.floor(min / step) + 1; k * step < max; k++) {
    const v = Number((k * step).toPrecision(12));
    if (v > min && v < max) out.push(v);
  }
  return out;
}

function formatLevel(v: number): string {
  return String(Number(v.toPrecision(6)));
}

function isHalf(v: number): boolean {
  return Math.abs(v - Math.floor(v) - 0.5) < 1e-9;
}

/** Signed area (shoelace), positive for counter-clockwise in x-east, y-north axes. */
function signedArea(ring: readonly Position[]): number {
  let s = 0;
  for (let i = 0, j = ring.length - 1; i < ring.length; j = i++) s += ring[j][0] * ring[i][1] - ring[i][0] * ring[j][1];
  return s / 2;
}

interface Field {
  /** Padded values (nx + 2) × (ny + 2), NaN outside. */
  values: Float64Array;
  w: number;
  h: number;
}

function paddedField(grid: Grid, values: ArrayLike<number>): Field {
  const { nx, ny, mask } = grid;
  if (values.length !== nx * ny) {
    throw new GapwiseError('bad-option', `Expected ${nx * ny} values (${nx} × ${ny} cells), got ${values.length}.`);
  }
  const w = nx + 2;
  const h = ny + 2;
  const out = new Float64Array(w * h).fill(NaN);
  for (let j = 0; j < ny; j++) {
    for (let i = 0; i < nx; i++) {
      const k = j * nx + i;
      const v = values[k];
      if ((!mask || mask[k] === 1) && Number.isFinite(v)) out[(j + 1) * w + i + 1] = v;
    }
  }
  return { values: out, w, h };
}

/** What a local-coordinate contour file says about its positions. */
const LOCAL_CONTOURS_NOTE = 'Positions are local planar x, y in the samples\' own coordinates (no coordinate reference system), not longitude/latitude.';

/** Maps d3 points to rounded lon/lat positions (local x, y for local coordinates). */
function makeProjector(grid: Grid, workCrs: string): (p: readonly number[]) => Position {
  if (workCrs === LOCAL_CRS) {
    return (p) => [
      Math.round((grid.x0 + (p[0] - 1) * grid.cell) * 1e6) / 1e6,
      Math.round((grid.y0 - (p[1] - 1) * grid.cell) * 1e6) / 1e6,
    ];
  }
  const t = createTransform(workCrs, 'EPSG:4326');
  return (p) => {
    const [lon, lat] = t.forward(grid.x0 + (p[0] - 1) * grid.cell, grid.y0 - (p[1] - 1) * grid.cell);
    if (!Number.isFinite(lon) || !Number.isFinite(lat)) {
      throw new GapwiseError('bad-crs', `A contour point (${p[0]}, ${p[1]}) of the grid cannot be transformed from ${workCrs} to longitude/latitude.`);
    }
    return [Math.round(lon * 1e7) / 1e7, Math.round(lat * 1e7) / 1e7];
  };
}

function dedupe(points: Position[]): Position[] {
  const out: Position[] = [];
  for (const p of points) {
    const q = out[out.length - 1];
    if (!q || q[0] !== p[0] || q[1] !== p[1]) out.push(p);
  }
  return out;
}

/** Isolines at `level`: the contour rings split where they only follow the edge of the data. */
function isolineCoordinates(field: Field, level: number, project: (p: readonly number[]) => Position): Position[][] {
  const { values, w } = field;
  const edgeVertex = (p: readonly number[]): boolean => {
    if (!isHalf(p[0]) || !isHalf(p[1])) return false;
    const i = Math.round(p[0] - 0.5);
    const j = Math.round(p[1] - 0.5);
    const at = (a: number, b: number) => values[b * w + a];
    if (Number.isNaN(at(i, j))) return false;
    return Number.isNaN(at(i - 1, j)) || Number.isNaN(at(i + 1, j)) || Number.isNaN(at(i, j - 1)) || Number.isNaN(at(i, j + 1));
  };
  const mp = d3Contours().size([field.w, field.h]).contour(values as unknown as number[], level);
  const lines: Position[][] = [];
  for (const polygon of mp.coordinates) {
    for (const ring of polygon) {
      const m = ring.length - 1; // closed: ring[m] equals ring[0]
      if (m < 2) continue;
      const edge = ring.slice(0, m).map(edgeVertex);
      // A segment touching the edge of the data follows the edge, not the level: left out.
      const dropped = (s: number) => edge[s] || edge[(s + 1) % m];
      let start = -1;
      for (let s = 0; s < m; s++) if (dropped(s)) { start = s; break; }
      if (start === -1) {
        const line = dedupe(ring.map(project));
        if (line.length >= 2) lines.push(line);
        continue;
      }
      // Walk once round the ring from just after a dropped segment, cutting at each dropped one.
      let current: number[][] = [];
      for (let step = 1; step <= m; step++) {
        const s = (start + step) % m;
        if (dropped(s)) {
          if (current.length >= 2) lines.push(current.map(project));
          current = [];
          continue;
        }
        if (current.length === 0) current.push(ring[s]);
        current.push(ring[(s + 1) % m]);
      }
      if (current.length >= 2) lines.push(current.map(project));
    }
  }
  return lines.map(dedupe).filter((l) => l.length >= 2);
}

/** Largest step between neighbouring values (NaN pairs skipped). */
function largestStep(field: Field): number {
  const { values, w, h } = field;
  let step = 0;
  for (let j = 0; j < h; j++) {
    for (let i = 0; i < w; i++) {
      const v = values[j * w + i];
      if (Number.isNaN(v)) continue;
      if (i + 1 < w) { const d = Math.abs(values[j * w + i + 1] - v); if (d > step) step = d; }
      if (j + 1 < h) { const d = Math.abs(values[(j + 1) * w + i] - v); if (d > step) step = d; }
    }
  }
  return step;
}

/**
 * The field refined k times by bilinear interpolation between cell centres (NaN when a corner is
 * NaN); point (I, J) lies at old index (I/k, J/k).
 */
function refine(field: Field, k: number): Field {
  if (k <= 1) return field;
  const { values, w, h } = field;
  const W = (w - 1) * k + 1, H = (h - 1) * k + 1;
  const out = new Float64Array(W * H);
  for (let J = 0; J < H; J++) {
    const j = Math.min(h - 2, Math.floor(J / k)), fy = J / k - j;
    for (let I = 0; I < W; I++) {
      const i = Math.min(w - 2, Math.floor(I / k)), fx = I / k - i;
      const a = values[j * w + i], b = values[j * w + i + 1], c = values[(j + 1) * w + i], d = values[(j + 1) * w + i + 1];
      const wa = (1 - fx) * (1 - fy), wb = fx * (1 - fy), wc = (1 - fx) * fy, wd = fx * fy;
      // A corner with no weight does not count, so exact grid points keep their value next to NaN.
      let v = 0;
      let bad = false;
      for (const [val, wt] of [[a, wa], [b, wb], [c, wc], [d, wd]]) {
        if (wt === 0) continue;
        if (Number.isNaN(val)) { bad = true; break; }
        v += val * wt;
      }
      out[J * W + I] = bad ? NaN : v;
    }
  }
  return { values: out, w: W, h: H };
}

/** Filled band lo ≤ v ≤ hi (open ends as ±Infinity) as MultiPolygon coordinates, right-hand rule. */
function bandCoordinates(coarse: Field, lo: number, hi: number, projectCoarse: (p: readonly number[]) => Position, k = 1): Position[][][] {
  const field = refine(coarse, k);
  // d3 point p of the refined field (value index p − ½) is at coarse value index (p − ½)/k.
  const project = k === 1 ? projectCoarse : (p: readonly number[]) => projectCoarse([(p[0] - 0.5) / k + 0.5, (p[1] - 0.5) / k + 0.5]);
  const src = field.values;
  const f = new Float64Array(src.length);
  for (let k = 0; k < src.length; k++) {
    const v = src[k];
    f[k] = Number.isNaN(v) ? NaN : Math.min(v - lo, hi - v);
  }
  const mp = d3Contours().size([field.w, field.h]).contour(f as unknown as number[], 0);
  const out: Position[][][] = [];
  for (const polygon of mp.coordinates) {
    const rings: Position[][] = [];
    polygon.forEach((ring, r) => {
      const pts = dedupe(ring.map(project));
      if (pts.length < 4) return;
      const first = pts[0], last = pts[pts.length - 1];
      if (first[0] !== last[0] || first[1] !== last[1]) pts.push([first[0], first[1]]);
      const ccw = signedArea(pts) > 0;
      // Exterior counter-clockwise, holes clockwise (RFC 7946 §3.1.6).
      if ((r === 0) !== ccw) pts.reverse();
      if (r > 0 && rings.length === 0) return;
      rings.push(pts);
    });
    if (rings.length > 0) out.push(rings);
  }
  return out;
}

function valueRange(field: Field): { min: number; max: number } {
  let min = Infinity, max = -Infinity;
  for (const v of field.values) {
    if (Number.isNaN(v)) continue;
    if (v < min) min = v;
    if (v > max) max = v;
  }
  return { min, max };
}

/**
 * Isolines and filled bands of one surface as GeoJSON features (WGS 84). Throws GapwiseError
 * 'bad-crs' when the grid has no CRS, 'bad-option' for a value array of the wrong size.
 */
export function contourFeatures(input: ContourInput): Feature<MultiLineString | MultiPolygon, ContourProperties>[] {
  const field = paddedField(input.grid, input.values);
  const project = makeProjector(input.grid, input.workCrs);
  const probability = input.surface === 'pExceed';
  const unit = probability ? 'probability' : (input.unit ?? '');
  const range = valueRange(field);
  if (!Number.isFinite(range.min)) return [];
  const levels = [...(input.levels ?? (probability ? PROBABILITY_LEVELS : contourLevels(range.min, range.max, input.count ?? 8)))]
    .filter((l) => Number.isFinite(l)).sort((a, b) => a - b)
    .filter((l, i, a) => i === 0 || l !== a[i - 1]);
  const name = input.surface === 'mean' ? 'mean' : input.surface === 'sd' ? 'sd' : 'P(exceed)';
  const withUnit = (v: number) => (probability ? formatLevel(v) : `${formatLevel(v)}${unit ? ` ${unit}` : ''}`);
  const base = (): Pick<ContourProperties, 'surface' | 'unit' | 'caution' | 'threshold'> => {
    const p: Pick<ContourProperties, 'surface' | 'unit' | 'caution' | 'threshold'> = { surface: input.surface, unit, caution: CAUTION };
    if (probability && input.threshold !== undefined) p.threshold = input.threshold;
    return p;
  };
  const features: Feature<MultiLineString | MultiPolygon, ContourProperties>[] = [];
  const edges = [-Infinity, ...levels, Infinity];
  let narrowest = Infinity;
  for (let b = 1; b + 1 < levels.length + 1; b++) narrowest = Math.min(narrowest, edges[b + 1] - edges[b]);
  const k = input.bands === false ? 1 : Number.isFinite(narrowest) ? Math.min(4, Math.max(1, Math.ceil(largestStep(field) / (narrowest / 2)))) : 1;
  for (let b = 0; input.bands !== false && b + 1 < edges.length; b++) {
    const lo = edges[b], hi = edges[b + 1];
    if (hi < range.min || lo > range.max) continue;
    const coordinates = bandCoordinates(field, lo, hi, project, k);
    if (coordinates.length === 0) continue;
    const label = !Number.isFinite(lo) ? `${name} below ${withUnit(hi)}` : !Number.isFinite(hi) ? `${name} ${withUnit(lo)} and above` : `${name} ${withUnit(lo)} to ${withUnit(hi)}`;
    features.push({
      type: 'Feature',
      geometry: { type: 'MultiPolygon', coordinates },
      properties: { kind: 'band', ...base(), min: Number.isFinite(lo) ? lo : null, max: Number.isFinite(hi) ? hi : null, label },
    });
  }
  for (const level of levels) {
    if (level <= range.min || level >= range.max) continue;
    const coordinates = isolineCoordinates(field, level, project);
    if (coordinates.length === 0) continue;
    features.push({
      type: 'Feature',
      geometry: { type: 'MultiLineString', coordinates },
      properties: { kind: 'isoline', ...base(), level, label: `${name} = ${withUnit(level)}` },
    });
  }
  return features;
}

export interface SurfaceContourInput {
  grid: Grid;
  surface: { mean: ArrayLike<number>; pExceed?: ArrayLike<number>; threshold?: number };
  workCrs: string;
  unit?: string;
  meanLevels?: readonly number[];
  probabilityLevels?: readonly number[];
}

/**
 * Contours of the mean and (with a threshold) of P(exceed) in one FeatureCollection: bands first,
 * then isolines, each with kind, surface, level or min/max, unit, label and the caution. The
 * collection carries the caution, the software version and the source CRS as foreign members too.
 */
export function surfaceContours(input: SurfaceContourInput): FeatureCollection & { caution: string; software: string; source: Record<string, unknown> } {
  const features: Feature[] = contourFeatures({
    grid: input.grid, values: input.surface.mean, surface: 'mean', workCrs: input.workCrs, unit: input.unit, levels: input.meanLevels,
  });
  if (input.surface.pExceed) {
    features.push(...contourFeatures({
      grid: input.grid, values: input.surface.pExceed, surface: 'pExceed', workCrs: input.workCrs,
      levels: input.probabilityLevels, threshold: input.surface.threshold,
    }));
  }
  return {
    type: 'FeatureCollection',
    caution: CAUTION,
    software: SOFTWARE,
    source: { workCrs: input.workCrs, cell: input.grid.cell, unit: input.unit ?? '', threshold: input.surface.threshold ?? null },
    ...(input.workCrs === LOCAL_CRS ? { coordinates: 'local', coordinatesNote: LOCAL_CONTOURS_NOTE } : {}),
    features,
  };
}
