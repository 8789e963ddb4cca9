import { afterAll, describe, expect, it } from 'vitest';
import * as gjv from 'geojson-validation';
import { readSamples } from '../../../src/io/intake.ts';
import { createTransform } from '../../../src/io/crs.ts';
import { suggestSites } from '../../../src/core/design/design.ts';
import { parseModel } from '../../../src/core/covariance/model.ts';
import { pointInPolygons } from '../../../src/core/geometry/polygon.ts';
import { CAUTION } from '../../../src/cli/common.ts';
import { expectClose } from '../../helpers/tolerance.ts';
import { planarSamplesCsv, workspace } from '../run-cli.ts';
import { SOFTWARE } from '../../../src/core/shared/version.ts';

const ws = workspace();
afterAll(() => ws.remove());

const SAMPLES = ws.write('wells.csv', planarSamplesCsv());
const MODEL = { structures: [{ type: 'nugget', sill: 1.5 }, { type: 'matern', sill: 18, scale: 60, nu: 1.5 }], trend: 'constant' };
ws.write('model.json', JSON.stringify({ ...MODEL, crs: { work: 'EPSG:32633' } }));
const COMMON = ['--samples', SAMPLES, '--crs', 'EPSG:32633'];
const toLonLat = createTransform('EPSG:32633', 'EPSG:4326');
const intake = readSamples(planarSamplesCsv(), { fileName: 'wells.csv', crs: 'EPSG:32633' });

/** A lon/lat GeoJSON polygon from working-CRS rectangle corners. */
function rectangleGeoJson(x0: number, y0: number, x1: number, y1: number): string {
  const ring = [[x0, y0], [x1, y0], [x1, y1], [x0, y1], [x0, y0]].map(([x, y]) => toLonLat.forward(x, y));
  return JSON.stringify({ type: 'FeatureCollection', features: [{ type: 'Feature', properties: { name: 'area' }, geometry: { type: 'Polygon', coordinates: [ring] } }] });
}
ws.write('area.geojson', rectangleGeoJson(499990, 5399990, 500200, 5400180));
ws.write('shed.geojson', rectangleGeoJson(500080, 5400060, 500140, 5400120));

