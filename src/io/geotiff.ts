/**
 * Surfaces as a GeoTIFF (OGC 19-008r4) written with geotiff.js: one Float32 band each for the mean,
 * the sd and, with a threshold, P(exceed); north-up, PixelIsArea, in the working CRS.
 *
 * Georeferencing: ModelPixelScale (cell, cell, 0) and ModelTiepoint (0, 0, 0, x0, y0, 0) put the
 * upper-left corner of pixel (0, 0) at the grid's upper-left corner; GeoKeys GTModelType = 1
 * (projected), GTRasterType = 1 (PixelIsArea), ProjectedCSType = the working CRS's EPSG code (32767,
 * user-defined, with a citation, when the CRS has no EPSG code). Without these geotiff.js would
 * write a whole-globe EPSG:4326 raster.
 * Band names go in GDAL_METADATA (XML with one DESCRIPTION item per band), no-data in GDAL_NODATA
 * (cells outside the boundary and any non-finite value), the screening caution in ImageDescription.
 * geotiff.js 3.0.5 keeps every tag in a fixed 1,000-byte header and has no write type for
 * GDAL_METADATA (tag 42112, ASCII in GDAL's TIFF driver): the type is registered here, texts are
 * kept short, and the header is read back after writing so a tag that did not fit is an error,
 * never a silently broken file.
 */
import { globals, writeArrayBuffer } from 'geotiff';
import { GapwiseError, type Warning } from '../core/errors.ts';
import { CAUTION } from '../core/caution.ts';
import type { Grid } from '../core/grid.ts';
import { epsgCode, LOCAL_CRS } from './crs.ts';

/** The no-data value written for cells outside the area (GDAL_NODATA). */
export const NO_DATA = -9999;

const TAG_IMAGE_DESCRIPTION = 270;
const TAG_GDAL_METADATA = 42112;
const TAG_GDAL_NODATA = 42113;
const HEADER_BYTES = 1000;

// geotiff.js writes a tag only when it knows its type; GDAL_METADATA is ASCII (GDAL's TIFF driver).
(globals.fieldTagTypes as Record<number, string>)[TAG_GDAL_METADATA] = 'ASCII';

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
}

export interface GeoTiffOutput {
  buffer: ArrayBuffer;
  /** Band descriptions in band order. */
  bands: string[];
  /** The EPSG code written (32767 = user-defined). */
  epsg: number;
  warnings: Warning[];
}

/** Text as a string of UTF-8 bytes (one char per byte), as geotiff.js writes ASCII tags byte by byte. */
function utf8Bytes(text: string): string {
  const bytes = new TextEncoder().encode(text);
  let out = '';
  for (const b of bytes) out += String.fromCharCode(b);
  return out;
}

function escapeXml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&apos;' })[c] as string);
}

/** Shortens user text so the fixed TIFF header holds every tag. */
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

/** GDAL_METADATA XML naming each band (sample = 0-based band index). */
export function gdalMetadataXml(descriptions: readonly string[]): string {
  const items = descriptions.map((d, i) => `<Item name="DESCRIPTION" sample="${i}" role="description">${escapeXml(d)}</Item>`);
  return `<GDALMetadata>${items.join('')}</GDALMetadata>`;
}

/** Reads one ASCII tag of a big-endian ('MM') TIFF's first IFD, or null when it is absent. */
export function readAsciiTag(buffer: ArrayBuffer, tag: number): string | null {
  const v = new DataView(buffer);
  if (v.getUint16(0) !== 0x4d4d) throw new Error('Expected a big-endian TIFF.');
  const ifd = v.getUint32(4);
  const n = v.getUint16(ifd);
  for (let k = 0; k < n; k++) {
    const e = ifd + 2 + 12 * k;
    if (v.getUint16(e) !== tag) continue;
    const count = v.getUint32(e + 4);
    const at = count > 4 ? v.getUint32(e + 8) : e + 8;
    const bytes = new Uint8Array(buffer, at, Math.max(0, count - 1));
    return new TextDecoder().decode(bytes);
  }
  return null;
}

