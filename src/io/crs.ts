/**
 * Coordinate reference systems: EPSG codes and proj strings, transforms (proj4), the UTM zone of a
 * place (with the Norway and Svalbard exceptions), and a searchable list of EPSG codes and names.
 *
 * Definitions come from the epsg-index package. A few common ones are built in so that the app works
 * before the full list (about 8 MB) is loaded; under Node (CLI, tests) any code is read on demand from
 * the package's per-code files; in the browser `loadEpsgIndex()` loads the whole list once.
 * Datum-shift grid files named in a definition (+nadgrids) cannot be loaded here: a known 7-parameter
 * shift replaces the grid where there is one, otherwise the shift is dropped, and `notes` say so.
 */
import proj4 from 'proj4';
import { GapwiseError } from '../core/shared/errors.ts';

/** One EPSG entry as the app lists it. */
export interface CrsListItem {
  /** 'EPSG:32633'. */
  code: string;
  name: string;
  geographic: boolean;
  /** Area of use as text (may be long). */
  area: string;
}

/** A CRS ready for transforms. */
export interface ResolvedCrs {
  /** Canonical key: 'EPSG:NNNN' or the proj string as given (trimmed). */
  key: string;
  name: string;
  /** proj4 definition actually used (grids replaced or removed). */
  definition: string;
  geographic: boolean;
  /** Area of use [north, west, south, east] in degrees, when known. */
  bbox: [number, number, number, number] | null;
  /** Metres per coordinate unit (NaN for degrees). */
  metresPerUnit: number;
  /** Unit name: 'metre', 'US survey foot', 'degree', ... */
  unitName: string;
  /** True for +proj=utm definitions. */
  utm: boolean;
  /** Things a user should know about the definition (e.g. a datum grid that was replaced). */
  notes: string[];
}

interface EpsgRecord {
  code: string;
  kind: string;
  name: string;
  proj4: string | null;
  bbox: [number, number, number, number] | null;
  unit?: string;
  area?: string;
}

/** Entries known without loading anything (proj4 strings as in epsg-index 2.0.0). */
const BUILT_IN: EpsgRecord[] = [
  { code: '4326', kind: 'CRS-GEOGCRS', name: 'WGS 84', proj4: '+proj=longlat +datum=WGS84 +no_defs +type=crs', bbox: [90, -180, -90, 180], area: 'World.' },
  { code: '4258', kind: 'CRS-GEOGCRS', name: 'ETRS89', proj4: '+proj=longlat +ellps=GRS80 +no_defs +type=crs', bbox: [84.73, -16.1, 32.88, 40.18], area: 'Europe.' },
  { code: '4269', kind: 'CRS-GEOGCRS', name: 'NAD83', proj4: '+proj=longlat +datum=NAD83 +no_defs +type=crs', bbox: [86.46, 167.65, 14.92, -40.73], area: 'North America.' },
  { code: '4167', kind: 'CRS-GEOGCRS', name: 'NZGD2000', proj4: '+proj=longlat +ellps=GRS80 +no_defs +type=crs', bbox: [-25.88, 160.6, -55.95, -171.2], area: 'New Zealand.' },
  { code: '3857', kind: 'CRS-PROJCRS', name: 'WGS 84 / Pseudo-Mercator', proj4: '+proj=merc +a=6378137 +b=6378137 +lat_ts=0 +lon_0=0 +x_0=0 +y_0=0 +k=1 +units=m +nadgrids=@null +wktext +no_defs +type=crs', bbox: [85.06, -180, -85.06, 180], area: 'World between 85.06°S and 85.06°N.' },
  { code: '27700', kind: 'CRS-PROJCRS', name: 'OSGB36 / British National Grid', proj4: '+proj=tmerc +lat_0=49 +lon_0=-2 +k=0.9996012717 +x_0=400000 +y_0=-100000 +ellps=airy +nadgrids=OSTN15_NTv2_OSGBtoETRS.gsb +units=m +no_defs +type=crs', bbox: [61.01, -9, 49.75, 2.01], area: 'United Kingdom (UK).' },
  { code: '2193', kind: 'CRS-PROJCRS', name: 'NZGD2000 / New Zealand Transverse Mercator 2000', proj4: '+proj=tmerc +lat_0=0 +lon_0=173 +k=0.9996 +x_0=1600000 +y_0=10000000 +ellps=GRS80 +towgs84=0,0,0,0,0,0,0 +units=m +no_defs +type=crs', bbox: [-34.1, 166.37, -47.33, 178.63], area: 'New Zealand - onshore.' },
  { code: '3035', kind: 'CRS-PROJCRS', name: 'ETRS89-extended / LAEA Europe', proj4: '+proj=laea +lat_0=52 +lon_0=10 +x_0=4321000 +y_0=3210000 +ellps=GRS80 +towgs84=0,0,0,0,0,0,0 +units=m +no_defs +type=crs', bbox: [84.73, -35.58, 24.6, 44.83], area: 'Europe.' },
];
for (let z = 1; z <= 60; z++) {
  const west = -180 + (z - 1) * 6;
  BUILT_IN.push(
    { code: String(32600 + z), kind: 'CRS-PROJCRS', name: `WGS 84 / UTM zone ${z}N`, proj4: `+proj=utm +zone=${z} +datum=WGS84 +units=m +no_defs +type=crs`, bbox: [84, west, 0, west + 6], area: `Between ${west}° and ${west + 6}° longitude, northern hemisphere.` },
    { code: String(32700 + z), kind: 'CRS-PROJCRS', name: `WGS 84 / UTM zone ${z}S`, proj4: `+proj=utm +zone=${z} +south +datum=WGS84 +units=m +no_defs +type=crs`, bbox: [0, west, -80, west + 6], area: `Between ${west}° and ${west + 6}° longitude, southern hemisphere.` },
  );
}

