// CRS handling checked against PROJ: tests/reference/proj.json is written by make_proj.py with
// Debian's python3-pyproj (PROJ 9.1.1) for the same definitions; tolerance 1 mm.
import { describe, expect, it } from 'vitest';
import { LOCAL_CRS, createTransform, epsgCode, isGeographic, loadEpsgIndex, resolveCrs, searchCrs, utmZoneFor } from '../../src/io/crs.ts';
import { GapwiseError } from '../../src/core/errors.ts';
import { loadFixture } from '../helpers/fixtures.ts';
import { expectClose } from '../helpers/tolerance.ts';

interface ProjCase { crs: string; definition: string; lon: number; lat: number; x: number; y: number }
const fx = loadFixture<ProjCase>('proj.json');

/** Metres on the ground between two lon/lat points a short distance apart (local flat earth). */
function groundMetres(lon1: number, lat1: number, lon2: number, lat2: number): number {
  const dy = (lat2 - lat1) * 111_132;
  const dx = (lon2 - lon1) * 111_320 * Math.cos((lat1 * Math.PI) / 180);
  return Math.hypot(dx, dy);
}

describe('createTransform', () => {
  it('createTransform: forward values match PROJ within 1 mm (UTM north and south, 27700, 2193, 3035, 3857)', () => {
    const crss = new Set(fx.cases.map((c) => c.crs));
    for (const want of ['EPSG:32633', 'EPSG:32733', 'EPSG:27700', 'EPSG:2193', 'EPSG:3035', 'EPSG:3857']) expect(crss.has(want)).toBe(true);
    for (const c of fx.cases) {
      const [x, y] = createTransform('EPSG:4326', c.crs).forward(c.lon, c.lat);
      expectClose(x, c.x, fx.tolerance, `${c.crs} x at (${c.lon}, ${c.lat})`);
      expectClose(y, c.y, fx.tolerance, `${c.crs} y at (${c.lon}, ${c.lat})`);
    }
  });

  it('createTransform: the EPSG definition used is the one PROJ was given', () => {
    for (const c of fx.cases) {
      const used = resolveCrs(c.crs).definition.replace(' +type=crs', '');
      expect(used.replace(/\+wktext /, ''), c.crs).toBe(c.definition.replace(/\+wktext /, ''));
    }
  });

  it('createTransform: inverse of the PROJ coordinates returns to the point within 1 mm', () => {
    for (const c of fx.cases) {
      const [lon, lat] = createTransform('EPSG:4326', c.crs).inverse(c.x, c.y);
      expect(groundMetres(c.lon, c.lat, lon, lat), `${c.crs} at (${c.lon}, ${c.lat})`).toBeLessThanOrEqual(0.001);
    }
  });

  it('createTransform: forward then inverse round trips within 1 mm', () => {
    for (const c of fx.cases) {
      const t = createTransform('EPSG:4326', c.crs);
      const [x, y] = t.forward(c.lon, c.lat);
      const [lon, lat] = t.inverse(x, y);
      expect(groundMetres(c.lon, c.lat, lon, lat), c.crs).toBeLessThanOrEqual(0.001);
    }
  });

  it('createTransform: forwardMany agrees with forward, and impossible points give NaN', () => {
    const t = createTransform('EPSG:4326', 'EPSG:32633');
    const m = t.forwardMany([15.5, 12.2], [52.5, 0.4]);
    expect([m.x[0], m.y[0]]).toEqual(t.forward(15.5, 52.5));
    expect([m.x[1], m.y[1]]).toEqual(t.forward(12.2, 0.4));
    expect(t.forward(NaN, 1).every(Number.isNaN)).toBe(true);
  });

  it('createTransform: local planar coordinates transform only to themselves', () => {
    expect(createTransform(LOCAL_CRS, LOCAL_CRS).forward(3, 4)).toEqual([3, 4]);
    expect(() => createTransform(LOCAL_CRS, 'EPSG:4326')).toThrow(GapwiseError);
  });
});

