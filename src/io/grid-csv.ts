/**
 * Surfaces as a CSV table, one row per active cell (cells outside the boundary are left out):
 * x, y (cell centre, working CRS metres), lon, lat (WGS 84 degrees; no such columns for local
 * coordinates with no CRS), mean, sd and, with a threshold, p_exceed, with the digits that give each value back exactly. Rows run from the top row of the grid down, west to east. The first line is a comment
 * ("# " + the screening caution, the note on text cells and what the columns are; io/csv-cells.ts
 * `csvComment`); most CSV readers skip it with a comment option (pandas `comment="#"`, R
 * `comment.char = "#"`), and `caution: false` leaves it out. Every other cell is a number.
 */
import { CSV_CAUTION, csvCell, csvComment, linePieces } from './csv-cells.ts';
import { SOFTWARE } from '../core/shared/version.ts';
import type { Grid } from '../core/geometry/grid.ts';
import { cellCentres } from '../core/geometry/grid.ts';
import { createTransform, LOCAL_CRS } from './crs.ts';

export interface GridCsvInput {
  grid: Grid;
  surface: { mean: ArrayLike<number>; sd: ArrayLike<number>; pExceed?: ArrayLike<number>; threshold?: number };
  workCrs: string;
  unit?: string;
  /** Write the "# caution" first line (default true). */
  caution?: boolean;
  /**
   * Set when the layers are per-cell summaries of this many conditional realisations (not the kriged
   * surface): the columns are then realisation_mean, realisation_sd, realisation_p_exceed and the
   * comment line says so.
   */
  realisations?: number;
}

/** Significant digits that give a value back exactly: 9 for Float32 surfaces, 17 for Float64. */
function digitsOf(a: ArrayLike<number>): number {
  return a instanceof Float32Array ? 9 : 17;
}

/** A number with `digits` significant digits, trailing zeros dropped; NaN as empty. */
function num(v: number, digits: number): string {
  if (Number.isNaN(v)) return '';
  if (v === 0) return '0';
  return String(Number(v.toPrecision(digits)));
}

/** Coordinates: millimetres for metres, 1e-8 degrees for longitude/latitude. */
function fixed(v: number, decimals: number): string {
  return Number.isFinite(v) ? String(Number(v.toFixed(decimals))) : '';
}

/** The CSV text (LF line ends). Local planar coordinates (no CRS) have no lon, lat columns. */
export function surfaceGridCsv(input: GridCsvInput): string {
  let text = '';
  for (const piece of surfaceGridCsvChunks(input)) text += piece;
  return text;
}

/** Characters of CSV text in one piece of `surfaceGridCsvChunks` (about a mebibyte). */
const CHUNK_CHARS = 1 << 20;

/**
 * The same CSV text as `surfaceGridCsv`, in pieces of whole lines of about `chunkChars` characters: a
 * writer that takes them one by one never holds the text of a large grid (200 MB for 2 million cells)
 * as one string.
 */
export function* surfaceGridCsvChunks(input: GridCsvInput, chunkChars = CHUNK_CHARS): Generator<string> {
  const { grid, surface } = input;
  const { x, y, index } = cellCentres(grid);
  const geo = input.workCrs === LOCAL_CRS ? null : createTransform(input.workCrs, 'EPSG:4326').forwardMany(x, y);
  const drawn = input.realisations;
  const prefix = drawn ? 'realisation_' : '';
  const header = [...(geo ? ['x', 'y', 'lon', 'lat'] : ['x', 'y']), `${prefix}mean`, `${prefix}sd`];
  if (surface.pExceed) header.push(`${prefix}p_exceed`);
  const lines: string[] = [];
  if (input.caution !== false) {
    const where = geo ? `x, y: cell centres in ${input.workCrs}; lon, lat: WGS 84` : 'x, y: cell centres in the samples\' local coordinates (no coordinate system)';
    const what = drawn
      ? `${where}; realisation_mean, realisation_sd${input.unit ? ` in ${input.unit}` : ''}: the mean and sd over ${drawn} conditional realisations, not the kriged surface`
        + (surface.pExceed ? `; realisation_p_exceed = share of the realisations above ${surface.threshold ?? 'the threshold'}${input.unit ? ` ${input.unit}` : ''}` : '')
      : `${where}; mean, sd${input.unit ? ` in ${input.unit}` : ''}`
        + (surface.pExceed ? `; p_exceed = P(value > ${surface.threshold ?? 'threshold'}${input.unit ? ` ${input.unit}` : ''})` : '');
    lines.push(csvComment(`${CSV_CAUTION} Written by ${SOFTWARE}. ${what}`));
  }
  lines.push(header.join(','));
  const dm = digitsOf(surface.mean), ds = digitsOf(surface.sd), dp = surface.pExceed ? digitsOf(surface.pExceed) : 17;
  yield* linePieces(lines.length + index.length, (i) => {
    if (i < lines.length) return lines[i];
    const c = i - lines.length;
    const k = index[c];
    const row = [
      fixed(x[c], 3), fixed(y[c], 3),
      ...(geo ? [fixed(geo.x[c], 8), fixed(geo.y[c], 8)] : []),
      num(surface.mean[k], dm), num(surface.sd[k], ds),
    ];
    if (surface.pExceed) row.push(num(surface.pExceed[k], dp));
    return row.join(',');
  }, '\n', chunkChars);
}