/**
 * Known replacements for datum grids that cannot be loaded: the OSGB36 7-parameter Helmert shift
 * (EPSG transformation 1314, quoted to a few metres; parameters from memory, common in proj4 lists).
 */
const GRID_REPLACEMENTS: Record<string, string> = {
  'OSTN15_NTv2_OSGBtoETRS.gsb': '+towgs84=446.448,-125.157,542.06,0.15,0.247,0.842,-20.489',
};

const registry = new Map<string, EpsgRecord>();
for (const r of BUILT_IN) registry.set(r.code, r);
let fullIndexLoaded = false;

// Under Node a synchronous require reads single entries from the package on demand. The module name is
// held in a variable so that bundlers for the browser leave it alone; in a browser this stays null.
let nodeRequire: ((id: string) => unknown) | null = null;
if (typeof process !== 'undefined' && typeof process.versions === 'object' && process.versions?.node) {
  try {
    const moduleName = 'node:module';
    const mod = (await import(/* @vite-ignore */ moduleName)) as { createRequire: (url: string) => (id: string) => unknown };
    nodeRequire = mod.createRequire(import.meta.url);
  } catch {
    nodeRequire = null;
  }
}

function record(code: string): EpsgRecord | undefined {
  const hit = registry.get(code);
  if (hit || fullIndexLoaded || !nodeRequire) return hit;
  try {
    const r = nodeRequire(`epsg-index/s/${code}.json`) as EpsgRecord;
    registry.set(code, r);
    return r;
  } catch {
    return undefined;
  }
}

function addAll(all: Record<string, EpsgRecord>): number {
  for (const [code, r] of Object.entries(all)) registry.set(code, r);
  fullIndexLoaded = true;
  return registry.size;
}

/**
 * Loads the whole EPSG list (about 8 MB) once: under Node from the package files, in the browser as a
 * separate chunk. Needed before `searchCrs` sees more than the built-in entries in the browser, and
 * before a browser session resolves a code outside the built-in ones. Resolves to the entry count.
 */
export async function loadEpsgIndex(): Promise<number> {
  if (fullIndexLoaded) return registry.size;
  if (nodeRequire) return addAll(nodeRequire('epsg-index/all.json') as Record<string, EpsgRecord>);
  const mod = (await import('epsg-index/all.json')) as unknown as { default: Record<string, EpsgRecord> };
  return addAll(mod.default);
}

/** True once the full list is in memory (always true after `loadEpsgIndex`). */
export function epsgIndexLoaded(): boolean {
  return fullIndexLoaded;
}

function kindOf(r: EpsgRecord): 'geographic' | 'projected' | 'other' {
  if (r.kind === 'CRS-GEOGCRS') return 'geographic';
  if (r.kind === 'CRS-PROJCRS') return 'projected';
  return 'other';
}

/** Names listed first among equal matches, in this order: the systems most field data come in. */
const COMMON = ['WGS 84 ', 'WGS 84', 'ETRS89 ', 'NAD83 ', 'GDA2020 ', 'GDA94 ', 'NZGD2000 ', 'SIRGAS 2000 '];

/**
 * Searches EPSG codes and names: every word of `query` must appear in "EPSG:code name". An exact code
 * comes first, then codes starting with the query, then names starting with it, then the rest; among
 * equals WGS 84, ETRS89, NAD83 ... come first, then shorter names, then lower codes.
 * Only horizontal CRSs that proj4 can use are listed.
 */
export function searchCrs(query: string, limit = 20): CrsListItem[] {
  if (!fullIndexLoaded && nodeRequire) loadEpsgIndexSync();
  const q = query.trim().toLowerCase().replace(/^epsg:\s*/, '');
  const words = q.split(/\s+/).filter(Boolean);
  const hits: Array<{ r: EpsgRecord; rank: number; common: number }> = [];
  for (const r of registry.values()) {
    if (!r.proj4 || kindOf(r) === 'other') continue;
    const hay = `epsg:${r.code} ${r.name}`.toLowerCase();
    if (!words.every((w) => hay.includes(w))) continue;
    const name = r.name.toLowerCase();
    const rank = r.code === q ? 0 : r.code.startsWith(q) && q !== '' ? 1 : name.startsWith(q) && q !== '' ? 2 : 3;
    const common = COMMON.findIndex((c) => r.name.startsWith(c));
    hits.push({ r, rank, common: common < 0 ? COMMON.length : common });
  }
  hits.sort((a, b) => a.rank - b.rank || a.common - b.common || a.r.name.length - b.r.name.length || Number(a.r.code) - Number(b.r.code));
  return hits.slice(0, Math.max(0, limit)).map(({ r }) => ({
    code: `EPSG:${r.code}`,
    name: r.name,
    geographic: kindOf(r) === 'geographic',
    area: r.area ?? '',
  }));
}

function loadEpsgIndexSync(): number {
  if (fullIndexLoaded || !nodeRequire) return registry.size;
  return addAll(nodeRequire('epsg-index/all.json') as Record<string, EpsgRecord>);
}

const UNITS: Record<string, [number, string]> = {
  m: [1, 'metre'],
  km: [1000, 'kilometre'],
  'us-ft': [1200 / 3937, 'US survey foot'],
  ft: [0.3048, 'foot'],
  link: [0.201168, 'link'],
  'ind-yd': [0.91439523, 'Indian yard'],
  ch: [20.1168, 'chain'],
};

const resolved = new Map<string, ResolvedCrs>();

/**
 * Planar coordinates with no georeference (columns named x/y and no CRS given): distances are taken
 * in the file's own coordinate units (metres only when the user says so). Transforms exist only to
 * itself.
 */
