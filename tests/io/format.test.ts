import { describe, expect, it } from 'vitest';
import {
  formatCoordinate, formatCount, formatDistance, formatDuration, formatFullPrecision, formatPercent, formatProbability,
  formatTick, formatValue,
} from '../../src/io/format.ts';
import { readSamples } from '../../src/io/intake.ts';

describe('formatValue', () => {
  it('formatValue rounds to significant digits, groups thousands and uses a true minus sign', () => {
    expect(formatValue(123.456)).toBe('123');
    expect(formatValue(-0.012345)).toBe('−0.0123');
    expect(formatValue(45210.7)).toBe('45,200');
    expect(formatValue(-84.16327980650514, 4)).toBe('−84.16');
    expect(formatValue(1953.2968, 4)).toBe('1,953');
    expect(formatValue(NaN)).toBe('–');
    expect(formatValue(null)).toBe('–');
    expect(formatValue(0)).toBe('0');
  });
  it('formatValue shows a merged duplicate rounded, not its float noise', () => {
    expect(formatValue(13.899999999999999, 4)).toBe('13.9');
    expect(formatValue(0.1 + 0.2)).toBe('0.3');
  });
  it('formatValue writes no exponent for ordinary sizes and a power of ten for the very small or large', () => {
    expect(formatValue(6.34e6)).toBe('6,340,000');
    expect(formatValue(-4.105e8, 4)).toBe('−410,500,000');
    expect(formatValue(2.5e-5)).toBe('2.5 × 10⁻⁵');
    expect(formatValue(1.03e-16)).toBe('1.03 × 10⁻¹⁶');
    expect(formatValue(3e20)).toBe('3 × 10²⁰');
  });
});

describe('formatProbability / formatPercent', () => {
  it('formatProbability gives < 0.1 % and > 99.9 % at the ends, never an exponent', () => {
    expect(formatProbability(7.6e-23)).toBe('< 0.1 %');
    expect(formatProbability(0.0004)).toBe('< 0.1 %');
    expect(formatProbability(1 - 1e-9)).toBe('> 99.9 %');
    expect(formatProbability(0)).toBe('0 %');
    expect(formatProbability(1)).toBe('100 %');
  });
  it('formatProbability keeps one decimal near the ends and whole percents between', () => {
    expect(formatProbability(0.0042)).toBe('0.4 %');
    expect(formatProbability(0.3816)).toBe('38 %');
    expect(formatProbability(0.9721)).toBe('97.2 %');
    expect(formatProbability(NaN)).toBe('–');
  });
  it('formatPercent writes a share with 3 significant digits', () => {
    expect(formatPercent(0.94631)).toBe('94.6 %');
    expect(formatPercent(0.031)).toBe('3.1 %');
  });
});

describe('formatCoordinate / formatCount', () => {
  it('formatCoordinate never writes an exponent or groups digits', () => {
    expect(formatCoordinate(5374355.2, 'planar')).toBe('5374355.2');
    expect(formatCoordinate(240002.5, 'planar', 0)).toBe('240003');
    expect(formatCoordinate(48.500331, 'degrees')).toBe('48.500331');
    expect(formatCoordinate(-3.1234567, 'degrees', 5)).toBe('−3.12346');
    expect(formatCoordinate(undefined, 'degrees')).toBe('–');
  });
  it('formatCount groups thousands', () => {
    expect(formatCount(30079)).toBe('30,079');
    expect(formatCount(149)).toBe('149');
  });
});

describe('formatDistance / formatDuration / formatTick', () => {
  it('formatDistance switches to km at 1000 m', () => {
    expect(formatDistance(850)).toBe('850 m');
    expect(formatDistance(1250)).toBe('1.25 km');
  });
  it('formatDuration gives seconds under 90 s and minutes above', () => {
    expect(formatDuration(0.42)).toBe('0.4 s');
    expect(formatDuration(0.0008)).toBe('under 0.1 s');
    expect(formatDuration(12.4)).toBe('12 s');
    expect(formatDuration(200)).toBe('3 min');
  });
  it('formatTick shortens thousands and millions', () => {
    expect(formatTick(150000)).toBe('150k');
    expect(formatTick(2500000)).toBe('2.5M');
    expect(formatTick(5000)).toBe('5,000');
    expect(formatTick(0.25)).toBe('0.25');
  });
});

describe('formatFullPrecision', () => {
  it('formatFullPrecision keeps 12 significant digits for files, plain ASCII', () => {
    expect(formatFullPrecision(13.899999999999999)).toBe('13.9');
    expect(formatFullPrecision(5374355.123456789)).toBe('5374355.12346');
    expect(formatFullPrecision(-0.5)).toBe('-0.5');
    expect(formatFullPrecision(NaN)).toBe('');
    expect(formatFullPrecision(Infinity)).toBe('inf');
  });
});

describe('formatValue in the read report', () => {
  it('readSamples names a merged duplicate by its rounded mean (13.9, not 13.899999999999999)', () => {
    expect((13.7 + 14.1) / 2).not.toBe(13.9); // the float mean carries noise
    const text = 'id,x,y,v\na,500000,5400000,13.7\nb,500000,5400000,14.1\nc,500100,5400100,20\nd,500200,5400000,22\n';
    const r = readSamples(text, { fileName: 'dups.csv', crs: 'EPSG:32633' });
    const merged = r.report.entries.filter((e) => e.action === 'merged').map((e) => e.reason).join(' ');
    expect(merged).toContain('mean value 13.9');
    expect(merged).not.toMatch(/13\.8999/);
  });
});

describe('formatValue with kept number formats', () => {
  it('writes the same text as toLocaleString with the same options over many magnitudes and digits', () => {
    // Reference: Number.prototype.toLocaleString('en-US', { maximumFractionDigits, useGrouping }) (ECMA-402).
    for (const digits of [1, 2, 3, 4, 6]) {
      for (let e = -3; e < 15; e++) {
        for (const m of [1, 1.23456, 4.5, 9.995, 7.0001]) {
          for (const v of [m * 10 ** e, -m * 10 ** e]) {
            if (Math.abs(v) < 1e-3 || Math.abs(v) >= 1e15) continue;
            const rounded = Number(v.toPrecision(digits));
            const decimals = Math.max(0, digits - 1 - Math.floor(Math.log10(Math.abs(rounded))));
            const expected = rounded.toLocaleString('en-US', { maximumFractionDigits: decimals, useGrouping: true }).replace('-', '\u2212');
            expect(formatValue(v, digits)).toBe(expected);
          }
        }
      }
    }
    expect(formatCount(-1234567)).toBe('\u22121,234,567');
  });
});
