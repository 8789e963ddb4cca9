/**
 * Grid planning for the Surface step: the automatic cell size, the grid over the samples' extent
 * (padded) or the boundary, and the cell count and rough time the user sees before computing.
 */
import { gridFromExtent, gridForPolygons, cellCount, estimateSurfaceCost, type Grid, type Polygon } from '../../core/grid.ts';

/** Rounds a length to 1, 2, 2.5 or 5 × 10^k metres (cells people can say aloud). */
export function roundCell(size: number): number {
  if (!(size > 0) || !Number.isFinite(size)) return 1;
  const p = 10 ** Math.floor(Math.log10(size));
  const f = size / p;
  const nice = f < 1.5 ? 1 : f < 2.25 ? 2 : f < 3.5 ? 2.5 : f < 7.5 ? 5 : 10;
  return nice * p;
}

/** A cell size giving about `target` cells over a width × height area. */
export function autoCellSize(width: number, height: number, target = 40_000): number {
  const area = Math.max(width, 1) * Math.max(height, 1);
  return roundCell(Math.sqrt(area / target));
}

export interface Extent {
  xmin: number;
  ymin: number;
  xmax: number;
  ymax: number;
}

export function extentOf(x: ArrayLike<number>, y: ArrayLike<number>): Extent {
  let xmin = Infinity, ymin = Infinity, xmax = -Infinity, ymax = -Infinity;
  for (let i = 0; i < x.length; i++) {
    if (x[i] < xmin) xmin = x[i];
    if (x[i] > xmax) xmax = x[i];
    if (y[i] < ymin) ymin = y[i];
    if (y[i] > ymax) ymax = y[i];
  }
  return { xmin, ymin, xmax, ymax };
}

export interface GridPlan {
  grid: Grid;
  /** Cell size used (the automatic one when none was given). */
  cell: number;
  auto: boolean;
  /** Cells to compute (inside the boundary when there is one). */
  cells: number;
  /** Rough seconds with `workers` workers (see estimateSurfaceCost). */
  seconds: number;
}

export interface PlanOptions {
  /** Samples (working CRS) for the extent. */
  x: ArrayLike<number>;
  y: ArrayLike<number>;
  /** Padding as a fraction of the larger side of the extent. */
  padding: number;
  /** Cell size in metres; 0 or less = automatic. */
  cellSize: number;
  /** Boundary polygons (working CRS, GeoJSON-like rings); used when given. */
  polygons?: ReadonlyArray<Polygon> | null;
  workers: number;
  /** Floating-point rate per worker measured on an earlier surface (default: estimateSurfaceCost's). */
  flopsPerSecond?: number;
}

/**
 * The rate (flops per second per worker) a finished surface ran at, for later estimates: the
 * estimate's flop count divided by the measured seconds.
 */
export function measuredRate(n: number, cells: number, workers: number, seconds: number): number | undefined {
  if (!(seconds > 0)) return undefined;
  return estimateSurfaceCost(n, cells, { workers, flopsPerSecond: 1 }).seconds / seconds;
}

/** The grid the surface will be computed on, with its cell count and time estimate. */
export function planGrid(o: PlanOptions): GridPlan {
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
  const pad = useBoundary ? 0 : Math.max(0, o.padding) * Math.max(width, height);
  const auto = !(o.cellSize > 0);
  const cell = auto ? autoCellSize(width + 2 * pad, height + 2 * pad) : o.cellSize;
  const grid = useBoundary ? gridForPolygons(o.polygons!, cell) : gridFromExtent(e.xmin, e.ymin, e.xmax, e.ymax, cell, pad);
  const cells = cellCount(grid);
  const seconds = estimateSurfaceCost(o.x.length, cells, { workers: o.workers, flopsPerSecond: o.flopsPerSecond }).seconds;
  return { grid, cell, auto, cells, seconds };
}
