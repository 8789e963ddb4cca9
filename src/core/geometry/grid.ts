/**
 * Regular north-up grids in the working CRS: the cells every surface is computed on.
 *
 * A grid is plain data {x0, y0, cell, nx, ny, mask?}: (x0, y0) is the upper-left corner, cells are
 * square, column i runs east and row j runs south, so the centre of cell (i, j) is
 * (x0 + (i + ½)·cell, y0 − (j + ½)·cell) and its index in every surface array is j·nx + i
 * (row-major from the top row, the order of GeoTIFF and canvas images). `mask[k] = 1` marks cells
 * inside the area (a boundary); without a mask every cell is in.
 * Corners snap to whole multiples of the cell size, so grids of one cell size line up.
 * Boundary cells: a cell is in when its centre lies inside a polygon (even–odd rule per polygon,
 * holes subtract, polygons add), found by a scan line per row; a centre exactly on an edge counts
 * as in on right-hand and bottom edges, out on left-hand and top ones. Units: working-CRS metres.
 * Cost: O(nx·ny) memory for the mask, O(ny·edges + nx·ny) to build it.
 */
import { GapwiseError } from '../shared/errors.ts';
import { pointInPolygons } from './polygon.ts';

export interface Grid {
  /** x of the upper-left corner (west edge), metres. */
  x0: number;
  /** y of the upper-left corner (north edge), metres. */
  y0: number;
  /** Cell width and height, metres. */
  cell: number;
  /** Columns. */
  nx: number;
  /** Rows. */
  ny: number;
  /** 1 = cell is inside the area; absent = all cells are in. Length nx·ny, row-major from the top. */
  mask?: Uint8Array;
}

/** A ring of [x, y] vertices (closing vertex optional); a polygon is [outer, ...holes]. */
export type { Polygon, Ring } from './polygon.ts';
import type { Polygon } from './polygon.ts';

/** The most cells a grid may have (about 48 MB for mean, sd and P(exceed) as Float32). */
export const MAX_CELLS = 4_000_000;
/** The longest side a grid may have: 10,000 km, a quarter of the Earth's circumference (metres). */
export const MAX_GRID_SIDE = 10_000_000;
/** The largest padding, as a fraction of the larger side of the samples' extent, on each side. */
export const MAX_PADDING = 10;

function km(m: number): string {
  if (m >= 1e12) return `${(m / 1000).toExponential(2)} km`;
  return m >= 1e5 ? `${Number((m / 1000).toPrecision(3)).toLocaleString('en')} km` : `${Number(m.toPrecision(3))} m`;
}

function checkCell(cell: number): void {
  if (typeof cell !== 'number' || !Number.isFinite(cell) || cell <= 0) {
    throw new GapwiseError('bad-option', `Expected the cell size to be a positive number of metres, got ${String(cell)}.`);
  }
}

function checkSize(nx: number, ny: number, cell: number): void {
  const cells = nx * ny;
  if (cells > MAX_CELLS) {
    // From the grid's sides rather than cells / MAX_CELLS, which overflows for a tiny cell.
    const suggest = Math.ceil(Math.sqrt(((nx * cell) / MAX_CELLS) * (ny * cell)));
    const shown = (v: number) => (v >= 1e15 ? v.toExponential(2) : v.toLocaleString('en'));
    throw new GapwiseError('bad-option',
      `The grid would have ${shown(cells)} cells (${shown(nx)} × ${shown(ny)}) at ${cell} m; the most is ${MAX_CELLS.toLocaleString('en')}: choose a cell of at least ${suggest} m.`);
  }
}

/**
 * A grid covering [xmin, xmax] × [ymin, ymax] widened by `pad` metres on every side, with corners
 * snapped outward to multiples of `cell`. Always at least one cell.
 */
