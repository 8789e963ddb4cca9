/**
 * The coordinate system of a samples file and the samples in the working CRS: the input CRS as given,
 * declared by a GeoJSON file, or told by the coordinate columns' names and ranges; the checks of the
 * coordinates in it (degrees in range, inside the CRS's area of use, UTM eastings in their zone), where
 * a few bad rows are rejected and a whole-file problem is refused with a hint; then the projection to
 * the working CRS (crs.ts chooseWorkCrs: metres, chosen for the samples' place unless given).
 */
import { GapwiseError } from '../core/shared/errors.ts';
import type { Warning } from '../core/shared/errors.ts';
import { LOCAL_CRS, chooseWorkCrs, createTransform, resolveCrs } from './crs.ts';
import type { ResolvedCrs } from './crs.ts';
import type { ReadNotes } from './read-notes.ts';
import { quoted } from './quote.ts';
import { listPlaces, placeOf, type Table } from './intake-table.ts';
import type { CoordinateColumns } from './intake-columns.ts';
import { compactRows, type ParsedRows } from './intake-values.ts';
import type { IntakeOptions } from './types.ts';

/** resolveCrs with the file named in the error's place. */
function resolveIn(crs: string, file: string, option: string): ResolvedCrs {
  try {
    return resolveCrs(crs);
  } catch (e) {
    if (e instanceof GapwiseError) throw new GapwiseError(e.code, `${option}: ${e.message}`, { ...e.place, file });
    throw e;
  }
}

/** The input CRS and how it was found (for the read report). */
export interface InputCrs {
  input: ResolvedCrs;
  detection: string;
}

/** The names the report gives the coordinates: the CSV's columns, or 'geometry' for GeoJSON. */
export interface CoordinateNames {
  xName: string;
  yName: string;
}

/**
 * The input CRS: the one the options give (with warnings where the column names or the format
 * disagree), a GeoJSON file's own or declared one, WGS 84 for longitude/latitude names, else local
 * planar coordinates or WGS 84 by the coordinates' ranges (with a warning that it was guessed).
 */
