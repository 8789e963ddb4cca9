// The command line on numbers that used to give silently wrong results or a crash: every one now ends
// with exit 2 (bad input, the file and field named) or 3 (the numbers failed, the parameter named).
import { afterAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { planarSamplesCsv, workspace } from './run-cli.ts';

const ws = workspace();
afterAll(() => ws.remove());

const SAMPLES = ws.write('wells.csv', planarSamplesCsv());
const COMMON = ['--samples', SAMPLES, '--crs', 'EPSG:32633'];
const model = (m: object) => JSON.stringify({ structures: [{ type: 'nugget', sill: 1.5 }, { type: 'matern', sill: 18, scale: 60, nu: 1.5 }], trend: 'constant', crs: { work: 'EPSG:32633' }, ...m });

describe('numbers that used to pass silently', () => {
  it('predict with a nugget of 1e300 or a known mean of 1e308 exits 2 naming the model file and parameter', async () => {
    ws.write('nugget.json', model({ structures: [{ type: 'nugget', sill: 1e300 }, { type: 'matern', sill: 18, scale: 60, nu: 1.5 }] }));
    const r = await ws.run('predict', ...COMMON, '--model', 'nugget.json', '--targets', SAMPLES, '--out', 'p.csv');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('error: nugget.json: Expected structures[0].sill from 0 to 1e+100, got 1e+300.');
    ws.write('mean.json', model({ trend: { known: 1e308 } }));
    const m = await ws.run('predict', ...COMMON, '--model', 'mean.json', '--targets', SAMPLES, '--out', 'p.csv');
    expect(m.code).toBe(2);
    expect(m.stderr).toContain('error: mean.json: Expected trend.known from -1e+100 to 1e+100, got 1e+308.');
  });

  it('cv with a sill far out of scale with the values exits 3 naming the model file and parameter', async () => {
    ws.write('sill.json', model({ structures: [{ type: 'nugget', sill: 1.5 }, { type: 'matern', sill: 1e90, scale: 60, nu: 1.5 }] }));
    const r = await ws.run('cv', ...COMMON, '--model', 'sill.json');
    expect(r.code).toBe(3);
    expect(r.stderr).toMatch(/error: sill\.json: The model's structures\[1\]\.sill \(1\.00e\+90\) is out of scale with the data/);
  });

  it('grid with --padding 1e6 exits 2 instead of computing a 750,000 km grid', async () => {
    ws.write('ok.json', model({}));
    const r = await ws.run('grid', ...COMMON, '--model', 'ok.json', '--padding', '1e6', '--out', 'g.tif');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain("Expected a padding from 0 to 10 times the larger side of the samples' extent, got 1000000.");
  });

  it('a UTM zone of 99 and a working CRS in US feet exit 2 with the range and a metre CRS', async () => {
    const zone = await ws.run('inspect', '--samples', SAMPLES, '--crs', '+proj=utm +zone=99 +datum=WGS84');
    expect(zone.code).toBe(2);
    expect(zone.stderr).toContain("+zone=99 is out of range; expected a whole UTM zone number from 1 to 60.");
    ws.write('ny.csv', 'id,lon,lat,value\nA,-73.95,40.70,1\nB,-73.94,40.71,2\nC,-73.93,40.69,3\n');
    const feet = await ws.run('inspect', '--samples', 'ny.csv', '--work-crs', 'EPSG:2263');
    expect(feet.code).toBe(2);
    expect(feet.stderr).toContain('is in US survey feet; expected a CRS in metres, since every length and area is reported in metres: use EPSG:32118 (NAD83 / New York Long Island), the same projection in metres.');
  });

  it('lon/lat samples spanning the globe exit 2 instead of landing 30,000 km away in one UTM zone', async () => {
    ws.write('globe.csv', 'id,lon,lat,value\nA,-170,0,1\nB,0,10,2\nC,170,20,3\nD,60,-30,4\n');
    const r = await ws.run('inspect', '--samples', 'globe.csv');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('distorts lengths by');
    expect(r.stderr).toContain('expected at most 5 %');
  });

  it('a self-intersecting boundary exits 2 naming the crossing', async () => {
    ws.write('ll.csv', 'id,lon,lat,value\nA,11.241,48.491,1\nB,11.249,48.492,2\nC,11.245,48.499,3\nD,11.246,48.495,4\n');
    ws.write('bow.geojson', JSON.stringify({ type: 'Polygon', coordinates: [[[11.24, 48.49], [11.25, 48.5], [11.25, 48.49], [11.24, 48.5], [11.24, 48.49]]] }));
    const r = await ws.run('inspect', '--samples', 'll.csv', '--boundary', 'bow.geojson');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain("the Polygon's outer ring crosses itself at [11.245, 48.495]");
  });
});

describe('counts from user numbers', () => {
  it('report on a project with lagWidth 1e-9 finishes with a warning naming the limit instead of a crash (exit 1)', async () => {
    const project = JSON.parse(readFileSync(resolve(import.meta.dirname, '../fixtures/exports/wells.gapwise.json'), 'utf8'));
    project.structure.variogram = { lagWidth: 1e-9 };
    ws.write('lag.json', JSON.stringify(project));
    const r = await ws.run('report', '--project', 'lag.json', '--no-compare', '--out', 'lag.html');
    expect(r.code).toBe(0);
    expect(r.stderr).toMatch(/The number of lag classes \(maximum lag .* m \/ lag width 1e-9 m\) would be [\d,]+; the most is 1,000/);
  });
});
