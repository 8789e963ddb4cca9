/**
 * Grids as GeoTIFF (OGC 19-008r4): one writer for any number of Float32 bands (surfaces, extra
 * simulation bands, realisations), north-up, PixelIsArea, in the working CRS.
 *
 * The file is a little-endian baseline TIFF 6.0 written here byte by byte (TIFF 6.0 §2 and §8):
 * uncompressed, PlanarConfiguration = 2 (one strip per band, so the band count is not limited by a
 * header size; geotiff.js's writer keeps every tag in a fixed 1,000-byte header, which a few dozen
 * bands overflow). Georeferencing: ModelPixelScale (cell, cell, 0) and ModelTiepoint
 * (0, 0, 0, x0, y0, 0) put the upper-left corner of pixel (0, 0) at the grid's upper-left corner;
 * GeoKeys GTModelType = 1 (projected), GTRasterType = 1 (PixelIsArea), ProjectedCSType = the working
 * CRS's EPSG code (32767, user-defined, with a GTCitation naming the CRS, when it has none).
 * Band names go in GDAL_METADATA (XML with one DESCRIPTION item per band), no-data in GDAL_NODATA
 * (cells outside the grid's mask and any non-finite value), the screening caution in
 * ImageDescription. ASCII tags hold UTF-8 text (GDAL reads it so).
 * Cost: one pass over the cells of each band; the file is 4·cells·bands bytes plus a few hundred.
 */
import { GapwiseError, type Warning } from '../core/shared/errors.ts';
import { CAUTION } from '../core/shared/caution.ts';
import { SOFTWARE } from '../core/shared/version.ts';
import type { Grid } from '../core/geometry/grid.ts';
import type { LocalAccuracy } from '../core/prediction/local-accuracy.ts';
import { epsgCode, LOCAL_CRS } from './crs.ts';
import { xml } from './markup.ts';

/** The no-data value written for cells outside the area (GDAL_NODATA). */
export const NO_DATA = -9999;
/** ProjectedCSTypeGeoKey of a CRS without an EPSG code (user-defined). */
export const USER_DEFINED_CRS = 32767;

const TAG = {
  width: 256, height: 257, bitsPerSample: 258, compression: 259, photometric: 262, imageDescription: 270,
  stripOffsets: 273, samplesPerPixel: 277, rowsPerStrip: 278, stripByteCounts: 279, planarConfiguration: 284, software: 305,
  extraSamples: 338, sampleFormat: 339, modelPixelScale: 33550, modelTiepoint: 33922, geoKeyDirectory: 34735,
  geoAsciiParams: 34737, gdalMetadata: 42112, gdalNoData: 42113,
} as const;

/** The surfaces of a whole grid (each array nx·ny cells, row-major from the top). */
export interface GeoTiffSurfaces {
  mean: ArrayLike<number>;
  sd: ArrayLike<number>;
  pExceed?: ArrayLike<number>;
  threshold?: number;
}

export interface GeoTiffInput {
  grid: Grid;
  surface: GeoTiffSurfaces;
  /** Working CRS of the grid ('EPSG:NNNN', a proj string, or 'local'). */
  workCrs: string;
  /** Data unit for the band names, e.g. 'mg/kg'. */
  unit?: string;
  /** What was measured, e.g. 'Pb'. */
  valueName?: string;
  /** Bands written after mean, sd (and P(exceed)): e.g. simulation results. */
  extraBands?: ReadonlyArray<{ name: string; values: ArrayLike<number> }>;
  /** Set when mean, sd, P(exceed) are per-cell summaries of this many realisations: the bands say so. */
  realisations?: number;
  /** The TIFF Software tag; default the running version ("Gapwise 0.1.0", src/core/shared/version.ts). */
  software?: string;
  /** Local neighbourhoods: their measured error against exact kriging (written as metadata items). */
  accuracy?: LocalAccuracy;
}

