import { describe, expect, it } from 'vitest';
import { simulateField, simulateSamples } from '../../../src/core/simulation/simulate.ts';
import { sampleCovarianceMatrix } from '../../../src/core/covariance/covariance.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';

const model: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 150, nu: 1.5 }],
  trend: 'constant',
  transform: 'none',
};

describe('simulateField', () => {
  it('simulateField is deterministic for a seed and differs between seeds', () => {
    const x = [0, 100, 250, 400];
    const y = [0, 50, 300, 20];
    const a = simulateField(model, x, y, { seed: 7 }).values;
    const b = simulateField(model, x, y, { seed: 7 }).values;
    const c = simulateField(model, x, y, { seed: 8 }).values;
    expect(Array.from(a)).toEqual(Array.from(b));
    expect(Array.from(a)).not.toEqual(Array.from(c));
  });

  it('simulateField reproduces the model covariance over many seeds (Monte Carlo, 4 standard errors)', () => {
    // Three points at 0, 100 m and 300 m; the target covariance is the model's own K (covariance.ts).
    const x = [0, 100, 300];
    const y = [0, 0, 0];
    const K = sampleCovarianceMatrix(model, x, y);
    const draws = 4000;
    const sum = new Float64Array(3);
    const cross = new Float64Array(9);
    for (let s = 0; s < draws; s++) {
      const v = simulateField(model, x, y, { seed: 1000 + s, mean: 5 }).values;
      for (let i = 0; i < 3; i++) {
        sum[i] += v[i];
        for (let j = 0; j < 3; j++) cross[i * 3 + j] += (v[i] - 5) * (v[j] - 5);
      }
    }
    for (let i = 0; i < 3; i++) {
      // Mean 5: standard error √(Kii/N).
      expect(Math.abs(sum[i] / draws - 5)).toBeLessThan(4 * Math.sqrt(K[i * 4] / draws));
      for (let j = 0; j < 3; j++) {
        const est = cross[i * 3 + j] / draws;
        // Var of a product of zero-mean Gaussians: Kij² + Kii·Kjj.
        const se = Math.sqrt((K[i * 3 + j] ** 2 + K[i * 4] * K[j * 4]) / draws);
        expect(Math.abs(est - K[i * 3 + j]), `cov[${i},${j}] = ${est} vs ${K[i * 3 + j]}`).toBeLessThan(4 * se);
      }
    }
  });

  it('simulateField adds a known mean and a linear drift in centred coordinates', () => {
    const known: CovarianceModel = { ...model, trend: { known: 3 } };
    const x = [0, 1000];
    const y = [0, 0];
    const plain = simulateField(known, x, y, { seed: 3 }).values;
    const drifted = simulateField(known, x, y, { seed: 3, drift: { x: 0.01, y: 0 } }).values;
    // Centroid x = 500: drift −5 and +5.
    expect(drifted[0] - plain[0]).toBeCloseTo(-5, 12);
    expect(drifted[1] - plain[1]).toBeCloseTo(5, 12);
    const many = Array.from({ length: 400 }, (_, s) => simulateField(known, [0], [0], { seed: s }).values[0]);
    const mean = many.reduce((a, b) => a + b, 0) / many.length;
    expect(Math.abs(mean - 3)).toBeLessThan(4 * Math.sqrt(1.1 / 400));
  });

  it('simulateField factorises duplicate points without a nugget and reports the jitter', () => {
    const noNugget: CovarianceModel = { structures: [{ type: 'gaussian', sill: 1, scale: 100 }], trend: 'constant', transform: 'none' };
    const r = simulateField(noNugget, [0, 0, 50], [0, 0, 10], { seed: 1 });
    expect(r.warnings.map((w) => w.code)).toContain('jitter');
    expect(r.values.every(Number.isFinite)).toBe(true);
  });
});

describe('simulateSamples', () => {
  it('simulateSamples draws points inside the extent, the same for the same seed', () => {
    const extent = { xmin: 1000, ymin: 2000, xmax: 2000, ymax: 2500 };
    const s = simulateSamples(model, { count: 200, extent, seed: 11 });
    expect(s.x.length).toBe(200);
    for (let i = 0; i < 200; i++) {
      expect(s.x[i]).toBeGreaterThanOrEqual(1000);
      expect(s.x[i]).toBeLessThan(2000);
      expect(s.y[i]).toBeGreaterThanOrEqual(2000);
      expect(s.y[i]).toBeLessThan(2500);
    }
    const again = simulateSamples(model, { count: 200, extent, seed: 11 });
    expect(Array.from(again.value)).toEqual(Array.from(s.value));
  });
});
