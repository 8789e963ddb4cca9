import { describe, expect, it } from 'vitest';
import { sampleClasses } from '../../../src/ui/state/sample-colours.ts';

describe('sampleClasses', () => {
  it('sampleClasses cuts a linear range into equal classes with the extremes in the end classes', () => {
    const c = sampleClasses([0, 10, 20, 30, 40, 50, 60], false, 6);
    expect(c.breaks).toEqual([0, 10, 20, 30, 40, 50, 60]);
    expect(c.classOf(0)).toBe(0);
    expect(c.classOf(60)).toBe(5);
    expect(c.classOf(35)).toBe(3);
    expect(new Set(c.colours).size).toBe(6);
  });
  it('sampleClasses on a log axis puts 10, 100, 1000 in the first, middle and last classes', () => {
    const c = sampleClasses([10, 100, 1000], true, 4);
    expect(c.log).toBe(true);
    expect(c.breaks[2]).toBeCloseTo(100, 9);
    expect(c.classOf(10)).toBe(0);
    expect(c.classOf(1000)).toBe(3);
    expect(c.classOf(99)).toBe(1);
    expect(c.classOf(101)).toBe(2);
  });
  it('sampleClasses falls back to a linear axis when a value is not positive', () => {
    expect(sampleClasses([0, 5, 10], true, 2).log).toBe(false);
  });
});
