/**
 * The pure part of drawing a working-CRS grid on a web map: tile pixel → working-CRS position →
 * grid cell → colour. No Leaflet and no DOM here, so it is tested in Node.
 *
 * A map tile's pixels are not aligned with a projected grid (a UTM grid is rotated and bent in Web
 * Mercator), so each pixel must be looked up through the inverse projection. Projecting every pixel
 * is slow; projecting a coarse lattice (every `step` pixels, tile corners included) and
 * interpolating bilinearly inside each lattice cell is exact to well under a grid cell, because the
 * projection is smooth over a lattice cell. The lattice stores working-CRS x, y (not grid indices), so
 * it stays valid when the grid or the values change; only a new projection needs a new lattice.
 */
import type { Grid } from '../../core/geometry/grid.ts';

/** Global pixel position at the tile's zoom → [longitude, latitude] in degrees. */
export type PixelToLngLat = (px: number, py: number) => [number, number];
/** [longitude, latitude] → working-CRS [x, y] in metres. */
export type ToWork = (lon: number, lat: number) => [number, number];

export interface TileLattice {
  /** Tile width and height in pixels. */
  width: number;
  height: number;
  /** Lattice spacing in pixels. */
  step: number;
  /** Lattice nodes per row and per column. */
  cols: number;
  rows: number;
  /** Pixel offsets of the node columns and rows inside the tile (0 … width, 0 … height). */
  nodeX: Float64Array;
  nodeY: Float64Array;
  /** Working-CRS x and y at each node (row-major, rows × cols); NaN where the projection failed. */
  x: Float64Array;
  y: Float64Array;
}

function nodeOffsets(size: number, step: number): Float64Array {
  const n = Math.ceil(size / step) + 1;
  const out = new Float64Array(n);
  for (let k = 0; k < n; k++) out[k] = Math.min(size, k * step);
  return out;
}

/**
 * Projects the lattice nodes of one tile whose upper-left pixel is (originX, originY) in global
 * pixel coordinates. Cost: (width/step + 1)·(height/step + 1) inverse projections.
 */
export function buildTileLattice(
  originX: number, originY: number, width: number, height: number, step: number,
  pixelToLngLat: PixelToLngLat, toWork: ToWork,
): TileLattice {
  if (!(step >= 1)) throw new RangeError(`Expected a lattice step of at least 1 pixel, got ${step}.`);
  const nodeX = nodeOffsets(width, step);
  const nodeY = nodeOffsets(height, step);
  const cols = nodeX.length, rows = nodeY.length;
  const x = new Float64Array(cols * rows);
  const y = new Float64Array(cols * rows);
  for (let r = 0; r < rows; r++) {
    for (let c = 0; c < cols; c++) {
      const [lon, lat] = pixelToLngLat(originX + nodeX[c], originY + nodeY[r]);
      let w: [number, number];
      try {
        w = toWork(lon, lat);
      } catch {
        w = [NaN, NaN];
      }
      const k = r * cols + c;
      x[k] = Number.isFinite(w[0]) ? w[0] : NaN;
      y[k] = Number.isFinite(w[1]) ? w[1] : NaN;
    }
  }
  return { width, height, step, cols, rows, nodeX, nodeY, x, y };
}

/**
 * Working-CRS [x, y] at tile pixel offset (px, py) (fractional; a pixel's centre is +0.5), by
 * bilinear interpolation between the four surrounding lattice nodes.
 */
export function latticePosition(lattice: TileLattice, px: number, py: number): [number, number] {
  const { nodeX, nodeY, cols, step } = lattice;
  const c = Math.min(lattice.cols - 2, Math.max(0, Math.floor(px / step)));
  const r = Math.min(lattice.rows - 2, Math.max(0, Math.floor(py / step)));
  const u = (px - nodeX[c]) / (nodeX[c + 1] - nodeX[c]);
  const v = (py - nodeY[r]) / (nodeY[r + 1] - nodeY[r]);
  const k = r * cols + c;
  const w00 = (1 - u) * (1 - v), w10 = u * (1 - v), w01 = (1 - u) * v, w11 = u * v;
  const { x, y } = lattice;
  return [
    w00 * x[k] + w10 * x[k + 1] + w01 * x[k + cols] + w11 * x[k + cols + 1],
    w00 * y[k] + w10 * y[k + 1] + w01 * y[k + cols] + w11 * y[k + cols + 1],
  ];
}

/** What to paint: values on the grid, a colour table and the value range it spans. */
export interface PaintSource {
  grid: Grid;
  /** One value per grid cell (row-major from the top); NaN = nothing drawn. */
  values: ArrayLike<number>;
  /** RGBA lookup table (see buildLut in ./colour-scales.ts). */
  lut: Uint8ClampedArray;
  /** Values mapped to the first and last table entries (clamped outside). */
  domain: readonly [number, number];
  /** Per-cell sd; with hideAboveSd, cells whose sd is above it are left transparent. */
  sd?: ArrayLike<number> | null;
  hideAboveSd?: number | null;
  /** Colours spaced by ln(value) between the domain's ends (both above 0); values ≤ 0 take the first colour. */
  log?: boolean;
}

/**
 * Fills `out` (RGBA, width·height·4) with the colours of the cells under each pixel centre
 * (nearest cell); transparent outside the grid, outside the mask, for NaN values, and where sd is
 * above hideAboveSd. Returns the number of painted (opaque) pixels. `fromRow` and `toRow` (lattice
 * rows, end excluded; default all `lattice.rows - 1`) paint one band of the tile, so a caller can
 * spread a tile over several short tasks; the bands together give the same pixels as one call.
 */