export const LOCAL_CRS = 'local';
const LOCAL: ResolvedCrs = {
  key: LOCAL_CRS,
  name: 'local planar coordinates (no CRS given)',
  definition: LOCAL_CRS,
  geographic: false,
  bbox: null,
  metresPerUnit: 1,
  unitName: 'coordinate unit',
  utm: false,
  notes: [],
};

/** Parses 'EPSG:NNNN' (also 'epsg:nnnn', 'urn:ogc:def:crs:EPSG::NNNN', 'CRS84') or returns null. */
export function epsgCode(crs: string): string | null {
  const s = crs.trim();
  if (/^(urn:ogc:def:crs:OGC:1\.3:)?CRS84$/i.test(s)) return '4326';
  const m = /^(?:EPSG:{1,2}|urn:ogc:def:crs:EPSG:[\d.]*:)(\d{1,6})$/i.exec(s);
  return m ? String(Number(m[1])) : null;
}

/**
 * Ranges of proj-string parameters, [lowest, highest, what]: proj4 accepts values outside them (a UTM
 * zone of 99, a latitude of 95°, a scale factor of 0) and projects to nonsense or NaN.
 */
const PROJ_PARAMETER_RANGES: Record<string, [number, number, string]> = {
  zone: [1, 60, 'a whole UTM zone number'],
  lat_0: [-90, 90, 'a latitude in degrees'],
  lat_1: [-90, 90, 'a latitude in degrees'],
  lat_2: [-90, 90, 'a latitude in degrees'],
  lat_ts: [-90, 90, 'a latitude in degrees'],
  lon_0: [-180, 180, 'a longitude in degrees'],
  lonc: [-180, 180, 'a longitude in degrees'],
  alpha: [-360, 360, 'an azimuth in degrees'],
  gamma: [-360, 360, 'an angle in degrees'],
  k: [1e-3, 10, 'a scale factor'],
  k_0: [1e-3, 10, 'a scale factor'],
  x_0: [-1e9, 1e9, 'a false easting in metres'],
  y_0: [-1e9, 1e9, 'a false northing in metres'],
  a: [1, 1e9, 'a semi-major axis in metres'],
  b: [1, 1e9, 'a semi-minor axis in metres'],
  rf: [1, 1e12, 'an inverse flattening'],
  to_meter: [1e-6, 1e6, 'metres per unit'],
};

/** Refuses proj-string parameters outside their ranges and unknown units ('bad-crs', naming the parameter). */
function checkProjParameters(definition: string, raw: string): void {
  for (const token of definition.split(/\s+/)) {
    const m = /^\+([A-Za-z_0-9]+)=(.*)$/.exec(token);
    if (!m) continue;
    const [, name, value] = m;
    if (name === 'units' && !UNITS[value]) {
      throw badCrs(`The proj string's +units=${value.slice(0, 20)} is not a unit here; expected one of ${Object.keys(UNITS).join(', ')}.`, raw);
    }
    const range = PROJ_PARAMETER_RANGES[name];
    if (!range) continue;
    const v = Number(value);
    const whole = name === 'zone';
    if (!Number.isFinite(v) || v < range[0] || v > range[1] || (whole && !Number.isInteger(v))) {
      throw badCrs(`The proj string's +${name}=${value.slice(0, 20)} is out of range; expected ${range[2]} from ${range[0]} to ${range[1]}.`, raw);
    }
  }
}

function badCrs(message: string, raw: string): GapwiseError {
  return new GapwiseError('bad-crs', message, { raw });
}

/**
 * Resolves an EPSG code or proj string to a definition proj4 can use. Throws GapwiseError 'bad-crs'
 * for unknown codes, vertical or compound systems, and strings proj4 cannot read.
 */
export function resolveCrs(crs: string): ResolvedCrs {
  const key0 = crs.trim();
  if (key0.toLowerCase() === LOCAL_CRS) return LOCAL;
  const cached = resolved.get(key0);
  if (cached) return cached;
  if (key0 === '') throw badCrs('The coordinate reference system is empty; expected EPSG:NNNN or a proj string.', crs);
  const code = epsgCode(key0);
  let name: string;
  let definition: string;
  let bbox: ResolvedCrs['bbox'] = null;
  let key: string;
  if (code !== null) {
    const r = record(code);
    key = `EPSG:${code}`;
    if (!r) {
      const hint = !nodeRequire && !fullIndexLoaded ? ' (the full EPSG list is not loaded yet)' : '';
      throw badCrs(`EPSG:${code} is not a known coordinate reference system${hint}; expected a code from the EPSG list or a proj string.`, crs);
    }
    if (!r.proj4 || kindOf(r) === 'other') {
      throw badCrs(`EPSG:${code} (${r.name}) is not a horizontal coordinate system proj4 can use; expected a geographic or projected CRS.`, crs);
    }
    name = r.name;
    definition = r.proj4;
    bbox = r.bbox ?? null;
  } else if (/^\+?proj=/.test(key0) || /^(PROJCS|GEOGCS|PROJCRS|GEOGCRS)\[/i.test(key0)) {
    key = key0;
    name = key0.startsWith('+') || key0.startsWith('proj') ? 'custom proj string' : 'custom WKT';
    definition = key0.startsWith('proj=') ? `+${key0}` : key0;
  } else {
    throw badCrs(`"${key0.slice(0, 80)}" is not a coordinate reference system; expected EPSG:NNNN or a proj string such as +proj=utm +zone=33 +datum=WGS84.`, crs);
  }
  if (code === null && definition.startsWith('+')) checkProjParameters(definition, crs);
  const notes: string[] = [];
  if (definition.startsWith('+')) {
    definition = definition.replace(/\+nadgrids=("[^"]*"|\S+)/g, (all, grid: string) => {
      if (grid === '@null') return all;
      const g = grid.replace(/^"|"$/g, '');
      const replacement = GRID_REPLACEMENTS[g];
      if (replacement) {
        notes.push(`The datum-shift grid ${g} is not available here; a 7-parameter shift is used instead (accurate to a few metres).`);
        return replacement;
      }
      notes.push(`The datum-shift grid ${g} is not available here; the datum shift is left out (positions may be off by metres to hundreds of metres).`);
      return '';
    });
    definition = definition.replace(/\s+/g, ' ').trim();
  }
  let proj: { projName?: string; units?: string; to_meter?: number };
  try {
    proj = new proj4.Proj(definition) as unknown as typeof proj;
  } catch (e) {
    const why = e instanceof Error && e.message ? `: ${e.message}` : '';
    throw badCrs(`proj4 cannot read the CRS "${key0.slice(0, 80)}"${why}; expected EPSG:NNNN or a proj string.`, crs);
  }
  if (!proj || !proj.projName) throw badCrs(`proj4 cannot read the CRS "${key0.slice(0, 80)}"; expected EPSG:NNNN or a proj string.`, crs);
  const geographic = /^(longlat|latlong|lonlat|latlon|identity)$/.test(proj.projName);
  let metresPerUnit = NaN;
  let unitName = 'degree';
  if (!geographic) {
    const toMeter = /\+to_meter=([\d.eE+-]+)/.exec(definition);
    const units = /\+units=(\S+)/.exec(definition);
    if (toMeter) {
      metresPerUnit = Number(toMeter[1]);
      unitName = `${metresPerUnit} m`;
    } else if (units && UNITS[units[1]]) {
      [metresPerUnit, unitName] = UNITS[units[1]];
    } else {
      metresPerUnit = 1;
      unitName = 'metre';
    }
  }
  const out: ResolvedCrs = { key, name, definition, geographic, bbox, metresPerUnit, unitName, utm: proj.projName === 'utm', notes };
  resolved.set(key0, out);
  return out;
}

