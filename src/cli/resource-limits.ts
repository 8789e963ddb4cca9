/**
 * Memory and output size of conditional realisations, estimated before any is drawn, so that
 * `simulate --count 10000 --cell 0.5` (or `grid --realisations`, `report --realisations`) is refused
 * at once with the numbers and the limit instead of running for an hour and failing or swapping.
 *
 * Estimate (bytes; an upper bound of the large arrays, not of every small one):
 * - kept realisations (`simulate`): N · nx · ny · 4 (Float32 bands), twice — the bands and the
 *   GeoTIFF built from them are held together;
 * - per thread: the FFT lattice, 4 · (nx·k) · (ny·k) nodes (the torus doubles each side; k block
 *   points per cell side), at most the core's cap of 2²² nodes, times 48 bytes (complex values of the
 *   field, its spectrum and a work copy), plus the per-cell sums, 3 · nx · ny · 8;
 * - output: the GeoTIFF, N · nx · ny · 4 (`simulate`); one band for `grid`.
 * Limits: memory at most half of this machine's memory (os.totalmem), output at most the 4 GiB a
 * classic TIFF can address.
 */
import { totalmem } from 'node:os';
import { GapwiseError } from '../core/shared/errors.ts';
import type { Grid } from '../core/geometry/grid.ts';

/** Largest torus the core's circulant embedding accepts, in nodes (conditional-simulation.ts). */
const LATTICE_CAP = 1 << 22;
/** Bytes per lattice node held by one thread. */
const LATTICE_NODE_BYTES = 48;
/** The most a classic TIFF can address. */
export const OUTPUT_LIMIT_BYTES = 4 * 1024 ** 3;

/** What a simulation asks of the machine. */
export interface SimulationDemand {
  grid: Pick<Grid, 'nx' | 'ny'>;
  realisations: number;
  /** Lattice points per cell side (1 for point support). */
  blockPoints: number;
  threads: number;
  /** True when every realisation is kept and written (`simulate`). */
  keep: boolean;
}

export interface SimulationEstimate {
  memoryBytes: number;
  outputBytes: number;
}

/** The estimate above for `demand` (bytes). */
export function simulationEstimate(demand: SimulationDemand): SimulationEstimate {
  const cells = demand.grid.nx * demand.grid.ny;
  const k = demand.blockPoints;
  const lattice = Math.min(4 * demand.grid.nx * k * demand.grid.ny * k, LATTICE_CAP);
  const perThread = lattice * LATTICE_NODE_BYTES + 3 * cells * 8;
  const bands = demand.keep ? demand.realisations * cells * 4 : 0;
  return {
    memoryBytes: demand.threads * perThread + 2 * bands,
    outputBytes: demand.keep ? bands : cells * 4,
  };
}

/** "1.6 GB" (decimal units, as file managers show them). */
function byteText(bytes: number): string {
  if (bytes >= 1e9) return `${(bytes / 1e9).toFixed(1)} GB`;
  if (bytes >= 1e6) return `${(bytes / 1e6).toFixed(1)} MB`;
  return `${Math.ceil(bytes / 1e3)} kB`;
}

/**
 * Refuses a simulation whose estimate is above the limits: GapwiseError('bad-option') with the
 * estimate, the limit and what to change (exit 2). `memoryLimit` defaults to half of this machine's memory.
 */
export function checkSimulationDemand(demand: SimulationDemand, countOption: string, memoryLimit = totalmem() / 2): void {
  const e = simulationEstimate(demand);
  const cells = demand.grid.nx * demand.grid.ny;
  const what = `${demand.realisations.toLocaleString('en-US')} realisations of ${cells.toLocaleString('en-US')} cells (${demand.grid.nx} × ${demand.grid.ny})`;
  const perRealisation = 2 * cells * 4;
  if (e.memoryBytes > memoryLimit) {
    const most = demand.keep ? Math.floor((memoryLimit - (e.memoryBytes - 2 * demand.realisations * cells * 4)) / perRealisation) : 0;
    throw new GapwiseError('bad-option',
      `${what} would take about ${byteText(e.memoryBytes)} of memory; the limit is ${byteText(memoryLimit)} (half of this machine's memory): `
      + `${most >= 1 ? `use at most --${countOption} ${most.toLocaleString('en-US')}, ` : ''}a larger --cell or fewer --workers.`);
  }
  if (e.outputBytes > OUTPUT_LIMIT_BYTES) {
    const most = Math.floor(OUTPUT_LIMIT_BYTES / (cells * 4));
    throw new GapwiseError('bad-option',
      `${what} would write a GeoTIFF of about ${byteText(e.outputBytes)}; the limit is ${byteText(OUTPUT_LIMIT_BYTES)} (what a classic TIFF can address): `
      + `use at most --${countOption} ${most.toLocaleString('en-US')} or a larger --cell.`);
  }
}
