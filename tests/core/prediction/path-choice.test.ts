import { describe, expect, it } from 'vitest';
import { CHECK_COUNT, DEFAULT_TOLERANCE, EXACT_SAMPLE_LIMIT, KERNEL_COST, LARGE_CHECK_COUNT, REFERENCE_NEIGHBOURS, checkCount, chooseLeaveOneOutPath, choosePredictionPath, exactCost, localCost, localTargetCost, parseTolerance } from '../../../src/core/prediction/path-choice.ts';
import { thrown } from '../../helpers/thrown.ts';
import { MAX_EXACT_SAMPLES } from '../../../src/core/shared/sizes.ts';

/** The smallest target count at which the local path is chosen for n samples (by search on the choice itself). */
function breakEven(n: number, threads = 1): number {
  let lo = 1;
  let hi = 10_000_000;
  while (choosePredictionPath({ samples: n, targets: hi, threads }).path !== 'local') hi *= 2;
  while (hi - lo > 1) {
    const mid = Math.floor((lo + hi) / 2);
    if (choosePredictionPath({ samples: n, targets: mid, threads }).path === 'local') hi = mid;
    else lo = mid;
  }
  return hi;
}

describe('exactCost / localCost', () => {
  it('exactCost follows n³/6 + K·n²/2 + T·(n²/2 + K·n)/threads', () => {
    const n = 2000;
    const T = 40_000;
    expect(exactCost(n, T, 2)).toBeCloseTo(n ** 3 / 6 + (KERNEL_COST * n * n) / 2 + (T * (n * n / 2 + KERNEL_COST * n)) / 2, -3);
  });
  it('localCost includes the exact reference up to MAX_EXACT_SAMPLES samples, a neighbourhood reference above', () => {
    const m = 64;
    const perTarget = m ** 3 / 6 + (m * m) / 2 + KERNEL_COST * (m + (m * m) / 16);
    const n = MAX_EXACT_SAMPLES;
    const ref = n ** 3 / 6 + (KERNEL_COST * n * n) / 2 + CHECK_COUNT * (n * n / 2 + KERNEL_COST * n);
    expect(localCost(n, 10_000, m)).toBeCloseTo(10_000 * perTarget + n * Math.log2(n) + ref, -3);
    const N = MAX_EXACT_SAMPLES + 1;
    const R = REFERENCE_NEIGHBOURS;
    const refN = LARGE_CHECK_COUNT * (R ** 3 / 6 + (KERNEL_COST * R * R) / 2 + R * R / 2 + KERNEL_COST * R);
    expect(localCost(N, 10_000, m)).toBeCloseTo(10_000 * perTarget + N * Math.log2(N) + refN, -3);
  });
  it('checkCount checks every target when there are few, CHECK_COUNT or LARGE_CHECK_COUNT otherwise', () => {
    expect(checkCount(500, 37)).toBe(37);
    expect(checkCount(MAX_EXACT_SAMPLES, 1e6)).toBe(CHECK_COUNT);
    expect(checkCount(MAX_EXACT_SAMPLES + 1, 1e6)).toBe(LARGE_CHECK_COUNT);
  });
});

