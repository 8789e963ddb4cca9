// Boundary polygons: ring checks, point-in-polygon with holes (cases worked out by hand on unit squares),
// and projection to the working CRS checked against PROJ (tests/reference/proj.json).
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { pointInPolygon, pointInPolygons, projectPolygons, readPolygons } from '../../src/io/boundary.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';
import { loadFixture } from '../helpers/fixtures.ts';
import { expectClose } from '../helpers/tolerance.ts';

const square = (x0: number, y0: number, s: number) => [[x0, y0], [x0 + s, y0], [x0 + s, y0 + s], [x0, y0 + s], [x0, y0]];
const polygonText = (rings: number[][][]) => JSON.stringify({ type: 'Polygon', coordinates: rings });

function err(f: () => unknown): GapwiseError {
  try {
    f();
  } catch (e) {
    expect(e).toBeInstanceOf(GapwiseError);
    return e as GapwiseError;
  }
  throw new Error('expected a GapwiseError');
}

describe('readPolygons', () => {
  it('readPolygons with planar: local x, y beyond longitude/latitude ranges are read as given; without it they are refused', () => {
    const text = JSON.stringify({ type: 'Polygon', coordinates: [[[0, 0], [200, 0], [200, 120], [0, 120], [0, 0]]] });
    expect(readPolygons(text, 'site.geojson', { planar: true })[0].rings[0]).toEqual([[0, 0], [200, 0], [200, 120], [0, 120], [0, 0]]);
    expect(() => readPolygons(text, 'site.geojson')).toThrow(/outside longitude/);
  });

  it('readPolygons: bare Polygon, Feature, MultiPolygon and FeatureCollection', () => {
    expect(readPolygons(polygonText([square(0, 0, 1)]), 'b.geojson')).toHaveLength(1);
    const feature = { type: 'Feature', properties: { name: '<b>yard</b>' }, geometry: { type: 'Polygon', coordinates: [square(0, 0, 1)] } };
    const f = readPolygons(JSON.stringify(feature), 'b.geojson');
    expect(f[0].properties).toEqual({ name: '<b>yard</b>' });
    const multi = { type: 'MultiPolygon', coordinates: [[square(0, 0, 1)], [square(2, 0, 1), square(2.25, 0.25, 0.5)]] };
    const m = readPolygons(JSON.stringify(multi), 'b.geojson');
    expect(m.map((p) => p.rings.length)).toEqual([1, 2]);
    const fc = { type: 'FeatureCollection', features: [feature, { ...feature, geometry: multi }] };
    expect(readPolygons(JSON.stringify(fc), 'b.geojson').map((p) => p.feature)).toEqual([0, 1, 1]);
  });

  it('readPolygons: an unclosed ring is bad-geometry naming the feature and both ends', () => {
    const e = err(() => readPolygons(polygonText([[[0, 0], [1, 0], [1, 1], [0, 1]]]), 'b.geojson'));
    expect(e.code).toBe('bad-geometry');
    expect(e.place).toMatchObject({ file: 'b.geojson', feature: 0, column: 'geometry' });
    expect(e.message).toContain('[0, 0]');
    expect(e.message).toContain('[0, 1]');
  });

  it('readPolygons: short rings, bad positions, points and non-GeoJSON are errors', () => {
    expect(err(() => readPolygons(polygonText([[[0, 0], [1, 0], [0, 0]]]), 'b')).message).toContain('at least 4');
    expect(err(() => readPolygons(polygonText([[[0, 0], [1, 'x'], [1, 1], [0, 0]]] as never), 'b')).code).toBe('bad-geometry');
    expect(err(() => readPolygons(polygonText([[[0, 0], [1, 95], [1, 1], [0, 0]]]), 'b')).message).toContain('outside');
    expect(err(() => readPolygons(JSON.stringify({ type: 'Point', coordinates: [0, 0] }), 'b')).code).toBe('bad-file');
    expect(err(() => readPolygons(JSON.stringify({ type: 'Feature', geometry: { type: 'Point', coordinates: [0, 0] } }), 'b')).code).toBe('bad-geometry');
    expect(err(() => readPolygons('{"type": "Polygon", ', 'b')).code).toBe('bad-file');
    expect(err(() => readPolygons(JSON.stringify({ type: 'FeatureCollection', features: [] }), 'b')).code).toBe('bad-geometry');
  });
});