export function paintTile(
  lattice: TileLattice, source: PaintSource, out: Uint8ClampedArray,
  fromRow = 0, toRow = lattice.rows - 1,
): number {
  const { width, height, step, cols, nodeX, nodeY } = lattice;
  const { grid, values, lut, domain } = source;
  const { nx, ny, cell, x0, y0, mask } = grid;
  const sd = source.sd;
  const hide = sd && source.hideAboveSd != null && Number.isFinite(source.hideAboveSd) ? source.hideAboveSd : Infinity;
  const entries = lut.length / 4;
  const log = source.log === true && domain[0] > 0 && domain[1] > domain[0];
  const lo = log ? Math.log(domain[0]) : domain[0];
  const span = log ? Math.log(domain[1]) - lo : domain[1] - domain[0];
  const scale = span > 0 ? (entries - 1) / span : 0;
  const mid = span > 0 ? 0 : (entries - 1) / 2;
  let painted = 0;
  // Grid coordinates (fi, fj) are affine in (x, y), so interpolating them is the same as
  // interpolating x, y first; do it per lattice cell with running increments.
  const rowEnd = Math.min(toRow, lattice.rows - 1);
  for (let r = Math.max(0, fromRow); r < rowEnd; r++) {
    for (let c = 0; c + 1 < cols; c++) {
      const k = r * cols + c;
      const fi00 = (lattice.x[k] - x0) / cell, fj00 = (y0 - lattice.y[k]) / cell;
      const fi10 = (lattice.x[k + 1] - x0) / cell, fj10 = (y0 - lattice.y[k + 1]) / cell;
      const fi01 = (lattice.x[k + cols] - x0) / cell, fj01 = (y0 - lattice.y[k + cols]) / cell;
      const fi11 = (lattice.x[k + cols + 1] - x0) / cell, fj11 = (y0 - lattice.y[k + cols + 1]) / cell;
      const pxFrom = nodeX[c], pxTo = nodeX[c + 1], pyFrom = nodeY[r], pyTo = nodeY[r + 1];
      const du = 1 / (pxTo - pxFrom), dv = 1 / (pyTo - pyFrom);
      // Skip a lattice cell lying wholly outside the grid (NaN comparisons fall through to skip).
      const iMin = Math.min(fi00, fi10, fi01, fi11), iMax = Math.max(fi00, fi10, fi01, fi11);
      const jMin = Math.min(fj00, fj10, fj01, fj11), jMax = Math.max(fj00, fj10, fj01, fj11);
      const outside = !(iMax >= 0 && iMin < nx && jMax >= 0 && jMin < ny);
      for (let py = pyFrom; py < pyTo; py++) {
        const v = (py + 0.5 - pyFrom) * dv;
        const rowOut = py * width;
        // Left and right edges of this pixel row inside the lattice cell.
        const fiL = fi00 + (fi01 - fi00) * v, fjL = fj00 + (fj01 - fj00) * v;
        const fiR = fi10 + (fi11 - fi10) * v, fjR = fj10 + (fj11 - fj10) * v;
        for (let px = pxFrom; px < pxTo; px++) {
          const o = 4 * (rowOut + px);
          if (!outside) {
            const u = (px + 0.5 - pxFrom) * du;
            const i = Math.floor(fiL + (fiR - fiL) * u);
            const j = Math.floor(fjL + (fjR - fjL) * u);
            if (i >= 0 && i < nx && j >= 0 && j < ny) {
              const cellIndex = j * nx + i;
              const value = values[cellIndex];
              if ((!mask || mask[cellIndex] === 1) && value === value && !(sd && sd[cellIndex] > hide)) {
                let e = span > 0 ? Math.round(((log ? (value > 0 ? Math.log(value) : -Infinity) : value) - lo) * scale) : mid;
                if (e < 0) e = 0;
                else if (e > entries - 1) e = entries - 1;
                const l = 4 * Math.round(e);
                out[o] = lut[l];
                out[o + 1] = lut[l + 1];
                out[o + 2] = lut[l + 2];
                out[o + 3] = lut[l + 3];
                painted++;
                continue;
              }
            }
          }
          out[o] = 0;
          out[o + 1] = 0;
          out[o + 2] = 0;
          out[o + 3] = 0;
        }
      }
    }
  }
  return painted;
}

/** Mean and sd of the cell under a point, for the cursor readout; null outside the drawn cells. */
export interface CellReading {
  /** Row-major cell index. */
  index: number;
  /** Column and row. */
  i: number;
  j: number;
  value: number;
  sd: number | null;
  /** Working-CRS position of the point. */
  x: number;
  y: number;
}

/** Reads the cell under [lon, lat]; null outside the grid or mask, or where the value is NaN. */
export function readCell(
  grid: Grid, values: ArrayLike<number> | null, sd: ArrayLike<number> | null | undefined,
  toWork: ToWork, lon: number, lat: number,
): CellReading | null {
  if (!values) return null;
  let w: [number, number];
  try {
    w = toWork(lon, lat);
  } catch {
    return null;
  }
  const i = Math.floor((w[0] - grid.x0) / grid.cell);
  const j = Math.floor((grid.y0 - w[1]) / grid.cell);
  if (!(i >= 0 && i < grid.nx && j >= 0 && j < grid.ny)) return null;
  const index = j * grid.nx + i;
  if (grid.mask && grid.mask[index] !== 1) return null;
  const value = values[index];
  if (Number.isNaN(value)) return null;
  const s = sd ? sd[index] : NaN;
  return { index, i, j, value, sd: Number.isNaN(s) ? null : s, x: w[0], y: w[1] };
}
