import { describe, expect, it } from 'vitest';
import { coordinateLabel, gridLines, scaleLength } from '../../../src/ui/map/planar-ticks.ts';

describe('planar-ticks', () => {
  it('gridLines gives round values inside the range and their common step', () => {
    const g = gridLines(-13, 214, 8);
    expect(g.step).toBe(20);
    expect(g.values[0]).toBe(0);
    expect(g.values[g.values.length - 1]).toBe(200);
    for (let k = 1; k < g.values.length; k++) expect(g.values[k] - g.values[k - 1]).toBeCloseTo(20, 12);
    expect(gridLines(5, 5, 8)).toEqual({ values: [], step: 0 });
  });

  it('coordinateLabel writes no scientific notation and no float noise, with the decimals the step needs', () => {
    expect(coordinateLabel(5374355, 500)).toBe('5,374,355');
    expect(coordinateLabel(0.30000000000000004, 0.1)).toBe('0.3');
    expect(coordinateLabel(0.25, 0.05)).toBe('0.25');
    expect(coordinateLabel(-0, 10)).toBe('0');
  });

  it('scaleLength picks 1, 2 or 5 × 10^k that fits, and its width in pixels', () => {
    // 0.5 units per pixel, 110 px: at most 55 units → 50 units, 100 px.
    expect(scaleLength(0.5, 110)).toEqual({ length: 50, pixels: 100 });
    // 3 units per pixel: at most 330 → 200, 66.7 px.
    const s = scaleLength(3, 110);
    expect(s.length).toBe(200);
    expect(s.pixels).toBeCloseTo(200 / 3, 12);
    expect(scaleLength(0.001, 110).length).toBe(0.1);
    expect(scaleLength(0, 110)).toEqual({ length: 0, pixels: 0 });
  });
});