/** True when the CRS has longitude/latitude coordinates in degrees. Throws 'bad-crs' if unknown. */
export function isGeographic(crs: string): boolean {
  return resolveCrs(crs).geographic;
}

function hasRotation(definition: string): boolean {
  const m = /\+towgs84=([^\s]+)/.exec(definition);
  if (!m) return false;
  const p = m[1].split(',').map(Number);
  return p.length > 3 && p.slice(3).some((v) => v !== 0);
}

/** A reusable transform between two CRSs; coordinates are (x, y) = (easting, northing) or (lon, lat). */
export interface Transform {
  forward(x: number, y: number): [number, number];
  inverse(x: number, y: number): [number, number];
  /** Transforms arrays in place-free batches (new arrays returned). */
  forwardMany(x: ArrayLike<number>, y: ArrayLike<number>): { x: Float64Array; y: Float64Array };
  inverseMany(x: ArrayLike<number>, y: ArrayLike<number>): { x: Float64Array; y: Float64Array };
}

/**
 * Creates a transform from `fromCrs` to `toCrs` (EPSG codes or proj strings). Points proj4 cannot
 * transform come back as NaN. Throws GapwiseError 'bad-crs' when either CRS is unknown.
 */
export function createTransform(fromCrs: string, toCrs: string): Transform {
  const a = resolveCrs(fromCrs);
  const b = resolveCrs(toCrs);
  if (a.definition === b.definition) {
    const same = (x: number, y: number): [number, number] => [x, y];
    const copy = (x: ArrayLike<number>, y: ArrayLike<number>) => ({ x: Float64Array.from(x), y: Float64Array.from(y) });
    return { forward: same, inverse: same, forwardMany: copy, inverseMany: copy };
  }
  if (a === LOCAL || b === LOCAL) {
    throw badCrs(`Local planar coordinates have no georeference, so they cannot be transformed to or from ${a === LOCAL ? b.key : a.key}; give the samples' CRS (e.g. EPSG:32633).`, `${fromCrs} -> ${toCrs}`);
  }
  let conv: ReturnType<typeof proj4>;
  try {
    conv = proj4(a.definition, b.definition) as unknown as ReturnType<typeof proj4>;
  } catch (e) {
    throw badCrs(`proj4 cannot transform from ${a.key} to ${b.key}: ${(e as Error).message}.`, `${fromCrs} -> ${toCrs}`);
  }
  const c = conv as unknown as { forward(p: number[]): number[]; inverse(p: number[]): number[] };
  const run = (f: (p: number[]) => number[], x: number, y: number): [number, number] => {
    if (!Number.isFinite(x) || !Number.isFinite(y)) return [NaN, NaN];
    try {
      const p = f([x, y]);
      const px = p[0];
      const py = p[1];
      return Number.isFinite(px) && Number.isFinite(py) ? [px, py] : [NaN, NaN];
    } catch {
      return [NaN, NaN];
    }
  };
  const fwd = (x: number, y: number) => run(c.forward, x, y);
  // With a 7-parameter datum shift proj4 reverses the shift by negating its parameters, which is
  // off by about a millimetre; one fixed-point step makes the inverse undo the forward exactly.
  const refine = hasRotation(a.definition) || hasRotation(b.definition);
  const inv = (x: number, y: number): [number, number] => {
    const p = run(c.inverse, x, y);
    if (!refine || !Number.isFinite(p[0])) return p;
    const q = run(c.forward, p[0], p[1]);
    if (!Number.isFinite(q[0])) return p;
    const r = run(c.inverse, x + (x - q[0]), y + (y - q[1]));
    return Number.isFinite(r[0]) ? r : p;
  };
  const many = (f: (x: number, y: number) => [number, number]) => (x: ArrayLike<number>, y: ArrayLike<number>) => {
    const n = x.length;
    const ox = new Float64Array(n);
    const oy = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const p = f(x[i], y[i]);
      ox[i] = p[0];
      oy[i] = p[1];
    }
    return { x: ox, y: oy };
  };
  return { forward: fwd, inverse: inv, forwardMany: many(fwd), inverseMany: many(inv) };
}