describe('suggest command', () => {
  it('suggest with a model prints a JSON summary with the engine\'s sites, lon/lat and the caution', async () => {
    const r = await ws.run('suggest', ...COMMON, '--model', 'model.json', '--count', '3', '--cell', '10');
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    expect(summary.caution).toBe(CAUTION);
    expect(summary.mode).toBe('variance');
    expect(summary.count).toBe(3);
    expect(summary.crs).toEqual({ input: 'EPSG:32633', work: 'EPSG:32633' });
    expect(summary.average_sd_after).toBeLessThan(summary.average_sd_before);
    // The same sites straight from the engine.
    const direct = suggestSites(intake.samples, parseModel(MODEL), { count: 3, cell: 10 });
    summary.suggestions.forEach((s: { rank: number; x: number; y: number; lon: number; lat: number; benefit: number; mean: number }, k: number) => {
      expect(s.rank).toBe(k + 1);
      expectClose([s.x, s.y], [direct.suggestions[k].x, direct.suggestions[k].y], { abs: 1e-6 }, `site ${k + 1}`);
      expectClose(s.benefit, direct.suggestions[k].benefit, { rel: 1e-9 }, `benefit ${k + 1}`);
      const [lon, lat] = toLonLat.forward(s.x, s.y);
      expectClose([s.lon, s.lat], [lon, lat], { abs: 1e-7 }, `lon/lat ${k + 1}`);
    });
    expect(r.stderr).toContain('warning: No boundary was given');
  });

  it('suggest --threshold writes valid GeoJSON in lon/lat with the caution and the misclassified area', async () => {
    const r = await ws.run('suggest', ...COMMON, '--model', 'model.json', '--count', '2', '--threshold', '25', '--boundary', 'area.geojson', '--cell', '10', '--out', 'next.geojson');
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    expect(summary.mode).toBe('decision');
    expect(summary.area_decided_m2).toBeGreaterThan(0);
    expectClose(summary.misclassified_area_before_m2 - summary.misclassified_area_after_m2, summary.area_decided_m2, { rel: 1e-6 });
    const geo = JSON.parse(ws.read('next.geojson'));
    expect(gjv.valid(geo, true)).toEqual([]);
    expect(geo.properties.caution).toBe(CAUTION);
    expect(geo.features.map((f: { properties: { rank: number } }) => f.properties.rank)).toEqual([1, 2]);
    geo.features.forEach((f: { geometry: { coordinates: number[] }; properties: { p_exceed: number } }, k: number) => {
      expectClose(f.geometry.coordinates, [summary.suggestions[k].lon, summary.suggestions[k].lat], { abs: 1e-7 });
      expect(f.properties.p_exceed).toBeGreaterThan(0);
      expect(f.properties.p_exceed).toBeLessThan(1);
    });
  });

  it('suggest without a model writes a coverage design as CSV, with the caution on stderr', async () => {
    const r = await ws.run('suggest', ...COMMON, '--count', '4', '--boundary', 'area.geojson', '--cell', '5', '--out', 'first.csv');
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    expect(summary.mode).toBe('coverage');
    expect(summary.coverage_distance_after_m).toBeLessThan(summary.coverage_distance_before_m);
    expect(r.stderr).toContain(`caution: ${CAUTION}`);
    const [caution, ...lines] = ws.read('first.csv').trimEnd().split('\n');
    expect(caution).toBe(`# ${CAUTION} Written by ${SOFTWARE}.`);
    expect(lines[0]).toBe('rank,x,y,lon,lat,benefit,mean,sd');
    expect(lines).toHaveLength(5);
    const cells = lines[1].split(',');
    expect(cells[6]).toBe('');
    expectClose([Number(cells[1]), Number(cells[2])], [summary.suggestions[0].x, summary.suggestions[0].y], { abs: 1e-6 });
  });

  it('suggest honours --exclude and --min-spacing and writes GPX waypoints', async () => {
    const r = await ws.run('suggest', ...COMMON, '--model', 'model.json', '--count', '6', '--boundary', 'area.geojson', '--exclude', 'shed.geojson',
      '--min-spacing', '25', '--cell', '5', '--out', 'walk.gpx');
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    const shed: number[][][] = [[[500080, 5400060], [500140, 5400060], [500140, 5400120], [500080, 5400120], [500080, 5400060]]];
    const sites = summary.suggestions as Array<{ x: number; y: number }>;
    for (const s of sites) {
      expect(pointInPolygons(s.x, s.y, [shed])).toBe(false);
      for (let i = 0; i < intake.samples.x.length; i++) expect(Math.hypot(s.x - intake.samples.x[i], s.y - intake.samples.y[i])).toBeGreaterThanOrEqual(25);
      for (const t of sites) if (t !== s) expect(Math.hypot(s.x - t.x, s.y - t.y)).toBeGreaterThanOrEqual(25);
    }
    const gpx = ws.read('walk.gpx');
    expect(gpx).toContain(`<gpx version="1.1" creator="${SOFTWARE}" xmlns="http://www.topografix.com/GPX/1/1"`);
    expect((gpx.match(/<wpt /g) ?? []).length).toBe(sites.length);
    expect(gpx).toContain('mg/L');
  });

  it('suggest --candidates picks only from the given accessible points', async () => {
    const pts = ['name,easting,northing', 'gate,500010,5400150', 'track,500100,5400010', 'yard,500190,5400170', 'field,500150,5400050'];
    ws.write('access.csv', `${pts.join('\n')}\n`);
    const r = await ws.run('suggest', ...COMMON, '--model', 'model.json', '--count', '2', '--candidates', 'access.csv');
    expect(r.code, r.stderr).toBe(0);
    const allowed = pts.slice(1).map((l) => l.split(',').slice(1).map(Number));
    for (const s of JSON.parse(r.stdout).suggestions) {
      expect(allowed.some(([x, y]) => Math.abs(x - s.x) < 1e-6 && Math.abs(y - s.y) < 1e-6), `${s.x}, ${s.y}`).toBe(true);
    }
  });

  it('suggest returns 2 for an unknown --out extension, a bad boundary file and a decision without a model', async () => {
    const ext = await ws.run('suggest', ...COMMON, '--model', 'model.json', '--out', 'sites.kml');
    expect(ext.code).toBe(2);
    expect(ext.stderr).toContain('expected .geojson, .csv or .gpx');
    ws.write('broken.geojson', '{"type": "Polygon", "coordinates": [[[0,0],[1,0],[1,1]]]}');
    const bad = await ws.run('suggest', ...COMMON, '--model', 'model.json', '--boundary', 'broken.geojson');
    expect(bad.code).toBe(2);
    expect(bad.stderr).toContain('broken.geojson');
    const noModel = await ws.run('suggest', ...COMMON, '--mode', 'decision', '--threshold', '20');
    expect(noModel.code).toBe(2);
    expect(noModel.stderr).toContain('needs a fitted model');
  });

  it('suggest says which posterior chose the sites and why; --local reports the measured error', async () => {
    const plain = await ws.run('suggest', ...COMMON, '--model', 'model.json', '--count', '2', '--cell', '10');
    expect(plain.code, plain.stderr).toBe(0);
    expect(plain.stderr).toMatch(/note: sites chosen on the kriging posterior from all \d+ samples; chosen automatically: .* \(--local overrides\)/);
    expect(JSON.parse(plain.stdout).path).toMatchObject({ path: 'exact', automatic: true });
    const local = await ws.run('suggest', ...COMMON, '--model', 'model.json', '--count', '2', '--cell', '10', '--local', '--neighbours', '8');
    expect(local.code, local.stderr).toBe(0);
    expect(local.stderr).toMatch(/note: sites chosen on the posterior from the 8 nearest samples of each point \(local neighbourhoods\); \d+ samples \(--local\)/);
    expect(local.stderr).toMatch(/note: measured error of the local posterior against exact kriging/);
    const summary = JSON.parse(local.stdout);
    expect(summary.path).toMatchObject({ path: 'local', automatic: false });
    expect(summary.localError.neighbours).toBe(8);
  });
});
