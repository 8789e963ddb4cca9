/**
 * Covariate rasters: a single-band GeoTIFF read with geotiff.js (north-up, its CRS from the EPSG code
 * in its GeoKeys), sampled at points of the working CRS after reprojection with proj4 (./crs.ts).
 *
 * Sampling: the raster's values sit at cell centres. Bilinear (numeric covariates): the four centres
 * around the point weighted by (1 − fx)(1 − fy), fx(1 − fy), (1 − fx)fy, fx·fy; a point within half a
 * cell of the edge takes the edge row or column (indices clamped); a neighbour that is no-data drops out
 * and the others' weights are renormalised (as GDAL's warper does, from memory). Nearest (categorical
 * covariates): the value of the cell the point falls in. Outside the raster, or no valid neighbour:
 * NaN, which callers count as no-data. Cost: O(1) per point after one read of the band.
 */
import { fromArrayBuffer } from 'geotiff';
import { GapwiseError, type Warning } from '../core/shared/errors.ts';
import { cellCentres, type Grid } from '../core/geometry/grid.ts';
import { encodeCovariates, type CovariateColumn } from '../core/covariance/covariates.ts';
import type { CovariateTrend } from '../core/covariance/model.ts';
import { createTransform } from './crs.ts';

/** A covariate raster as read: one band, north-up, values at cell centres. */
export interface CovariateRaster {
  name: string;
  /** 'EPSG:NNNN'. */
  crs: string;
  /** Upper-left corner (west and north edges) in the raster's CRS. */
  x0: number;
  y0: number;
  /** Cell width and height (both positive), in the raster's CRS units. */
  dx: number;
  dy: number;
  nx: number;
  ny: number;
  /** nx·ny values, row-major from the top row; no-data cells are NaN. */
  values: Float64Array;
}

/**
 * Reads a single-band GeoTIFF's first band. Throws GapwiseError 'bad-file' (naming `file`) for a file
 * geotiff.js cannot read, a rotated raster, or one with no EPSG code.
 */
export async function readCovariateRaster(bytes: Uint8Array, name: string, file: string): Promise<CovariateRaster> {
  const buffer = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer;
  let image;
  try {
    const tiff = await fromArrayBuffer(buffer);
    image = await tiff.getImage();
  } catch (e) {
    throw new GapwiseError('bad-file', `The covariate raster could not be read as a GeoTIFF (${e instanceof Error ? e.message : String(e)}); expected a GeoTIFF file.`, { file });
  }
  const keys = image.getGeoKeys() ?? {};
  const projected = keys.ProjectedCSTypeGeoKey as number | undefined;
  const geographic = keys.GeographicTypeGeoKey as number | undefined;
  const code = projected !== undefined && projected > 0 && projected < 32767 ? projected
    : geographic !== undefined && geographic > 0 && geographic < 32767 ? geographic : undefined;
  if (code === undefined) {
    throw new GapwiseError('bad-file', 'The covariate raster names no EPSG coordinate system in its GeoKeys; expected a GeoTIFF with an EPSG code (e.g. written with -a_srs EPSG:NNNN).', { file });
  }
  let origin: number[];
  let resolution: number[];
  try {
    origin = image.getOrigin();
    resolution = image.getResolution();
  } catch {
    throw new GapwiseError('bad-file', 'The covariate raster has no georeferencing (tie point and pixel scale); expected a georeferenced GeoTIFF.', { file });
  }
  const dx = resolution[0];
  const dy = -resolution[1];
  if (!(dx > 0 && dy > 0 && Number.isFinite(origin[0]) && Number.isFinite(origin[1]))) {
    throw new GapwiseError('bad-file', `The covariate raster is not north-up (cell size ${resolution[0]} × ${resolution[1]}); expected positive x and negative y steps.`, { file });
  }
  const nx = image.getWidth();
  const ny = image.getHeight();
  const rasters = await image.readRasters({ samples: [0], interleave: false }) as unknown as ArrayLike<number>[];
  const band = rasters[0];
  const noData = image.getGDALNoData();
  const values = new Float64Array(nx * ny);
  for (let k = 0; k < nx * ny; k++) {
    const v = band[k];
    values[k] = noData !== null && v === noData ? NaN : Number.isFinite(v) ? v : NaN;
  }
  return { name, crs: `EPSG:${code}`, x0: origin[0], y0: origin[1], dx, dy, nx, ny, values };
}