/** The WGS 84 UTM zone of a place. */
export interface UtmZone {
  zone: number;
  south: boolean;
  /** 'EPSG:326zz' (north) or 'EPSG:327zz' (south). */
  code: string;
}

/**
 * WGS 84 UTM zone for a longitude/latitude in degrees: 6° zones from 180° W, with the exceptions of
 * the UTM grid: zone 32 widened over south-west Norway (56–64° N, 3–12° E) and zones 31, 33, 35, 37
 * over Svalbard (72–84° N). Throws GapwiseError 'bad-value' for impossible coordinates.
 */
export function utmZoneFor(lon: number, lat: number): UtmZone {
  if (!Number.isFinite(lon) || !Number.isFinite(lat) || lat < -90 || lat > 90 || lon < -180 || lon > 360) {
    throw new GapwiseError('bad-value', `Longitude ${lon}, latitude ${lat} is not a place on Earth; expected −180…180 and −90…90.`);
  }
  let L = lon;
  if (L >= 180) L -= 360;
  let zone = Math.floor((L + 180) / 6) + 1;
  if (zone > 60) zone = 60;
  if (zone < 1) zone = 1;
  if (lat >= 56 && lat < 64 && L >= 3 && L < 12) zone = 32;
  if (lat >= 72 && lat < 84) {
    if (L >= 0 && L < 9) zone = 31;
    else if (L >= 9 && L < 21) zone = 33;
    else if (L >= 21 && L < 33) zone = 35;
    else if (L >= 33 && L < 42) zone = 37;
  }
  const south = lat < 0;
  return { zone, south, code: `EPSG:${(south ? 32700 : 32600) + zone}` };
}

// --- the working CRS: metres, and distortion at the samples -------------------------------------

/**
 * Largest scale error |k − 1| of the working CRS at the samples before a warning: 1.5 parts per
 * thousand. A UTM zone keeps it within about 1 part per thousand (0.9996 on the central meridian,
 * about 1.001 at the zone edge on the equator; pyproj's figures in tests/reference/crs_scale.json),
 * so beyond this the samples reach past a zone's useful width.
 */
export const WORK_CRS_SCALE_WARNING = 0.0015;
/**
 * Largest scale error at the samples a working CRS may have: 5 % (areas off by about 10 %). Beyond it
 * variogram ranges, spacings and areas above an action level are too distorted to be worth reporting.
 */
export const WORK_CRS_SCALE_LIMIT = 0.05;
/** Samples checked for distortion: all up to this many, else a regular subset plus the extremes. */
const DISTORTION_CHECKS = 2000;

/** Scale distortion of a CRS over a set of places. */
export interface CrsDistortion {
  /** Largest |a − 1| or |1 − b| over the places checked (a, b: Tissot semi-axes). */
  scaleError: number;
  /** Index of the sample where it occurs. */
  at: number;
  /** Longitude and latitude (degrees) there. */
  lon: number;
  lat: number;
}

/**
 * Tissot semi-axes (a ≥ b: the largest and smallest scale factor) of a projected CRS at a WGS 84
 * longitude/latitude, from a central-difference Jacobian of the projection (steps of 1e-5°) divided by
 * the WGS 84 meridian and prime-vertical radii; lengths in metres (coordinate units × metres per unit).
 * Returns NaN for both where the point cannot be projected.
 */
export function scaleFactors(crs: string, lon: number, lat: number): { a: number; b: number } {
  const c = resolveCrs(crs);
  return scaleFactorsWith(createTransform('EPSG:4326', c.key), Number.isFinite(c.metresPerUnit) ? c.metresPerUnit : 1, lon, lat);
}

/** scaleFactors through a transform from WGS 84 made once (a loop over many places). */
function scaleFactorsWith(t: Transform, unit: number, lon: number, lat: number): { a: number; b: number } {
  const phi = Math.max(-89.9, Math.min(89.9, lat));
  const d = 1e-5;
  const e1 = t.forward(lon + d, phi), w1 = t.forward(lon - d, phi);
  const n1 = t.forward(lon, phi + d), s1 = t.forward(lon, phi - d);
  const rad = (2 * d * Math.PI) / 180;
  const A = 6378137, E2 = 0.00669437999014;
  const sin = Math.sin((phi * Math.PI) / 180);
  const w = Math.sqrt(1 - E2 * sin * sin);
  const N = A / w;
  const M = (A * (1 - E2)) / (w * w * w);
  const along = N * Math.cos((phi * Math.PI) / 180) * rad;
  const up = M * rad;
  const j11 = ((e1[0] - w1[0]) * unit) / along, j21 = ((e1[1] - w1[1]) * unit) / along;
  const j12 = ((n1[0] - s1[0]) * unit) / up, j22 = ((n1[1] - s1[1]) * unit) / up;
  // Singular values of J from JᵀJ = [[p, q], [q, r]].
  const p = j11 * j11 + j21 * j21, q = j11 * j12 + j21 * j22, r = j12 * j12 + j22 * j22;
  const mid = (p + r) / 2, rootTerm = Math.sqrt(((p - r) / 2) ** 2 + q * q);
  const a = Math.sqrt(mid + rootTerm), b = Math.sqrt(Math.max(0, mid - rootTerm));
  return Number.isFinite(a) && Number.isFinite(b) ? { a, b } : { a: NaN, b: NaN };
}

