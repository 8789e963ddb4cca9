import { describe, expect, it } from 'vitest';
import { chooseTile, createLocalPredictor } from '../../../src/core/prediction/local-kriging.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { makeSamples } from '../../../src/core/shared/samples.ts';
import { createRandom } from '../../../src/core/shared/random.ts';
import type { CovarianceModel, Trend } from '../../../src/core/covariance/model.ts';
import { loadFixture } from '../../helpers/fixtures.ts';
import { expectClose } from '../../helpers/tolerance.ts';

interface Case { name: string; model: CovarianceModel; beta?: number; mean: number[]; sd: number[] }
// Source: numpy/scipy dense kriging with all 2,000 samples (tests/reference/make_local_kriging.py).
const fixture = loadFixture<Case>('local_kriging.json');
const data = fixture.data as { x: number[]; y: number[]; value: number[] };
const targets = fixture.targets as { x: number[]; y: number[] };
const big = makeSamples(data.x, data.y, data.value);
const tol = fixture.tolerance as unknown as { meanAbsOverPriorSd: number; sdRel: number };

function smallProblem(n: number, seed: number) {
  const rng = createRandom(seed);
  const x: number[] = [];
  const y: number[] = [];
  const v: number[] = [];
  for (let i = 0; i < n; i++) {
    x.push(500000 + rng.uniform() * 400);
    y.push(4100000 + rng.uniform() * 300);
    v.push(3 + Math.sin(x[i] / 90) + 0.5 * rng.normal());
  }
  const tx: number[] = [];
  const ty: number[] = [];
  for (let j = 0; j < 40; j++) {
    tx.push(500000 - 50 + rng.uniform() * 500);
    ty.push(4100000 - 50 + rng.uniform() * 400);
  }
  return { samples: makeSamples(x, y, v), tx, ty };
}

function modelWith(trend: Trend, extra: Partial<CovarianceModel> = {}): CovarianceModel {
  return {
    structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 80, nu: 1.5 }, { type: 'exponential', sill: 0.3, scale: 300 }],
    trend, transform: 'none', ...extra,
  };
}

