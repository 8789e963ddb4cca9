/**
 * Suggested sample sites as GPX 1.1 waypoints for field crews (the GPX 1.1 schema,
 * http://www.topografix.com/GPX/1/1/gpx.xsd). Elements follow the schema's sequences:
 * metadata: name, desc, author?, copyright?, link*, time, keywords?, bounds;
 * wpt: ele?, time?, magvar?, geoidheight?, name, cmt, desc, src, link*, sym?, type, ...
 * The metadata's desc carries the screening caution. Built with the `xml` template (io/markup.ts),
 * which escapes every value.
 */
import { CAUTION } from '../core/shared/caution.ts';
import { SOFTWARE } from '../core/shared/version.ts';
import type { ExportableDesign } from './suggestions-export.ts';
import { checkLonLat } from './suggestions-export.ts';
import { joinMarkup, xml, type Markup } from './markup.ts';

export interface GpxOptions {
  /** The file's name element (default "Suggested sample sites"). */
  name?: string;
  /** Written as metadata time (default now). */
  time?: Date;
  /** Unit of the values, shown in the comments (e.g. "mg/kg"). */
  unit?: string;
}

/** Degrees with 7 decimals (GPX latitudeType −90…90, longitudeType −180 ≤ lon < 180). */
function degreesText(v: number, longitude: boolean): string {
  let d = v;
  if (longitude && d >= 180) d -= 360;
  return String(Number(d.toFixed(7)));
}

const MODE_WORDS: Record<string, string> = {
  variance: 'where the map is least certain',
  decision: 'where the decision against the action level is least certain',
  coverage: 'to cover the area evenly',
};

/** A value for a field crew's screen: 4 significant digits. */
function shortNumber(v: number | null): string {
  if (v === null || !Number.isFinite(v)) return '';
  return String(Number(v.toPrecision(4)));
}

/** The waypoint name of a suggestion: "S01", "S02", ... (sorts in rank order). */
export function waypointName(rank: number, total: number): string {
  return `S${String(rank).padStart(Math.max(2, String(total).length), '0')}`;
}

/**
 * GPX 1.1 document with one waypoint per suggestion (name S01…, a comment with the benefit, mean,
 * sd (4 significant digits) and P(exceed) (3 decimals), a description) and metadata carrying the caution. Throws GapwiseError
 * 'bad-value' when a suggestion lacks lon/lat.
 */
export function suggestionsToGpx(design: ExportableDesign, options: GpxOptions = {}): string {
  checkLonLat(design.suggestions);
  const time = (options.time ?? new Date()).toISOString().replace(/\.\d{3}Z$/, 'Z');
  const unit = options.unit ? ` ${options.unit}` : '';
  const total = design.suggestions.length;
  const lines: Markup[] = [
    xml`<?xml version="1.0" encoding="UTF-8"?>`,
    xml`<gpx version="1.1" creator="${SOFTWARE}" xmlns="http://www.topografix.com/GPX/1/1" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance" xsi:schemaLocation="http://www.topografix.com/GPX/1/1 http://www.topografix.com/GPX/1/1/gpx.xsd">`,
    xml`  <metadata>`,
    xml`    <name>${options.name ?? 'Suggested sample sites'}</name>`,
    xml`    <desc>${total} suggested sample sites, chosen ${MODE_WORDS[design.mode] ?? design.mode}. ${CAUTION}</desc>`,
    xml`    <time>${time}</time>`,
  ];
  if (total > 0) {
    let minlat = Infinity, minlon = Infinity, maxlat = -Infinity, maxlon = -Infinity;
    for (const s of design.suggestions) {
      minlat = Math.min(minlat, s.lat as number);
      maxlat = Math.max(maxlat, s.lat as number);
      minlon = Math.min(minlon, s.lon as number);
      maxlon = Math.max(maxlon, s.lon as number);
    }
    lines.push(xml`    <bounds minlat="${degreesText(minlat, false)}" minlon="${degreesText(minlon, true)}" maxlat="${degreesText(maxlat, false)}" maxlon="${degreesText(maxlon, true)}"/>`);
  }
  lines.push(xml`  </metadata>`);
  for (const s of design.suggestions) {
    const parts = [`benefit ${shortNumber(s.benefit)}`];
    if (s.mean !== null) parts.push(`mean ${shortNumber(s.mean)}${unit}`);
    if (s.sd !== null) parts.push(`sd ${shortNumber(s.sd)}${unit}`);
    if (s.pExceed !== null) parts.push(`P(exceed ${String(design.threshold)}${unit}) ${Number(s.pExceed.toFixed(3))}`);
    lines.push(
      xml`  <wpt lat="${degreesText(s.lat as number, false)}" lon="${degreesText(s.lon as number, true)}">`,
      xml`    <name>${waypointName(s.rank, total)}</name>`,
      xml`    <cmt>${parts.join('; ')}</cmt>`,
      xml`    <desc>Suggested sample ${s.rank} of ${total} (${design.mode} design). Screening only.</desc>`,
      xml`    <src>Gapwise</src>`,
      xml`    <type>suggested sample</type>`,
      xml`  </wpt>`,
    );
  }
  lines.push(xml`</gpx>`);
  return `${joinMarkup(lines, '\n').text}\n`;
}