/**
 * The measured error of local neighbourhoods as GDAL metadata items (percent of the prior sd; see
 * core/prediction/local-accuracy.ts), e.g. LOCAL_ERROR_MEAN_MAX_PCT = "0.13".
 */
export function localAccuracyMetadata(a: LocalAccuracy): Record<string, string> {
  const pct = (x: number): string => x.toPrecision(3);
  return {
    LOCAL_NEIGHBOURS: String(a.neighbours),
    LOCAL_GLOBAL_MEAN: a.globalMean ? 'yes' : 'no',
    LOCAL_ERROR_REFERENCE: a.reference === 'exact' ? 'exact kriging from all samples' : `kriging from the ${a.referenceNeighbours} nearest samples`,
    LOCAL_ERROR_CHECKED: `${a.checked} of ${a.targets} cells, seed ${a.seed}`,
    LOCAL_ERROR_SCALE: a.scale,
    LOCAL_ERROR_MEAN_MAX_PCT: pct(a.mean.max),
    LOCAL_ERROR_MEAN_RMS_PCT: pct(a.mean.rms),
    LOCAL_ERROR_SD_MAX_PCT: pct(a.sd.max),
    LOCAL_ERROR_SD_RMS_PCT: pct(a.sd.rms),
    LOCAL_ERROR_TOLERANCE: `mean=${a.tolerance.mean},sd=${a.tolerance.sd}`,
    LOCAL_ERROR_WITHIN_TOLERANCE: a.within ? 'yes' : 'no',
  };
}

/** Input of the general writer (plain data). */
export interface BandsGeoTiffInput {
  grid: Grid;
  /** Each band nx·ny cells, row-major from the top row. */
  bands: ReadonlyArray<ArrayLike<number>>;
  /** One description per band. */
  names: readonly string[];
  /** Working CRS of the grid ('EPSG:NNNN', a proj string, or 'local'). */
  workCrs: string;
  /** First sentence(s) of ImageDescription; the screening caution is appended. */
  title: string;
  /** The TIFF Software tag; default the running version ("Gapwise 0.1.0", src/core/shared/version.ts). */
  software?: string;
  /** Dataset metadata items (GDAL metadata, default domain), e.g. the measured error of local neighbourhoods. */
  metadata?: Readonly<Record<string, string>>;
}

export interface GeoTiffOutput {
  /** The file (bytes is a view of it). */
  buffer: ArrayBuffer;
  bytes: Uint8Array;
  /** Band descriptions in band order. */
  bands: string[];
  /** The EPSG code written (32767 = user-defined). */
  epsg: number;
  warnings: Warning[];
}

/** Shortens user text for band names (control characters become spaces). */
function short(text: string, max: number): string {
  const t = text.replace(/[\u0000-\u001f]/g, ' ').trim();
  return t.length <= max ? t : `${t.slice(0, max - 1)}…`;
}

function formatLevel(v: number): string {
  return String(Number(v.toPrecision(6)));
}

/** Band descriptions: mean, sd and P(exceed) with the unit and the threshold. */
export function bandDescriptions(surface: GeoTiffSurfaces, unit = '', valueName = ''): string[] {
  const u = short(unit, 16);
  const name = short(valueName, 16);
  const withUnit = (s: string) => (u ? `${s} (${u})` : s);
  const bands = [withUnit(`mean${name ? ` ${name}` : ''}`), withUnit(`sd${name ? ` ${name}` : ''}`)];
  if (surface.pExceed) {
    const t = surface.threshold === undefined ? 'threshold' : `${formatLevel(surface.threshold)}${u ? ` ${u}` : ''}`;
    bands.push(`P(${name || 'value'} > ${t})`);
  }
  return bands;
}

/**
 * Band descriptions for the per-cell summaries of `count` conditional realisations (not the kriged
 * surface): "realisations' mean Pb (mg/kg), 100 drawn", sd, and the share above the threshold.
 */
