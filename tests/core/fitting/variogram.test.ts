import { describe, expect, it } from 'vitest';
import {
  directionalVariograms, empiricalVariogram, maxSampleDistance, variogramCloud, variogramSet, type VariogramOptions,
} from '../../../src/core/fitting/variogram.ts';
import { makeSamples } from '../../../src/core/shared/samples.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';

interface VariogramCase {
  options: VariogramOptions;
  expected: { lagWidth: number; maxLag: number; lagCount: number; lags: { distance: number; semivariance: number; pairs: number }[] };
}

// Source: numpy direct computation over all pairs (tests/reference/make_variogram.py).
const fixture = loadFixture<VariogramCase>('variogram.json');
const data = fixture.data as { x: number[]; y: number[]; value: number[] };
const samples = makeSamples(data.x, data.y, data.value);

describe('empiricalVariogram against numpy (make_variogram.py)', () => {
  it('maxSampleDistance equals the largest pdist distance (scipy)', () => {
    expectClose(maxSampleDistance(samples.x, samples.y), fixture.maxDistance as number, fixture.tolerance, 'max distance');
  });
  for (const c of fixture.cases) {
    it(`empiricalVariogram(${JSON.stringify(c.options)}) matches numpy`, () => {
      const v = empiricalVariogram(samples, c.options);
      expectClose(v.options.lagWidth, c.expected.lagWidth, fixture.tolerance, 'lag width');
      expectClose(v.options.maxLag, c.expected.maxLag, fixture.tolerance, 'max lag');
      expect(v.options.lagCount).toBe(c.expected.lagCount);
      expect(v.lags.map((l) => l.pairs)).toEqual(c.expected.lags.map((l) => l.pairs));
      expectClose(v.lags.map((l) => l.distance), c.expected.lags.map((l) => l.distance), fixture.tolerance, 'mean distance');
      expectClose(v.lags.map((l) => l.semivariance), c.expected.lags.map((l) => l.semivariance), fixture.tolerance, 'semivariance');
      expect(v.subsampled).toBe(false);
    });
  }
  it('directionalVariograms gives each direction the numpy values of the single-direction call', () => {
    const dirs = directionalVariograms(samples, { directions: [90, 120], tolerance: 30 });
    const c = fixture.cases.find((k) => k.options.direction === 120)!;
    expect(dirs[1].lags.map((l) => l.pairs)).toEqual(c.expected.lags.map((l) => l.pairs));
    expectClose(dirs[1].lags.map((l) => l.semivariance), c.expected.lags.map((l) => l.semivariance), fixture.tolerance, 'γ at 120°');
    expect(dirs[0].options.lagWidth).toBe(dirs[1].options.lagWidth);
    expect(dirs.map((d) => d.options.direction)).toEqual([90, 120]);
  });

  it('directionalVariograms in one pass equals one empiricalVariogram call per direction, subsampled pairs included', () => {
    for (const maxPairs of [undefined, 300]) {
      const opts = { tolerance: 22.5, bandwidth: 400, estimator: 'cressie-hawkins' as const, maxPairs };
      const dirs = directionalVariograms(samples, { directions: [0, 45, 90, 135], ...opts });
      for (const d of dirs) {
        const one = empiricalVariogram(samples, { ...opts, lagWidth: d.options.lagWidth, maxLag: d.options.maxLag, direction: d.options.direction });
        expect(d.lags).toEqual(one.lags);
        expect(d.pairsUsed).toBe(one.pairsUsed);
        expect(d.subsampled).toBe(maxPairs !== undefined);
        expect(d.warnings).toEqual(one.warnings);
      }
    }
  });
});

