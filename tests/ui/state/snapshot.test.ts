import { describe, expect, it } from 'vitest';
import {
  analyteChoicesOf, deserialiseSnapshot, emptySnapshot, MAX_ANALYTES, parseSnapshot, serialiseSnapshot, type SessionSnapshot,
} from '../../../src/ui/state/snapshot.ts';

function fullSnapshot(): SessionSnapshot {
  const s = emptySnapshot();
  s.step = 'surface';
  s.source = { fileName: 'pb.csv', text: 'x,y,"Pb (mg/kg)"\n1,2,<0.5\n3,4,"<b>12</b>"\n', invented: true };
  s.boundary = { fileName: 'site.geojson', text: '{"type":"FeatureCollection","features":[]}', invented: false };
  s.samples = { value: 'Pb (mg/kg)', x: 'x', y: 'y', crs: 'EPSG:27700', nonDetect: 'dl', unit: 'mg/kg', transform: 'log' };
  s.structure = {
    lagWidth: 25, maxLag: 400, directional: true, cloud: true, method: 'wls', chosen: 'matern-1.5',
    model: {
      structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1.2, scale: 150, nu: 1.5 }],
      trend: 'constant', transform: 'log',
    },
    likelihood: 'nnl',
  };
  s.surface = {
    area: 'boundary', padding: 0.1, cellSize: 5, threshold: 200, layer: 'exceed', opacity: 0.6,
    hideUncertain: true, contours: true, colours: 'log', sdLimit: 40, wanted: true, running: true, support: 'block', blockPoints: 6, method: 'local',
  };
  s.simulation = { count: 250, seed: 17, depth: 0.3 };
  s.readId = 'reading-1';
  s.next = { count: 12, mode: 'decision', spacing: 25 };
  s.map = { basemap: 'custom', customUrl: 'http://127.0.0.1:8080/{z}/{x}/{y}.png' };
  return s;
}

describe('serialiseSnapshot / deserialiseSnapshot', () => {
  it('serialiseSnapshot then deserialiseSnapshot gives back every field', () => {
    const s = fullSnapshot();
    const back = deserialiseSnapshot(serialiseSnapshot(s));
    expect(back).toEqual(s);
  });

  it('deserialiseSnapshot keeps the file text byte for byte, quotes, markup and newlines included', () => {
    const s = fullSnapshot();
    s.source!.text = '\uFEFFid;x;y;v\r\n"a""b";1;2;<script>alert(1)</script>\r\n';
    expect(deserialiseSnapshot(serialiseSnapshot(s))!.source!.text).toBe(s.source!.text);
  });

  it('deserialiseSnapshot returns null for text that is not JSON or not this version', () => {
    expect(deserialiseSnapshot('not json')).toBeNull();
    expect(deserialiseSnapshot('{"version":99}')).toBeNull();
    expect(deserialiseSnapshot('[]')).toBeNull();
  });
});

