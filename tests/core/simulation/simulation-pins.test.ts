/**
 * Pins: seeded simulations whose outputs must stay bit for bit what they were when these pins were
 * written (a refactoring that splits functions into named steps must not change one bit). The hashes
 * are SHA-256 over the bytes of every output array; no outside reference (regression pins only).
 */
import { describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { simulateConditional, type ConditionalSimulationResult } from '../../../src/core/simulation/conditional-simulation.ts';
import { createFft2Plan, createFftPlan } from '../../../src/core/simulation/fft.ts';
import { waveSamples } from '../../../bench/common.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import type { Grid } from '../../../src/core/geometry/grid.ts';

function digest(arrays: ArrayLike<number>[]): string {
  const h = createHash('sha256');
  for (const a of arrays) {
    const f = a instanceof Float32Array || a instanceof Float64Array ? a : Float64Array.from(a);
    h.update(new Uint8Array(f.buffer, f.byteOffset, f.byteLength));
  }
  return h.digest('hex').slice(0, 16);
}

function simulationDigest(r: ConditionalSimulationResult): string {
  return digest([...(r.realisations ?? []), r.mean, r.sd, ...(r.pExceed ? [r.pExceed] : []), [r.placementError]]);
}

const model: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 150, nu: 1.5 }], trend: 'constant', transform: 'none',
};
const samples = waveSamples(120, { side: 400, amplitude: 5, lengthX: 200, lengthY: 260, seed: 4 });
const grid: Grid = { x0: 500000, y0: 6000400, cell: 20, nx: 20, ny: 20 };

describe('simulateConditional pins (bit for bit across refactoring)', () => {
  const cases: Array<[string, () => ConditionalSimulationResult]> = [
    ['dense, point, threshold', () => simulateConditional(samples, model, grid, { count: 6, seed: 5, threshold: 42 })],
    ['local 16 neighbours, point', () => simulateConditional(samples, model, grid, { count: 4, seed: 2, neighbours: 16 })],
    ['dense, block 2 × 2, linear trend', () => simulateConditional(samples, { ...model, trend: 'linear' }, grid, { count: 3, seed: 9, support: 'block', blockPoints: 2 })],
    ['local, block 2 × 2, log model', () => simulateConditional(samples, { ...model, transform: 'log' }, grid, { count: 3, seed: 9, support: 'block', blockPoints: 2, neighbours: 20 })],
    ['dense, part from 3', () => simulateConditional(samples, model, grid, { count: 3, first: 3, seed: 5, threshold: 42 })],
  ];
  it('simulateConditional dense and local, point and block, parts', () => {
    const got = Object.fromEntries(cases.map(([name, run]) => [name, simulationDigest(run())]));
    expect(got).toMatchInlineSnapshot(`
      {
        "dense, block 2 × 2, linear trend": "af61854a9c78cc4e",
        "dense, part from 3": "e7f1fc9013fddb81",
        "dense, point, threshold": "f0cc912475439713",
        "local 16 neighbours, point": "6e8a0d45c489ad61",
        "local, block 2 × 2, log model": "43b82e51168b85d5",
      }
    `);
  });
});

describe('FFT pins', () => {
  it('createFftPlan and createFft2Plan on sizes 1, 6, 7, 64, 100 and 30 × 12', () => {
    const out: Float64Array[] = [];
    for (const size of [1, 6, 7, 64, 100]) {
      const plan = createFftPlan(size);
      const re = Float64Array.from({ length: size }, (_, k) => Math.sin(k + 1));
      const im = Float64Array.from({ length: size }, (_, k) => Math.cos(2 * k));
      plan.transform(re, im);
      out.push(re, im);
    }
    const p2 = createFft2Plan(30, 12);
    const re = Float64Array.from({ length: 360 }, (_, k) => Math.sin(k));
    const im = new Float64Array(360);
    p2.transform(re, im);
    out.push(re, im);
    expect(digest(out)).toMatchInlineSnapshot(`"833e6b8e12fccdb4"`);
  });
});
