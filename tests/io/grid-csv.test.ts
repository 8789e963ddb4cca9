// surfaceGridCsv: one row per active cell with centres, WGS 84 positions and values that read back
// exactly; the caution on the first line.
import { SOFTWARE } from '../../src/core/shared/version.ts';
import { describe, expect, it } from 'vitest';
import { analyteGridCsvChunks, surfaceGridCsv, surfaceGridCsvChunks } from '../../src/io/grid-csv.ts';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { writeFileSafely } from '../../src/cli/safe-write.ts';
import { createTransform } from '../../src/io/crs.ts';
import { CAUTION } from '../../src/core/shared/caution.ts';
import { FORMULA_NOTE } from '../../src/io/csv-cells.ts';

describe('surfaceGridCsv', () => {
  const grid = { x0: 500000, y0: 5400030, cell: 10, nx: 3, ny: 3, mask: new Uint8Array([0, 1, 0, 1, 1, 1, 0, 1, 0]) };
  const mean = Float32Array.from([NaN, 1.1, NaN, 2.2, 3.3, 4.4, NaN, 5.5, NaN]);
  const sd = Float32Array.from([NaN, 0.1, NaN, 0.2, 0.3, 0.4, NaN, 0.5, NaN]);
  const pExceed = Float32Array.from([NaN, 0.01, NaN, 0.02, 0.5, 0.98, NaN, 0.99, NaN]);

  it('surfaceGridCsv writes the caution, the header and the active cells only, top row first', () => {
    const text = surfaceGridCsv({ grid, surface: { mean, sd, pExceed, threshold: 3 }, workCrs: 'EPSG:32633', unit: 'mg/L' });
    const lines = text.trimEnd().split('\n');
    expect(lines[0].startsWith(`# ${CAUTION}`)).toBe(true);
    expect(lines[0]).toContain('p_exceed = P(value > 3 mg/L)');
    expect(lines[1]).toBe('x,y,lon,lat,mean,sd,p_exceed');
    expect(lines).toHaveLength(2 + 5);
    const rows = lines.slice(2).map((l) => l.split(','));
    expect(rows.map((r) => [Number(r[0]), Number(r[1])])).toEqual([[500015, 5400025], [500005, 5400015], [500015, 5400015], [500025, 5400015], [500015, 5400005]]);
    // Float32 values come back exactly from 9 significant digits.
    expect(rows.map((r) => Math.fround(Number(r[4])))).toEqual([1.1, 2.2, 3.3, 4.4, 5.5].map(Math.fround));
    expect(rows.map((r) => Math.fround(Number(r[6])))).toEqual([0.01, 0.02, 0.5, 0.98, 0.99].map(Math.fround));
    const t = createTransform('EPSG:32633', 'EPSG:4326');
    const [lon, lat] = t.forward(500015, 5400025);
    expect(Number(rows[0][2])).toBeCloseTo(lon, 8);
    expect(Number(rows[0][3])).toBeCloseTo(lat, 8);
  });

  it('analyteGridCsvChunks: pieces of whole lines that, written through the safe writer, give the bytes the one-string writer gave', async () => {
    // The text the one-string writer gave for two analytes on this grid (before the pieces), pinned;
    // its caution line now also names the software and version, as the one-analyte CSV's does.
    const before = `# ${CAUTION} ${FORMULA_NOTE} Written by ${SOFTWARE}. x, y: cell centres in EPSG:32633; lon, lat: WGS 84; Pb_mean, Pb_sd in mg/kg, Pb_p_exceed = P(Pb > 3 mg/kg); As_mean, As_sd\n`
      + 'x,y,lon,lat,Pb_mean,Pb_sd,Pb_p_exceed,As_mean,As_sd\n'
      + '500015,5400025,15.00020407,48.7532379,1.10000002,0.100000001,0.00999999978,0.100000001,1.10000002\n'
      + '500005,5400015,15.00006802,48.75314794,2.20000005,0.200000003,0.0199999996,0.200000003,2.20000005\n'
      + '500015,5400015,15.00020407,48.75314794,3.29999995,0.300000012,0.5,0.300000012,3.29999995\n'
      + '500025,5400015,15.00034012,48.75314794,4.4000001,0.400000006,0.980000019,0.400000006,4.4000001\n'
      + '500015,5400005,15.00020407,48.75305798,5.5,0.5,0.99000001,0.5,5.5\n';
    const input = { grid, workCrs: 'EPSG:32633', analytes: [{ name: 'Pb (mg/kg)', unit: 'mg/kg', surface: { mean, sd, pExceed, threshold: 3 } }, { name: 'As', surface: { mean: sd, sd: mean } }] };
    const pieces = [...analyteGridCsvChunks(input, 100)];
    expect(pieces.length).toBeGreaterThan(2);
    for (const p of pieces) expect(p.endsWith('\n')).toBe(true);
    expect(pieces.join('')).toBe(before);
    const dir = mkdtempSync(join(tmpdir(), 'gapwise-grid-csv-'));
    try {
      await writeFileSafely(dir, 'analytes.csv', analyteGridCsvChunks(input, 100));
      expect(readFileSync(join(dir, 'analytes.csv')).equals(Buffer.from(before, 'utf8'))).toBe(true);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('surfaceGridCsvChunks: pieces of whole lines that, written one by one through the safe writer, give the bytes of the whole text', async () => {
    // The text the one-string writer gave for this grid (before the pieces), pinned.
    const before = `# ${CAUTION} ${FORMULA_NOTE} Written by ${SOFTWARE}. x, y: cell centres in EPSG:32633; lon, lat: WGS 84; mean, sd in mg/L; p_exceed = P(value > 3 mg/L)\n`
      + 'x,y,lon,lat,mean,sd,p_exceed\n'
      + '500015,5400025,15.00020407,48.7532379,1.10000002,0.100000001,0.00999999978\n'
      + '500005,5400015,15.00006802,48.75314794,2.20000005,0.200000003,0.0199999996\n'
      + '500015,5400015,15.00020407,48.75314794,3.29999995,0.300000012,0.5\n'
      + '500025,5400015,15.00034012,48.75314794,4.4000001,0.400000006,0.980000019\n'
      + '500015,5400005,15.00020407,48.75305798,5.5,0.5,0.99000001\n';
    const input = { grid, surface: { mean, sd, pExceed, threshold: 3 }, workCrs: 'EPSG:32633', unit: 'mg/L' };
    expect(surfaceGridCsv(input)).toBe(before);
    const pieces = [...surfaceGridCsvChunks(input, 100)];
    expect(pieces.length).toBeGreaterThan(2);
    for (const p of pieces) expect(p.endsWith('\n')).toBe(true);
    const dir = mkdtempSync(join(tmpdir(), 'gapwise-grid-csv-'));
    try {
      await writeFileSafely(dir, 'grid.csv', surfaceGridCsvChunks(input, 100));
      expect(readFileSync(join(dir, 'grid.csv')).equals(Buffer.from(before, 'utf8'))).toBe(true);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('surfaceGridCsv leaves out p_exceed without a threshold, the comment on request, and lon/lat for local coordinates', () => {
    const text = surfaceGridCsv({ grid, surface: { mean, sd }, workCrs: 'local', caution: false });
    const lines = text.trimEnd().split('\n');
    expect(lines[0]).toBe('x,y,mean,sd');
    expect(lines[1]).toBe('500015,5400025,1.10000002,0.100000001');
    // The comment line says the positions are local, not in a coordinate system.
    expect(surfaceGridCsv({ grid, surface: { mean, sd }, workCrs: 'local' }).split('\n')[0]).toMatch(/local coordinates \(no coordinate system\)/);
  });

  it('surfaceGridCsv writes Float64 values with the shortest text that reads back exactly', () => {
    const text = surfaceGridCsv({ grid: { x0: 0, y0: 10, cell: 10, nx: 1, ny: 1 }, surface: { mean: Float64Array.of(1 / 3), sd: Float64Array.of(2 / 3) }, workCrs: 'local', caution: false });
    expect(text).toBe('x,y,mean,sd\n5,5,0.3333333333333333,0.6666666666666666\n');
  });
});

describe('surfaceGridCsv with hostile text', () => {
  it('surfaceGridCsv says in its caution line that text cells were neutralised, and keeps a hostile unit and CRS inert', () => {
    const grid = { x0: 0, y0: 10, cell: 10, nx: 1, ny: 1 };
    const text = surfaceGridCsv({ grid, surface: { mean: Float64Array.of(-2.5), sd: Float64Array.of(1), pExceed: Float64Array.of(0.5), threshold: -1 }, workCrs: 'local', unit: 'mg,=HYPERLINK("https://example.invalid")\r\n@SUM(1)' });
    const lines = text.trimEnd().split('\n');
    expect(lines).toHaveLength(3);
    expect(lines[0]).toContain(FORMULA_NOTE);
    for (const piece of lines[0].split(',').slice(1)) expect(piece).not.toMatch(/^(?: *[=+\-@]|[\t\r])/);
    expect(lines[0]).not.toContain('"');
    // Numbers, negative ones included, stay numbers (local coordinates: no lon, lat columns).
    expect(lines[2]).toBe('5,5,-2.5,1,0.5');
  });
});