export function gridFromExtent(xmin: number, ymin: number, xmax: number, ymax: number, cell: number, pad = 0): Grid {
  checkCell(cell);
  for (const [v, name] of [[xmin, 'xmin'], [ymin, 'ymin'], [xmax, 'xmax'], [ymax, 'ymax'], [pad, 'pad']] as const) {
    if (!Number.isFinite(v)) throw new GapwiseError('bad-option', `Expected ${name} to be a finite number, got ${String(v)}.`);
  }
  if (xmax < xmin || ymax < ymin) {
    throw new GapwiseError('bad-option', `Expected xmin ≤ xmax and ymin ≤ ymax, got x ${xmin}..${xmax}, y ${ymin}..${ymax}.`);
  }
  if (pad < 0) throw new GapwiseError('bad-option', `Expected a padding of 0 m or more, got ${pad}.`);
  // The grid's own sides: the padded extent, or one cell when the cell is larger than that.
  const width = Math.max(xmax - xmin + 2 * pad, cell), height = Math.max(ymax - ymin + 2 * pad, cell);
  if (width > MAX_GRID_SIDE || height > MAX_GRID_SIDE) {
    throw new GapwiseError('bad-option',
      `The grid would span ${km(width)} × ${km(height)}${width === cell ? ` (one cell of ${km(cell)})` : ''} (an extent of ${km(xmax - xmin)} × ${km(ymax - ymin)}${pad > 0 ? ` with ${km(pad)} of padding on each side` : ''}); the most is ${km(MAX_GRID_SIDE)} a side: choose a smaller padding or area.`);
  }
  const x0 = Math.floor((xmin - pad) / cell) * cell;
  const y0 = Math.ceil((ymax + pad) / cell) * cell;
  const nx = Math.max(1, Math.ceil((xmax + pad - x0) / cell - 1e-9));
  const ny = Math.max(1, Math.ceil((y0 - (ymin - pad)) / cell - 1e-9));
  checkSize(nx, ny, cell);
  return { x0, y0, cell, nx, ny };
}

/**
 * A grid over the bounding box of the polygons (working-CRS coordinates, GeoJSON-like rings)
 * whose mask keeps the cells with their centre inside any polygon.
 */
export function gridForPolygons(polygons: ReadonlyArray<Polygon>, cell: number): Grid {
  checkCell(cell);
  if (!Array.isArray(polygons) || polygons.length === 0) {
    throw new GapwiseError('bad-geometry', 'Expected at least one boundary polygon, got none.');
  }
  let xmin = Infinity, ymin = Infinity, xmax = -Infinity, ymax = -Infinity;
  polygons.forEach((poly, p) => {
    if (!Array.isArray(poly) || poly.length === 0) throw new GapwiseError('bad-geometry', `Expected polygon ${p} to have an outer ring, got none.`, { row: p });
    poly.forEach((ring, r) => {
      if (!Array.isArray(ring) || ring.length < 3) {
        throw new GapwiseError('bad-geometry', `Expected ring ${r} of polygon ${p} to have at least 3 vertices, got ${Array.isArray(ring) ? ring.length : 0}.`, { row: p });
      }
      for (const v of ring) {
        const x = v[0], y = v[1];
        if (!Number.isFinite(x) || !Number.isFinite(y)) {
          throw new GapwiseError('bad-geometry', `Expected finite vertex coordinates in polygon ${p}, got [${String(x)}, ${String(y)}].`, { row: p });
        }
        if (r === 0) {
          if (x < xmin) xmin = x;
          if (x > xmax) xmax = x;
          if (y < ymin) ymin = y;
          if (y > ymax) ymax = y;
        }
      }
    });
  });
  const grid = gridFromExtent(xmin, ymin, xmax, ymax, cell, 0);
  const { nx, ny, x0, y0 } = grid;
  const mask = new Uint8Array(nx * ny);
  const crossings: number[] = [];
  const rowMask = new Uint8Array(nx);
  for (let j = 0; j < ny; j++) {
    const yc = y0 - (j + 0.5) * cell;
    for (const poly of polygons) {
      crossings.length = 0;
      for (const ring of poly) {
        const m = ring.length;
        for (let k = 0, l = m - 1; k < m; l = k++) {
          const ya = ring[l][1], yb = ring[k][1];
          // Half-open rule: an edge counts when yc lies in [min, max) of its ends.
          if ((ya <= yc) !== (yb <= yc)) {
            const xa = ring[l][0], xb = ring[k][0];
            crossings.push(xa + ((yc - ya) / (yb - ya)) * (xb - xa));
          }
        }
      }
      if (crossings.length < 2) continue;
      crossings.sort((a, b) => a - b);
      rowMask.fill(0);
      for (let c = 0; c + 1 < crossings.length; c += 2) {
        // Cells whose centre x0 + (i + ½)·cell lies in (left, right]: a centre on a right-hand edge
        // is in, as in GDAL's rasterizer, so masks agree with GDAL-burnt boundaries.
        const iFrom = Math.max(0, Math.floor((crossings[c] - x0) / cell - 0.5) + 1);
        const iTo = Math.min(nx - 1, Math.floor((crossings[c + 1] - x0) / cell - 0.5));
        for (let i = iFrom; i <= iTo; i++) rowMask[i] = 1;
      }
      const row = j * nx;
      for (let i = 0; i < nx; i++) if (rowMask[i]) mask[row + i] = 1;
    }
  }
  let inside = 0;
  for (let k = 0; k < mask.length; k++) inside += mask[k];
  if (inside === 0) {
    throw new GapwiseError('bad-geometry', `The boundary holds no cell centre at a cell size of ${cell} m; expected at least one: choose a smaller cell.`);
  }
  return { ...grid, mask };
}