describe('empiricalVariogram hand cases', () => {
  // Three points on a line at 0, 1, 3 m with values 0, 1, 3: pairs (h 1, Δ 1), (h 2, Δ 2), (h 3, Δ 3).
  const line = makeSamples([0, 1, 3], [0, 0, 0], [0, 1, 3]);

  it('empiricalVariogram (Matheron) by hand: γ = ΣΔ²/(2N) per class', () => {
    const v = empiricalVariogram(line, { lagWidth: 1.5, maxLag: 3 });
    expect(v.lags).toEqual([
      { distance: 1, semivariance: 0.5, pairs: 1, from: 0, to: 1.5 },
      { distance: 2.5, semivariance: (4 + 9) / 4, pairs: 2, from: 1.5, to: 3 },
    ]);
  });

  it('empiricalVariogram (Cressie–Hawkins) by hand: ½[mean √|Δ|]⁴ / (0.457 + 0.494/N)', () => {
    const v = empiricalVariogram(line, { lagWidth: 1.5, maxLag: 3, estimator: 'cressie-hawkins' });
    expectClose(v.lags[0].semivariance, 0.5 / (0.457 + 0.494), { rel: 1e-15 }, 'class 0');
    const m = (Math.sqrt(2) + Math.sqrt(3)) / 2;
    expectClose(v.lags[1].semivariance, (0.5 * m ** 4) / (0.457 + 0.494 / 2), { rel: 1e-15 }, 'class 1');
  });

  it('empiricalVariogram leaves out pairs beyond the maximum lag and closes the last class at it', () => {
    const v = empiricalVariogram(line, { lagWidth: 1, maxLag: 2 });
    // h = 1 → class 1, h = 2 = maxLag → last class (1), h = 3 dropped.
    expect(v.lags.map((l) => l.pairs)).toEqual([2]);
    expect(v.pairsUsed).toBe(2);
    expect(v.notes.some((s) => s.includes('hold no pairs'))).toBe(true);
  });

  it('empiricalVariogram with a direction keeps pairs by azimuth clockwise from north', () => {
    // (0,0)–(0,10) runs north (0°), (0,0)–(10,0) east (90°), (0,10)–(10,0) at 135°.
    const s = makeSamples([0, 0, 10], [0, 10, 0], [0, 1, 5]);
    const north = empiricalVariogram(s, { direction: 0, tolerance: 10, lagWidth: 20, maxLag: 20 });
    expect(north.lags).toHaveLength(1);
    expect(north.lags[0]).toMatchObject({ pairs: 1, distance: 10, semivariance: 0.5 });
    const east = empiricalVariogram(s, { direction: 270, tolerance: 10, lagWidth: 20, maxLag: 20 });
    expect(east.lags[0]).toMatchObject({ pairs: 1, semivariance: 12.5 });
    const diag = empiricalVariogram(s, { direction: 135, tolerance: 10, lagWidth: 20, maxLag: 20 });
    expect(diag.lags[0]).toMatchObject({ pairs: 1, semivariance: 8 });
    expect(north.notes).not.toContain('Angular tolerance defaulted to ±22.5°.');
    expect(empiricalVariogram(s, { direction: 0, lagWidth: 20, maxLag: 20 }).options.tolerance).toBe(22.5);
  });

  it('empiricalVariogram with a bandwidth drops pairs too far across the direction', () => {
    // Both pairs at 30° from north: offsets across are 20·sin 30° = 10 m and 8·sin 30° = 4 m.
    const a = (30 * Math.PI) / 180;
    const s = makeSamples([0, 20 * Math.sin(a), 100, 100 + 8 * Math.sin(a)], [0, 20 * Math.cos(a), 0, 8 * Math.cos(a)], [0, 2, 0, 1]);
    const v = empiricalVariogram(s, { direction: 0, tolerance: 45, bandwidth: 5, lagWidth: 25, maxLag: 25 });
    expect(v.lags.map((l) => l.pairs)).toEqual([1]);
    expectClose(v.lags[0].distance, 8, { rel: 1e-12 }, 'kept pair');
  });

  it('empiricalVariogram states the defaults it applied and warns when data fall short (common practice)', () => {
    const v = empiricalVariogram(line);
    expect(v.options).toMatchObject({ estimator: 'matheron', lagCount: 15, maxLag: 1.5, lagWidth: 0.1 });
    expect(v.notes.join(' ')).toMatch(/half the largest sample distance: 1\.5 m/);
    expect(v.notes.join(' ')).toMatch(/maximum lag \/ 15/);
    const codes = v.warnings.map((w) => w.code);
    expect(codes).toContain('few-samples'); // < 100 samples
    expect(codes).toContain('few-pairs'); // < 30 pairs per lag
  });

  it('empiricalVariogram does not warn for 300 samples with well-filled lags', () => {
    const r = createRandom(5);
    const n = 300;
    const s = makeSamples(
      Array.from({ length: n }, () => r.uniform() * 1000), Array.from({ length: n }, () => r.uniform() * 1000),
      Array.from({ length: n }, () => r.normal()),
    );
    const v = empiricalVariogram(s, { lagCount: 10 });
    expect(v.warnings).toEqual([]);
    expect(Math.min(...v.lags.map((l) => l.pairs))).toBeGreaterThanOrEqual(30);
  });

  it('empiricalVariogram subsamples pairs deterministically above maxPairs and says so', () => {
    const r = createRandom(9);
    const n = 400;
    const s = makeSamples(
      Array.from({ length: n }, () => r.uniform() * 1000), Array.from({ length: n }, () => r.uniform() * 1000),
      Array.from({ length: n }, () => r.normal()),
    );
    const a = empiricalVariogram(s, { maxPairs: 20000, seed: 3 });
    const b = empiricalVariogram(s, { maxPairs: 20000, seed: 3 });
    const c = empiricalVariogram(s, { maxPairs: 20000, seed: 4 });
    expect(a.subsampled).toBe(true);
    expect(a.pairsExamined).toBe(20000);
    expect(a.lags).toEqual(b.lags);
    expect(a.lags).not.toEqual(c.lags);
    expect(a.warnings.map((w) => w.code)).toContain('pairs-subsampled');
    // White noise of variance 1: every class estimates γ = 1; 20,000 pairs keep each within ±25 %.
    for (const l of a.lags) expect(Math.abs(l.semivariance - 1)).toBeLessThan(0.25);
  });

  it('empiricalVariogram subsamples by default above 5,000 samples', () => {
    const r = createRandom(2);
    const n = 5200;
    const s = makeSamples(
      Array.from({ length: n }, () => r.uniform() * 1000), Array.from({ length: n }, () => r.uniform() * 1000),
      Array.from({ length: n }, () => r.normal()),
    );
    const v = empiricalVariogram(s, { lagCount: 5 });
    expect(v.subsampled).toBe(true);
    expect(v.pairsExamined).toBe((5000 * 4999) / 2);
  });

  it('empiricalVariogram refuses fewer than 2 samples and bad options with GapwiseError', () => {
    expect(() => empiricalVariogram(makeSamples([0], [0], [1]))).toThrow(GapwiseError);
    expect(() => empiricalVariogram(makeSamples([0, 0], [0, 0], [1, 2]))).toThrow(/one place/);
    expect(() => empiricalVariogram(line, { lagWidth: -1 })).toThrow(/lag width/);
    expect(() => empiricalVariogram(line, { direction: 0, tolerance: 120 })).toThrow(/tolerance/);
  });
});

