/**
 * Suggested sample sites to files: GeoJSON (RFC 7946: a FeatureCollection of Points in WGS 84
 * longitude, latitude; or, for local coordinates with no CRS, Points at the local x, y with the
 * collection saying so) and CSV. The GeoJSON carries the screening caution and the design's summary in
 * a foreign member "properties" of the collection (RFC 7946 §6.1); the CSV has no place for it, so its
 * writers show the caution beside it.
 */
import { GapwiseError } from '../core/shared/errors.ts';
import { CAUTION } from '../core/shared/caution.ts';
import { SOFTWARE } from '../core/shared/version.ts';
import type { DesignResult, Suggestion } from '../core/design/design.ts';
import { csvComment, csvLine } from './csv-cells.ts';

/** What the exports need of a design: its suggestions (lon and lat filled) and its summary. */
export type ExportableDesign = Pick<DesignResult,
  'mode' | 'suggestions' | 'benefitMeaning' | 'threshold' | 'averageSdBefore' | 'averageSdAfter' | 'scale'
  | 'misclassifiedAreaBefore' | 'misclassifiedAreaAfter' | 'areaDecided' | 'coverageDistanceBefore' | 'coverageDistanceAfter'>;

/** Options of the CSV export. */
export interface CsvExportOptions {
  /** x, y of each suggestion in the samples' CRS (default: the working-CRS x, y). */
  inputX?: ArrayLike<number>;
  inputY?: ArrayLike<number>;
  /** Line end (default "\n"). */
  newline?: '\n' | '\r\n';
  /** Local coordinates with no CRS: no lon, lat columns (there are none to give). */
  local?: boolean;
  /** The first line, "# " + the screening caution and the version (default true), as the grid CSV's. */
  caution?: boolean;
}

/** What a local-coordinate GeoJSON says about its positions (they are not RFC 7946 lon/lat). */
const LOCAL_COORDINATES_NOTE = 'Positions are local planar x, y in the samples\' own coordinates (no coordinate reference system), not longitude/latitude.';

/** Checks that every suggestion has WGS 84 longitude and latitude. */
export function checkLonLat(suggestions: readonly Suggestion[]): void {
  for (const s of suggestions) {
    const { lon, lat } = s;
    if (typeof lon !== 'number' || typeof lat !== 'number' || !Number.isFinite(lon) || !Number.isFinite(lat) || lat < -90 || lat > 90 || lon < -180 || lon > 180) {
      throw new GapwiseError('bad-value', `Suggestion ${s.rank} has longitude ${String(lon)}, latitude ${String(lat)}; expected WGS 84 degrees (fill them from the working CRS before exporting).`);
    }
  }
}

/** Rounds for text: 12 significant digits, no trailing noise; '' for null or NaN. */
export function numberText(v: number | null | undefined): string {
  if (v === null || v === undefined || Number.isNaN(v)) return '';
  if (!Number.isFinite(v)) return v > 0 ? 'Infinity' : '-Infinity';
  return String(Number(v.toPrecision(12)));
}

/** Degrees to 7 decimals (about 1 cm), without trailing zeros. */
function degrees(v: number): number {
  return Number(v.toFixed(7));
}

function orNull(v: number | null): number | null {
  return v === null || !Number.isFinite(v) ? null : Number(v.toPrecision(12));
}

/** The design's summary as plain JSON (snake_case keys), with the caution. */
export function designSummary(design: ExportableDesign): Record<string, unknown> {
  return {
    caution: CAUTION,
    software: SOFTWARE,
    mode: design.mode,
    benefit: design.benefitMeaning,
    threshold: design.threshold,
    scale: design.scale,
    average_sd_before: orNull(design.averageSdBefore),
    average_sd_after: orNull(design.averageSdAfter),
    misclassified_area_before_m2: orNull(design.misclassifiedAreaBefore),
    misclassified_area_after_m2: orNull(design.misclassifiedAreaAfter),
    area_decided_m2: orNull(design.areaDecided),
    coverage_distance_before_m: orNull(design.coverageDistanceBefore),
    coverage_distance_after_m: orNull(design.coverageDistanceAfter),
  };
}