function realisationBandDescriptions(surface: GeoTiffSurfaces, count: number, unit = '', valueName = ''): string[] {
  const u = short(unit, 16);
  const name = short(valueName, 16);
  const withUnit = (s: string) => (u ? `${s} (${u})` : s);
  const drawn = `, ${count} realisations`;
  const bands = [`${withUnit(`realisations' mean${name ? ` ${name}` : ''}`)}${drawn}`, `${withUnit(`realisations' sd${name ? ` ${name}` : ''}`)}${drawn}`];
  if (surface.pExceed) {
    const t = surface.threshold === undefined ? 'threshold' : `${formatLevel(surface.threshold)}${u ? ` ${u}` : ''}`;
    bands.push(`share of realisations with ${name || 'value'} > ${t}${drawn}`);
  }
  return bands;
}

/** GDAL_METADATA XML naming each band (sample = 0-based band index). */
export function gdalMetadataXml(descriptions: readonly string[], items: Readonly<Record<string, string>> = {}): string {
  return xml`<GDALMetadata>${Object.entries(items).map(([k, v]) => xml`<Item name="${k}">${v}</Item>`)}${descriptions.map((d, i) => xml`<Item name="DESCRIPTION" sample="${i}" role="description">${d}</Item>`)}</GDALMetadata>`.text;
}

/** Reads one ASCII tag (UTF-8) of a TIFF's first IFD, either byte order, or null when it is absent. */
export function readAsciiTag(buffer: ArrayBuffer, tag: number): string | null {
  const v = new DataView(buffer);
  const order = v.getUint16(0);
  if (order !== 0x4949 && order !== 0x4d4d) throw new Error('Expected a TIFF (byte order "II" or "MM").');
  const le = order === 0x4949;
  const ifd = v.getUint32(4, le);
  const n = v.getUint16(ifd, le);
  for (let k = 0; k < n; k++) {
    const e = ifd + 2 + 12 * k;
    if (v.getUint16(e, le) !== tag) continue;
    const count = v.getUint32(e + 4, le);
    const at = count > 4 ? v.getUint32(e + 8, le) : e + 8;
    const bytes = new Uint8Array(buffer, at, Math.max(0, count - 1));
    return new TextDecoder().decode(bytes);
  }
  return null;
}

/** One tag of the IFD: type 2 ASCII, 3 SHORT, 4 LONG, 12 DOUBLE. */
interface Tag {
  code: number;
  type: 2 | 3 | 4 | 12;
  values: number[];
}

const TYPE_SIZE = { 2: 1, 3: 2, 4: 4, 12: 8 } as const;

/** UTF-8 bytes of the text and the terminating NUL of a TIFF ASCII value. */
function ascii(text: string): number[] {
  return [...new TextEncoder().encode(text), 0];
}

/** The EPSG code of a working CRS for ProjectedCSTypeGeoKey (32767 when it has none), and a warning then. */
function crsKey(workCrs: string): { epsg: number; citation?: string; warning?: Warning } {
  const code = workCrs === LOCAL_CRS ? null : epsgCode(workCrs);
  const epsg = code !== null && Number(code) <= 65535 ? Number(code) : USER_DEFINED_CRS;
  if (epsg !== USER_DEFINED_CRS) return { epsg };
  return {
    epsg,
    citation: workCrs === LOCAL_CRS ? 'local planar coordinate units' : short(workCrs, 200),
    warning: {
      code: 'crs-not-epsg',
      message: workCrs === LOCAL_CRS
        ? 'The samples have local planar coordinates with no CRS: the GeoTIFF has no georeference beyond its grid in those coordinate units.'
        : `The working CRS ${short(workCrs, 60)} has no EPSG code: the GeoTIFF names it as user-defined, which most GIS cannot place; use an EPSG working CRS.`,
    },
  };
}

/**
 * Writes any number of bands of a grid as one Float32 GeoTIFF (little-endian, one strip per band).
 * Cells outside the grid's mask and non-finite values become NO_DATA. Throws GapwiseError
 * 'bad-option' for no bands, a band of the wrong size, a name count that differs from the band
 * count, or a file above the 4 GiB a classic TIFF can address.
 */