export function detectInputCrs(table: Table, format: 'csv' | 'geojson', options: IntakeOptions, coords: CoordinateColumns, rows: ParsedRows, warnings: Warning[]): InputCrs {
  const file = options.fileName;
  const { columns } = table;
  const { x: xCol, y: yCol, naming } = coords;
  const { x: px, y: py, count: np } = rows;
  let input: ResolvedCrs;
  let detection: string;
  if (options.crs !== undefined) {
    input = resolveIn(options.crs, file, 'Coordinate system');
    detection = 'given';
    if (naming === 'geographic' && !input.geographic) {
      warnings.push({ code: 'crs-names-disagree', message: `The columns ${quoted(columns[xCol])} and ${quoted(columns[yCol])} are named like longitude/latitude, but the given CRS ${input.key} is projected; the values are read as ${input.key} coordinates.` });
    } else if (naming === 'planar' && input.geographic) {
      warnings.push({ code: 'crs-names-disagree', message: `The columns ${quoted(columns[xCol])} and ${quoted(columns[yCol])} are named like planar coordinates, but the given CRS ${input.key} is longitude/latitude; the values are read as degrees.` });
    }
    if (format === 'geojson' && !input.geographic) {
      warnings.push({ code: 'geojson-crs', message: `GeoJSON positions are WGS 84 longitude/latitude (RFC 7946), but the CRS ${input.key} was given; the positions are read in ${input.key}.` });
    }
  } else if (format === 'geojson') {
    if (table.legacyCrs && !/CRS84$|EPSG:{1,2}4326$/i.test(table.legacyCrs)) {
      input = resolveIn(table.legacyCrs, file, 'The file\'s "crs" member');
      detection = `from the file's "crs" member (${table.legacyCrs})`;
      warnings.push({ code: 'geojson-crs', message: `The GeoJSON declares the CRS ${quoted(table.legacyCrs)}; RFC 7946 allows only WGS 84 longitude/latitude, but the declared CRS was used.` });
    } else {
      input = resolveCrs('EPSG:4326');
      detection = 'GeoJSON positions are WGS 84 longitude/latitude (RFC 7946)';
    }
  } else if (naming === 'geographic') {
    input = resolveCrs('EPSG:4326');
    detection = `columns ${quoted(columns[xCol])} and ${quoted(columns[yCol])} are named like longitude/latitude, so WGS 84 (EPSG:4326) was assumed`;
  } else {
    let degrees = true;
    for (let i = 0; i < np && degrees; i++) degrees = Math.abs(px[i]) <= 180 && Math.abs(py[i]) <= 90;
    if (naming === 'planar') {
      input = resolveCrs(LOCAL_CRS);
      detection = `columns ${quoted(columns[xCol])} and ${quoted(columns[yCol])} are named like planar coordinates and no CRS was given, so they were taken as local planar coordinates (in coordinate units)`;
      warnings.push({ code: 'crs-needed', message: `No CRS was given for the planar columns ${quoted(columns[xCol])} and ${quoted(columns[yCol])}: distances are in the file's coordinate units (metres only once you say so), and the samples are drawn on a plain planar map but cannot be placed on the earth or exported with a georeference. Give their CRS, e.g. EPSG:32633 (in the app under Coordinate system; on the command line with --crs).${degrees ? ' Their values all lie within ±180/±90: if they are longitude/latitude, give EPSG:4326.' : ''}` });
    } else if (degrees) {
      input = resolveCrs('EPSG:4326');
      detection = `the names ${quoted(columns[xCol])} and ${quoted(columns[yCol])} say nothing about the CRS; all values lie within longitude −180…180 and latitude −90…90, so WGS 84 (EPSG:4326) was assumed`;
      warnings.push({ code: 'crs-guessed', message: `The CRS was guessed from the coordinate ranges: ${detection}. Give --crs if this is wrong.` });
    } else {
      input = resolveCrs(LOCAL_CRS);
      detection = `the names ${quoted(columns[xCol])} and ${quoted(columns[yCol])} say nothing about the CRS and the values exceed longitude/latitude ranges, so they were taken as local planar coordinates (in coordinate units)`;
      warnings.push({ code: 'crs-guessed', message: `The CRS was guessed from the coordinate ranges: ${detection}. Give --crs to place the samples on the earth.` });
    }
  }
  for (const n of input.notes) warnings.push({ code: 'crs-note', message: n });
  return { input, detection };
}

/**
 * Checks the coordinates in the input CRS: degrees within their ranges, samples inside the CRS's area
 * of use, UTM eastings inside their zone. A few rows out of range or area are rejected (with `strict`,
 * the read is refused); most of them out of range refuse the read with a hint.
 */
export function checkCoordinates(table: Table, input: ResolvedCrs, rows: ParsedRows, names: CoordinateNames, notes: ReadNotes, warnings: Warning[], options: IntakeOptions): void {
  if (input.geographic) checkDegrees(table, input, rows, names, notes, options);
  else if (input.key !== LOCAL_CRS) {
    checkAreaOfUse(table, input, rows, names, notes, warnings, options);
    checkUtmEastings(table, input, rows, warnings);
  }
}