describe('utmZoneFor', () => {
  it('utmZoneFor: 6° zones from 180° W, north 326zz and south 327zz', () => {
    expect(utmZoneFor(15.5, 52.5)).toEqual({ zone: 33, south: false, code: 'EPSG:32633' });
    expect(utmZoneFor(15.5, -33.9)).toEqual({ zone: 33, south: true, code: 'EPSG:32733' });
    expect(utmZoneFor(-180, 10).zone).toBe(1);
    expect(utmZoneFor(179.99, 10).zone).toBe(60);
    expect(utmZoneFor(-0.01, 51.5).zone).toBe(30);
    expect(utmZoneFor(0, 51.5).zone).toBe(31);
  });

  it('utmZoneFor: zone 32 widened over south-west Norway (56–64° N, 3–12° E)', () => {
    expect(utmZoneFor(5.3, 60.39).zone).toBe(32);
    expect(utmZoneFor(3, 56).zone).toBe(32);
    expect(utmZoneFor(2.99, 60).zone).toBe(31);
    expect(utmZoneFor(5.3, 64).zone).toBe(31);
    expect(utmZoneFor(5.3, 55.99).zone).toBe(31);
  });

  it('utmZoneFor: Svalbard zones 31X, 33X, 35X, 37X (72–84° N)', () => {
    expect(utmZoneFor(8, 78).zone).toBe(31);
    expect(utmZoneFor(9, 78).zone).toBe(33);
    expect(utmZoneFor(20.99, 78).zone).toBe(33);
    expect(utmZoneFor(21, 78).zone).toBe(35);
    expect(utmZoneFor(33, 78).zone).toBe(37);
    expect(utmZoneFor(41.99, 78).zone).toBe(37);
    expect(utmZoneFor(42, 78).zone).toBe(38);
    expect(utmZoneFor(8, 71.99).zone).toBe(32);
  });

  it('utmZoneFor: impossible coordinates are bad-value errors', () => {
    expect(() => utmZoneFor(0, 123)).toThrow(GapwiseError);
    expect(() => utmZoneFor(NaN, 0)).toThrow(GapwiseError);
  });
});

describe('resolveCrs and isGeographic', () => {
  it('resolveCrs: EPSG codes in several spellings, proj strings, units', () => {
    expect(epsgCode('epsg:4326')).toBe('4326');
    expect(epsgCode('urn:ogc:def:crs:EPSG::32633')).toBe('32633');
    expect(epsgCode('CRS84')).toBe('4326');
    expect(epsgCode('+proj=utm')).toBeNull();
    expect(resolveCrs('EPSG:2154').name).toBe('RGF93 v1 / Lambert-93');
    expect(resolveCrs('EPSG:2154').metresPerUnit).toBe(1);
    expect(resolveCrs('EPSG:2272').unitName).toBe('US survey foot');
    expect(resolveCrs('+proj=utm +zone=33 +datum=WGS84 +units=m').utm).toBe(true);
  });

  it('resolveCrs: a datum grid that cannot be loaded is replaced or dropped, with a note', () => {
    const bng = resolveCrs('EPSG:27700');
    expect(bng.definition).toContain('+towgs84=446.448');
    expect(bng.definition).not.toContain('nadgrids');
    expect(bng.notes[0]).toContain('OSTN15');
  });

  it('resolveCrs: unknown, vertical and unreadable systems are bad-crs errors', () => {
    for (const s of ['EPSG:99999', 'EPSG:5703', 'foo', '+proj=nonsense', '']) {
      try {
        resolveCrs(s);
        expect.fail(`no error for ${s}`);
      } catch (e) {
        expect(e).toBeInstanceOf(GapwiseError);
        expect((e as GapwiseError).code).toBe('bad-crs');
      }
    }
  });

  it('isGeographic: lon/lat systems yes, projected and local no', () => {
    expect(isGeographic('EPSG:4326')).toBe(true);
    expect(isGeographic('EPSG:4258')).toBe(true);
    expect(isGeographic('+proj=longlat +datum=WGS84')).toBe(true);
    expect(isGeographic('EPSG:32633')).toBe(false);
    expect(isGeographic('EPSG:3857')).toBe(false);
    expect(isGeographic(LOCAL_CRS)).toBe(false);
  });
});

describe('searchCrs', () => {
  it('searchCrs: an exact code comes first; words match names; limits hold', async () => {
    expect(await loadEpsgIndex()).toBeGreaterThan(8000);
    expect(searchCrs('2193', 5)[0]).toMatchObject({ code: 'EPSG:2193', geographic: false });
    expect(searchCrs('EPSG:4326', 3)[0]).toMatchObject({ code: 'EPSG:4326', name: 'WGS 84', geographic: true });
    expect(searchCrs('utm zone 33N', 5)[0].code).toBe('EPSG:32633');
    expect(searchCrs('british national grid', 10).map((r) => r.code)).toContain('EPSG:27700');
    expect(searchCrs('utm', 7).length).toBe(7);
    expect(searchCrs('navd88', 10).length).toBe(0);
  });
});
