/**
 * The plain logic behind the Next samples panel: exclusion polygons from a GeoJSON file into the
 * working CRS, longitude/latitude for the suggestions, export files (GeoJSON, CSV, GPX) and the
 * figures the panel shows. No DOM here, so it is tested in Node.
 */
import type { DesignMode, DesignResult } from '../../../core/design/design.ts';
import type { Polygon } from '../../../core/geometry/grid.ts';
import { readPolygons } from '../../../io/boundary.ts';
import { suggestionsToCsv, suggestionsToGeoJson } from '../../../io/suggestions-export.ts';
import { suggestionsToGpx } from '../../../io/gpx.ts';
import { formatCount, formatValue } from '../../../io/format.ts';
import { GapwiseError } from '../../../core/shared/errors.ts';

export type ExportFormat = 'geojson' | 'csv' | 'gpx';
export type PointTransform = (x: number, y: number) => [number, number];

/** A file for the browser to download. */
export interface ExportFile {
  name: string;
  mime: string;
  text: string;
}

/**
 * Exclusion polygons from GeoJSON text (WGS 84), each vertex taken to the working CRS; with `planar`
 * (local coordinates) the positions are the samples' own x, y.
 */
export function exclusionsFromGeoJson(text: string, fileName: string, toWork: PointTransform, planar = false): Polygon[] {
  return readPolygons(text, fileName, { planar }).map((p) => p.rings.map((ring) => ring.map(([lon, lat]) => toWork(lon, lat))));
}

/** Fills lon and lat of every suggestion (in place) and returns the result. */
export function withLonLat(result: DesignResult, toLonLat: PointTransform): DesignResult {
  for (const s of result.suggestions) {
    const [lon, lat] = toLonLat(s.x, s.y);
    s.lon = lon;
    s.lat = lat;
  }
  return result;
}

/** A file name stem safe on every system: letters, digits, dot, dash and underscore. */
export function safeStem(stem: string): string {
  const s = stem.replace(/\.[A-Za-z0-9]+$/, '').replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^-+|-+$/g, '');
  return s || 'gapwise';
}

/** The export file of a design (lon/lat must be filled; CSV x, y through `toInput` when given). */
export function exportFile(result: DesignResult, format: ExportFormat, stem: string, options: { toInput?: PointTransform; unit?: string; time?: Date; local?: boolean } = {}): ExportFile {
  const base = `${safeStem(stem)}-next-samples`;
  const local = options.local === true;
  if (format === 'geojson') return { name: `${base}${local ? '-local-xy' : ''}.geojson`, mime: 'application/geo+json', text: suggestionsToGeoJson(result, { local }) };
  if (format === 'gpx' && local) throw new GapwiseError('bad-crs', 'GPX needs longitude/latitude, and these samples have local coordinates with no coordinate system; choose their coordinate system under Samples to write GPX.');
  if (format === 'gpx') return { name: `${base}.gpx`, mime: 'application/gpx+xml', text: suggestionsToGpx(result, { unit: options.unit, time: options.time }) };
  const input = options.toInput ? result.suggestions.map((s) => options.toInput!(s.x, s.y)) : null;
  return {
    name: `${base}.csv`,
    mime: 'text/csv',
    text: suggestionsToCsv(result, { ...(input ? { inputX: input.map((p) => p[0]), inputY: input.map((p) => p[1]) } : {}), local }),
  };
}

/** The mode to use when the user has not chosen: decision with a threshold, variance with a model, else coverage. */
export function defaultMode(hasModel: boolean, threshold: number | null): DesignMode {
  if (!hasModel) return 'coverage';
  return threshold === null ? 'variance' : 'decision';
}

/** m² as text: "850 m²", "1.25 ha" from 10,000 m² up; another length unit gives "850 square <unit>". */
export function areaText(m2: number | null, lengthUnit = 'm'): string {
  if (m2 === null || !Number.isFinite(m2)) return '–';
  if (lengthUnit !== 'm') return `${formatValue(m2)} square ${lengthUnit}`;
  if (Math.abs(m2) >= 10_000) return `${formatValue(m2 / 10_000)} ha`;
  return `${formatCount(m2)} m²`;
}

/** A value with 3 significant digits, '–' when missing (io/format.ts formatValue). */
export function valueText(v: number | null | undefined, digits = 3): string {
  return formatValue(v, digits);
}