describe('parseSnapshot', () => {
  it('parseSnapshot fills defaults for missing parts', () => {
    expect(parseSnapshot({ version: 1 })).toEqual(emptySnapshot());
  });

  it('parseSnapshot replaces malformed fields by their defaults and keeps the good ones', () => {
    const s = parseSnapshot({
      version: 1,
      step: 'nowhere',
      samples: { unit: 5, transform: 'sqrt', value: 'Pb' },
      structure: { lagWidth: -3, maxLag: 'x', method: 'ols', model: { structures: 'no' } },
      surface: { opacity: 3, cellSize: 10, threshold: 'high', layer: 'exceed', colours: 'rainbow' },
      map: { basemap: 'satellite', customUrl: 7 },
    })!;
    expect(s.step).toBe('samples');
    expect(s.samples).toEqual({ value: 'Pb', x: undefined, y: undefined, crs: undefined, nonDetect: undefined, unit: '', transform: 'none' });
    expect(s.structure.lagWidth).toBe(0);
    expect(s.structure.maxLag).toBe(0);
    expect(s.structure.method).toBe('reml');
    expect(s.structure.model).toBeNull();
    expect(s.surface.opacity).toBe(0.8);
    expect(s.surface.cellSize).toBe(10);
    expect(s.surface.threshold).toBeNull();
    expect(s.surface.layer).toBe('exceed');
    expect(s.surface.colours).toBe('auto');
    expect(parseSnapshot({ version: 1, surface: { colours: 'linear' } })!.surface.colours).toBe('linear');
    expect(s.map).toEqual({ basemap: 'none', customUrl: '' });
  });

  it('parseSnapshot keeps the support, block points, realisation count, seed and depth, and replaces bad ones by defaults', () => {
    const good = parseSnapshot({ version: 1, surface: { support: 'block', blockPoints: 3 }, simulation: { count: 40, seed: -12, depth: 0.25 } })!;
    expect(good.surface).toMatchObject({ support: 'block', blockPoints: 3 });
    expect(good.simulation).toEqual({ count: 40, seed: -12, depth: 0.25 });
    const bad = parseSnapshot({ version: 1, surface: { support: 'area', blockPoints: 2.5 }, simulation: { count: 0, seed: 1.5, depth: -1 } })!;
    expect(bad.surface).toMatchObject({ support: 'point', blockPoints: 4 });
    expect(bad.simulation).toEqual({ count: 100, seed: 1, depth: null });
    // A snapshot saved before these choices existed opens with the defaults.
    expect(parseSnapshot({ version: 1, surface: { cellSize: 5 } })!.simulation).toEqual(emptySnapshot().simulation);
  });

  it('parseSnapshot drops a source without text', () => {
    expect(parseSnapshot({ version: 1, source: { fileName: 'a.csv' } })!.source).toBeNull();
  });
});

describe('parseSnapshot with several analytes', () => {
  function withAnalytes(): SessionSnapshot {
    const s = fullSnapshot();
    const zinc = analyteChoicesOf(s);
    zinc.readId = 'reading-zinc';
    zinc.samples = { ...zinc.samples, value: 'Zn (mg/kg)', transform: 'none' };
    zinc.structure = { ...zinc.structure, model: null, chosen: '' };
    zinc.surface = { ...zinc.surface, threshold: 720 };
    s.analytes = { chosen: ['Pb (mg/kg)', 'Zn (mg/kg)'], parked: { 'Zn (mg/kg)': zinc } };
    return s;
  }

  it('parseSnapshot keeps the analytes chosen and each parked one\'s own choices', () => {
    const s = withAnalytes();
    const back = deserialiseSnapshot(serialiseSnapshot(s))!;
    expect(back).toEqual(s);
    expect(back.analytes!.parked['Zn (mg/kg)'].surface.threshold).toBe(720);
    expect(back.surface.threshold).toBe(200);
  });

  it('parseSnapshot drops a parked analyte whose choices name another value, and the set when one analyte is left', () => {
    const s = withAnalytes();
    s.analytes!.parked['Zn (mg/kg)'].samples.value = 'Cu';
    expect(parseSnapshot(JSON.parse(serialiseSnapshot(s)))!.analytes).toBeUndefined();
  });

  it('parseSnapshot drops the set when the analyte in use is not among the chosen, and keeps at most MAX_ANALYTES', () => {
    const s = withAnalytes();
    s.analytes!.chosen = ['Zn (mg/kg)', 'Cu'];
    expect(parseSnapshot(JSON.parse(serialiseSnapshot(s)))!.analytes).toBeUndefined();
    const many = withAnalytes();
    const names = Array.from({ length: MAX_ANALYTES + 3 }, (_, k) => `v${k}`);
    many.analytes = { chosen: ['Pb (mg/kg)', ...names], parked: {} };
    for (const n of names) many.analytes.parked[n] = { ...analyteChoicesOf(many), samples: { ...many.samples, value: n } };
    expect(parseSnapshot(JSON.parse(serialiseSnapshot(many)))!.analytes!.chosen).toHaveLength(MAX_ANALYTES);
  });
});
