/**
 * The one tick rule for every axis, legend and report figure: d3-array's `ticks` (steps of 1, 2 or
 * 5 × 10^k, values inside [min, max]), with the degenerate cases the charts meet handled here.
 */
import { ticks } from 'd3-array';

/** Round tick values inside [min, max], about `count` of them; [min] when min = max; [] if not finite. */
export function niceTicks(min: number, max: number, count = 5): number[] {
  if (!Number.isFinite(min) || !Number.isFinite(max)) return [];
  if (max < min) [min, max] = [max, min];
  if (max === min) return [min];
  // d3 computes each tick as k·step or k/(1/step), so values come out exact (0.3, not 0.30000000000000004).
  return ticks(min, max, Math.max(1, count)).map((t) => (Object.is(t, -0) ? 0 : t));
}