describe('createLocalPredictor', () => {
  // Invariant: a neighbourhood holding every sample is the exact predictor (kriging.ts).
  const { samples, tx, ty } = smallProblem(70, 5);
  const variants: [string, CovarianceModel][] = [
    ['simple', modelWith({ known: 3 })],
    ['ordinary', modelWith('constant')],
    ['universal', modelWith('linear')],
    ['anisotropic ordinary', modelWith('constant', { anisotropy: { azimuth: 35, ratio: 0.4 } })],
    ['log-transformed ordinary', modelWith('constant', { transform: 'log' })],
  ];
  for (const [name, model] of variants) {
    it(`createLocalPredictor with all samples in the neighbourhood equals exact ${name} kriging`, () => {
      const exact = createPredictor(samples, model).predict(tx, ty);
      const local = createLocalPredictor(samples, model, { neighbours: 70 }).predict(tx, ty);
      expectClose(local.mean, exact.mean, { rel: 1e-9, abs: 1e-9 }, `${name} mean`);
      expectClose(local.sd, exact.sd, { rel: 1e-8, abs: 1e-9 }, `${name} sd`);
      expectClose(local.sdObserved, exact.sdObserved, { rel: 1e-8, abs: 1e-9 }, `${name} sdObserved`);
      if (model.transform === 'log') expectClose(local.median!, exact.median!, { rel: 1e-9 }, 'median');
    });
  }

  it('createLocalPredictor with globalMean and all samples equals exact simple kriging with the GLS mean', () => {
    const model = modelWith('constant');
    const exact = createPredictor(samples, model);
    const local = createLocalPredictor(samples, model, { neighbours: 70, globalMean: true });
    expectClose(local.beta, exact.beta, { rel: 1e-12 }, 'β̂ (dense GLS)');
    const sk = createPredictor(samples, { ...model, trend: { known: exact.beta[0] } }).predict(tx, ty);
    const got = local.predict(tx, ty);
    expectClose(got.mean, sk.mean, { rel: 1e-9, abs: 1e-9 }, 'mean');
    expectClose(got.sd, sk.sd, { rel: 1e-8, abs: 1e-9 }, 'sd');
  });

  it('createLocalPredictor interpolates the data with no nugget (mean = value, sd = 0)', () => {
    const model: CovarianceModel = { structures: [{ type: 'matern', sill: 1, scale: 60, nu: 2.5 }], trend: 'constant', transform: 'none' };
    const local = createLocalPredictor(samples, model, { neighbours: 16 }).predict(samples.x, samples.y);
    expectClose(local.mean, samples.value, { abs: 1e-6 }, 'mean at the samples');
    for (const s of local.sd) expect(s).toBeLessThan(1e-4);
  });

  it('predict gives the same bits whatever the order of the targets', () => {
    const model = modelWith('linear');
    const p = createLocalPredictor(samples, model, { neighbours: 20 });
    const forward = p.predict(tx, ty);
    const rx = [...tx].reverse();
    const ry = [...ty].reverse();
    const backward = createLocalPredictor(samples, model, { neighbours: 20 }).predict(rx, ry);
    for (let j = 0; j < tx.length; j++) {
      expect(backward.mean[tx.length - 1 - j]).toBe(forward.mean[j]);
      expect(backward.sd[tx.length - 1 - j]).toBe(forward.sd[j]);
    }
    // Targets sharing a cell-sized patch reuse one factor: repeated targets give identical answers.
    const twice = p.predict([tx[0], tx[1], tx[0]], [ty[0], ty[1], ty[0]]);
    expect(twice.mean[2]).toBe(twice.mean[0]);
    expect(twice.mean[0]).toBe(forward.mean[0]);
  });

  for (const c of fixture.cases) {
    it(`createLocalPredictor with 64 neighbours is within ${tol.meanAbsOverPriorSd * 100} % of the prior sd (mean) and ${tol.sdRel * 100} % (sd) of exact ${c.name} kriging on 2,000 samples`, () => {
      const priorSd = Math.sqrt(1);
      const local = createLocalPredictor(big, c.model, { neighbours: 64, globalMean: c.name === 'ordinary' });
      const got = local.predict(targets.x, targets.y);
      if (c.beta !== undefined) expectClose(local.beta[0], c.beta, { abs: 0.01 * priorSd }, 'nearest-neighbour GLS β̂ vs dense (numpy)');
      expectClose(got.mean, c.mean, { abs: tol.meanAbsOverPriorSd * priorSd }, `${c.name} mean (numpy)`);
      expectClose(got.sd, c.sd, { rel: tol.sdRel }, `${c.name} sd (numpy)`);
    });
  }

  // Tiles: targets closer together than the samples share one neighbourhood holding each one's 64 nearest.
  const extent = (a: number[]) => Math.max(...a) - Math.min(...a);
  const sampleSpacing = Math.sqrt((extent(data.x) * extent(data.y)) / data.x.length);
  for (const c of fixture.cases) {
    it(`createLocalPredictor with tile neighbourhoods (targetSpacing) is within the same tolerances of exact ${c.name} kriging (numpy)`, () => {
      const local = createLocalPredictor(big, c.model, { neighbours: 64, globalMean: c.name === 'ordinary', targetSpacing: sampleSpacing / 4 });
      const got = local.predict(targets.x, targets.y);
      expectClose(got.mean, c.mean, { abs: tol.meanAbsOverPriorSd }, `${c.name} mean with tiles (numpy)`);
      expectClose(got.sd, c.sd, { rel: tol.sdRel }, `${c.name} sd with tiles (numpy)`);
      // Tiles hold more than the 64 nearest, so the worst error is no larger than per-target
      // neighbourhoods' on this problem (both measured against numpy).
      const per = createLocalPredictor(big, c.model, { neighbours: 64, globalMean: c.name === 'ordinary' }).predict(targets.x, targets.y);
      const worst = (a: Float64Array) => Math.max(...Array.from(a, (v, k) => Math.abs(v - c.mean[k])));
      expect(worst(got.mean)).toBeLessThanOrEqual(worst(per.mean));
    });
  }

  it('chooseTile shares neighbourhoods only when targets are denser than the samples', () => {
    const dense = chooseTile(data.x.length, 64, data.x, data.y, sampleSpacing / 4);
    expect(dense).not.toBeNull();
    // The width is a whole number of target spacings; the cap is max(4m, 256) (at most n).
    const k = dense!.width / (sampleSpacing / 4);
    expect(Math.abs(k - Math.round(k))).toBeLessThan(1e-9);
    expect(dense!.cap).toBe(256);
    // Targets as sparse as the samples: one neighbourhood per target is cheaper.
    expect(chooseTile(data.x.length, 64, data.x, data.y, sampleSpacing)).toBeNull();
    // All samples in every neighbourhood anyway, or no spacing: no tiles.
    expect(chooseTile(50, 64, data.x.slice(0, 50), data.y.slice(0, 50), 1)).toBeNull();
    expect(chooseTile(data.x.length, 64, data.x, data.y, 0)).toBeNull();
  });

  it('predict with tiles gives the same bits whatever the order of the targets and however they are split', () => {
    const c = fixture.cases.find((k) => k.name === 'ordinary')!;
    const opts = { neighbours: 64, targetSpacing: sampleSpacing / 4 };
    const whole = createLocalPredictor(big, c.model, opts).predict(targets.x, targets.y);
    const p = createLocalPredictor(big, c.model, opts);
    const half = targets.x.length >> 1;
    const rx = [...targets.x].reverse();
    const ry = [...targets.y].reverse();
    const second = p.predict(rx.slice(0, targets.x.length - half), ry.slice(0, targets.x.length - half));
    const first = p.predict(targets.x.slice(0, half), targets.y.slice(0, half));
    for (let j = 0; j < half; j++) {
      expect(first.mean[j]).toBe(whole.mean[j]);
      expect(first.sd[j]).toBe(whole.sd[j]);
    }
    for (let j = 0; j < targets.x.length - half; j++) {
      const at = targets.x.length - 1 - j;
      expect(second.mean[j]).toBe(whole.mean[at]);
      expect(second.sd[j]).toBe(whole.sd[at]);
    }
  });

  it('createLocalPredictor local ordinary kriging keeps its sd within 2 % of exact on 2,000 samples', () => {
    const c = fixture.cases.find((k) => k.name === 'ordinary')!;
    const got = createLocalPredictor(big, c.model, { neighbours: 64 }).predict(targets.x, targets.y);
    expectClose(got.sd, c.sd, { rel: 0.02 }, 'local ordinary kriging sd (numpy)');
  });

  it('createLocalPredictor with globalBeta uses the given coefficients (as workers do) and checks their count', () => {
    const model = modelWith('linear');
    const computed = createLocalPredictor(samples, model, { neighbours: 20, globalMean: true });
    const given = createLocalPredictor(samples, model, { neighbours: 20, globalMean: true, globalBeta: Array.from(computed.beta) });
    expect(Array.from(given.beta)).toEqual(Array.from(computed.beta));
    expect(Array.from(given.predict(tx, ty).mean)).toEqual(Array.from(computed.predict(tx, ty).mean));
    expect(() => createLocalPredictor(samples, model, { globalMean: true, globalBeta: [1] })).toThrow(/Expected 3 finite global trend coefficients/);
  });

  it('createLocalPredictor rejects a bad neighbourhood size and mismatched targets', () => {
    const model = modelWith('constant');
    expect(() => createLocalPredictor(samples, model, { neighbours: 0 })).toThrow(/neighbourhood size/);
    expect(() => createLocalPredictor(samples, model, { neighbours: 2.5 })).toThrow(/whole number/);
    expect(() => createLocalPredictor(samples, modelWith('linear'), { neighbours: 3 })).toThrow(/more than 3 samples per neighbourhood/);
    expect(() => createLocalPredictor(samples, model).predict([1, 2], [1])).toThrow(/equal length/);
  });
});