/**
 * The raster's values at points given in its own CRS: bilinear or nearest (see the header); NaN
 * outside or where no valid cell contributes.
 */
export function sampleRasterAt(raster: CovariateRaster, px: ArrayLike<number>, py: ArrayLike<number>, method: 'bilinear' | 'nearest'): Float64Array {
  const { x0, y0, dx, dy, nx, ny, values } = raster;
  const out = new Float64Array(px.length);
  for (let k = 0; k < px.length; k++) {
    const c = (px[k] - x0) / dx;
    const r = (y0 - py[k]) / dy;
    if (!(c >= 0 && c <= nx && r >= 0 && r <= ny)) {
      out[k] = NaN;
      continue;
    }
    if (method === 'nearest') {
      out[k] = values[Math.min(ny - 1, Math.floor(r)) * nx + Math.min(nx - 1, Math.floor(c))];
      continue;
    }
    // Fractional position among the cell centres.
    const fc = c - 0.5;
    const fr = r - 0.5;
    const i0 = Math.floor(fc);
    const j0 = Math.floor(fr);
    const tx = fc - i0;
    const ty = fr - j0;
    let sum = 0;
    let weight = 0;
    for (let b = 0; b < 2; b++) {
      const j = Math.min(ny - 1, Math.max(0, j0 + b));
      const wy = b === 0 ? 1 - ty : ty;
      for (let a = 0; a < 2; a++) {
        const i = Math.min(nx - 1, Math.max(0, i0 + a));
        const w = (a === 0 ? 1 - tx : tx) * wy;
        const v = values[j * nx + i];
        if (w > 0 && !Number.isNaN(v)) {
          sum += w * v;
          weight += w;
        }
      }
    }
    out[k] = weight > 0 ? sum / weight : NaN;
  }
  return out;
}

/**
 * The raster's values at points of the working CRS (reprojected to the raster's CRS first).
 * Categorical covariates are sampled by nearest cell, numeric ones bilinearly.
 */
export function sampleRaster(
  raster: CovariateRaster, x: ArrayLike<number>, y: ArrayLike<number>, workCrs: string, method: 'bilinear' | 'nearest',
): Float64Array {
  const p = createTransform(workCrs, raster.crs).forwardMany(x, y);
  return sampleRasterAt(raster, p.x, p.y, method);
}

/**
 * The grid on the raster's own lattice: the same corner, cell size and extent when the raster is in
 * the working CRS with square cells; otherwise the working-CRS box around the raster's reprojected
 * corners at the raster's cell width. `mask` (a boundary) is kept.
 */
export function rasterLattice(raster: CovariateRaster, workCrs: string): Grid {
  const same = createTransform(raster.crs, workCrs);
  const { x0, y0, dx, dy, nx, ny } = raster;
  const sameCrs = same.forward(x0, y0)[0] === x0 && same.forward(x0, y0)[1] === y0 && same.forward(x0 + 1, y0)[0] === x0 + 1;
  if (sameCrs && dx === dy) return { x0, y0, cell: dx, nx, ny };
  const xs = [x0, x0 + nx * dx, x0, x0 + nx * dx];
  const ys = [y0, y0, y0 - ny * dy, y0 - ny * dy];
  const p = same.forwardMany(xs, ys);
  const xmin = Math.min(...p.x), xmax = Math.max(...p.x), ymin = Math.min(...p.y), ymax = Math.max(...p.y);
  const cell = Math.min(dx, dy);
  return { x0: xmin, y0: ymax, cell, nx: Math.max(1, Math.ceil((xmax - xmin) / cell)), ny: Math.max(1, Math.ceil((ymax - ymin) / cell)) };
}

/**
 * Encoded covariates (m rows × q, row-major) at m points of the working CRS, one raster per covariate,
 * and a flag per point without a value in some raster (outside it, no-data, or a category that is not
 * among the model's levels). Flagged points get the reference level (or 0) so that they encode; callers
 * leave them out. Categorical covariates need integer-code levels (a raster holds numbers).
 * Throws GapwiseError 'bad-option' for a covariate without a raster or with text levels.
 */