/** Number of cells that will be computed: the masked-in cells, or nx·ny without a mask. */
export function cellCount(grid: Grid): number {
  if (!grid.mask) return grid.nx * grid.ny;
  let c = 0;
  for (let k = 0; k < grid.mask.length; k++) c += grid.mask[k];
  return c;
}

/** True when cell k (row-major index) is inside the area. */
function isActive(grid: Grid, k: number): boolean {
  return !grid.mask || grid.mask[k] === 1;
}

/** Centre [x, y] of cell (column i, row j). */
export function cellCentre(grid: Grid, i: number, j: number): [number, number] {
  return [grid.x0 + (i + 0.5) * grid.cell, grid.y0 - (j + 0.5) * grid.cell];
}

/**
 * Centres of the active cells in rows [rowStart, rowEnd), in row-major order, with their indices
 * in the whole grid.
 */
export function cellCentres(grid: Grid, rowStart = 0, rowEnd = grid.ny): { x: Float64Array; y: Float64Array; index: Uint32Array } {
  const { nx, cell, x0, y0, mask } = grid;
  const a = Math.max(0, rowStart), b = Math.min(grid.ny, rowEnd);
  let count = 0;
  if (mask) { for (let k = a * nx; k < b * nx; k++) count += mask[k]; } else count = Math.max(0, b - a) * nx;
  const x = new Float64Array(count), y = new Float64Array(count), index = new Uint32Array(count);
  let c = 0;
  for (let j = a; j < b; j++) {
    const yc = y0 - (j + 0.5) * cell;
    for (let i = 0; i < nx; i++) {
      const k = j * nx + i;
      if (mask && mask[k] !== 1) continue;
      x[c] = x0 + (i + 0.5) * cell;
      y[c] = yc;
      index[c] = k;
      c++;
    }
  }
  return { x, y, index };
}

/**
 * Fractional grid position of a working-CRS point: fi = (x − x0)/cell, fj = (y0 − y)/cell.
 * The point is in cell (⌊fi⌋, ⌊fj⌋); cell centres sit at half-integers.
 */
export function fractionalIndex(grid: Grid, x: number, y: number): [number, number] {
  return [(x - grid.x0) / grid.cell, (grid.y0 - y) / grid.cell];
}

/** Row-major index of the cell holding (x, y), or −1 outside the grid or outside the mask. */
export function cellIndexAt(grid: Grid, x: number, y: number): number {
  const i = Math.floor((x - grid.x0) / grid.cell);
  const j = Math.floor((grid.y0 - y) / grid.cell);
  if (!(i >= 0 && i < grid.nx && j >= 0 && j < grid.ny)) return -1;
  const k = j * grid.nx + i;
  return isActive(grid, k) ? k : -1;
}

/** The grid's outer edges in working-CRS metres. */
export function gridBounds(grid: Grid): { xmin: number; ymin: number; xmax: number; ymax: number } {
  return { xmin: grid.x0, ymin: grid.y0 - grid.ny * grid.cell, xmax: grid.x0 + grid.nx * grid.cell, ymax: grid.y0 };
}

export interface CostOptions {
  /** Workers computing row bands in parallel (default 1). */
  workers?: number;
  /** Sustained floating-point rate per worker (default 1.2e9: a plain Float64Array Cholesky in Node here). */
  flopsPerSecond?: number;
  /** Flops per covariance evaluation: about 25 for closed forms (default), a few hundred for a general-ν Matérn. */
  covarianceFlops?: number;
}

/**
 * Rough cost of a kriging surface with n samples on `cells` cells (exact kriging, one factor per
 * worker): flops = n³/3 (Cholesky) + cells·(n² (triangular solve for the variance) + n·(covarianceFlops + 4)
 * (cross-covariances, mean weights)); seconds = (n³/3 + per-cell part / workers) / flopsPerSecond.
 * An order-of-magnitude guide for the screen ("about 20 s"), not a promise.
 */
export function estimateSurfaceCost(n: number, cells: number, options: CostOptions = {}): { flops: number; seconds: number } {
  const workers = Math.max(1, Math.floor(options.workers ?? 1));
  const rate = options.flopsPerSecond ?? 1.2e9;
  const cov = options.covarianceFlops ?? 25;
  const factor = (n * n * n) / 3;
  const perCells = cells * (n * n + n * (cov + 4));
  return { flops: factor * workers + perCells, seconds: (factor + perCells / workers) / rate };
}

/** Rounds a length to 1, 2, 2.5 or 5 × 10^k metres (cells people can say aloud). */
export function roundCell(size: number): number {
  if (!(size > 0) || !Number.isFinite(size)) return 1;
  const p = 10 ** Math.floor(Math.log10(size));
  const f = size / p;
  const nice = f < 1.5 ? 1 : f < 2.25 ? 2 : f < 3.5 ? 2.5 : f < 7.5 ? 5 : 10;
  return nice * p;
}

