import { describe, expect, it } from 'vitest';
import {
  SCALES, SCALE_NAMES, buildLut, classColours, classify, colourAt, deltaE, designedOklch, hex,
  linearSrgbToOklab, oklabToLinearSrgb, oklchAt, rgbToOklab, scalePosition, simulateDeficiency,
  type ScaleName,
} from '../../../src/ui/map/colour-scales.ts';
import { expectClose } from '../../helpers/tolerance.ts';

const SEQUENTIAL: ScaleName[] = ['loam', 'haze'];
// Just-noticeable difference in OKLab is about 0.02 (common practice, from memory); neighbouring
// classes must stay at least twice that apart, also as seen with a colour-vision deficiency.
const DISTINCT = 0.04;

describe('OKLab conversions', () => {
  it('linearSrgbToOklab maps white to L = 1, a = b = 0 and round-trips (Ottosson 2020 matrices)', () => {
    const w = linearSrgbToOklab(1, 1, 1);
    expectClose(w, [1, 0, 0], { abs: 1e-4 }, 'white');
    for (const rgb of [[0.2, 0.5, 0.9], [1, 0, 0], [0.01, 0.3, 0.02]] as const) {
      const lab = linearSrgbToOklab(rgb[0], rgb[1], rgb[2]);
      expectClose(oklabToLinearSrgb(lab[0], lab[1], lab[2]), rgb, { abs: 1e-6 }, `round trip ${rgb}`);
    }
  });

  it('rgbToOklab of sRGB red is (0.628, 0.225, 0.126) (Ottosson 2020 worked value, from memory)', () => {
    expectClose(rgbToOklab([255, 0, 0]), [0.62796, 0.22486, 0.12585], { abs: 2e-4 }, 'red');
  });
});

describe('colourAt', () => {
  for (const s of SEQUENTIAL) {
    it(`colourAt: '${s}' lightness rises monotonically, designed and as 8-bit colours`, () => {
      let prev = -1;
      for (let k = 0; k <= 1000; k++) {
        const L = oklchAt(s, k / 1000).L;
        expect(L).toBeGreaterThan(prev);
        prev = L;
      }
      // After 8-bit rounding: strictly rising over 32 steps, never falling by more than rounding over 256.
      const L32 = Array.from({ length: 32 }, (_, k) => rgbToOklab(colourAt(s, k / 31))[0]);
      for (let k = 1; k < 32; k++) expect(L32[k], `step ${k}`).toBeGreaterThan(L32[k - 1]);
      const lut = buildLut(s);
      let last = 0;
      for (let k = 0; k < 256; k++) {
        const L = rgbToOklab([lut[4 * k], lut[4 * k + 1], lut[4 * k + 2]])[0];
        expect(L).toBeGreaterThan(last - 0.004);
        last = L;
      }
      expect(L32[31] - L32[0]).toBeGreaterThan(0.6);
    });
  }

  it("colourAt: 'tide' has the same lightness at t and 1 − t, rising to its lightest at 0.5", () => {
    for (let k = 0; k <= 100; k++) {
      const t = k / 200;
      expectClose(oklchAt('tide', t).L, oklchAt('tide', 1 - t).L, { abs: 1e-12 }, `t=${t}`);
      if (k > 0) expect(oklchAt('tide', t).L).toBeGreaterThan(oklchAt('tide', t - 0.005).L);
    }
    const mid = rgbToOklab(colourAt('tide', 0.5));
    expect(mid[0]).toBeGreaterThan(0.94);
    expect(Math.hypot(mid[1], mid[2]), 'neutral at 0.5').toBeLessThan(0.005);
    // Blue-ish below (b < 0), orange-ish above (a > 0, b > 0).
    const lo = rgbToOklab(colourAt('tide', 0.1)), hi = rgbToOklab(colourAt('tide', 0.9));
    expect(lo[2]).toBeLessThan(-0.05);
    expect(hi[1]).toBeGreaterThan(0.03);
    expect(hi[2]).toBeGreaterThan(0.05);
  });

  for (const s of SCALE_NAMES) {
    it(`colourAt: '${s}' is designed inside the sRGB gamut (no chroma cut) and its 8-bit colours match the design`, () => {
      for (let k = 0; k <= 200; k++) {
        const t = k / 200;
        const d = designedOklch(s, t);
        const lin = oklabToLinearSrgb(d.L, d.C * Math.cos((d.h * Math.PI) / 180), d.C * Math.sin((d.h * Math.PI) / 180));
        for (const v of lin) {
          expect(v).toBeGreaterThanOrEqual(-1e-9);
          expect(v).toBeLessThanOrEqual(1 + 1e-9);
        }
        const rgb = colourAt(s, t);
        for (const v of rgb) expect(Number.isInteger(v) && v >= 0 && v <= 255).toBe(true);
        const lab = rgbToOklab(rgb);
        const want = [d.L, d.C * Math.cos((d.h * Math.PI) / 180), d.C * Math.sin((d.h * Math.PI) / 180)];
        expect(Math.hypot(lab[0] - want[0], lab[1] - want[1], lab[2] - want[2]), `t=${t}`).toBeLessThan(0.005);
      }
    });
  }

  it('colourAt clamps t outside 0..1 and maps NaN to the low end', () => {
    expect(colourAt('loam', -3)).toEqual(colourAt('loam', 0));
    expect(colourAt('loam', 7)).toEqual(colourAt('loam', 1));
    expect(colourAt('haze', NaN)).toEqual(colourAt('haze', 0));
  });

  it('oklchAt lowers only chroma when a colour falls outside sRGB', () => {
    // Not one of our scales' colours: push a stop far out of gamut to exercise the mapping.
    const spec = SCALES.loam.stops[4];
    const saved = spec.C;
    try {
      (spec as { C: number }).C = 0.4;
      const c = oklchAt('loam', 1);
      expect(c.L).toBe(spec.L);
      expect(c.h).toBe(spec.h);
      expect(c.C).toBeLessThan(0.4);
      expect(c.C).toBeGreaterThan(0.05);
    } finally {
      (spec as { C: number }).C = saved;
    }
  });
});

