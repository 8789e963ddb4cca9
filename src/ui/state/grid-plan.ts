/**
 * Grid planning for the Surface step: the automatic cell size, the grid over the samples' extent
 * (padded) or the boundary, and the cell count and rough time the user sees before computing.
 */
import { planSurfaceGrid, cellCount, estimateSurfaceCost, type Grid, type Polygon } from '../../core/geometry/grid.ts';

export { roundCell, autoCellSize, extentOf } from '../../core/geometry/grid.ts';

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
  /** Seconds a surface takes besides its arithmetic (starting workers, sending bands), measured too. */
  overheadSeconds?: number;
}

/** How fast the last surface ran: the rate of its arithmetic and the time spent besides it. */
export interface SurfaceSpeed {
  /** Floating-point operations per second per worker. */
  flopsPerSecond: number;
  /** Fixed seconds per surface besides the arithmetic. */
  overheadSeconds: number;
}

/**
 * The speed of a finished surface from its progress: between a band reported part way through and
 * the last one every worker is busy, so the cells done per second there give the rate of the
 * arithmetic; what the whole run took beyond that arithmetic is the fixed overhead. Without two
 * progress points apart, the whole time is put down to arithmetic (measuredRate).
 */
export function measureSurfaceSpeed(o: {
  n: number; cells: number; workers: number; seconds: number;
  progress: ReadonlyArray<{ seconds: number; done: number }>;
}): SurfaceSpeed | undefined {
  if (!(o.seconds > 0) || !(o.cells > 0)) return undefined;
  const p = o.progress.filter((q) => q.done > 0 && q.done <= o.cells && q.seconds > 0);
  // From the band that ends past 40 % of the cells: the workers' code is warm by then, so the rate is
  // the one a later, larger surface runs at.
  const first = p.find((q) => q.done >= 0.4 * o.cells) ?? p[0];
  const last = p[p.length - 1];
  if (first && last && last.done - first.done >= 0.25 * o.cells && last.seconds > first.seconds) {
    const perCell = (last.seconds - first.seconds) / (last.done - first.done);
    const cellFlops = estimateSurfaceCost(o.n, o.cells, { workers: o.workers, flopsPerSecond: 1 }).seconds
      - estimateSurfaceCost(o.n, 0, { workers: o.workers, flopsPerSecond: 1 }).seconds;
    const flopsPerSecond = cellFlops / (perCell * o.cells);
    const arithmetic = estimateSurfaceCost(o.n, o.cells, { workers: o.workers, flopsPerSecond }).seconds;
    return { flopsPerSecond, overheadSeconds: Math.max(0, o.seconds - arithmetic) };
  }
  const rate = measuredRate(o.n, o.cells, o.workers, o.seconds);
  return rate === undefined ? undefined : { flopsPerSecond: rate, overheadSeconds: 0 };
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
  const seconds = (o.overheadSeconds ?? 0) + estimateSurfaceCost(o.x.length, cells, { workers: o.workers, flopsPerSecond: o.flopsPerSecond }).seconds;
  return { grid, cell, auto, cells, seconds };
}
