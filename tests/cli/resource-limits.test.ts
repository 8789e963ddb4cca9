import { afterAll, describe, expect, it } from 'vitest';
import { readdirSync } from 'node:fs';
import { OUTPUT_LIMIT_BYTES, checkSimulationDemand, simulationEstimate } from '../../src/cli/resource-limits.ts';
import { planarSamplesCsv, workspace } from './run-cli.ts';

const ws = workspace();
afterAll(() => ws.remove());

describe('simulationEstimate', () => {
  it('simulationEstimate counts the kept bands twice, the lattice per thread (capped at 2^22 nodes) and the GeoTIFF', () => {
    const grid = { nx: 100, ny: 50 };
    const kept = simulationEstimate({ grid, realisations: 10, blockPoints: 1, threads: 2, keep: true });
    const perThread = 4 * 100 * 50 * 48 + 3 * 5000 * 8;
    expect(kept).toEqual({ memoryBytes: 2 * perThread + 2 * 10 * 5000 * 4, outputBytes: 10 * 5000 * 4 });
    const summary = simulationEstimate({ grid, realisations: 10, blockPoints: 4, threads: 1, keep: false });
    expect(summary).toEqual({ memoryBytes: 4 * 100 * 4 * 50 * 4 * 48 + 3 * 5000 * 8, outputBytes: 5000 * 4 });
    const huge = simulationEstimate({ grid: { nx: 2000, ny: 2000 }, realisations: 1, blockPoints: 16, threads: 1, keep: false });
    expect(huge.memoryBytes).toBe((1 << 22) * 48 + 3 * 4e6 * 8);
  });

  it('checkSimulationDemand refuses above the memory limit and above 4 GiB of GeoTIFF, with the numbers, the limit and the most realisations', () => {
    // Two threads of (2,100,296 lattice nodes × 48 + 3 × 525,074 × 8) = 226.8 MB; each kept realisation 2 × 525,074 × 4 bytes:
    // (8e9 − 226.8e6) / 4,200,592 = 1,850.5.
    const grid = { nx: 823, ny: 638 };
    expect(() => checkSimulationDemand({ grid, realisations: 10_000, blockPoints: 1, threads: 2, keep: true }, 'count', 8e9))
      .toThrow(/^10,000 realisations of 525,074 cells \(823 × 638\) would take about 42\.2 GB of memory; the limit is 8\.0 GB \(half of this machine's memory\): use at most --count 1,850, a larger --cell or fewer --workers\.$/);
    expect(() => checkSimulationDemand({ grid, realisations: 10_000, blockPoints: 1, threads: 2, keep: true }, 'count', 1e12))
      .toThrow(/would write a GeoTIFF of about 21\.0 GB; the limit is 4\.3 GB \(what a classic TIFF can address\): use at most --count 2,044 or a larger --cell\./);
    expect(Math.floor(OUTPUT_LIMIT_BYTES / (525_074 * 4))).toBe(2044);
    expect(() => checkSimulationDemand({ grid, realisations: 100, blockPoints: 1, threads: 2, keep: true }, 'count', 8e9)).not.toThrow();
    expect(() => checkSimulationDemand({ grid, realisations: 10_000, blockPoints: 1, threads: 2, keep: false }, 'realisations', 8e9)).not.toThrow();
  });

  it('simulate --count 10000 --cell 0.1 is refused before any realisation is drawn (exit 2, no output, no temporary file)', async () => {
    ws.write('wells.csv', planarSamplesCsv());
    ws.write('model.json', JSON.stringify({ structures: [{ type: 'nugget', sill: 0.5 }, { type: 'exponential', sill: 20, scale: 80 }], trend: 'constant', transform: 'none', crs: { work: 'EPSG:32633' } }));
    const r = await ws.run('simulate', '--samples', 'wells.csv', '--crs', 'EPSG:32633', '--model', 'model.json', '--count', '10000', '--cell', '0.1', '--out', 'r.tif');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/error: 10,000 realisations of [\d,]+ cells \(\d+ × \d+\) would (take about [\d.]+ GB of memory|write a GeoTIFF of about [\d.]+ GB); the limit is [\d.]+ GB/);
    expect(r.stderr).not.toContain('progress:');
    expect(readdirSync(ws.dir).sort()).toEqual(['model.json', 'wells.csv']);
  });
});
