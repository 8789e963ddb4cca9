import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { partRange, readJob, startVecchiaPool, writeJob, type VecchiaPool } from '../../src/cli/vecchia-pool.ts';
import { createVecchiaLikelihood, vecchiaFit } from '../../src/core/fitting/vecchia.ts';
import { makeSamples } from '../../src/core/shared/samples.ts';
import type { CorrelatedStructure } from '../../src/core/covariance/model.ts';
import { createRandom } from '../../src/core/shared/random.ts';
import { expectClose } from '../helpers/tolerance.ts';

function samplesOf(n: number, seed: number) {
  const rng = createRandom(seed);
  const x: number[] = [];
  const y: number[] = [];
  const v: number[] = [];
  for (let i = 0; i < n; i++) {
    x.push(400000 + rng.uniform() * 3000);
    y.push(6100000 + rng.uniform() * 2000);
    v.push(Math.sin(x[i] / 400) + Math.cos(y[i] / 250) + 0.3 * rng.normal());
  }
  return makeSamples(x, y, v);
}

describe('partRange', () => {
  it('partRange covers 0..n in contiguous parts without gaps or overlaps', () => {
    for (const [n, parts] of [[10, 3], [7, 7], [5, 8], [100000, 2]]) {
      let at = 0;
      for (let k = 0; k < parts; k++) {
        const [a, b] = partRange(n, k, parts);
        expect(a).toBe(at);
        expect(b).toBeGreaterThanOrEqual(a);
        at = b;
      }
      expect(at).toBe(n);
    }
  });
});

describe('writeJob / readJob', () => {
  it('readJob returns what writeJob stored', () => {
    const p = new Float64Array(6);
    const job = { family: 3, scale: 123.5, nu: 2.5, diagonal: 1.25, allowJitter: true, limit: 10 };
    writeJob(p, job);
    expect(readJob(p)).toEqual(job);
  });
});

describe('startVecchiaPool', () => {
  let pool: VecchiaPool;
  beforeAll(async () => {
    // Three threads even on a smaller machine: the split must not depend on the core count.
    pool = await startVecchiaPool({ threads: 3 });
  }, 60_000);
  afterAll(async () => {
    await pool?.close();
  });

  it('startVecchiaPool: the split likelihood equals the one-thread likelihood (REML and ML, every family)', () => {
    const s = samplesOf(1500, 5);
    for (const family of ['matern', 'exponential', 'spherical', 'gaussian'] as const) {
      for (const method of ['reml', 'ml'] as const) {
        const setup = { family, nu: 1.5, trend: 'linear' as const, method, neighbours: 12 };
        const one = createVecchiaLikelihood(s, setup);
        const split = createVecchiaLikelihood(s, setup, pool.threads);
        for (const theta of [{ scale: 300, nuggetRatio: 0.2 }, { scale: 900, nuggetRatio: 0.05 }]) {
          const a = one.evaluate(theta);
          const b = split.evaluate(theta);
          // Same arithmetic per point; only Σ ln dᵢ is added in another order.
          expectClose(b.logLikelihood, a.logLikelihood, { rel: 1e-12 }, `${family} ${method} ℓ`);
          expectClose(b.sigma2, a.sigma2, { rel: 1e-12 });
          expect(b.beta.length).toBe(3);
          for (let c = 0; c < 3; c++) expectClose(b.beta[c], a.beta[c], { rel: 1e-10, abs: 1e-12 });
          // Fewer neighbours (the coarse stage) through the same split.
          expectClose(split.evaluate(theta, { neighbours: 5 }).logLikelihood, one.evaluate(theta, { neighbours: 5 }).logLikelihood, { rel: 1e-12 });
        }
      }
    }
  });

  it('startVecchiaPool: a fit through the pool gives the one-thread fit', () => {
    const s = samplesOf(5000, 9);
    const options = { family: 'matern' as const, nu: 1.5, trend: 'constant' as const, neighbours: 15 };
    const one = vecchiaFit(s, options);
    const split = vecchiaFit(s, options, { threads: pool.threads });
    const scale = (m: typeof one) => m.structures.find((t): t is CorrelatedStructure => t.type === 'matern')!;
    expectClose(scale(split).scale, scale(one).scale, { rel: 1e-6 });
    expectClose(scale(split).sill, scale(one).sill, { rel: 1e-6 });
    expectClose(split.fit.logLikelihood!, one.fit.logLikelihood!, { rel: 1e-9 });
    expect(split.fit.note).toBe(one.fit.note);
  }, 120_000);

  it('startVecchiaPool: a second likelihood attached to the same pool still splits correctly', () => {
    const a = samplesOf(800, 1);
    const b = samplesOf(900, 2);
    const setup = { family: 'matern' as const, nu: 2.5, trend: 'constant' as const, neighbours: 10 };
    const la = createVecchiaLikelihood(a, setup, pool.threads);
    const lb = createVecchiaLikelihood(b, setup, pool.threads);
    const theta = { scale: 400, nuggetRatio: 0.1 };
    expectClose(lb.evaluate(theta).logLikelihood, createVecchiaLikelihood(b, setup).evaluate(theta).logLikelihood, { rel: 1e-12 });
    expect(la.n).toBe(800);
  });
});