/** Longitudes within −180…180 and latitudes within −90…90. */
function checkDegrees(table: Table, input: ResolvedCrs, rows: ParsedRows, names: CoordinateNames, notes: ReadNotes, options: IntakeOptions): void {
  const file = options.fileName;
  const { x: px, y: py, record: prec, count: np } = rows;
  const { xName, yName } = names;
  const inRange = (x: number, y: number) => y >= -90 && y <= 90 && x >= -180 && x <= 180;
  const bad: number[] = [];
  for (let i = 0; i < np; i++) if (!inRange(px[i], py[i])) bad.push(i);
  if (bad.length) {
    const p = bad[0];
    const latBad = !(py[p] >= -90 && py[p] <= 90);
    const what = (q: number) => (!(py[q] >= -90 && py[q] <= 90) ? `latitude ${py[q]} is outside −90…90` : `longitude ${px[q]} is outside −180…180`);
    if (bad.length * 2 > np) {
      // Most rows are out of range: a whole-file problem, said with the hint that holds, if any.
      // Swapping is a whole-column matter: it must also leave the good rows good.
      let allSwapped = true;
      for (let i = 0; i < np && allSwapped; i++) allSwapped = inRange(py[i], px[i]);
      const swapped = allSwapped ? bad.length : 0;
      const projected = bad.filter((q) => Math.abs(px[q]) > 360 || Math.abs(py[q]) > 360).length;
      const hint = swapped * 2 > np
        ? ' Most rows would be in range with the two columns swapped: check the column order (on the command line, --x and --y name them).'
        : projected * 2 > np
          ? ' Most values look like projected coordinates (metres), not degrees: give their CRS (in the app under Coordinate system; on the command line with --crs).'
          : '';
      const at = placeOf(table, prec[p]);
      throw new GapwiseError('bad-value', `${bad.length.toLocaleString('en-US')} of ${np.toLocaleString('en-US')} rows are outside WGS 84 longitude/latitude; the first: ${what(p)}; expected degrees in ${input.key}.${hint}`, {
        file,
        row: at.line,
        feature: at.feature,
        column: latBad ? yName : xName,
        raw: String(latBad ? py[p] : px[p]),
      });
    }
    // A few rows out of range: each is rejected with its line; the rest are read.
    for (const q of bad) {
      const qLat = !(py[q] >= -90 && py[q] <= 90);
      notes.add({ ...placeOf(table, prec[q]), field: qLat ? yName : xName, raw: String(qLat ? py[q] : px[q]), action: 'rejected', reason: `${what(q)}; expected degrees in ${input.key}` });
    }
    const firstText = what(p);
    const at = placeOf(table, prec[p]);
    const firstRaw = String(latBad ? py[p] : px[p]);
    compactRows(rows, (i) => inRange(px[i], py[i]));
    if (options.strict) {
      throw new GapwiseError('bad-value', `${bad.length} row${bad.length === 1 ? ' was' : 's were'} rejected; the first (at the place named): ${firstText}.`, { file, row: at.line, feature: at.feature, column: latBad ? yName : xName, raw: firstRaw });
    }
  }
}

/** Samples within 1° of the CRS's area of use: a few far outside are rejected, many give a warning. */
function checkAreaOfUse(table: Table, input: ResolvedCrs, rows: ParsedRows, names: CoordinateNames, notes: ReadNotes, warnings: Warning[], options: IntakeOptions): void {
  if (!input.bbox) return;
  const file = options.fileName;
  const { x: px, y: py, record: prec, count: np } = rows;
  const { xName } = names;
  const [north, west, south, east] = input.bbox;
  const t = createTransform(input.key, 'EPSG:4326');
  const margin = 1;
  const lonIn = (lon: number) => (west <= east ? lon >= west - margin && lon <= east + margin : lon >= west - margin || lon <= east + margin);
  const outside: number[] = [];
  const places: Array<[number, number]> = [];
  for (let i = 0; i < np; i++) {
    const [lon, lat] = t.forward(px[i], py[i]);
    if (!(lat <= north + margin && lat >= south - margin && lonIn(lon))) {
      outside.push(i);
      places.push([lon, lat]);
    }
  }
  if (outside.length * 2 < np) {
    // A few rows far outside the CRS's area of use (a mistyped coordinate): each is rejected with
    // its line, as it would otherwise stretch the map, the grid and the working CRS over it.
    const drop = new Set(outside);
    outside.forEach((q, k) => {
      const [lon, lat] = places[k];
      const where = Number.isFinite(lon) && Number.isFinite(lat) ? `: at latitude ${lat.toFixed(2)}°, longitude ${lon.toFixed(2)}°` : '';
      notes.add({ ...placeOf(table, prec[q]), field: xName, raw: `${px[q]}, ${py[q]}`, action: 'rejected', reason: `more than 1° outside the area of use of ${input.key} (${input.name})${where}, where the other samples are inside` });
    });
    if (options.strict && outside.length) {
      const at = placeOf(table, prec[outside[0]]);
      throw new GapwiseError('bad-value', `${outside.length} row${outside.length === 1 ? ' was' : 's were'} rejected; the first (at the place named): ${px[outside[0]]}, ${py[outside[0]]} is outside the area of use of ${input.key}.`, { file, row: at.line, feature: at.feature, column: xName, raw: `${px[outside[0]]}, ${py[outside[0]]}` });
    }
    compactRows(rows, (i) => !drop.has(i));
  } else {
    warnings.push({ code: 'outside-area', message: `${outside.length} sample${outside.length === 1 ? ' lies' : 's lie'} outside the area of use of ${input.key} (${input.name}) on ${listPlaces(table, outside.map((q) => prec[q]))}; check the CRS.` });
  }
}

