import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { GapwiseError, checkCount } from '../../../src/core/shared/errors.ts';
import { empiricalVariogram, MAX_LAG_CLASSES } from '../../../src/core/fitting/variogram.ts';
import { localLeaveOneOut } from '../../../src/core/validation/local-cross-validation.ts';
import { MAX_LOCAL_NEIGHBOURS } from '../../../src/core/prediction/local-kriging.ts';
import { simulateConditional, MAX_KEPT_VALUES } from '../../../src/core/simulation/conditional-simulation.ts';
import { suggestSites, MAX_DESIGN_POINTS } from '../../../src/core/design/design.ts';
import { gridFromExtent } from '../../../src/core/geometry/grid.ts';
import { parseModel } from '../../../src/core/covariance/model.ts';
import { openProject } from '../../../src/io/project.ts';
import { thrown } from '../../helpers/thrown.ts';

// Sixteen samples on a 4 × 4 lattice 10 m apart (largest distance 42.43 m).
const x: number[] = [], y: number[] = [], value: number[] = [];
for (let i = 0; i < 4; i++) for (let j = 0; j < 4; j++) { x.push(10 * i); y.push(10 * j); value.push(3 + Math.sin(i) + Math.cos(j)); }
const samples = { x: Float64Array.from(x), y: Float64Array.from(y), value: Float64Array.from(value) };
const model = parseModel({ structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 1, scale: 20 }] });

describe('checkCount', () => {
  it('checkCount passes counts up to the limit and names the actual and the limit beyond it', () => {
    expect(() => checkCount(1000, 1000, 'The classes', 'choose fewer')).not.toThrow();
    const e = thrown(() => checkCount(1000.5, 1000, 'The classes', 'choose fewer'));
    expect(e.code).toBe('bad-option');
    expect(e.message).toBe('The classes would be 1,001; the most is 1,000: choose fewer.');
    expect(thrown(() => checkCount(Infinity, 10, 'The cells', 'use a larger cell')).message).toBe('The cells would be Infinity; the most is 10: use a larger cell.');
    expect(thrown(() => checkCount(NaN, 10, 'The cells', 'use a larger cell')).message).toContain('would be NaN');
    expect(thrown(() => checkCount(3e20, 10, 'The cells', 'use a larger cell')).message).toContain('would be 3.00e+20');
  });

  it('empiricalVariogram with a lag width of 1e-9 m refuses before allocating, with the class count and the limit', () => {
    const e = thrown(() => empiricalVariogram(samples, { lagWidth: 1e-9 }));
    expect(e.code).toBe('bad-option');
    // Maximum lag defaults to half the largest distance, 42.43 / 2 = 21.21 m: 2.1e10 classes.
    expect(e.message).toBe(`The number of lag classes (maximum lag 21.21 m / lag width 1e-9 m) would be 21,213,203,436; the most is ${MAX_LAG_CLASSES.toLocaleString('en')}: choose a lag width of at least 0.02121 m or fewer classes.`);
    expect(thrown(() => empiricalVariogram(samples, { lagCount: 1e9 })).message).toContain('would be 1,000,000,000');
    expect(thrown(() => empiricalVariogram(samples, { maxLag: 1e300, lagWidth: 1 })).message).toContain('would be 1.00e+300');
    expect(empiricalVariogram(samples, { lagWidth: 21.22 / MAX_LAG_CLASSES }).options.lagCount).toBe(MAX_LAG_CLASSES);
  });

  it('localLeaveOneOut refuses a neighbour count above the local limit', () => {
    const e = thrown(() => localLeaveOneOut(samples, model, { neighbours: 1e9 }));
    expect(e.message).toBe(`Expected a whole number of neighbours from 1 to ${MAX_LOCAL_NEIGHBOURS}, got 1000000000.`);
  });

  it('simulateConditional refuses to keep realisations × cells beyond the limit before any work', () => {
    const grid = gridFromExtent(0, 0, 2000, 2000, 1); // 2,000 × 2,000 cells
    const e = thrown(() => simulateConditional(samples, model, grid, { count: 10_000, seed: 1 }));
    expect(e.message).toBe(`The realisations to keep (10,000 × 4,000,000 cells) would be 40,000,000,000; the most is ${MAX_KEPT_VALUES.toLocaleString('en')}: draw fewer realisations, use a larger cell, or keep only the summaries (the limit is 1 GB of 32-bit floats).`);
  });

  it('suggestSites refuses screening and evaluation counts beyond the design limit', () => {
    const square = [[[-5, -5], [35, -5], [35, 35], [-5, 35], [-5, -5]]];
    const e = thrown(() => suggestSites(samples, model, { count: 2, boundary: [square], maxScreenCandidates: 1e9 }));
    expect(e.message).toBe(`The screened candidates (maxScreenCandidates) would be 1,000,000,000; the most is ${MAX_DESIGN_POINTS.toLocaleString('en')}: choose fewer.`);
  });

  it('openProject refuses a stored grid of more cells than a grid may have, naming the field', () => {
    const text = readFileSync(resolve(import.meta.dirname, '../../fixtures/exports/wells.gapwise.json'), 'utf8');
    const p = JSON.parse(text);
    p.grid.geometry = { x0: 0, y0: 0, cell: 1, nx: 1e6, ny: 1e6 };
    const e = thrown(() => openProject(JSON.stringify(p), 'big.gapwise.json'));
    expect(e.describe()).toBe('big.gapwise.json: The project field "grid.geometry.nx" is "1000000 × 1000000"; expected nx × ny of at most 4,000,000 cells.');
  });
});
