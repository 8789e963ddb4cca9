/**
 * Contour lines of the mean surface for the map, as plain data (no Leaflet): round levels over the
 * drawn values (even or log steps, like the colours) plus the action level, each with its lines as map positions [lat, lng]. On a
 * geographic map these are WGS 84 latitude/longitude (the working-CRS lines through the inverse
 * projection); on a planar map (local coordinates, L.CRS.Simple) lat holds y and lng holds x.
 * Isolines come from the export's own contouring (io/contours.ts, marching squares by d3-contour),
 * so the map and the contour file agree. Cost: O(nx·ny) per level.
 */
import type { Grid } from '../../core/geometry/grid.ts';
import { contourFeatures, contourLevels } from '../../io/contours.ts';

export interface MapContour {
  level: number;
  /** True for the action level's line. */
  action: boolean;
  /** Polylines as [lat, lng] map positions. */
  lines: Array<Array<[number, number]>>;
}

/**
 * Round levels in log steps strictly inside (min, max), for skewed values drawn with log colours:
 * 1, 2, 5 × 10^k, or 1, 3 × 10^k, or 1 × 10^k, the finest of these with at most `count` + 2 levels.
 * Falls back to even steps when min is not positive.
 */
export function logContourLevels(min: number, max: number, count = 8): number[] {
  if (!(min > 0) || !Number.isFinite(max) || !(max > min)) return contourLevels(min, max, count);
  const from = Math.floor(Math.log10(min)), to = Math.ceil(Math.log10(max));
  let levels: number[] = [];
  for (const mantissas of [[1, 2, 5], [1, 3], [1]]) {
    levels = [];
    for (let k = from; k <= to; k++) {
      for (const m of mantissas) {
        const v = Number((m * 10 ** k).toPrecision(12));
        if (v > min && v < max) levels.push(v);
      }
    }
    if (levels.length <= count + 2) break;
  }
  return levels;
}

/**
 * About `count` round levels strictly inside (min, max) — even steps, or log steps when `log` — with
 * the action level added when it lies inside; a round level closer to the action level than a third
 * of the step between them (a third of the ratio's log in log steps) is left out, so the emphasised
 * line never runs beside a near twin.
 */
export function mapContourLevels(min: number, max: number, actionLevel: number | null, count = 8, log = false): Array<{ level: number; action: boolean }> {
  const useLog = log && min > 0;
  const round = useLog ? logContourLevels(min, max, count) : contourLevels(min, max, count);
  const at = (v: number) => (useLog ? Math.log(v) : v);
  const step = round.length > 1 ? at(round[1]) - at(round[0]) : (at(max) - at(min)) / Math.max(1, count);
  const hasAction = actionLevel !== null && Number.isFinite(actionLevel) && actionLevel > min && actionLevel < max;
  const out = round
    .filter((l) => !hasAction || Math.abs(at(l) - at(actionLevel!)) >= step / 3)
    .map((level) => ({ level, action: false }));
  if (hasAction) out.push({ level: actionLevel!, action: true });
  return out.sort((a, b) => a.level - b.level);
}

/** The levels to draw for `values` on `grid` (masked cells and NaN left out); see mapContourLevels. */
export function mapContourLevelsOf(grid: Grid, values: ArrayLike<number>, actionLevel: number | null, count = 8, log = false): Array<{ level: number; action: boolean }> {
  let min = Infinity, max = -Infinity;
  for (let k = 0; k < values.length; k++) {
    const v = values[k];
    if (grid.mask && grid.mask[k] !== 1) continue;
    if (v < min) min = v;
    if (v > max) max = v;
  }
  return mapContourLevels(min, max, actionLevel, count, log);
}

/** The isolines of one level (null when the level draws no line), as map positions [lat, lng]. */
export function mapContourAt(grid: Grid, values: ArrayLike<number>, workCrs: string, level: { level: number; action: boolean }): MapContour | null {
  const features = contourFeatures({ grid, values, surface: 'mean', workCrs, levels: [level.level], bands: false });
  const f = features.find((g) => g.geometry.type === 'MultiLineString');
  if (!f || f.geometry.type !== 'MultiLineString') return null;
  return {
    level: level.level,
    action: level.action,
    lines: f.geometry.coordinates.map((line) => line.map((p) => [p[1], p[0]] as [number, number])),
  };
}

/**
 * Isolines of `values` on `grid` (working CRS `workCrs`, or local) at round levels (log steps when
 * `log`, as for log colours) and the action level. The map computes them a level at a time
 * (mapContourLevelsOf, then mapContourAt per level) so no single task is long.
 */
export function mapContours(grid: Grid, values: ArrayLike<number>, workCrs: string, actionLevel: number | null, count = 8, log = false): MapContour[] {
  const out: MapContour[] = [];
  for (const level of mapContourLevelsOf(grid, values, actionLevel, count, log)) {
    const c = mapContourAt(grid, values, workCrs, level);
    if (c) out.push(c);
  }
  return out;
}