/** UTM eastings within 100–900 km: the samples lie in the CRS's zone. */
function checkUtmEastings(table: Table, input: ResolvedCrs, rows: ParsedRows, warnings: Warning[]): void {
  if (!input.utm) return;
  const { x: px, record: prec, count: np } = rows;
  const off: number[] = [];
  for (let i = 0; i < np; i++) if (px[i] < 100_000 || px[i] > 900_000) off.push(prec[i]);
  if (off.length) warnings.push({ code: 'utm-easting', message: `UTM eastings outside 100–900 km on ${listPlaces(table, off)}: those samples lie outside the zone of ${input.key}; check the CRS and the x column.` });
}

/** The working CRS and each kept row's position in it (`x`, `y`: as long as the parsed rows, the first `rows.count` in use). */
export interface WorkPositions {
  work: ResolvedCrs;
  x: Float64Array;
  y: Float64Array;
}

/**
 * Chooses the working CRS (crs.ts chooseWorkCrs, or the one the options give) and projects the rows
 * to it; a row that cannot be projected is rejected. Throws 'bad-value' when none can be.
 */
export function projectToWork(table: Table, input: ResolvedCrs, rows: ParsedRows, names: CoordinateNames, notes: ReadNotes, warnings: Warning[], options: IntakeOptions): WorkPositions {
  const file = options.fileName;
  const { x: px, y: py, value: pv, nd: pnd, record: prec } = rows;
  const { xName } = names;
  let np = rows.count;
  let work: ResolvedCrs;
  try {
    const requested = options.workCrs !== undefined ? resolveIn(options.workCrs, file, 'Working coordinate system') : undefined;
    const choice = chooseWorkCrs(input, px.subarray(0, np), py.subarray(0, np), requested);
    work = choice.work;
    warnings.push(...choice.warnings);
  } catch (e) {
    if (e instanceof GapwiseError) throw new GapwiseError(e.code, e.message, { ...e.place, file });
    throw e;
  }
  let toWork: ReturnType<typeof createTransform>;
  try {
    toWork = createTransform(input.key, work.key);
  } catch (e) {
    if (e instanceof GapwiseError) throw new GapwiseError(e.code, e.message, { ...e.place, file });
    throw e;
  }
  const wx = new Float64Array(np);
  const wy = new Float64Array(np);
  {
    let j = 0;
    for (let i = 0; i < np; i++) {
      const [a, b] = toWork.forward(px[i], py[i]);
      if (!Number.isFinite(a) || !Number.isFinite(b)) {
        notes.add({ ...placeOf(table, prec[i]), field: xName, raw: `${px[i]}, ${py[i]}`, action: 'rejected', reason: `cannot be projected from ${input.key} to ${work.key}` });
        continue;
      }
      px[j] = px[i];
      py[j] = py[i];
      pv[j] = pv[i];
      pnd[j] = pnd[i];
      prec[j] = prec[i];
      wx[j] = a;
      wy[j] = b;
      j++;
    }
    np = j;
  }
  rows.count = np;
  if (np === 0) {
    throw new GapwiseError('bad-value', `None of the samples could be projected from ${input.key} to ${work.key}; check the CRS.`, { file });
  }
  return { work, x: wx, y: wy };
}
