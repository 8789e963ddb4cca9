// CRS handling checked against PROJ: tests/reference/proj.json is written by make_proj.py with
// Debian's python3-pyproj (PROJ 9.1.1) for the same definitions; tolerance 1 mm.
import { describe, expect, it } from 'vitest';
import {
  LOCAL_CRS, WORK_CRS_SCALE_LIMIT, WORK_CRS_SCALE_WARNING, checkGridInCrs, chooseWorkCrs, createTransform, epsgCode, isGeographic, loadEpsgIndex, metreEquivalent, resolveCrs,
  scaleFactors, searchCrs, utmZoneFor,
} from '../../src/io/crs.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';
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

describe('the working CRS: metres and distortion', () => {
  const scale = loadFixture<{ crs: string; lon: number; lat: number; a: number; b: number }>('crs_scale.json');

  it('scaleFactors matches PROJ\'s Tissot semi-axes inside and beyond a UTM zone, for LAEA and Web Mercator (pyproj get_factors)', () => {
    for (const c of scale.cases) {
      const f = scaleFactors(c.crs, c.lon, c.lat);
      // PROJ measures Web Mercator against its own sphere; we measure against the WGS 84 ellipsoid the
      // positions are on, which differs by up to e² (0.67 %, the meridian radius at the equator) in relative terms.
      const tolerance = c.crs === 'EPSG:3857' ? { rel: 0.0068 } : scale.tolerance;
      expectClose(f.a, c.a, tolerance, `${c.crs} a at ${c.lon}, ${c.lat}`);
      expectClose(f.b, c.b, tolerance, `${c.crs} b at ${c.lon}, ${c.lat}`);
    }
    // The warning threshold sits above a UTM zone's own edge error (≈ 0.00098 on the equator) and the
    // widened zone 32 over Norway (≈ 0.0013 at 3° E, 56° N), both from the fixture above.
    expect(WORK_CRS_SCALE_WARNING).toBeGreaterThan(0.00131);
    expect(WORK_CRS_SCALE_LIMIT).toBe(0.05);
  });

  it('metreEquivalent finds the same projection in metres for a US-feet state plane CRS', () => {
    expect(metreEquivalent(resolveCrs('EPSG:2263'))?.key).toBe('EPSG:32118');
    // California zone 3: false easting 2000000.0001016 m in the feet version, 2000000 m in metres.
    expect(metreEquivalent(resolveCrs('EPSG:2227'))?.key).toBe('EPSG:26943');
    expect(metreEquivalent(resolveCrs('EPSG:32633'))).toBeNull();
  });

  it('chooseWorkCrs refuses a requested working CRS in US feet, naming the metre CRS for the same area', () => {
    const ft = resolveCrs('EPSG:2263');
    const e = (() => { try { chooseWorkCrs(ft, [1_000_000, 1_001_000], [200_000, 201_000], ft); } catch (x) { return x as GapwiseError; } return null; })();
    expect(e?.code).toBe('bad-crs');
    expect(e?.message).toBe('The working CRS EPSG:2263 (NAD83 / New York Long Island (ftUS)) is in US survey feet; expected a CRS in metres, since every length and area is reported in metres: use EPSG:32118 (NAD83 / New York Long Island), the same projection in metres.');
  });

  it('chooseWorkCrs works samples given in US feet in the same projection in metres, and says so', () => {
    const choice = chooseWorkCrs(resolveCrs('EPSG:2263'), [1_000_000, 1_001_000], [200_000, 201_000]);
    expect(choice.work.key).toBe('EPSG:32118');
    expect(choice.warnings).toEqual([{ code: 'work-crs-metres', message: "The samples' CRS EPSG:2263 is in US survey feet; they are worked in EPSG:32118 (NAD83 / New York Long Island), the same projection in metres, so lengths and areas are in metres." }]);
    // 1,000 US survey feet apart in x are 304.8006 m apart in the working CRS.
    const t = createTransform('EPSG:2263', choice.work.key);
    expectClose(t.forward(1_001_000, 200_000)[0] - t.forward(1_000_000, 200_000)[0], 1000 * 1200 / 3937, { abs: 1e-3 }, 'metres per 1,000 ftUS');
  });

  it('chooseWorkCrs keeps local coordinates and metre CRSs of small sites without a warning', () => {
    expect(chooseWorkCrs(resolveCrs(LOCAL_CRS), [0, 10], [0, 10])).toEqual({ work: resolveCrs(LOCAL_CRS), warnings: [] });
    expect(chooseWorkCrs(resolveCrs('EPSG:4326'), [11.24, 11.25], [48.49, 48.5])).toEqual({ work: resolveCrs('EPSG:32632'), warnings: [] });
    expect(chooseWorkCrs(resolveCrs('EPSG:32633'), [500_000, 501_000], [5_400_000, 5_401_000]).warnings).toEqual([]);
  });

  it('chooseWorkCrs warns when lon/lat samples reach past a UTM zone, with the extent, the error and a suggestion', () => {
    const choice = chooseWorkCrs(resolveCrs('EPSG:4326'), [0, 5, 10], [45, 46, 47]);
    expect(choice.work.key).toBe('EPSG:32631');
    expect(choice.warnings.map((w) => w.code)).toEqual(['work-crs-distortion']);
    // 0.31 %: PROJ gives a = 1.00308 at 10° E, 47° N in zone 31 (crs_scale.json); LAEA centred on the
    // samples 1.00052 at the same place.
    expect(choice.warnings[0].message).toBe('The samples reach beyond the useful width of EPSG:32631 (WGS 84 / UTM zone 31N): the samples span 10° of longitude (0° to 10°) and 45° to 47° latitude, and lengths are 0.31 % off at the sample at 10°, 47° (a UTM zone keeps within about 0.1 %): give as the working CRS a national or regional projected CRS in metres that covers them, or "+proj=laea +lat_0=46 +lon_0=5 +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs" (Lambert azimuthal equal-area centred on the samples, at most 0.052 % off here).');
  });

  it('chooseWorkCrs refuses lon/lat samples spanning the globe instead of forcing them into one UTM zone', () => {
    const e = (() => { try { chooseWorkCrs(resolveCrs('EPSG:4326'), [-170, 0, 170], [0, 10, 20]); } catch (x) { return x as GapwiseError; } return null; })();
    expect(e?.code).toBe('bad-crs');
    expect(e?.message).toMatch(/^The working CRS chosen for these longitude\/latitude samples, EPSG:32651 \(WGS 84 \/ UTM zone 51N\), distorts lengths by \d+ % at the sample at -170°, 0° \(the samples span 190° of longitude \(0° to -170° across the antimeridian\) and 0° to 20° latitude\); expected at most 5 %: no single map projection keeps lengths within that over these samples: split them by region\.$/);
  });

  it('chooseWorkCrs refuses Web Mercator as a requested working CRS and replaces it as the samples\' own, saying so', () => {
    const e = (() => { try { chooseWorkCrs(resolveCrs('EPSG:4326'), [11.24, 11.25], [48.49, 48.5], resolveCrs('EPSG:3857')); } catch (x) { return x as GapwiseError; } return null; })();
    // PROJ: a = 1.509 at 11.25° E, 48.5° N (crs_scale.json).
    expect(e?.message).toContain('The working CRS EPSG:3857 (WGS 84 / Pseudo-Mercator) distorts lengths by 51 % at the sample at 11.25°, 48.5°');
    expect(e?.message).toContain('or EPSG:32632 (WGS 84 / UTM zone 32N, at most 0.0063 % off here).');
    const own = chooseWorkCrs(resolveCrs('EPSG:3857'), [1_250_000, 1_251_000], [6_190_000, 6_191_000]);
    expect(own.work.key).toBe('EPSG:32632');
    expect(own.warnings[0].code).toBe('work-crs-metres');
  });
});

