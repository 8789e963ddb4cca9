// The one tolerance helper: relative-or-absolute closeness with a message naming the index and values.
import { expect } from 'vitest';

/** |actual − expected| ≤ max(rel·|expected|, abs). */
export function isClose(actual: number, expected: number, rel: number, abs = 0): boolean {
  if (Number.isNaN(actual) || Number.isNaN(expected)) return false;
  if (actual === expected) return true;
  return Math.abs(actual - expected) <= Math.max(rel * Math.abs(expected), abs);
}

/** Asserts closeness of a scalar or of two equal-length arrays. */
export function expectClose(
  actual: number | ArrayLike<number>,
  expected: number | ArrayLike<number>,
  tol: { rel?: number; abs?: number },
  what = 'value',
): void {
  const rel = tol.rel ?? 0;
  const abs = tol.abs ?? 0;
  if (typeof actual === 'number' || typeof expected === 'number') {
    const a = actual as number;
    const e = expected as number;
    expect(isClose(a, e, rel, abs), `${what}: got ${a}, expected ${e} (rel ${rel}, abs ${abs})`).toBe(true);
    return;
  }
  expect(actual.length, `${what}: length`).toBe(expected.length);
  for (let i = 0; i < expected.length; i++) {
    if (!isClose(actual[i], expected[i], rel, abs)) {
      expect.fail(`${what}[${i}]: got ${actual[i]}, expected ${expected[i]} (rel ${rel}, abs ${abs})`);
    }
  }
}