/** Indices to check: all samples, or a regular subset plus the extremes in each direction. */
function checkIndices(lon: ArrayLike<number>, lat: ArrayLike<number>): number[] {
  const n = lon.length;
  if (n <= DISTORTION_CHECKS) return Array.from({ length: n }, (_, i) => i);
  const out = new Set<number>();
  const step = Math.ceil(n / DISTORTION_CHECKS);
  for (let i = 0; i < n; i += step) out.add(i);
  // Extremes of x, y, x + y and x − y: [index, value] of each minimum and maximum.
  const at = new Int32Array(8);
  const best = new Float64Array(8);
  for (let j = 0; j < 8; j += 2) { best[j] = Infinity; best[j + 1] = -Infinity; }
  for (let i = 0; i < n; i++) {
    const u = lon[i], v = lat[i];
    const keys = [u, v, u + v, u - v];
    for (let j = 0; j < 4; j++) {
      const k = keys[j];
      if (k < best[2 * j]) { best[2 * j] = k; at[2 * j] = i; }
      if (k > best[2 * j + 1]) { best[2 * j + 1] = k; at[2 * j + 1] = i; }
    }
  }
  for (const i of at) out.add(i);
  return [...out];
}

/**
 * The largest scale error of a projected CRS at the samples (WGS 84 longitude/latitude); see
 * `scaleFactors`. A place that cannot be projected counts as an infinite error.
 */
function crsDistortion(crs: string, lon: ArrayLike<number>, lat: ArrayLike<number>): CrsDistortion {
  let worst: CrsDistortion = { scaleError: 0, at: 0, lon: lon[0], lat: lat[0] };
  const c = resolveCrs(crs);
  const t = createTransform('EPSG:4326', c.key);
  const unit = Number.isFinite(c.metresPerUnit) ? c.metresPerUnit : 1;
  for (const i of checkIndices(lon, lat)) {
    const { a, b } = scaleFactorsWith(t, unit, lon[i], lat[i]);
    const e = Number.isFinite(a) ? Math.max(a - 1, 1 - b) : Infinity;
    if (e > worst.scaleError) worst = { scaleError: e, at: i, lon: lon[i], lat: lat[i] };
  }
  return worst;
}

/** Longitude/latitude extent and centre of places, unwrapped across the antimeridian when that is shorter. */
function lonLatExtent(lon: ArrayLike<number>, lat: ArrayLike<number>): { west: number; east: number; south: number; north: number; centreLon: number; centreLat: number } {
  let lonMin = Infinity, lonMax = -Infinity, south = Infinity, north = -Infinity, latSum = 0;
  for (let i = 0; i < lon.length; i++) {
    lonMin = Math.min(lonMin, lon[i]); lonMax = Math.max(lonMax, lon[i]);
    south = Math.min(south, lat[i]); north = Math.max(north, lat[i]);
    latSum += lat[i];
  }
  const wrap = lonMax - lonMin > 180;
  let west = Infinity, east = -Infinity, lonSum = 0;
  for (let i = 0; i < lon.length; i++) {
    const l = wrap && lon[i] < 0 ? lon[i] + 360 : lon[i];
    west = Math.min(west, l); east = Math.max(east, l);
    lonSum += l;
  }
  let centreLon = lonSum / lon.length;
  if (centreLon > 180) centreLon -= 360;
  return { west: west > 180 ? west - 360 : west, east: east > 180 ? east - 360 : east, south, north, centreLon, centreLat: latSum / lat.length };
}

function deg(v: number): string {
  return `${Number(v.toFixed(2))}°`;
}

function pct(v: number): string {
  return v === Infinity ? 'infinitely' : `${Number((100 * v).toPrecision(2))} %`;
}

/**
 * A working CRS in metres for samples at these WGS 84 places: the WGS 84 UTM zone of their centre when
 * its scale error stays within WORK_CRS_SCALE_WARNING, else a Lambert azimuthal equal-area projection
 * centred on them (areas exact, lengths off least around a centre) when its error stays within
 * WORK_CRS_SCALE_LIMIT, else null (no single projection serves: split the samples by region).
 */
function suggestWorkCrs(lon: ArrayLike<number>, lat: ArrayLike<number>): { crs: string; name: string; distortion: CrsDistortion } | null {
  const e = lonLatExtent(lon, lat);
  const utm = resolveCrs(utmZoneFor(e.centreLon, Math.max(-80, Math.min(84, e.centreLat))).code);
  const du = crsDistortion(utm.key, lon, lat);
  if (du.scaleError <= WORK_CRS_SCALE_WARNING) return { crs: utm.key, name: utm.name, distortion: du };
  const laea = `+proj=laea +lat_0=${Number(e.centreLat.toFixed(2))} +lon_0=${Number(e.centreLon.toFixed(2))} +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs`;
  const dl = crsDistortion(laea, lon, lat);
  if (dl.scaleError <= WORK_CRS_SCALE_LIMIT) return { crs: laea, name: 'Lambert azimuthal equal-area centred on the samples', distortion: dl };
  return null;
}

function normalisedTokens(definition: string): Map<string, string> {
  const out = new Map<string, string>();
  for (const t of definition.split(/\s+/)) {
    const m = /^\+?([^=]+)(?:=(.*))?$/.exec(t);
    if (!m || ['units', 'to_meter', 'no_defs', 'type', 'wktext'].includes(m[1])) continue;
    out.set(m[1], m[2] ?? '');
  }
  return out;
}

function sameTokens(a: Map<string, string>, b: Map<string, string>): boolean {
  if (a.size !== b.size) return false;
  for (const [k, v] of a) {
    const w = b.get(k);
    if (w === undefined) return false;
    if (v === w) continue;
    const x = Number(v), y = Number(w);
    if (!(Number.isFinite(x) && Number.isFinite(y) && Math.abs(x - y) <= 1e-9 * Math.max(1, Math.abs(x)))) return false;
  }
  return true;
}

/**
 * The EPSG CRS with the same projection as `crs` but in metres (e.g. EPSG:32118 for EPSG:2263, NAD83 /
 * New York Long Island in metres rather than US survey feet), or null. Under Node the whole EPSG list
 * is searched; in the browser the entries loaded so far.
 */
