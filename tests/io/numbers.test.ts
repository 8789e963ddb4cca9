// Strict number reading: expected values worked out by hand from the cell text.
import { describe, expect, it } from 'vitest';
import { chooseMark, isMissing, markEvidence, nonDetectLimit, parseColumnNumber, parseNumber } from '../../src/io/numbers.ts';

const value = (r: ReturnType<typeof parseNumber>) => (r.ok ? r.value : `error: ${r.reason}`);

describe('parseNumber', () => {
  it('parseNumber: reads whole cells with a decimal point', () => {
    expect(value(parseNumber('12.5', '.'))).toBe(12.5);
    expect(value(parseNumber('  -0.25 ', '.'))).toBe(-0.25);
    expect(value(parseNumber('+7', '.'))).toBe(7);
    expect(value(parseNumber('.5', '.'))).toBe(0.5);
    expect(value(parseNumber('5.', '.'))).toBe(5);
    expect(value(parseNumber('1.5e-3', '.'))).toBe(0.0015);
    expect(value(parseNumber('2E6', '.'))).toBe(2e6);
  });

  it('parseNumber: never reads a prefix: "637l80.0" and friends are errors', () => {
    for (const s of ['637l80.0', '12abc', '1.2.3', '0x10', '1e', '--5', '5-', 'Infinity', 'NaN', '1_000', '12 mg/kg', '½']) {
      const r = parseNumber(s, '.');
      expect(r.ok, s).toBe(false);
    }
    const r = parseNumber('637l80.0', '.');
    expect(r.ok ? 0 : r.reason).toBe('is not a number');
  });

  it('parseNumber: reads decimal commas when the column uses them', () => {
    expect(value(parseNumber('12,5', ','))).toBe(12.5);
    expect(value(parseNumber('-0,125', ','))).toBe(-0.125);
    expect(value(parseNumber('1,5e2', ','))).toBe(150);
  });

  it('parseNumber: thousands grouping with the other mark or spaces is read and marked grouped', () => {
    expect(parseNumber('1,250', '.')).toEqual({ ok: true, value: 1250, grouped: true });
    expect(parseNumber('12,400.5', '.')).toEqual({ ok: true, value: 12400.5, grouped: true });
    expect(parseNumber('1.234.567', ',')).toEqual({ ok: true, value: 1234567, grouped: true });
    expect(parseNumber('1.250,5', ',')).toEqual({ ok: true, value: 1250.5, grouped: true });
    expect(parseNumber('1 234 567', '.')).toEqual({ ok: true, value: 1234567, grouped: true });
    expect(parseNumber("1'234.5", '.')).toEqual({ ok: true, value: 1234.5, grouped: true });
    // Grouping of the wrong width is no grouping.
    expect(parseNumber('1,25', '.').ok).toBe(false);
    expect(parseNumber('12,34,567', '.').ok).toBe(false);
  });

  it('parseNumber: a decimal comma in a decimal-point column is named in the error', () => {
    const r = parseNumber('12,5', '.');
    expect(r.ok).toBe(false);
    expect(r.ok ? '' : r.reason).toContain('decimal comma');
  });

  it('parseNumber: empty and overlong cells are errors', () => {
    expect(parseNumber('', '.').ok).toBe(false);
    expect(parseNumber('1'.repeat(80), '.').ok).toBe(false);
    expect(parseNumber('1e999', '.').ok).toBe(false);
  });
});

describe('nonDetectLimit', () => {
  it('nonDetectLimit: "<0.5", "< 0.5" and "<0,5" give the limit text; anything else null', () => {
    expect(nonDetectLimit('<0.5')).toBe('0.5');
    expect(nonDetectLimit(' < 0.5 ')).toBe('0.5');
    expect(nonDetectLimit('<0,5')).toBe('0,5');
    expect(nonDetectLimit('<5')).toBe('5');
    expect(nonDetectLimit('<script>')).toBeNull();
    expect(nonDetectLimit('0.5')).toBeNull();
    expect(nonDetectLimit('<')).toBeNull();
    expect(nonDetectLimit('<=0.5')).toBeNull();
  });
});

describe('isMissing', () => {
  it('isMissing: knows the usual spellings of no value', () => {
    for (const s of ['', '  ', 'NA', 'n/a', 'NaN', 'null', '-', '#N/A']) expect(isMissing(s), s).toBe(true);
    for (const s of ['0', 'ND', '<1', 'x']) expect(isMissing(s), s).toBe(false);
  });
});

describe('markEvidence and chooseMark', () => {
  it('markEvidence: tells which cells settle the decimal mark', () => {
    expect(markEvidence('12,5')).toBe(',');
    expect(markEvidence('0,250')).toBe(',');
    expect(markEvidence('1234,567')).toBe(',');
    expect(markEvidence('3.75')).toBe('.');
    expect(markEvidence('1,234')).toBe('ambiguous');
    expect(markEvidence('1.234')).toBe('ambiguous');
    expect(markEvidence('1.234.567')).toBe(',');
    expect(markEvidence('1,234,567')).toBe('.');
    expect(markEvidence('1.234,5')).toBe(',');
    expect(markEvidence('1,234.5')).toBe('.');
    expect(markEvidence('<0,5')).toBe(',');
    expect(markEvidence('42')).toBe('none');
    expect(markEvidence('abc')).toBe('none');
  });

  it('chooseMark: comma files use the point; semicolon files the comma unless cells say otherwise', () => {
    expect(chooseMark(['1,5'], ',')).toEqual({ mark: '.', mixed: false, decided: true });
    expect(chooseMark(['1,5', '2'], ';')).toEqual({ mark: ',', mixed: false, decided: true });
    expect(chooseMark(['1.5', '2'], ';')).toEqual({ mark: '.', mixed: false, decided: true });
    expect(chooseMark(['1.250', '2'], ';')).toEqual({ mark: ',', mixed: false, decided: false });
    expect(chooseMark(['1.250', '2'], '\t')).toEqual({ mark: '.', mixed: false, decided: false });
    expect(chooseMark(['1,5', '2.25', '3,5'], ';')).toEqual({ mark: ',', mixed: true, decided: true });
  });

  it('parseColumnNumber: ambiguous grouping is an error only when nothing settles it', () => {
    const undecidedSemicolon = chooseMark(['1.250', '980'], ';');
    expect(parseColumnNumber('1.250', undecidedSemicolon).ok).toBe(false);
    expect(value(parseColumnNumber('1,250', undecidedSemicolon))).toBe(1.25);
    const settled = chooseMark(['1.250', '12,5'], ';');
    expect(value(parseColumnNumber('1.250', settled))).toBe(1250);
    const mixed = chooseMark(['1,5', '2.25'], ';');
    expect(value(parseColumnNumber('2.25', mixed))).toBe(2.25);
    expect(value(parseColumnNumber('1,5', mixed))).toBe(1.5);
    expect(parseColumnNumber('1,500', mixed).ok).toBe(false);
  });
});