describe('simulateDeficiency', () => {
  for (const s of SCALE_NAMES) {
    for (const def of ['deuteranopia', 'protanopia'] as const) {
      it(`simulateDeficiency (${def}, Machado et al. 2009 severity 1): neighbouring classes of '${s}' stay distinguishable`, () => {
        for (const steps of [5, 7, 9]) {
          const cls = classColours(s, steps).map((c) => simulateDeficiency(c, def));
          for (let k = 1; k < steps; k++) {
            expect(deltaE(cls[k], cls[k - 1]), `${steps} classes, ${k - 1}→${k}`).toBeGreaterThan(DISTINCT);
          }
        }
        if (s === 'tide') {
          // Same lightness either side of 0.5: the arms must still differ in colour.
          for (const t of [0.05, 0.15, 0.25, 0.3]) {
            const a = simulateDeficiency(colourAt('tide', t), def), b = simulateDeficiency(colourAt('tide', 1 - t), def);
            expect(deltaE(a, b), `t=${t} vs ${1 - t}`).toBeGreaterThan(2 * DISTINCT);
          }
        }
      });
    }
  }

  it('simulateDeficiency keeps greys grey and collapses a red–green pair that normal vision separates', () => {
    expect(simulateDeficiency([128, 128, 128], 'deuteranopia').every((v) => Math.abs(v - 128) <= 1)).toBe(true);
    const red: [number, number, number] = [200, 80, 60], green: [number, number, number] = [110, 125, 60];
    expect(deltaE(red, green)).toBeGreaterThan(0.1);
    expect(deltaE(simulateDeficiency(red, 'deuteranopia'), simulateDeficiency(green, 'deuteranopia'))).toBeLessThan(deltaE(red, green) / 2);
  });
});

describe('buildLut', () => {
  it('buildLut holds opaque RGBA entries equal to colourAt(k/255)', () => {
    const lut = buildLut('tide');
    expect(lut.length).toBe(1024);
    for (const k of [0, 1, 77, 128, 254, 255]) {
      expect(Array.from(lut.subarray(4 * k, 4 * k + 4))).toEqual([...colourAt('tide', k / 255), 255]);
    }
    expect(() => buildLut('loam', 1)).toThrow(/at least 2 entries, got 1/);
  });
});

describe('classify', () => {
  it('classify cuts the domain into equal classes, clamps outside values and gives −1 for NaN', () => {
    expect(classify(0, [0, 10], 5)).toBe(0);
    expect(classify(1.99, [0, 10], 5)).toBe(0);
    expect(classify(2, [0, 10], 5)).toBe(1);
    expect(classify(9.99, [0, 10], 5)).toBe(4);
    expect(classify(10, [0, 10], 5)).toBe(4);
    expect(classify(-4, [0, 10], 5)).toBe(0);
    expect(classify(40, [0, 10], 5)).toBe(4);
    expect(classify(NaN, [0, 10], 5)).toBe(-1);
    expect(classify(3, [3, 3], 4)).toBe(2);
    expect(() => classify(1, [0, 1], 0)).toThrow(RangeError);
  });

  it('scalePosition is linear on the domain', () => {
    expect(scalePosition(25, [0, 100])).toBe(0.25);
    expect(scalePosition(150, [0, 100])).toBe(1);
    expect(scalePosition(Infinity, [0, 100])).toBeNaN();
  });

  it('hex writes #rrggbb', () => {
    expect(hex([0, 128, 255])).toBe('#0080ff');
  });
});