export function bandsGeoTiff(input: BandsGeoTiffInput): GeoTiffOutput {
  const { grid, bands, names, workCrs } = input;
  const { nx, ny } = grid;
  const nb = bands.length;
  const cells = nx * ny;
  if (nb === 0) throw new GapwiseError('bad-option', 'Expected at least 1 band to write, got 0.');
  if (names.length !== nb) throw new GapwiseError('bad-option', `Expected one name per band (${nb}), got ${names.length}.`);
  for (const [i, a] of bands.entries()) {
    if (!a || a.length !== cells) {
      throw new GapwiseError('bad-option', `Expected band ${i + 1} to have ${cells} cells (${nx} × ${ny}), got ${a ? a.length : 0}.`);
    }
  }
  const warnings: Warning[] = [];
  const crs = crsKey(workCrs);
  if (crs.warning) warnings.push(crs.warning);
  const description = `${input.title.trim()} ${CAUTION}`.trim();

  // GeoKey directory (sorted by key id): version 1.1.0, then (key, location, count, value).
  const citation = crs.citation === undefined ? null : ascii(`${crs.citation}|`).slice(0, -1);
  const keys: number[][] = [[1024, 0, 1, 1], [1025, 0, 1, 1]];
  if (citation) keys.push([1026, TAG.geoAsciiParams, citation.length, 0]);
  keys.push([3072, 0, 1, crs.epsg]);
  const geoKeys = [1, 1, 0, keys.length, ...keys.flat()];

  const bandBytes = cells * 4;
  const tags: Tag[] = [
    { code: TAG.width, type: 4, values: [nx] },
    { code: TAG.height, type: 4, values: [ny] },
    { code: TAG.bitsPerSample, type: 3, values: new Array(nb).fill(32) },
    { code: TAG.compression, type: 3, values: [1] },
    { code: TAG.photometric, type: 3, values: [1] },
    { code: TAG.imageDescription, type: 2, values: ascii(description) },
    { code: TAG.stripOffsets, type: 4, values: new Array(nb).fill(0) }, // filled below
    { code: TAG.samplesPerPixel, type: 3, values: [nb] },
    { code: TAG.rowsPerStrip, type: 4, values: [ny] },
    { code: TAG.stripByteCounts, type: 4, values: new Array(nb).fill(bandBytes) },
    { code: TAG.planarConfiguration, type: 3, values: [2] },
    { code: TAG.software, type: 2, values: ascii(input.software ?? SOFTWARE) },
    ...(nb > 1 ? [{ code: TAG.extraSamples, type: 3 as const, values: new Array(nb - 1).fill(0) }] : []),
    { code: TAG.sampleFormat, type: 3, values: new Array(nb).fill(3) },
    { code: TAG.modelPixelScale, type: 12, values: [grid.cell, grid.cell, 0] },
    { code: TAG.modelTiepoint, type: 12, values: [0, 0, 0, grid.x0, grid.y0, 0] },
    { code: TAG.geoKeyDirectory, type: 3, values: geoKeys },
    ...(citation ? [{ code: TAG.geoAsciiParams, type: 2 as const, values: [...citation, 0] }] : []),
    { code: TAG.gdalMetadata, type: 2, values: ascii(gdalMetadataXml(names, input.metadata)) },
    { code: TAG.gdalNoData, type: 2, values: ascii(String(NO_DATA)) },
  ];
  const ifdOffset = 8;
  const ifdSize = 2 + 12 * tags.length + 4;
  let end = ifdOffset + ifdSize;
  const valueOffsets = tags.map((t) => {
    const size = t.values.length * TYPE_SIZE[t.type];
    if (size <= 4) return -1;
    end += end % 2; // values start on a word boundary
    const at = end;
    end += size;
    return at;
  });
  const dataStart = end + ((8 - (end % 8)) % 8);
  const strips = tags.find((t) => t.code === TAG.stripOffsets) as Tag;
  for (let b = 0; b < nb; b++) strips.values[b] = dataStart + b * bandBytes;
  const total = dataStart + nb * bandBytes;
  if (total > 0xffffffff) {
    throw new GapwiseError('bad-option', `The GeoTIFF would have ${total} bytes; a classic TIFF holds at most 4 GiB: write fewer bands or use a larger cell.`);
  }

  const bytes = new Uint8Array(total);
  const view = new DataView(bytes.buffer);
  bytes[0] = 0x49; bytes[1] = 0x49; // "II": little-endian
  view.setUint16(2, 42, true);
  view.setUint32(4, ifdOffset, true);
  view.setUint16(ifdOffset, tags.length, true);
  const write = (type: Tag['type'], values: number[], at: number): void => {
    for (let i = 0; i < values.length; i++) {
      const v = values[i];
      if (type === 2) view.setUint8(at + i, v);
      else if (type === 3) view.setUint16(at + 2 * i, v, true);
      else if (type === 4) view.setUint32(at + 4 * i, v, true);
      else view.setFloat64(at + 8 * i, v, true);
    }
  };
  tags.forEach((t, k) => {
    const e = ifdOffset + 2 + 12 * k;
    view.setUint16(e, t.code, true);
    view.setUint16(e + 2, t.type, true);
    view.setUint32(e + 4, t.values.length, true);
    if (valueOffsets[k] >= 0) view.setUint32(e + 8, valueOffsets[k], true);
    write(t.type, t.values, valueOffsets[k] < 0 ? e + 8 : valueOffsets[k]);
  });
  view.setUint32(ifdOffset + 2 + 12 * tags.length, 0, true); // no next IFD

  const mask = grid.mask;
  for (let b = 0; b < nb; b++) {
    const band = bands[b];
    const o = dataStart + b * bandBytes;
    for (let k = 0; k < cells; k++) {
      const v = band[k];
      view.setFloat32(o + 4 * k, (!mask || mask[k] === 1) && Number.isFinite(v) ? v : NO_DATA, true);
    }
  }
  return { buffer: bytes.buffer as ArrayBuffer, bytes, bands: [...names], epsg: crs.epsg, warnings };
}