describe('variogramCloud', () => {
  it('variogramCloud lists every pair with ½Δ² when there are few', () => {
    const s = makeSamples([0, 3, 0], [0, 4, 1], [1, 3, 2]);
    const c = variogramCloud(s);
    expect(c.totalPairs).toBe(3);
    expect(c.subsampled).toBe(false);
    const k = c.i.findIndex((i, idx) => i === 1 && c.j[idx] === 0);
    expect(c.distance[k]).toBe(5);
    expect(c.semivariance[k]).toBe(2);
  });

  it('variogramCloud subsamples distinct pairs deterministically', () => {
    const r = createRandom(1);
    const n = 100;
    const s = makeSamples(Array.from({ length: n }, () => r.uniform()), Array.from({ length: n }, () => r.uniform()), Array.from({ length: n }, () => r.normal()));
    const a = variogramCloud(s, 500, 7);
    const b = variogramCloud(s, 500, 7);
    expect(a.subsampled).toBe(true);
    expect(a.distance).toHaveLength(500);
    expect(a.i).toEqual(b.i);
    const keys = new Set(a.i.map((i, k) => `${i},${a.j[k]}`));
    expect(keys.size).toBe(500);
    for (let k = 0; k < 500; k++) expect(a.i[k]).toBeGreaterThan(a.j[k]);
    expect(a.notes[0]).toMatch(/500 of 4,950 pairs/);
  });
});

describe('variogramSet', () => {
  const s = makeSamples([0, 10, 20, 35, 50, 4, 27], [0, 5, 30, 12, 44, 20, 9], [1, 2, 1.5, 3, 2.2, 0.7, 1.9]);
  it('variogramSet returns what the three calls return, and only the parts asked for', () => {
    const opts = { lagCount: 4 };
    const all = variogramSet(s, opts, { directional: true, cloudPairs: 10 });
    expect(all.omni).toEqual(empiricalVariogram(s, opts));
    expect(all.directional).toEqual(directionalVariograms(s, { lagWidth: undefined, maxLag: undefined }));
    expect(all.cloud).toEqual(variogramCloud(s, 10));
    const plain = variogramSet(s, opts);
    expect(plain.directional).toBeNull();
    expect(plain.cloud).toBeNull();
    expect(() => variogramSet(makeSamples([1], [1], [1]))).toThrow(/samples/);
  });
});
