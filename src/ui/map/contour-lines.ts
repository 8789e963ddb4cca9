/**
 * Contour lines of the mean surface for the map, as plain data (no Leaflet): round levels over the
 * drawn values plus the action level, each with its lines as map positions [lat, lng]. On a
 * geographic map these are WGS 84 latitude/longitude (the working-CRS lines through the inverse
 * projection); on a planar map (local coordinates, L.CRS.Simple) lat holds y and lng holds x.
 * Isolines come from the export's own contouring (io/contours.ts, marching squares by d3-contour),
 * so the map and the contour file agree. Cost: O(nx·ny) per level.
 */
import type { Grid } from '../../core/grid.ts';
import { contourFeatures, contourLevels } from '../../io/contours.ts';

export interface MapContour {
  level: number;
  /** True for the action level's line. */
  action: boolean;
  /** Polylines as [lat, lng] map positions. */
  lines: Array<Array<[number, number]>>;
}

/**
 * About `count` round levels strictly inside (min, max), with the action level added when it lies
 * inside; a round level closer to the action level than a third of their step is left out, so the
 * emphasised line never runs beside a near twin.
 */
export function mapContourLevels(min: number, max: number, actionLevel: number | null, count = 8): Array<{ level: number; action: boolean }> {
  const round = contourLevels(min, max, count);
  const step = round.length > 1 ? round[1] - round[0] : (max - min) / Math.max(1, count);
  const hasAction = actionLevel !== null && Number.isFinite(actionLevel) && actionLevel > min && actionLevel < max;
  const out = round
    .filter((l) => !hasAction || Math.abs(l - actionLevel!) >= step / 3)
    .map((level) => ({ level, action: false }));
  if (hasAction) out.push({ level: actionLevel!, action: true });
  return out.sort((a, b) => a.level - b.level);
}

/** Isolines of `values` on `grid` (working CRS `workCrs`, or local) at round levels and the action level. */
export function mapContours(grid: Grid, values: ArrayLike<number>, workCrs: string, actionLevel: number | null, count = 8): MapContour[] {
  let min = Infinity, max = -Infinity;
  for (let k = 0; k < values.length; k++) {
    const v = values[k];
    if (grid.mask && grid.mask[k] !== 1) continue;
    if (v < min) min = v;
    if (v > max) max = v;
  }
  const levels = mapContourLevels(min, max, actionLevel, count);
  if (levels.length === 0) return [];
  const features = contourFeatures({ grid, values, surface: 'mean', workCrs, levels: levels.map((l) => l.level), bands: false });
  const out: MapContour[] = [];
  for (const f of features) {
    if (f.geometry.type !== 'MultiLineString' || f.properties.level === undefined) continue;
    const level = f.properties.level;
    out.push({
      level,
      action: levels.some((l) => l.action && l.level === level),
      lines: f.geometry.coordinates.map((line) => line.map((p) => [p[1], p[0]] as [number, number])),
    });
  }
  return out;
}