/**
 * Writes mean, sd (and P(exceed)) of a grid as a Float32 GeoTIFF. Cells outside the mask and
 * non-finite values become NO_DATA. Throws GapwiseError 'bad-option' for arrays of the wrong size.
 */
export function surfaceGeoTiff(input: GeoTiffInput): GeoTiffOutput {
  const { grid, surface } = input;
  const cells = grid.nx * grid.ny;
  const layers: ArrayLike<number>[] = [surface.mean, surface.sd];
  if (surface.pExceed) layers.push(surface.pExceed);
  for (const [i, a] of layers.entries()) {
    if (!a || a.length !== cells) {
      throw new GapwiseError('bad-option', `Expected band ${i + 1} to have ${cells} cells (${grid.nx} × ${grid.ny}), got ${a ? a.length : 0}.`);
    }
  }
  const warnings: Warning[] = [];
  const code = input.workCrs === LOCAL_CRS ? null : epsgCode(input.workCrs);
  let epsg = code === null ? 32767 : Number(code);
  if (epsg > 65535) epsg = 32767;
  if (epsg === 32767) {
    warnings.push({
      code: 'crs-not-epsg',
      message: input.workCrs === LOCAL_CRS
        ? 'The samples have local planar coordinates with no CRS: the GeoTIFF has no georeference beyond its metre grid.'
        : `The working CRS ${short(input.workCrs, 60)} has no EPSG code: the GeoTIFF names it as user-defined, which most GIS cannot place; use an EPSG working CRS.`,
    });
  }

  const nb = layers.length;
  const data = new Float32Array(cells * nb);
  const mask = grid.mask;
  for (let k = 0; k < cells; k++) {
    const inside = !mask || mask[k] === 1;
    for (let b = 0; b < nb; b++) {
      const value = layers[b][k];
      data[k * nb + b] = inside && Number.isFinite(value) ? value : NO_DATA;
    }
  }

  const bands = bandDescriptions(surface, input.unit, input.valueName);
  const description = `Gapwise surfaces. ${CAUTION}`;
  const xml = gdalMetadataXml(bands);
  const metadata: Record<string, unknown> = {
    width: grid.nx,
    height: grid.ny,
    BitsPerSample: new Array(nb).fill(32),
    SampleFormat: new Array(nb).fill(3),
    SamplesPerPixel: nb,
    PhotometricInterpretation: 1,
    PlanarConfiguration: 1,
    ExtraSamples: new Array(nb - 1).fill(0),
    ModelPixelScale: [grid.cell, grid.cell, 0],
    ModelTiepoint: [0, 0, 0, grid.x0, grid.y0, 0],
    GTModelTypeGeoKey: 1,
    GTRasterTypeGeoKey: 1,
    ProjectedCSTypeGeoKey: epsg,
    GDAL_NODATA: String(NO_DATA),
    GDAL_METADATA: utf8Bytes(xml),
    ImageDescription: utf8Bytes(description),
  };
  if (epsg === 32767) metadata.GTCitationGeoKey = utf8Bytes(short(input.workCrs === LOCAL_CRS ? 'local planar metres' : input.workCrs, 80));
  const buffer = writeArrayBuffer(data, metadata as Parameters<typeof writeArrayBuffer>[1]);

  // Everything must have fitted in geotiff.js's fixed header: read the texts back.
  const back = new DataView(buffer);
  const ifd = back.getUint32(4);
  const tags = back.getUint16(ifd);
  if (ifd + 2 + 12 * tags + 4 > HEADER_BYTES
    || readAsciiTag(buffer, TAG_IMAGE_DESCRIPTION) !== description
    || readAsciiTag(buffer, TAG_GDAL_METADATA) !== xml
    || readAsciiTag(buffer, TAG_GDAL_NODATA) !== String(NO_DATA)) {
    throw new Error('The GeoTIFF header did not hold every tag (geotiff.js writes at most 1,000 bytes of tags); the band names or caution were cut.');
  }
  return { buffer, bands, epsg, warnings };
}
