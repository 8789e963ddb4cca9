import { SOFTWARE } from '../../../../src/core/shared/version.ts';
import { describe, expect, it } from 'vitest';
import * as gjv from 'geojson-validation';
import {
  areaText, defaultMode, exclusionsFromGeoJson, exportFile, safeStem, valueText, withLonLat,
} from '../../../../src/ui/components/next-samples/next-samples.ts';
import { suggestSites } from '../../../../src/core/design/design.ts';
import { makeSamples } from '../../../../src/core/shared/samples.ts';
import { createTransform } from '../../../../src/io/crs.ts';
import { CAUTION } from '../../../../src/core/shared/caution.ts';

const utm = createTransform('EPSG:4326', 'EPSG:32633');
const toWork = (lon: number, lat: number) => utm.forward(lon, lat);
const toLonLat = (x: number, y: number) => utm.inverse(x, y);

describe('exclusionsFromGeoJson', () => {
  it('exclusionsFromGeoJson reads lon/lat polygons with holes into the working CRS', () => {
    const ring = [[15, 48], [15.01, 48], [15.01, 48.01], [15, 48.01], [15, 48]];
    const hole = [[15.004, 48.004], [15.006, 48.004], [15.006, 48.006], [15.004, 48.004]];
    const text = JSON.stringify({ type: 'Feature', properties: {}, geometry: { type: 'Polygon', coordinates: [ring, hole] } });
    const polys = exclusionsFromGeoJson(text, 'shed.geojson', toWork);
    expect(polys).toHaveLength(1);
    expect(polys[0]).toHaveLength(2);
    expect(polys[0][0][1]).toEqual(utm.forward(15.01, 48));
    expect(() => exclusionsFromGeoJson('{"type":"Point","coordinates":[1,2]}', 'x.geojson', toWork)).toThrow(/expected a Polygon/);
  });
});

describe('exportFile', () => {
  const [x0, y0] = utm.forward(15, 48);
  const samples = makeSamples([x0 + 10, x0 + 90, x0 + 50, x0 + 20], [y0 + 10, y0 + 30, y0 + 80, y0 + 60], [3, 6, 4, 5]);
  const result = withLonLat(suggestSites(samples, { structures: [{ type: 'nugget', sill: 0.1 }, { type: 'exponential', sill: 1, scale: 40 }], trend: 'constant', transform: 'none' },
    { count: 2, cell: 10, threshold: 4.5 }), toLonLat);

  it('withLonLat fills lon/lat from the working CRS', () => {
    const [lon, lat] = utm.inverse(result.suggestions[0].x, result.suggestions[0].y);
    expect(result.suggestions[0].lon).toBe(lon);
    expect(result.suggestions[0].lat).toBe(lat);
  });

  it('exportFile names the files by format and writes GeoJSON, CSV (samples\' CRS) and GPX', () => {
    const geo = exportFile(result, 'geojson', 'lead topsoil.csv');
    expect(geo.name).toBe('lead-topsoil-next-samples.geojson');
    expect(geo.mime).toBe('application/geo+json');
    const obj = JSON.parse(geo.text);
    expect(gjv.valid(obj, true)).toEqual([]);
    expect(obj.properties.caution).toBe(CAUTION);
    const csv = exportFile(result, 'csv', 'lead', { toInput: toLonLat });
    const [caution, header, row] = csv.text.split('\n');
    expect(caution).toBe(`# ${CAUTION} Written by ${SOFTWARE}.`);
    expect(header.startsWith('rank,x,y')).toBe(true);
    const first = row.split(',');
    expect(Number(first[1])).toBeCloseTo(result.suggestions[0].lon!, 9);
    const gpx = exportFile(result, 'gpx', 'lead', { unit: 'mg/kg', time: new Date(0) });
    expect(gpx.name).toBe('lead-next-samples.gpx');
    expect(gpx.text).toContain('<time>1970-01-01T00:00:00Z</time>');
  });
});

describe('panel text helpers', () => {
  it('defaultMode is decision with a threshold, variance with a model, coverage without', () => {
    expect(defaultMode(true, 200)).toBe('decision');
    expect(defaultMode(true, null)).toBe('variance');
    expect(defaultMode(false, 200)).toBe('coverage');
  });
  it('areaText writes m² below a hectare and ha above', () => {
    expect(areaText(850.4)).toBe('850 m²');
    expect(areaText(12_500)).toBe('1.25 ha');
    expect(areaText(null)).toBe('–');
  });
  it('valueText keeps 3 significant digits', () => {
    expect(valueText(65.60327)).toBe('65.6');
    expect(valueText(0.00012345)).toBe('1.23 × 10⁻⁴');
    expect(valueText(null)).toBe('–');
  });
  it('safeStem keeps a file name stem safe', () => {
    expect(safeStem('my <site> data.csv')).toBe('my-site-data');
    expect(safeStem('///')).toBe('gapwise');
  });
});
