import { describe, expect, it } from 'vitest';
import { minimiseBounded, nelderMead } from '../../../src/core/linalg/optimise.ts';
import { expectClose } from '../../helpers/tolerance.ts';

// Rosenbrock's function (Rosenbrock 1960, Comput. J. 3:175): minimum 0 at (1, 1), a curved valley.
const rosenbrock = (x: ArrayLike<number>) => 100 * (x[1] - x[0] * x[0]) ** 2 + (1 - x[0]) ** 2;

describe('nelderMead', () => {
  it('nelderMead finds the minimum of a convex quadratic (analytic: x* = (3, −2), f* = 5)', () => {
    const f = (x: Float64Array) => 2 * (x[0] - 3) ** 2 + (x[1] + 2) ** 2 + 0.5 * (x[0] - 3) * (x[1] + 2) + 5;
    const r = nelderMead(f, [0, 0], { xTolerance: 1e-9, fTolerance: 1e-14 });
    expect(r.converged).toBe(true);
    expectClose(r.x, [3, -2], { abs: 1e-6 }, 'x*');
    expectClose(r.value, 5, { abs: 1e-12 }, 'f*');
  });

  it('nelderMead follows the Rosenbrock valley from (−1.2, 1) to (1, 1)', () => {
    const r = nelderMead(rosenbrock, [-1.2, 1], { xTolerance: 1e-10, fTolerance: 1e-16, maxEvaluations: 5000 });
    expect(r.converged).toBe(true);
    expectClose(r.x, [1, 1], { abs: 1e-5 }, 'x*');
    expect(r.value).toBeLessThan(1e-10);
  });

  it('nelderMead minimises a 4-dimensional quadratic with unequal curvatures', () => {
    const c = [1, -1, 2, 0.5];
    const w = [1, 10, 100, 0.1];
    const f = (x: Float64Array) => x.reduce((s, v, i) => s + w[i] * (v - c[i]) ** 2, 0);
    const r = nelderMead(f, [0, 0, 0, 0], { xTolerance: 1e-8, fTolerance: 1e-16, maxEvaluations: 10000 });
    expectClose(r.x, c, { abs: 1e-5 }, 'x*');
  });

  it('nelderMead treats non-finite values as +∞ and steps away from them', () => {
    // log barrier: undefined for x ≤ 0; minimum of x − ln x at x = 1.
    const f = (x: Float64Array) => x[0] - Math.log(x[0]);
    const r = nelderMead(f, [0.2], { step: 1, xTolerance: 1e-9 });
    expectClose(r.x[0], 1, { abs: 1e-6 }, 'x*');
  });

  it('nelderMead reports non-convergence when the budget runs out', () => {
    const r = nelderMead(rosenbrock, [-1.2, 1], { maxEvaluations: 20 });
    expect(r.converged).toBe(false);
    expect(r.evaluations).toBeLessThanOrEqual(20);
  });
});

describe('minimiseBounded', () => {
  it('minimiseBounded on log scale finds an interior optimum (analytic: x* = e, y* = 0.1)', () => {
    const f = (p: number[]) => (Math.log(p[0]) - 1) ** 2 + (Math.log(p[1]) - Math.log(0.1)) ** 2;
    const r = minimiseBounded(f, [1, 1], [{ log: true, lower: 1e-3, upper: 1e3 }, { log: true }], { xTolerance: 1e-10, fTolerance: 1e-16 });
    expectClose(r.x, [Math.E, 0.1], { rel: 1e-6 }, 'x*');
  });

  it('minimiseBounded keeps the answer inside the box and stops at the active bound', () => {
    // Unconstrained minimum at (−3, 5); box [0, 2] × [1, 4] puts it at the corner (0, 4).
    const f = (p: number[]) => (p[0] + 3) ** 2 + (p[1] - 5) ** 2;
    const r = minimiseBounded(f, [1, 2], [{ lower: 0, upper: 2 }, { lower: 1, upper: 4 }], { maxEvaluations: 2000 });
    expect(r.x[0]).toBeGreaterThanOrEqual(0);
    expect(r.x[1]).toBeLessThanOrEqual(4);
    expectClose(r.x, [0, 4], { abs: 1e-3 }, 'x*');
  });

  it('minimiseBounded solves Rosenbrock with one-sided bounds not active', () => {
    const r = minimiseBounded((p) => rosenbrock(p), [0.5, 0.5], [{ lower: 0 }, { upper: 10 }], { xTolerance: 1e-10, fTolerance: 1e-16, maxEvaluations: 5000 });
    expectClose(r.x, [1, 1], { abs: 1e-4 }, 'x*');
  });
});
