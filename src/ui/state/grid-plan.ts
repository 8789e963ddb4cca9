/**
 * Grid planning for the Surface step: the automatic cell size, the grid over the samples' extent
 * (padded) or the boundary, and the cell count and rough time the user sees before computing.
 */
import { planSurfaceGrid, cellCount, estimateSurfaceCost, type Grid, type Polygon } from '../../core/grid.ts';

export { roundCell, autoCellSize, extentOf } from '../../core/grid.ts';

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
  const { grid, cell, auto } = planSurfaceGrid(o);
  const cells = cellCount(grid);
  const seconds = estimateSurfaceCost(o.x.length, cells, { workers: o.workers, flopsPerSecond: o.flopsPerSecond }).seconds;
  return { grid, cell, auto, cells, seconds };
}