export function rasterCovariatesAt(
  trend: CovariateTrend, rasters: ReadonlyArray<CovariateRaster>, x: ArrayLike<number>, y: ArrayLike<number>, workCrs: string,
): { covariates: Float64Array; missing: Uint8Array } {
  const m = x.length;
  const missing = new Uint8Array(m);
  const filled: Record<string, CovariateColumn> = {};
  for (const name of trend.covariates) {
    const raster = rasters.find((r) => r.name === name);
    if (!raster) {
      throw new GapwiseError('bad-option', `The model's covariate "${name}" has no raster; expected --covariate-raster ${name}=FILE.tif.`);
    }
    const levels = trend.levels?.[name];
    if (levels && !levels.every((l) => Number.isFinite(Number(l)))) {
      throw new GapwiseError('bad-option', `The covariate "${name}" is categorical with text levels (${levels.join(', ')}); a raster holds numbers, so expected integer-code levels.`);
    }
    const values = sampleRaster(raster, x, y, workCrs, levels ? 'nearest' : 'bilinear');
    for (let k = 0; k < m; k++) {
      if (Number.isNaN(values[k]) || (levels && !levels.includes(String(values[k])))) missing[k] = 1;
    }
    filled[name] = { kind: 'numeric', values };
  }
  // Points without a value get a level the encoder accepts; they are left out by the caller.
  for (const name of trend.covariates) {
    const v = (filled[name] as { values: Float64Array }).values;
    const first = trend.levels?.[name]?.[0];
    for (let k = 0; k < m; k++) if (missing[k]) v[k] = first !== undefined ? Number(first) : 0;
  }
  return { covariates: encodeCovariates(trend, filled, m, { what: 'point' }), missing };
}

/**
 * Encoded covariates of every grid cell (nx·ny rows × q, row-major from the top row) from one raster
 * per covariate, and the grid with the cells that lack a covariate value masked out (counted in a
 * warning). Categorical covariates need integer-code levels (a raster holds numbers).
 * With `nodes` k (block support, realisations), also `nodeCovariates`: the covariates at the k × k
 * points of every cell (nx·ny cells × k² rows × q, the points row by row from the north-west at
 * ((a + ½)/k, (b + ½)/k) of the cell, the order of core/prediction/block-kriging.ts `blockOffsets` and of the
 * simulation lattice), and a cell is masked out when any of its points lacks a value.
 */
export function gridCovariates(
  grid: Grid, trend: CovariateTrend, rasters: ReadonlyArray<CovariateRaster>, workCrs: string, options: { nodes?: number } = {},
): { grid: Grid; covariates: Float64Array; nodeCovariates?: Float64Array; warnings: Warning[] } {
  const all = cellCentres({ ...grid, mask: undefined });
  const m = all.x.length;
  const centre = rasterCovariatesAt(trend, rasters, all.x, all.y, workCrs);
  const missing = Uint8Array.from(centre.missing);
  const k = options.nodes ?? 1;
  let nodeCovariates: Float64Array | undefined;
  if (options.nodes !== undefined) {
    const kk = k * k;
    const nx = new Float64Array(m * kk);
    const ny = new Float64Array(m * kk);
    for (let c = 0; c < m; c++) {
      const i = c % grid.nx, j = Math.floor(c / grid.nx);
      for (let s = 0; s < kk; s++) {
        nx[c * kk + s] = grid.x0 + (i + ((s % k) + 0.5) / k) * grid.cell;
        ny[c * kk + s] = grid.y0 - (j + (Math.floor(s / k) + 0.5) / k) * grid.cell;
      }
    }
    const nodes = rasterCovariatesAt(trend, rasters, nx, ny, workCrs);
    for (let c = 0; c < m; c++) for (let s = 0; s < kk; s++) if (nodes.missing[c * kk + s]) missing[c] = 1;
    nodeCovariates = nodes.covariates;
  }
  const mask = new Uint8Array(m);
  let lost = 0;
  let kept = 0;
  for (let c = 0; c < m; c++) {
    const inArea = !grid.mask || grid.mask[c] === 1;
    if (inArea && missing[c]) lost++;
    mask[c] = inArea && !missing[c] ? 1 : 0;
    kept += mask[c];
  }
  if (kept === 0) {
    throw new GapwiseError('bad-option', `None of the ${m} grid cells has a value in every covariate raster (${trend.covariates.join(', ')}); expected rasters that cover the grid.`);
  }
  const warnings: Warning[] = [];
  if (lost > 0) {
    warnings.push({ code: 'covariate-no-data', message: `${lost} of ${lost + kept} grid cells have no value in a covariate raster (outside it, or no-data there${k > 1 ? `, at one of its ${k} × ${k} block points` : ''}) and are left empty.` });
  }
  return { grid: { ...grid, mask }, covariates: centre.covariates, ...(nodeCovariates ? { nodeCovariates } : {}), warnings };
}