/** A cell size giving about `target` cells over a width × height area (metres). */
export function autoCellSize(width: number, height: number, target = 40_000): number {
  const area = Math.max(width, 1) * Math.max(height, 1);
  return roundCell(Math.sqrt(area / target));
}

/** Bounding box of points. */
export function extentOf(x: ArrayLike<number>, y: ArrayLike<number>): { xmin: number; ymin: number; xmax: number; ymax: number } {
  return extentOfAll([x], [y]);
}

/**
 * Bounding box of several point sets together (`xs[k]`, `ys[k]` one set's coordinates), e.g. the
 * samples and the candidate sites; Infinity/-Infinity bounds when there is no point at all.
 */
export function extentOfAll(xs: readonly ArrayLike<number>[], ys: readonly ArrayLike<number>[]): { xmin: number; ymin: number; xmax: number; ymax: number } {
  let xmin = Infinity, ymin = Infinity, xmax = -Infinity, ymax = -Infinity;
  for (let k = 0; k < xs.length; k++) {
    const x = xs[k], y = ys[k];
    for (let i = 0; i < x.length; i++) {
      if (x[i] < xmin) xmin = x[i];
      if (x[i] > xmax) xmax = x[i];
      if (y[i] < ymin) ymin = y[i];
      if (y[i] > ymax) ymax = y[i];
    }
  }
  return { xmin, ymin, xmax, ymax };
}

/** Options of planSurfaceGrid (plain data). */
export interface GridPlanOptions {
  /** Sample coordinates (working CRS). */
  x: ArrayLike<number>;
  y: ArrayLike<number>;
  /** Fraction of the larger side added around the samples' extent (ignored with polygons). */
  padding: number;
  /** Metres; 0 or less = automatic (about `targetCells` cells, rounded to 1, 2, 2.5 or 5 × 10^k). */
  cellSize: number;
  /** Boundary polygons in the working CRS; the grid covers them and masks cells outside. */
  polygons?: ReadonlyArray<Polygon> | null;
  targetCells?: number;
}

/**
 * The grid a surface is computed on: over the boundary polygons when given (cells outside masked),
 * else over the samples' extent padded by `padding` × its larger side. The app, project files and the
 * CLI all plan grids here, so the same choices give the same grid everywhere.
 */
export function planSurfaceGrid(o: GridPlanOptions): { grid: Grid; cell: number; auto: boolean } {
  const e = extentOf(o.x, o.y);
  const useBoundary = !!o.polygons && o.polygons.length > 0;
  let width = e.xmax - e.xmin;
  let height = e.ymax - e.ymin;
  if (useBoundary) {
    const bx: number[] = [];
    const by: number[] = [];
    for (const p of o.polygons!) for (const v of p[0]) { bx.push(v[0]); by.push(v[1]); }
    const b = extentOf(bx, by);
    width = b.xmax - b.xmin;
    height = b.ymax - b.ymin;
  }
  if (!useBoundary && !(o.padding <= MAX_PADDING)) {
    throw new GapwiseError('bad-option', `Expected a padding from 0 to ${MAX_PADDING} times the larger side of the samples' extent, got ${o.padding}.`);
  }
  const pad = useBoundary ? 0 : Math.max(0, o.padding) * Math.max(width, height);
  const auto = !(o.cellSize > 0);
  const cell = auto ? autoCellSize(width + 2 * pad, height + 2 * pad, o.targetCells ?? 40_000) : o.cellSize;
  const grid = useBoundary ? gridForPolygons(o.polygons!, cell) : gridFromExtent(e.xmin, e.ymin, e.xmax, e.ymax, cell, pad);
  return { grid, cell, auto };
}

/**
 * The grid with the cells whose centre lies outside every polygon masked out (an existing mask is
 * kept). Throws 'bad-geometry' when no cell centre is inside. O(cells · vertices).
 */
export function clipToPolygons(grid: Grid, polygons: ReadonlyArray<Polygon>): Grid {
  const { nx, ny, x0, y0, cell } = grid;
  const mask = new Uint8Array(nx * ny);
  let inside = 0;
  for (let j = 0; j < ny; j++) {
    const yc = y0 - (j + 0.5) * cell;
    for (let i = 0; i < nx; i++) {
      const k = j * nx + i;
      if (grid.mask && !grid.mask[k]) continue;
      if (pointInPolygons(x0 + (i + 0.5) * cell, yc, polygons)) {
        mask[k] = 1;
        inside++;
      }
    }
  }
  if (inside === 0) throw new GapwiseError('bad-geometry', `The boundary holds no cell centre of the ${nx} × ${ny} grid; expected at least one.`);
  return { ...grid, mask };
}