describe('pointInPolygon', () => {
  const withHole = { rings: [square(0, 0, 10), square(4, 4, 2)] as Array<Array<[number, number]>> };
  it('pointInPolygon: inside the outer ring and outside the hole', () => {
    expect(pointInPolygon(1, 1, withHole)).toBe(true);
    expect(pointInPolygon(9.9, 5, withHole)).toBe(true);
    expect(pointInPolygon(5, 5, withHole)).toBe(false);
    expect(pointInPolygon(11, 5, withHole)).toBe(false);
    expect(pointInPolygon(-0.1, 5, withHole)).toBe(false);
  });

  it('pointInPolygon: concave outline (an L shape)', () => {
    const L = { rings: [[[0, 0], [2, 0], [2, 1], [1, 1], [1, 2], [0, 2], [0, 0]]] as Array<Array<[number, number]>> };
    expect(pointInPolygon(0.5, 1.5, L)).toBe(true);
    expect(pointInPolygon(1.5, 0.5, L)).toBe(true);
    expect(pointInPolygon(1.5, 1.5, L)).toBe(false);
  });

  it('pointInPolygons: any polygon counts', () => {
    const polys = [{ rings: [square(0, 0, 1)] }, { rings: [square(5, 5, 1)] }] as Array<{ rings: Array<Array<[number, number]>> }>;
    expect(pointInPolygons(5.5, 5.5, polys)).toBe(true);
    expect(pointInPolygons(3, 3, polys)).toBe(false);
  });
});

describe('projectPolygons', () => {
  it('projectPolygons: vertices land where PROJ puts them, edges are densified, holes kept', () => {
    const proj = loadFixture<{ crs: string; lon: number; lat: number; x: number; y: number }>('proj.json');
    const ref = proj.cases.find((c) => c.crs === 'EPSG:32632' && c.lon === 11.25 && c.lat === 48.5)!;
    const polys = readPolygons(polygonText([square(11.25, 48.5, 0.05), square(11.27, 48.52, 0.01)]), 'b');
    const [p] = projectPolygons(polys, 'EPSG:32632');
    expect(p.rings).toHaveLength(2);
    expectClose(p.rings[0][0][0], ref.x, proj.tolerance, 'x of the first vertex vs PROJ');
    expectClose(p.rings[0][0][1], ref.y, proj.tolerance, 'y of the first vertex vs PROJ');
    // 4 edges of 0.05° in steps of at most 0.01°: 5 points per edge plus the closing one.
    expect(p.rings[0]).toHaveLength(21);
    expect(p.rings[0][20]).toEqual(p.rings[0][0]);
    // A point in the hole stays out; one in the ring stays in.
    const [hx, hy] = [p.rings[1][0][0] + 100, p.rings[1][0][1] + 100];
    expect(pointInPolygon(hx, hy, p)).toBe(false);
    expect(pointInPolygon(ref.x + 100, ref.y + 100, p)).toBe(true);
  });
});

describe('readPolygons refuses rings that cross themselves', () => {
  it('readPolygons names the ring, the two edges and where they cross', () => {
    const bowTie = JSON.stringify({ type: 'Polygon', coordinates: [[[11.24, 48.49], [11.25, 48.5], [11.25, 48.49], [11.24, 48.5], [11.24, 48.49]]] });
    let e: GapwiseError | null = null;
    try { readPolygons(bowTie, 'site.geojson'); } catch (x) { e = x as GapwiseError; }
    expect(e?.code).toBe('bad-geometry');
    expect(e?.describe()).toBe('site.geojson, feature 0, column "geometry": Feature 0: the Polygon\'s outer ring crosses itself at [11.245, 48.495], where edge 1 ([11.24, 48.49] to [11.25, 48.5]) meets edge 3 ([11.25, 48.49] to [11.24, 48.5]); expected a ring that does not cross or touch itself (inside and outside are ambiguous otherwise).');
  });

  it('readPolygons reads the demo boundary, which is simple', () => {
    const text = readFileSync(resolve(import.meta.dirname, '../../data-demo/site-boundary.geojson'), 'utf8');
    expect(readPolygons(text, 'site-boundary.geojson').length).toBeGreaterThan(0);
  });
});
