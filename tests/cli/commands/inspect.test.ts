import { afterAll, describe, expect, it } from 'vitest';
import { readSamples } from '../../../src/io/intake.ts';
import { CAUTION } from '../../../src/cli/common.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';
import { planarSamplesCsv, workspace } from '../run-cli.ts';
import { samplesCsvChunks } from '../../../src/cli/commands/inspect.ts';
import { csvLine, formatFullPrecision } from '../../../src/cli/csv.ts';
import { sampleFlags, sampleId, type SampleTable } from '../../../src/io/sample-table.ts';

/** The CSV as the command wrote it before it wrote pieces: one string of every line. */
function wholeSamplesCsv(t: SampleTable): string {
  const lines = [csvLine(['id', 'x', 'y', 'value', 'flags'])];
  for (let i = 0; i < t.length; i++) {
    lines.push(csvLine([sampleId(t, i), formatFullPrecision(t.inputX[i]), formatFullPrecision(t.inputY[i]), formatFullPrecision(t.value[i]), sampleFlags(t, i).join(';')]));
  }
  return `${lines.join('\n')}\n`;
}

const ws = workspace();
afterAll(() => ws.remove());

describe('inspect command', () => {
  it('inspect prints the intake\'s read report as JSON with the caution, exit 0', async () => {
    const text = 'id,x,y,Pb (mg/kg)\nA,0,0,12\nB,30,0,<5\nC,0,40,48\nD,30,40,oops\nE,60,20,20\nF,60,20,30\n';
    ws.write('yard.csv', text);
    const r = await ws.run('inspect', '--samples', 'yard.csv', '--crs', 'EPSG:32633', '--non-detect', 'dl');
    expect(r.code).toBe(0);
    const report = JSON.parse(r.stdout);
    expect(report.caution).toBe(CAUTION);
    // Same reading as a direct call to the intake with the same options.
    const direct = readSamples(text, { fileName: 'yard.csv', crs: 'EPSG:32633', nonDetect: 'dl' }).report;
    expect({ ...report, caution: undefined }).toEqual(JSON.parse(JSON.stringify({ ...direct, caution: undefined })));
    expect(report.valueColumn).toBe('Pb (mg/kg)');
    expect(report.unit).toBe('mg/kg');
    expect(report.nonDetects.count).toBe(1);
    expect(report.nonDetects.rule).toBe('dl');
    expect(report.duplicates.groups).toBe(1);
    expect(report.entries.some((e: { line?: number; action: string }) => e.line === 5 && e.action === 'rejected')).toBe(true);
    for (const w of direct.warnings) expect(r.stderr).toContain(`warning: ${w.message}\n`);
  });

  it('inspect --out writes the samples as read (id, x, y, value, flags) in the input CRS', async () => {
    ws.write('wells.csv', planarSamplesCsv());
    const r = await ws.run('inspect', '--samples', 'wells.csv', '--crs', 'EPSG:32633', '--out', 'read.csv');
    expect(r.code).toBe(0);
    const lines = ws.read('read.csv').trimEnd().split('\n');
    expect(lines[0]).toBe('id,x,y,value,flags');
    expect(lines.length).toBe(26);
    const source = planarSamplesCsv().trimEnd().split('\n');
    // The first sample, as written by the helper: station, easting, northing, value.
    const [id, x, y, v] = source[1].split(',');
    expect(lines[1]).toBe(`${id},${x},${y},${Number(v)},`);
  });

  it('inspect --boundary reports the polygon, its area and the samples outside', async () => {
    // Source: tests/reference/cli.json "boundary": a 100 m × 60 m UTM 33N rectangle whose lon/lat
    // corners come from PROJ (pyproj).
    const f = loadFixture<unknown>('cli.json') as unknown as { boundary: { lonlat: number[][]; areaSquareMetres: number } };
    ws.write('pts.csv', 'id,x,y,v\nin1,500010,10,1\nin2,500090,50,2\nout1,500150,10,3\n');
    ws.write('site.geojson', JSON.stringify({ type: 'Feature', properties: { name: 'plot' }, geometry: { type: 'Polygon', coordinates: [f.boundary.lonlat] } }));
    const r = await ws.run('inspect', '--samples', 'pts.csv', '--crs', 'EPSG:32633', '--boundary', 'site.geojson');
    expect(r.code, r.stderr).toBe(0);
    const b = JSON.parse(r.stdout).boundary;
    expect(b.polygons).toHaveLength(1);
    expect(b.polygons[0]).toMatchObject({ feature: 0, name: 'plot', holes: 0 });
    // The area is rounded to whole square metres.
    expectClose(b.areaSquareMetres, f.boundary.areaSquareMetres, { abs: 1 }, 'area');
    expect(b.areaHectares).toBe(0.6);
    expect(b.samplesOutside).toBe(1);
    expect(b.outsideIds).toEqual(['out1']);
    expect(r.stderr).toContain('warning: 1 of 3 samples lie outside the boundary in site.geojson (out1).');
  });

  it('inspect rejects a broken boundary with the feature (exit 2)', async () => {
    ws.write('pts2.csv', 'id,x,y,v\na,500010,10,1\nb,500020,20,2\nc,500030,10,3\n');
    ws.write('open.geojson', JSON.stringify({ type: 'FeatureCollection', features: [{ type: 'Feature', properties: {}, geometry: { type: 'Polygon', coordinates: [[[15, 0], [15.001, 0], [15.001, 0.001]]] } }] }));
    const r = await ws.run('inspect', '--samples', 'pts2.csv', '--crs', 'EPSG:32633', '--boundary', 'open.geojson');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/^error: open\.geojson, .*column "geometry": Feature 0: .*outer ring has 3 positions/);
  });

  it('samplesCsvChunks: pieces of whole lines whose bytes are those of the CSV written as one string', async () => {
    // Merged duplicates, a non-detect, formula-leading and quoted IDs.
    const text = 'id,x,y,Pb\n=HYPERLINK("x"),0,0,12\n"B, 2",30,0,<5\nC,0,40,48\nD,60,20,20\nE,60,20,30\n' + Array.from({ length: 300 }, (_, i) => `S${i},${i * 3},${(i * 7) % 500},${10 + (i % 13)}`).join('\n') + '\n';
    const t = readSamples(text, { fileName: 'c.csv', crs: 'EPSG:32633' }).table;
    const whole = wholeSamplesCsv(t);
    const pieces = [...samplesCsvChunks(t, 200)];
    expect(pieces.length).toBeGreaterThan(20);
    for (const p of pieces) expect(p.endsWith('\n')).toBe(true);
    expect(Buffer.from(pieces.join('')).equals(Buffer.from(whole))).toBe(true);
    expect([...samplesCsvChunks(t)]).toEqual([whole]);
    ws.write('c.csv', text);
    const r = await ws.run('inspect', '--samples', 'c.csv', '--crs', 'EPSG:32633', '--out', 'c-read.csv');
    expect(r.code).toBe(0);
    expect(ws.read('c-read.csv')).toBe(whole);
  });
});
