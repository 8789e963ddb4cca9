import { afterAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fromArrayBuffer } from 'geotiff';
import { quantileSorted } from '../../../src/core/prediction/exceedance-area.ts';
import { expectClose } from '../../helpers/tolerance.ts';
import { planarSamplesCsv, workspace } from '../run-cli.ts';

const ws = workspace();
afterAll(() => ws.remove());

const SAMPLES = ws.write('wells.csv', planarSamplesCsv());
ws.write('model.json', JSON.stringify({
  structures: [{ type: 'nugget', sill: 0.5 }, { type: 'exponential', sill: 12, scale: 60 }], trend: 'constant', crs: { work: 'EPSG:32633' },
}));
const COMMON = ['--samples', SAMPLES, '--crs', 'EPSG:32633', '--model', 'model.json', '--cell', '20'];

async function readTiff(name: string) {
  const bytes = readFileSync(join(ws.dir, name));
  const tiff = await fromArrayBuffer(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength));
  const image = await tiff.getImage();
  const rasters = (await image.readRasters()) as unknown as Float32Array[];
  return { image, rasters };
}

describe('simulate command', () => {
  it('simulate writes one georeferenced band per realisation and summarises the area above the threshold', async () => {
    const r = await ws.run('simulate', ...COMMON, '--count', '12', '--seed', '5', '--threshold', '25', '--depth', '0.5', '--out', 'real.tif');
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    expect(summary.caution).toMatch(/^Screening only/);
    expect(summary.realisations).toBe(12);
    expect(summary.areaAbove.unit).toBe('m²');
    expect(summary.volumeAbove.unit).toBe('m³');
    expectClose(summary.volumeAbove.median, summary.areaAbove.median * 0.5, { rel: 1e-12 });

    // Read back with geotiff.js (an independent reader): size, georeferencing, CRS, band count.
    const { image, rasters } = await readTiff('real.tif');
    const { grid } = summary;
    expect(image.getWidth()).toBe(grid.nx);
    expect(image.getHeight()).toBe(grid.ny);
    expect(image.getSamplesPerPixel()).toBe(12);
    expect(image.getOrigin().slice(0, 2)).toEqual([grid.x0, grid.y0]);
    expect(image.getResolution().slice(0, 2)).toEqual([20, -20]);
    expect(image.getGeoKeys()?.ProjectedCSTypeGeoKey).toBe(32633);
    expect(readFileSync(join(ws.dir, 'real.tif')).toString('latin1')).toContain('Screening only: results that feed remediation');

    // The area in the summary is the median over the bands of cells above T times the cell area.
    const counts = rasters.map((band) => band.filter((v) => v > 25).length).sort((a, b) => a - b);
    expectClose(summary.areaAbove.median, quantileSorted(counts, 0.5) * 400, { rel: 1e-12 });
    expectClose(summary.areaAbove.p5, quantileSorted(counts, 0.05) * 400, { rel: 1e-12 });
    expectClose(summary.areaAbove.p95, quantileSorted(counts, 0.95) * 400, { rel: 1e-12 });
    expect(summary.areaAbove.p5).toBeLessThanOrEqual(summary.areaAbove.p95);
    // Realisations differ from one another and stay in a plausible range of the data (about 13 to 33).
    expect(Array.from(rasters[0])).not.toEqual(Array.from(rasters[1]));
    for (const band of rasters) for (const v of band) expect(v > 0 && v < 60).toBe(true);
  });

  it('simulate is reproducible with a seed and supports block averages', async () => {
    const a = await ws.run('simulate', ...COMMON, '--count', '2', '--seed', '9', '--out', 'a.tif');
    const b = await ws.run('simulate', ...COMMON, '--count', '2', '--seed', '9', '--out', 'b.tif');
    expect(a.code, a.stderr).toBe(0);
    expect(b.code).toBe(0);
    expect(readFileSync(join(ws.dir, 'a.tif')).equals(readFileSync(join(ws.dir, 'b.tif')))).toBe(true);
    const block = await ws.run('simulate', ...COMMON, '--count', '2', '--support', 'block', '--block-points', '2', '--out', 'block.tif');
    expect(block.code, block.stderr).toBe(0);
    const s = JSON.parse(block.stdout);
    expect(s.support).toBe('block');
    expect(s.lattice.spacing).toBe(10);
  });

  it('simulate --workers shares out the realisations: 3 threads write the same bands and area as 1, and the note says how many', async () => {
    const args = [...COMMON, '--count', '7', '--seed', '2', '--threshold', '25', '--depth', '0.5'];
    const one = await ws.run('simulate', ...args, '--workers', '1', '--out', 'one.tif');
    const three = await ws.run('simulate', ...args, '--workers', '3', '--out', 'three.tif');
    expect(one.code, one.stderr).toBe(0);
    expect(three.code, three.stderr).toBe(0);
    expect(one.stderr).toContain('note: 7 conditional realisations (seed 2, point support) on 1 worker thread\n');
    expect(three.stderr).toContain('note: 7 conditional realisations (seed 2, point support) on 3 worker threads\n');
    expect(readFileSync(join(ws.dir, 'three.tif')).equals(readFileSync(join(ws.dir, 'one.tif')))).toBe(true);
    expect({ ...JSON.parse(three.stdout), out: 'same.tif' }).toEqual({ ...JSON.parse(one.stdout), out: 'same.tif' });
    const bad = await ws.run('simulate', ...args, '--workers', '0', '--out', 'x.tif');
    expect(bad.code).toBe(2);
    expect(bad.stderr).toBe('error: Option "--workers" expects a whole number of threads from 1 to 256, got 0.\n');
  }, 60000);

  it('simulate rejects a missing count, a depth without threshold and a non-GeoTIFF output (exit 2)', async () => {
    const noCount = await ws.run('simulate', ...COMMON, '--out', 'x.tif');
    expect(noCount.code).toBe(2);
    expect(noCount.stderr).toMatch(/--count/);
    const depth = await ws.run('simulate', ...COMMON, '--count', '2', '--depth', '1', '--out', 'x.tif');
    expect(depth.code).toBe(2);
    expect(depth.stderr).toMatch(/threshold/);
    const csv = await ws.run('simulate', ...COMMON, '--count', '2', '--out', 'x.csv');
    expect(csv.code).toBe(2);
    expect(csv.stderr).toMatch(/GeoTIFF/);
  });

  it('simulate says which conditioning it chose and why; --local reports the measured error, --exact and --local together are refused', async () => {
    const plain = await ws.run('simulate', ...COMMON, '--count', '2', '--workers', '1', '--out', 'p.tif');
    expect(plain.code, plain.stderr).toBe(0);
    expect(plain.stderr).toMatch(/note: conditioned by kriging from all \d+ samples; chosen automatically: .* \(--local overrides\)/);
    expect(JSON.parse(plain.stdout).path).toMatchObject({ path: 'exact', automatic: true });
    const local = await ws.run('simulate', ...COMMON, '--count', '2', '--workers', '1', '--local', '--neighbours', '8', '--out', 'l.tif');
    expect(local.code, local.stderr).toBe(0);
    expect(local.stderr).toMatch(/note: conditioned from the 8 nearest samples of each lattice node \(local neighbourhoods\); \d+ samples \(--local\)/);
    expect(local.stderr).toMatch(/note: measured error of the local conditioning against exact kriging at \d+ of \d+ targets/);
    const summary = JSON.parse(local.stdout);
    expect(summary.path).toMatchObject({ path: 'local', automatic: false });
    expect(summary.neighbours).toBe(8);
    expect(summary.localError.neighbours).toBe(8);
    expect(summary.localError.mean.max).toBeGreaterThan(0);
    const both = await ws.run('simulate', ...COMMON, '--count', '2', '--exact', '--local', '--out', 'x.tif');
    expect(both.code).toBe(2);
    expect(both.stderr).toMatch(/contradict/);
  });
});