describe('proj strings and grids out of range', () => {
  const refusal = (f: () => unknown) => { try { f(); } catch (e) { return e as GapwiseError; } return null; };

  it('resolveCrs refuses proj-string parameters proj4 would take out of range, naming the parameter and range', () => {
    const e = refusal(() => resolveCrs('+proj=utm +zone=99 +datum=WGS84'));
    expect(e?.code).toBe('bad-crs');
    expect(e?.message).toBe("The proj string's +zone=99 is out of range; expected a whole UTM zone number from 1 to 60.");
    expect(refusal(() => resolveCrs('+proj=utm +zone=33.5'))?.message).toContain('+zone=33.5 is out of range');
    expect(refusal(() => resolveCrs('+proj=tmerc +lat_0=95 +lon_0=10'))?.message).toBe("The proj string's +lat_0=95 is out of range; expected a latitude in degrees from -90 to 90.");
    expect(refusal(() => resolveCrs('+proj=tmerc +lon_0=400'))?.message).toContain('+lon_0=400');
    expect(refusal(() => resolveCrs('+proj=tmerc +k=0'))?.message).toContain('expected a scale factor from 0.001 to 10');
    expect(refusal(() => resolveCrs('+proj=tmerc +to_meter=0'))?.message).toContain('+to_meter=0');
    expect(refusal(() => resolveCrs('+proj=utm +zone=33 +units=furlong'))?.message).toBe("The proj string's +units=furlong is not a unit here; expected one of m, km, us-ft, ft, link, ind-yd, ch.");
    // In range: accepted as before.
    expect(resolveCrs('+proj=utm +zone=60 +south +datum=WGS84 +units=m').utm).toBe(true);
  });

  it('checkGridInCrs refuses a grid that reaches where the working CRS distorts lengths beyond the limit', () => {
    // 6,000 km wide around the central meridian of zone 33: its edges, 3,000 km out, are about 11 % off
    // (TM scale ≈ 1 + x²/2R², from memory).
    const wide = { xmin: 500_000 - 3_000_000, xmax: 500_000 + 3_000_000, ymin: 5_000_000, ymax: 5_500_000 };
    const e = refusal(() => checkGridInCrs(wide, 'EPSG:32633'));
    expect(e?.message).toBe('The grid (6000 km × 500 km) reaches -19.64°, 39.58°, where EPSG:32633 distorts lengths by 11 %; expected at most 5 %: choose a smaller padding or area.');
    expect(() => checkGridInCrs({ xmin: 400_000, xmax: 600_000, ymin: 5_000_000, ymax: 5_200_000 }, 'EPSG:32633')).not.toThrow();
    expect(() => checkGridInCrs({ xmin: -1e12, xmax: 1e12, ymin: -1e12, ymax: 1e12 }, LOCAL_CRS)).not.toThrow();
  });
});