/** The summary's keys for lengths and areas not known to be metres: `_units`, `_square_units`. */
function inCoordinateUnits(summary: Record<string, unknown>): Record<string, unknown> {
  return Object.fromEntries(Object.entries(summary).map(([k, v]) => [k.replace(/_m2$/, '_square_units').replace(/_m$/, '_units'), v]));
}

/**
 * GeoJSON FeatureCollection (RFC 7946): one Point per suggestion at [lon, lat] with properties
 * rank, benefit, mean, sd, p_exceed; the collection's "properties" member holds the caution and the
 * summary. Throws GapwiseError 'bad-value' when a suggestion lacks lon/lat.
 */
export function suggestionsToGeoJson(design: ExportableDesign, options: { local?: boolean } = {}): string {
  const local = options.local === true;
  if (!local) checkLonLat(design.suggestions);
  const collection = {
    type: 'FeatureCollection',
    properties: local ? { coordinates: 'local', coordinates_note: LOCAL_COORDINATES_NOTE, ...inCoordinateUnits(designSummary(design)) } : designSummary(design),
    features: design.suggestions.map((s) => ({
      type: 'Feature',
      geometry: { type: 'Point', coordinates: local ? [Number(numberText(s.x)), Number(numberText(s.y))] : [degrees(s.lon as number), degrees(s.lat as number)] },
      properties: {
        rank: s.rank,
        benefit: orNull(s.benefit),
        mean: orNull(s.mean),
        sd: orNull(s.sd),
        p_exceed: orNull(s.pExceed),
      },
    })),
  };
  return `${JSON.stringify(collection, null, 1)}\n`;
}

/**
 * CSV: a first line "# " with the screening caution and the version (most CSV readers skip it with a
 * comment option; `caution: false` leaves it out), then the columns rank, x, y (the samples' CRS), lon,
 * lat, benefit, mean, sd, and p_exceed when
 * the design has a threshold. Empty cells where there is no value (coverage without a model; lon and
 * lat for local coordinates without a CRS). Every cell is a number, written through csvLine like
 * every CSV Gapwise writes.
 */
export function suggestionsToCsv(design: ExportableDesign, options: CsvExportOptions = {}): string {
  if (design.suggestions.some((s) => s.lon !== undefined || s.lat !== undefined)) checkLonLat(design.suggestions);
  const nl = options.newline ?? '\n';
  const withP = design.threshold !== null;
  const geo = options.local !== true;
  const header = ['rank', 'x', 'y', ...(geo ? ['lon', 'lat'] : []), 'benefit', 'mean', 'sd', ...(withP ? ['p_exceed'] : [])];
  const { inputX, inputY } = options;
  if ((inputX && inputX.length !== design.suggestions.length) || (inputY && inputY.length !== design.suggestions.length)) {
    throw new GapwiseError('bad-value', `Expected ${design.suggestions.length} input-CRS coordinates, got ${inputX?.length ?? 0} and ${inputY?.length ?? 0}.`);
  }
  const lines = [...(options.caution === false ? [] : [csvComment(`${CAUTION} Written by ${SOFTWARE}.`)]), csvLine(header)];
  design.suggestions.forEach((s, k) => {
    const cells = [
      String(s.rank), numberText(inputX ? inputX[k] : s.x), numberText(inputY ? inputY[k] : s.y),
      ...(geo ? [s.lon === undefined ? '' : String(degrees(s.lon)), s.lat === undefined ? '' : String(degrees(s.lat))] : []),
      numberText(s.benefit), numberText(s.mean), numberText(s.sd),
    ];
    if (withP) cells.push(numberText(s.pExceed));
    lines.push(csvLine(cells));
  });
  return lines.join(nl) + nl;
}
