/**
 * How much of the area lies above an action level: per-cell exceedance frequencies and the area
 * (and volume) above the level across conditional realisations, as a median with a 90 % interval.
 *
 * For realisation r, A_r = cell² · #{active cells k : z_r(k) > T}; the summary gives the 5 %, 50 % and
 * 95 % quantiles of A_1..A_N (linear interpolation between order statistics, x_(h) with
 * h = (N − 1)·p: Hyndman & Fan 1996, Am. Stat. 50:361, definition 7, numpy's default) and the mean;
 * volume = area × depth (depth in metres from the user; a screening volume of a slab, not a 3-D model).
 * P(exceed) per cell from realisations is the fraction of them above T. Without realisations,
 * the expected area from kriging is Σ_k P_k·cell² (linearity of expectation; no interval: the cells
 * are correlated, so the spread of the area needs realisations).
 * Cells with a NaN value (outside the area) are never counted.
 * Units: metres, m², m³. Cost: O(N·cells).
 */
import { GapwiseError } from '../shared/errors.ts';

/** A quantile summary of a quantity across realisations. */
export interface QuantileSummary {
  median: number;
  /** 5 % quantile. */
  p05: number;
  /** 95 % quantile. */
  p95: number;
  mean: number;
}

/** Area (and volume) above the action level. */
export interface ExceedanceAreaSummary {
  threshold: number;
  /** Realisations summarised. */
  realisations: number;
  /** Cells counted as inside the area. */
  activeCells: number;
  /** Area of one cell, m². */
  cellArea: number;
  /** Cells above T. */
  cells: QuantileSummary;
  area: QuantileSummary & { unit: 'm²' };
  /** With a depth: area × depth. */
  volume?: QuantileSummary & { unit: 'm³'; depth: number };
  /** Share of the active area above T (0..1). */
  fraction: QuantileSummary;
}

/** Quantile p of ascending values by linear interpolation of order statistics (Hyndman & Fan def. 7). */
export function quantileSorted(sorted: ArrayLike<number>, p: number): number {
  const n = sorted.length;
  if (n === 0) return NaN;
  if (!(p >= 0 && p <= 1)) throw new GapwiseError('bad-option', `Expected a probability between 0 and 1, got ${p}.`);
  const h = (n - 1) * p;
  const lo = Math.floor(h);
  const hi = Math.min(n - 1, lo + 1);
  return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo]);
}

/** Median, 5 % and 95 % quantiles and mean of values (any order). */
export function summarise(values: ArrayLike<number>): QuantileSummary {
  const sorted = Float64Array.from(values).sort();
  let s = 0;
  for (let k = 0; k < sorted.length; k++) s += sorted[k];
  return {
    median: quantileSorted(sorted, 0.5),
    p05: quantileSorted(sorted, 0.05),
    p95: quantileSorted(sorted, 0.95),
    mean: sorted.length ? s / sorted.length : NaN,
  };
}

/** Number of cells with a value above T in one realisation (NaN cells never count). */
export function countAbove(values: ArrayLike<number>, threshold: number): number {
  let c = 0;
  for (let k = 0; k < values.length; k++) if (values[k] > threshold) c++;
  return c;
}

/** Number of non-NaN cells. */
function countActive(values: ArrayLike<number>): number {
  let c = 0;
  for (let k = 0; k < values.length; k++) if (!Number.isNaN(values[k])) c++;
  return c;
}

function checkThreshold(threshold: number): void {
  if (!Number.isFinite(threshold)) throw new GapwiseError('bad-option', `Expected the action level to be a finite number, got ${String(threshold)}.`);
}

function scaled(s: QuantileSummary, f: number): QuantileSummary {
  return { median: s.median * f, p05: s.p05 * f, p95: s.p95 * f, mean: s.mean * f };
}

/** The deepest slab a volume is given for, metres (deeper is not a screening volume of soil or water). */
export const MAX_DEPTH = 10_000;

/**
 * Summarises per-realisation counts of cells above T into cells, area (m²), fraction and, with a
 * depth (m), volume (m³). Throws GapwiseError('bad-option') for a bad cell size, depth or threshold.
 */
export function summariseExceedanceCounts(
  counts: ArrayLike<number>, options: { threshold: number; cell: number; activeCells: number; depth?: number },
): ExceedanceAreaSummary {
  const { threshold, cell, activeCells, depth } = options;
  checkThreshold(threshold);
  if (!(Number.isFinite(cell) && cell > 0)) throw new GapwiseError('bad-option', `Expected a cell size above 0 m, got ${cell}.`);
  if (depth !== undefined && !(Number.isFinite(depth) && depth > 0 && depth <= MAX_DEPTH)) {
    throw new GapwiseError('bad-option', `Expected the depth to be a positive number of metres up to ${MAX_DEPTH.toLocaleString('en')}, got ${String(depth)}.`);
  }
  if (counts.length === 0) throw new GapwiseError('bad-option', 'Expected at least 1 realisation to summarise, got 0.');
  const cellArea = cell * cell;
  const cells = summarise(counts);
  const out: ExceedanceAreaSummary = {
    threshold,
    realisations: counts.length,
    activeCells,
    cellArea,
    cells,
    area: { ...scaled(cells, cellArea), unit: 'm²' },
    fraction: scaled(cells, activeCells > 0 ? 1 / activeCells : NaN),
  };
  if (depth !== undefined) out.volume = { ...scaled(cells, cellArea * depth), unit: 'm³', depth };
  return out;
}

/**
 * Area (and volume) above T across realisations (each an array over the grid's cells, NaN outside
 * the area). Throws GapwiseError('bad-option') when the realisations differ in length.
 */
export function exceedanceArea(
  realisations: ReadonlyArray<ArrayLike<number>>, options: { threshold: number; cell: number; depth?: number },
): ExceedanceAreaSummary {
  checkThreshold(options.threshold);
  if (realisations.length === 0) throw new GapwiseError('bad-option', 'Expected at least 1 realisation to summarise, got 0.');
  const size = realisations[0].length;
  const counts = new Float64Array(realisations.length);
  realisations.forEach((r, i) => {
    if (r.length !== size) throw new GapwiseError('bad-option', `Expected every realisation to have ${size} cells, got ${r.length} in realisation ${i + 1}.`);
    counts[i] = countAbove(r, options.threshold);
  });
  return summariseExceedanceCounts(counts, { ...options, activeCells: countActive(realisations[0]) });
}

/** Per-cell fraction of realisations above T (NaN where the first realisation is NaN). */
export function exceedanceFrequency(realisations: ReadonlyArray<ArrayLike<number>>, threshold: number): Float64Array {
  checkThreshold(threshold);
  if (realisations.length === 0) throw new GapwiseError('bad-option', 'Expected at least 1 realisation, got 0.');
  const size = realisations[0].length;
  const out = new Float64Array(size);
  for (const r of realisations) for (let k = 0; k < size; k++) if (r[k] > threshold) out[k]++;
  for (let k = 0; k < size; k++) out[k] = Number.isNaN(realisations[0][k]) ? NaN : out[k] / realisations.length;
  return out;
}

/** Expected area above T from per-cell probabilities (kriging): Σ P_k·cell², NaN cells skipped. */
export function expectedExceedanceArea(pExceed: ArrayLike<number>, cell: number): number {
  let s = 0;
  for (let k = 0; k < pExceed.length; k++) if (!Number.isNaN(pExceed[k])) s += pExceed[k];
  return s * cell * cell;
}