/** Input of the several-analyte table: one grid, each analyte's surfaces. */
export interface AnalyteGridCsvInput {
  grid: Grid;
  workCrs: string;
  analytes: ReadonlyArray<{ name: string; unit?: string; surface: GridCsvInput['surface'] }>;
  /** Write the "# caution" first line (default true). */
  caution?: boolean;
}

/** Column-name form of an analyte: letters, digits and _ kept, other runs of characters as one _. */
export function analyteColumnName(name: string): string {
  const s = name.replace(/\s*\([^)]*\)\s*$/, '').replace(/[^\p{L}\p{N}_]+/gu, '_').replace(/^_+|_+$/g, '');
  return s === '' ? 'value' : s;
}

/**
 * Several analytes' surfaces on one grid as a CSV table, one row per active cell: x, y (and lon, lat)
 * as surfaceGridCsv writes them, then NAME_mean, NAME_sd (and NAME_p_exceed) per analyte, NAME the
 * analyte's column name with other characters than letters, digits and _ made _. Same digits and
 * comment line as surfaceGridCsv. In pieces of whole lines of about `chunkChars` characters.
 */
export function* analyteGridCsvChunks(input: AnalyteGridCsvInput, chunkChars = CHUNK_CHARS): Generator<string> {
  const { grid } = input;
  const { x, y, index } = cellCentres(grid);
  const geo = input.workCrs === LOCAL_CRS ? null : createTransform(input.workCrs, 'EPSG:4326').forwardMany(x, y);
  const header = geo ? ['x', 'y', 'lon', 'lat'] : ['x', 'y'];
  const described: string[] = [];
  const used = new Set(header);
  for (const a of input.analytes) {
    let base = analyteColumnName(a.name);
    for (let k = 2; used.has(`${base}_mean`); k++) base = `${analyteColumnName(a.name)}_${k}`;
    const cols = [`${base}_mean`, `${base}_sd`, ...(a.surface.pExceed ? [`${base}_p_exceed`] : [])];
    for (const c of cols) used.add(c);
    header.push(...cols);
    described.push(`${base}_mean, ${base}_sd${a.unit ? ` in ${a.unit}` : ''}`
      + (a.surface.pExceed ? `, ${base}_p_exceed = P(${base} > ${a.surface.threshold ?? 'threshold'}${a.unit ? ` ${a.unit}` : ''})` : ''));
  }
  const lines: string[] = [];
  if (input.caution !== false) {
    const where = geo ? `x, y: cell centres in ${input.workCrs}; lon, lat: WGS 84` : 'x, y: cell centres in the samples\' local coordinates (no coordinate system)';
    lines.push(csvComment(`${CSV_CAUTION} Written by ${SOFTWARE}. ${where}; ${described.join('; ')}`));
  }
  lines.push(header.map((h) => csvCell(h)).join(','));
  const digits = input.analytes.map((a) => [digitsOf(a.surface.mean), digitsOf(a.surface.sd), a.surface.pExceed ? digitsOf(a.surface.pExceed) : 17]);
  yield* linePieces(lines.length + index.length, (i) => {
    if (i < lines.length) return lines[i];
    const c = i - lines.length;
    const k = index[c];
    const row = [fixed(x[c], 3), fixed(y[c], 3), ...(geo ? [fixed(geo.x[c], 8), fixed(geo.y[c], 8)] : [])];
    input.analytes.forEach((a, j) => {
      row.push(num(a.surface.mean[k], digits[j][0]), num(a.surface.sd[k], digits[j][1]));
      if (a.surface.pExceed) row.push(num(a.surface.pExceed[k], digits[j][2]));
    });
    return row.join(',');
  }, '\n', chunkChars);
}
