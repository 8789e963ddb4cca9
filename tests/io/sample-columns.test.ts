// Sample columns beside coordinates and value: numbers or text codes, and a covariate trend's columns.
import { describe, expect, it } from 'vitest';
import { readSamples } from '../../src/io/intake.ts';
import { covariateColumns, sampleLine, sourceColumn } from '../../src/io/sample-columns.ts';
import { thrown } from '../helpers/thrown.ts';

const CSV = [
  'id;x;y;value;depth;soil;code;mixed',
  'A;500000;5400000;1,5;0,25;clay;3;1',
  'B;500010;5400000;2,5;;sand;1;2',
  'C;500020;5400010;3,5;1,5;clay;3;n/a',
  'D;500030;5400020;4,5;2;loam;10;three',
].join('\n');
const intake = readSamples(CSV, { fileName: 'soil.csv', crs: 'EPSG:32633', value: 'value' });

describe('sourceColumn', () => {
  it('sourceColumn reads a numeric column with the file\'s decimal comma, missing cells as NaN', () => {
    const c = sourceColumn(intake, 'depth');
    expect(c.kind).toBe('numeric');
    expect(Array.from((c as { values: Float64Array }).values)).toEqual([0.25, NaN, 1.5, 2]);
  });
  it('sourceColumn reads text as codes into levels in order of first appearance', () => {
    expect(sourceColumn(intake, 'soil')).toEqual({ kind: 'text', codes: Uint32Array.from([0, 1, 0, 2]), levels: ['clay', 'sand', 'loam'] });
  });
  it('sourceColumn refuses a column the samples do not have, naming it', () => {
    const e = thrown(() => sourceColumn(intake, 'ph'));
    expect(e.code).toBe('missing-column');
    expect(e.place).toEqual({ file: 'soil.csv', column: 'ph' });
    expect(e.message).toContain('"ph"');
  });
  it('covariateColumns: integer codes marked categorical stay numbers; a word among numbers is a bad cell naming column and line', () => {
    const { columns } = covariateColumns(intake, { covariates: ['code', 'soil'], categorical: ['code'] });
    expect(columns.code.kind).toBe('numeric');
    expect(columns.soil.kind).toBe('text');
    const e = thrown(() => covariateColumns(intake, { covariates: ['mixed'] }));
    expect(e.place).toEqual({ file: 'soil.csv', row: 5, column: 'mixed' });
    expect(e.message).toContain('"three"');
    expect(sampleLine(intake, 3)).toBe(5);
  });
});