describe('choosePredictionPath', () => {
  it('choosePredictionPath takes local from the break-even target count on, exact one target below', () => {
    for (const [n, threads] of [[2000, 1], [2000, 2], [500, 1], [MAX_EXACT_SAMPLES, 1]] as const) {
      const t = breakEven(n, threads);
      const below = choosePredictionPath({ samples: n, targets: t - 1, threads });
      const at = choosePredictionPath({ samples: n, targets: t, threads });
      expect(below.path).toBe('exact');
      expect(at.path).toBe('local');
      // At the boundary the costs cross (or the "check them all" rule ends).
      expect(at.localCost).toBeLessThan(at.exactCost);
      expect(below.localCost >= below.exactCost || t - 1 <= CHECK_COUNT).toBe(true);
      expect(at.reason).toMatch(/local neighbourhoods are cheaper/);
    }
  });
  it('choosePredictionPath: the 2,000-sample, 40,000-target job is local; 2,000 samples at 100 targets exact', () => {
    expect(choosePredictionPath({ samples: 2000, targets: 40_000 }).path).toBe('local');
    const few = choosePredictionPath({ samples: 2000, targets: 100 });
    expect(few.path).toBe('exact');
    expect(few.reason).toMatch(/few enough/);
  });
  it('choosePredictionPath: up to CHECK_COUNT targets are kriged exactly (the check would do it), one more may be local', () => {
    // 3,000 samples: exact kriging of 200 targets costs what the check costs.
    expect(choosePredictionPath({ samples: 10, targets: CHECK_COUNT }).path).toBe('exact');
    expect(choosePredictionPath({ samples: MAX_EXACT_SAMPLES, targets: CHECK_COUNT }).path).toBe('exact');
  });
  it('choosePredictionPath never takes exact kriging automatically above EXACT_SAMPLE_LIMIT samples', () => {
    const at = choosePredictionPath({ samples: EXACT_SAMPLE_LIMIT, targets: 10 });
    const above = choosePredictionPath({ samples: EXACT_SAMPLE_LIMIT + 1, targets: 10 });
    expect(at.path).toBe('local'); // 10,000 samples cost far more to factorise than 30 reference neighbourhoods
    expect(above.path).toBe('local');
    expect(above.reason).toMatch(/too many to factorise/);
    expect(above.exactCost).toBe(Infinity);
  });
  it('choosePredictionPath: a tolerance of 0 takes exact kriging', () => {
    const c = choosePredictionPath({ samples: 2000, targets: 40_000, tolerance: { mean: 0, sd: 2 } });
    expect(c.path).toBe('exact');
    expect(c.reason).toMatch(/tolerance of 0/);
  });
  it('choosePredictionPath keeps --exact and --local, and refuses --exact above EXACT_SAMPLE_LIMIT', () => {
    expect(choosePredictionPath({ samples: 2000, targets: 40_000, force: 'exact' })).toMatchObject({ path: 'exact', automatic: false });
    expect(choosePredictionPath({ samples: 20, targets: 5, force: 'local' })).toMatchObject({ path: 'local', automatic: false });
    expect(choosePredictionPath({ samples: EXACT_SAMPLE_LIMIT, targets: 5, force: 'exact' }).path).toBe('exact');
    const e = thrown(() => choosePredictionPath({ samples: EXACT_SAMPLE_LIMIT + 1, targets: 5, force: 'exact' }));
    expect(e.code).toBe('bad-option');
    expect(e.message).toMatch(/10,000 samples.*got 10,001/);
  });
});

describe('parseTolerance', () => {
  it('parseTolerance reads mean=P,sd=P in percent, keeping the default of a part left out', () => {
    expect(DEFAULT_TOLERANCE).toEqual({ mean: 1, sd: 2 });
    expect(parseTolerance('mean=0.5,sd=3')).toEqual({ mean: 0.5, sd: 3 });
    expect(parseTolerance('sd=5%')).toEqual({ mean: 1, sd: 5 });
    expect(parseTolerance(' MEAN = 2 ')).toEqual({ mean: 2, sd: 2 });
  });
  it('parseTolerance refuses unknown parts, bad numbers, repeats and empty text', () => {
    for (const bad of ['', 'mean', 'mean=x', 'mean=-1', 'mean=101', 'median=1', 'mean=1,mean=2']) {
      expect(thrown(() => parseTolerance(bad)).code, bad).toBe('bad-option');
    }
  });
});

describe('chooseLeaveOneOutPath', () => {
  it('chooseLeaveOneOutPath takes the closed form up to MAX_EXACT_SAMPLES samples and local neighbourhoods one sample above', () => {
    const at = chooseLeaveOneOutPath({ samples: MAX_EXACT_SAMPLES });
    const above = chooseLeaveOneOutPath({ samples: MAX_EXACT_SAMPLES + 1 });
    expect(at.path).toBe('exact');
    expect(at.automatic).toBe(true);
    expect(above.path).toBe('local');
    expect(above.reason).toMatch(/above 3,000 samples/);
    expect(at.exactCost).toBe(MAX_EXACT_SAMPLES ** 3 / 2);
  });
  it('chooseLeaveOneOutPath follows --exact up to EXACT_SAMPLE_LIMIT samples and refuses it above', () => {
    expect(chooseLeaveOneOutPath({ samples: EXACT_SAMPLE_LIMIT, force: 'exact' }).path).toBe('exact');
    expect(thrown(() => chooseLeaveOneOutPath({ samples: EXACT_SAMPLE_LIMIT + 1, force: 'exact' }))?.code).toBe('bad-option');
    expect(chooseLeaveOneOutPath({ samples: 50, force: 'local' })).toMatchObject({ path: 'local', automatic: false });
  });
});

describe('localTargetCost', () => {
  it('localTargetCost is m³/6 + m²/2 + K·(m + m²/16), the per-target term of localCost', () => {
    expect(localTargetCost(64)).toBe(64 ** 3 / 6 + 64 * 64 / 2 + KERNEL_COST * (64 + 64 * 64 / 16));
    // Doubling the neighbours costs about eight times as much per target (the growth budget's unit).
    expect(localTargetCost(256) / localTargetCost(128)).toBeGreaterThan(7);
    expect(localTargetCost(256) / localTargetCost(128)).toBeLessThan(8);
  });
});