/**
 * Writes mean, sd (and P(exceed)), then any extra bands, of a grid as a Float32 GeoTIFF through
 * bandsGeoTiff. Throws GapwiseError 'bad-option' for arrays of the wrong size.
 */
export function surfaceGeoTiff(input: GeoTiffInput): GeoTiffOutput {
  const { surface } = input;
  const layers: ArrayLike<number>[] = [surface.mean, surface.sd];
  if (surface.pExceed) layers.push(surface.pExceed);
  const drawn = input.realisations;
  const names = drawn ? realisationBandDescriptions(surface, drawn, input.unit, input.valueName) : bandDescriptions(surface, input.unit, input.valueName);
  for (const extra of input.extraBands ?? []) {
    layers.push(extra.values);
    names.push(extra.name);
  }
  const title = drawn ? `Gapwise: per-cell summaries of ${drawn} conditional realisations (not the kriged surface).` : 'Gapwise surfaces.';
  const a = input.accuracy;
  const measured = a
    ? ` Local neighbourhoods of ${a.neighbours} samples; measured against ${a.reference === 'exact' ? 'exact kriging' : 'a large neighbourhood'} at ${a.checked} cells: mean within ${a.mean.max.toPrecision(2)} %, sd within ${a.sd.max.toPrecision(2)} % of the prior sd.`
    : '';
  return bandsGeoTiff({
    grid: input.grid, bands: layers, names, workCrs: input.workCrs, title: title + measured,
    ...(a ? { metadata: localAccuracyMetadata(a) } : {}),
    ...(input.software !== undefined ? { software: input.software } : {}),
  });
}