export function metreEquivalent(crs: ResolvedCrs): ResolvedCrs | null {
  if (crs.geographic || crs.metresPerUnit === 1 || !crs.definition.startsWith('+')) return null;
  if (!fullIndexLoaded && nodeRequire) loadEpsgIndexSync();
  const want = normalisedTokens(crs.definition);
  const hits: EpsgRecord[] = [];
  for (const r of registry.values()) {
    if (!r.proj4 || kindOf(r) !== 'projected' || !/\+units=m(\s|$)/.test(r.proj4) || /\+to_meter=/.test(r.proj4)) continue;
    if (sameTokens(want, normalisedTokens(r.proj4))) hits.push(r);
  }
  if (hits.length === 0) return null;
  // Prefer a name that is the feet name without its unit note, then the lowest code.
  const bare = crs.name.replace(/\s*\((?:ftUS|ft|US survey foot|foot|feet|ftIn|ftCla)\)\s*/i, '').trim();
  hits.sort((a, b) => Number(b.name === bare) - Number(a.name === bare) || Number(a.code) - Number(b.code));
  return resolveCrs(`EPSG:${hits[0].code}`);
}

/** What `chooseWorkCrs` decided: the CRS and what the user should know about the choice. */
export interface WorkCrsChoice {
  work: ResolvedCrs;
  warnings: Array<{ code: string; message: string }>;
}

function plural(unit: string): string {
  return /foot$/.test(unit) ? unit.replace(/foot$/, 'feet') : / m$/.test(unit) ? `units of ${unit}` : `${unit}s`;
}

function suggestionText(s: ReturnType<typeof suggestWorkCrs>): string {
  if (!s) return 'no single map projection keeps lengths within that over these samples: split them by region';
  return `give as the working CRS a national or regional projected CRS in metres that covers them, or ${s.crs.startsWith('EPSG:') ? s.crs : `"${s.crs}"`} (${s.name}, at most ${pct(s.distortion.scaleError)} off here)`;
}

/**
 * Chooses and checks the working CRS for samples at (x, y) in `input`: the `requested` one when given,
 * else the input CRS when it is projected, else the WGS 84 UTM zone of the samples' centre.
 * - The working CRS must be in metres (every length and area is reported in metres): a requested CRS in
 *   other units is refused with a metre CRS for the same area; an input CRS in other units is replaced by
 *   the same projection in metres (or a suggested CRS) and a warning says so.
 * - Its scale error at the samples must stay within WORK_CRS_SCALE_LIMIT: a requested CRS, or the UTM
 *   zone chosen for lon/lat samples, beyond it is refused with a suggestion; an input CRS beyond it is
 *   replaced by a suggested CRS with a warning. Beyond WORK_CRS_SCALE_WARNING a warning gives the extent
 *   and a suggestion.
 * Local coordinates (no CRS) stay as they are. Throws GapwiseError 'bad-crs'.
 */
