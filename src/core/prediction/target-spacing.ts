/**
 * The spacing of a dense target set, so that scattered targets (a CSV of points) share tile
 * neighbourhoods as grid cells do (./local-kriging.ts chooseTile). The proof there that a tile's
 * neighbourhood holds every target's m nearest samples needs only that each target lies in its tile,
 * not a lattice; the spacing only sizes the tiles, through the targets per tile it implies.
 * Spacing = √(A/T) for T targets over their bounding box of area A, returned when the targets are
 * more than the samples and denser (T/A > n/A_s over the samples' box), else undefined. Cost O(T + n).
 */

function boxArea(x: ArrayLike<number>, y: ArrayLike<number>): number {
  let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
  for (let i = 0; i < x.length; i++) {
    if (x[i] < x0) x0 = x[i];
    if (x[i] > x1) x1 = x[i];
    if (y[i] < y0) y0 = y[i];
    if (y[i] > y1) y1 = y[i];
  }
  return (x1 - x0) * (y1 - y0);
}

/** The mean spacing of targets denser than the samples (metres), or undefined when they are not denser. */
export function denseTargetSpacing(
  tx: ArrayLike<number>, ty: ArrayLike<number>, sx: ArrayLike<number>, sy: ArrayLike<number>,
): number | undefined {
  const T = tx.length;
  const n = sx.length;
  // Tiles pay only when many targets share a neighbourhood: more targets than samples as well.
  if (T <= n || n < 2) return undefined;
  const targetArea = boxArea(tx, ty);
  const sampleArea = boxArea(sx, sy);
  if (!(targetArea > 0) || !(sampleArea > 0)) return undefined;
  if (T / targetArea <= n / sampleArea) return undefined;
  return Math.sqrt(targetArea / T);
}

/**
 * An order of the targets that visits them cell by cell (cells of about `cellTargets` targets, rows
 * of cells in alternating direction), so that consecutive targets mostly share their neighbourhood
 * and its factor (./local-kriging.ts reuses it). Local results do not depend on the order.
 * Cost O(T log T).
 */
export function spatialOrder(x: ArrayLike<number>, y: ArrayLike<number>, cellTargets = 4): Uint32Array {
  const T = x.length;
  const order = Uint32Array.from({ length: T }, (_, i) => i);
  if (T < 3) return order;
  let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
  for (let i = 0; i < T; i++) {
    if (x[i] < x0) x0 = x[i];
    if (x[i] > x1) x1 = x[i];
    if (y[i] < y0) y0 = y[i];
    if (y[i] > y1) y1 = y[i];
  }
  const area = Math.max((x1 - x0) * (y1 - y0), 1e-300);
  const side = Math.sqrt((area * cellTargets) / T);
  if (!(side > 0) || !Number.isFinite(side)) return order;
  const key = new Float64Array(T);
  const across = Math.floor((x1 - x0) / side) + 1;
  for (let i = 0; i < T; i++) {
    const row = Math.floor((y[i] - y0) / side);
    const col = Math.floor((x[i] - x0) / side);
    key[i] = row * across + (row % 2 === 0 ? col : across - 1 - col);
  }
  return order.sort((a, b) => key[a] - key[b] || a - b);
}
