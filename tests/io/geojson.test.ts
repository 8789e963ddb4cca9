// GeoJSON point features as sample tables; expected values read off the test objects.
import { describe, expect, it } from 'vitest';
import { jsonErrorOffset, parseJson, propertyText, readPointFeatures } from '../../src/io/geojson.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';

const fc = (features: unknown[], extra: object = {}) => JSON.stringify({ type: 'FeatureCollection', features, ...extra });
const pt = (lon: number, lat: number, properties: object | null, id?: unknown) => ({ type: 'Feature', id, geometry: { type: 'Point', coordinates: [lon, lat] }, properties });

describe('readPointFeatures', () => {
  it('readPointFeatures: properties become text columns in first-seen order, feature ids an id column', () => {
    const r = readPointFeatures(fc([pt(1, 2, { Pb: 10, note: null }, 'a'), pt(3, 4, { Pb: '<2', extra: { d: 1 } }, 'b')]), 'f.geojson');
    expect(r.columns).toEqual(['id', 'Pb', 'note', 'extra']);
    expect(r.records.map((q) => [q.feature, q.lon, q.lat])).toEqual([[1, 1, 2], [2, 3, 4]]);
    expect(Object.fromEntries(r.records[0].cells)).toEqual({ Pb: '10', note: '', id: 'a' });
    expect(Object.fromEntries(r.records[1].cells)).toEqual({ Pb: '<2', extra: '{"d":1}', id: 'b' });
    expect(r.records.map((q) => q.id)).toEqual(['a', 'b']);
    expect(r.entries).toEqual([]);
  });

  it('readPointFeatures: non-point and invalid features are rejected by their number from 1, not the file', () => {
    const r = readPointFeatures(
      fc([
        pt(1, 2, {}),
        { type: 'Feature', geometry: { type: 'Point', coordinates: ['a', 2] }, properties: {} },
        { type: 'Feature', geometry: { type: 'Polygon', coordinates: [] }, properties: {} },
        { type: 'Nonsense' },
        { type: 'Feature', geometry: { type: 'MultiPoint', coordinates: [] }, properties: {} },
      ]),
      'f.geojson',
    );
    expect(r.records).toHaveLength(1);
    expect(r.entries.map((e) => [e.feature, e.action])).toEqual([[2, 'rejected'], [3, 'rejected'], [4, 'rejected'], [5, 'rejected']]);
    expect(r.featureCount).toBe(5);
  });

  it('readPointFeatures: properties named __proto__ and constructor are plain columns', () => {
    const text = '{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[1,2]},"properties":{"__proto__":"7.5","constructor":"c","toString":"t"}}]}';
    const r = readPointFeatures(text, 'p.geojson');
    expect(r.columns).toEqual(['__proto__', 'constructor', 'toString']);
    expect([...r.records[0].cells]).toEqual([['__proto__', '7.5'], ['constructor', 'c'], ['toString', 't']]);
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
  });

  it('readPointFeatures: a file of polygons is named as one (a boundary?), not rejected feature by feature', () => {
    const poly = { type: 'Feature', geometry: { type: 'Polygon', coordinates: [[[0, 0], [1, 0], [1, 1], [0, 0]]] }, properties: {} };
    for (const t of [fc([poly, poly]), JSON.stringify(poly), JSON.stringify(poly.geometry)]) {
      try {
        readPointFeatures(t, 'b.geojson');
        expect.fail(t);
      } catch (e) {
        expect((e as GapwiseError).code).toBe('bad-file');
        expect((e as GapwiseError).message).toMatch(/polygons|Polygon/);
        expect((e as GapwiseError).message).toContain('boundary');
      }
    }
  });

  it('readPointFeatures: a legacy crs member is reported', () => {
    const r = readPointFeatures(fc([pt(1, 2, {})], { crs: { type: 'name', properties: { name: 'EPSG:32633' } } }), 'f');
    expect(r.legacyCrs).toBe('EPSG:32633');
  });

  it('readPointFeatures: anything but a FeatureCollection is bad-file', () => {
    for (const t of ['[]', '"x"', '{"type":"Point","coordinates":[0,0]}', '{"type":"FeatureCollection"}']) {
      try {
        readPointFeatures(t, 'f');
        expect.fail(t);
      } catch (e) {
        expect(e).toBeInstanceOf(GapwiseError);
        expect((e as GapwiseError).code).toBe('bad-file');
      }
    }
  });
});

describe('parseJson', () => {
  it('parseJson: a syntax error names its line', () => {
    try {
      parseJson('{\n "a": 1,\n "b": ]\n}', 'x.geojson');
      expect.fail('no error');
    } catch (e) {
      expect((e as GapwiseError).place).toMatchObject({ file: 'x.geojson', row: 3 });
    }
  });

  it('jsonErrorOffset: -1 for valid JSON, the offset of the first error otherwise', () => {
    expect(jsonErrorOffset('{"a":[1,2.5e3,true,null,"x\\u00e9"]}')).toBe(-1);
    expect(jsonErrorOffset('{"a":}')).toBe(5);
    expect(jsonErrorOffset('[1,]')).toBe(3);
    expect(jsonErrorOffset('['.repeat(50000))).toBe(50000);
  });

  it('propertyText: plain text for every JSON value', () => {
    expect(propertyText(null)).toBe('');
    expect(propertyText(0.1)).toBe('0.1');
    expect(propertyText(true)).toBe('true');
    expect(propertyText([1, 'a'])).toBe('[1,"a"]');
  });
});