export function chooseWorkCrs(input: ResolvedCrs, x: ArrayLike<number>, y: ArrayLike<number>, requested?: ResolvedCrs): WorkCrsChoice {
  const warnings: WorkCrsChoice['warnings'] = [];
  if (input.key === LOCAL_CRS && (!requested || requested.key === LOCAL_CRS)) return { work: input, warnings };
  if (requested?.geographic) throw new GapwiseError('bad-option', `The working CRS ${requested.key} is geographic (degrees); expected a projected CRS in metres.`);
  // WGS 84 longitude/latitude of the samples (NaN where they cannot be transformed; those are dropped).
  const toLonLat = input.key === 'EPSG:4326' ? null : input.key === LOCAL_CRS ? null : createTransform(input.key, 'EPSG:4326');
  let lon: ArrayLike<number> = [], lat: ArrayLike<number> = [];
  if (input.key !== LOCAL_CRS && !toLonLat) {
    lon = x;
    lat = y;
  } else if (input.key !== LOCAL_CRS && toLonLat) {
    // Transforming every sample of a large file costs seconds: a regular subset and the extremes serve.
    const lo: number[] = [], la: number[] = [];
    for (const i of checkIndices(x, y)) {
      const [a, b] = toLonLat.forward(x[i], y[i]);
      if (Number.isFinite(a) && Number.isFinite(b)) { lo.push(a); la.push(b); }
    }
    lon = lo;
    lat = la;
  }
  const where = () => {
    const e = lonLatExtent(lon, lat);
    const width = e.east >= e.west ? e.east - e.west : e.east + 360 - e.west;
    const across = e.east >= e.west ? '' : ' across the antimeridian';
    return `the samples span ${deg(width)} of longitude (${deg(e.west)} to ${deg(e.east)}${across}) and ${deg(e.south)} to ${deg(e.north)} latitude`;
  };
  if (requested) {
    if (requested.key !== LOCAL_CRS && requested.metresPerUnit !== 1) {
      const twin = metreEquivalent(requested);
      const other = twin ? `${twin.key} (${twin.name}), the same projection in metres` : lon.length ? suggestionText(suggestWorkCrs(lon, lat)).replace(/^give as the working CRS /, '') : 'a projected CRS in metres';
      throw badCrs(`The working CRS ${requested.key} (${requested.name}) is in ${plural(requested.unitName)}; expected a CRS in metres, since every length and area is reported in metres: use ${other}.`, requested.key);
    }
    if (lon.length === 0 || requested.key === LOCAL_CRS) return { work: requested, warnings };
    const d = crsDistortion(requested.key, lon, lat);
    if (d.scaleError > WORK_CRS_SCALE_LIMIT) {
      throw badCrs(`The working CRS ${requested.key} (${requested.name}) distorts lengths by ${pct(d.scaleError)} at the sample at ${deg(d.lon)}, ${deg(d.lat)} (${where()}); expected at most ${pct(WORK_CRS_SCALE_LIMIT)}: ${suggestionText(suggestWorkCrs(lon, lat))}.`, requested.key);
    }
    if (d.scaleError > WORK_CRS_SCALE_WARNING) {
      warnings.push({ code: 'work-crs-distortion', message: `The working CRS ${requested.key} distorts lengths by ${pct(d.scaleError)} at the sample at ${deg(d.lon)}, ${deg(d.lat)} (${where()}); distances and areas are that far off there: ${suggestionText(suggestWorkCrs(lon, lat))}.` });
    }
    return { work: requested, warnings };
  }
  if (lon.length === 0) return { work: input.geographic ? resolveCrs('EPSG:4326') : input, warnings };
  if (!input.geographic) {
    const distortion = crsDistortion(input.key, lon, lat);
    const metres = input.metresPerUnit === 1;
    if (metres && distortion.scaleError <= WORK_CRS_SCALE_LIMIT) {
      if (distortion.scaleError > WORK_CRS_SCALE_WARNING) {
        warnings.push({ code: 'work-crs-distortion', message: `The working CRS ${input.key} (the samples' own) distorts lengths by ${pct(distortion.scaleError)} at the sample at ${deg(distortion.lon)}, ${deg(distortion.lat)} (${where()}); distances and areas are that far off there: ${suggestionText(suggestWorkCrs(lon, lat))}.` });
      }
      return { work: input, warnings };
    }
    const twin = metres ? null : metreEquivalent(input);
    if (twin && crsDistortion(twin.key, lon, lat).scaleError <= WORK_CRS_SCALE_LIMIT) {
      warnings.push({ code: 'work-crs-metres', message: `The samples' CRS ${input.key} is in ${plural(input.unitName)}; they are worked in ${twin.key} (${twin.name}), the same projection in metres, so lengths and areas are in metres.` });
      return { work: twin, warnings };
    }
    const s = suggestWorkCrs(lon, lat);
    if (!s) throw badCrs(`No working CRS in metres keeps lengths within ${pct(WORK_CRS_SCALE_LIMIT)} over these samples (${where()}); expected samples within one region: split them by region.`, input.key);
    const why = metres ? `distorts lengths by ${pct(distortion.scaleError)} at the sample at ${deg(distortion.lon)}, ${deg(distortion.lat)}` : `is in ${plural(input.unitName)}`;
    warnings.push({ code: 'work-crs-metres', message: `The samples' CRS ${input.key} ${why}; they are worked in ${s.crs} (${s.name}), in metres; choose another working CRS to override this.` });
    return { work: resolveCrs(s.crs), warnings };
  }
  const e = lonLatExtent(lon, lat);
  const utm = resolveCrs(utmZoneFor(e.centreLon, e.centreLat).code);
  const d = crsDistortion(utm.key, lon, lat);
  if (d.scaleError > WORK_CRS_SCALE_LIMIT) {
    throw badCrs(`The working CRS chosen for these longitude/latitude samples, ${utm.key} (${utm.name}), distorts lengths by ${pct(d.scaleError)} at the sample at ${deg(d.lon)}, ${deg(d.lat)} (${where()}); expected at most ${pct(WORK_CRS_SCALE_LIMIT)}: ${suggestionText(suggestWorkCrs(lon, lat))}.`, utm.key);
  }
  if (d.scaleError > WORK_CRS_SCALE_WARNING) {
    warnings.push({ code: 'work-crs-distortion', message: `The samples reach beyond the useful width of ${utm.key} (${utm.name}): ${where()}, and lengths are ${pct(d.scaleError)} off at the sample at ${deg(d.lon)}, ${deg(d.lat)} (a UTM zone keeps within about 0.1 %): ${suggestionText(suggestWorkCrs(lon, lat))}.` });
  }
  return { work: utm, warnings };
}

/**
 * Checks that a grid in the working CRS (its outer edges, metres) stays where the CRS is usable: every
 * corner and edge midpoint can be taken back to longitude/latitude and the CRS's scale error there is
 * within WORK_CRS_SCALE_LIMIT. Local coordinates are not checked. Throws GapwiseError 'bad-option'
 * with the grid's size and the place that fails.
 */
export function checkGridInCrs(bounds: { xmin: number; ymin: number; xmax: number; ymax: number }, workCrs: string): void {
  const c = resolveCrs(workCrs);
  if (c.key === LOCAL_CRS || c.geographic) return;
  const t = createTransform(c.key, 'EPSG:4326');
  const { xmin, ymin, xmax, ymax } = bounds;
  const xm = (xmin + xmax) / 2, ym = (ymin + ymax) / 2;
  const size = `${Number(((xmax - xmin) / 1000).toPrecision(3))} km × ${Number(((ymax - ymin) / 1000).toPrecision(3))} km`;
  for (const [x, y] of [[xmin, ymin], [xmin, ymax], [xmax, ymin], [xmax, ymax], [xm, ymin], [xm, ymax], [xmin, ym], [xmax, ym]]) {
    const [lon, lat] = t.forward(x, y);
    if (!Number.isFinite(lon) || !Number.isFinite(lat)) {
      throw new GapwiseError('bad-option', `The grid (${size}) reaches (${x}, ${y}), which ${c.key} cannot take back to longitude/latitude; expected a grid inside the CRS's area: choose a smaller padding or area.`);
    }
    const { a, b } = scaleFactors(c.key, lon, lat);
    const e = Number.isFinite(a) ? Math.max(a - 1, 1 - b) : Infinity;
    if (e > WORK_CRS_SCALE_LIMIT) {
      throw new GapwiseError('bad-option', `The grid (${size}) reaches ${deg(lon)}, ${deg(lat)}, where ${c.key} distorts lengths by ${pct(e)}; expected at most ${pct(WORK_CRS_SCALE_LIMIT)}: choose a smaller padding or area.`);
    }
  }
}
