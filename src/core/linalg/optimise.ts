/**
 * Derivative-free minimisation for model fitting: Nelder–Mead simplex search (Nelder & Mead 1965,
 * Comput. J. 7:308; coefficients reflection 1, expansion 2, contraction ½, shrink ½, as in Lagarias
 * et al. 1998, SIAM J. Optim. 9:112) with restarts from the best vertex, and box bounds handled by
 * transforms: a parameter may be searched on a log scale, and a bounded one through a logistic map
 * of an unbounded variable, so the simplex never leaves the box. `newtonRefine` polishes a point
 * already near the optimum with a few Newton steps on finite-difference derivatives (few evaluations
 * when each is expensive).
 * Units: whatever the caller's parameters are. Cost: about 1–2 function evaluations per iteration
 * (n + 1 for a shrink); typically 30–100·dim evaluations in all.
 */

import { choleskyInPlace, solveLowerInPlace } from './linalg.ts';

/** A function to minimise; non-finite values count as +∞ (a point to move away from). */
export type Objective = (x: Float64Array) => number;

export interface NelderMeadOptions {
  /** Initial simplex edge per coordinate (unconstrained units); default 0.5 (or 5 % of |x0|, whichever larger). */
  step?: number | number[];
  /** Stop when the spread of simplex values is ≤ fTolerance·(|f_best| + fTolerance); default 1e-8. */
  fTolerance?: number;
  /** …and the simplex diameter (max-norm, unconstrained units) is ≤ xTolerance; default 1e-6. */
  xTolerance?: number;
  /** Budget of function evaluations over all restarts; default 400·dim. */
  maxEvaluations?: number;
  /** Restarts from the best vertex with a fresh simplex after convergence; default 2. */
  restarts?: number;
}

export interface MinimiseResult {
  /** The best point found (in the caller's units for `minimiseBounded`). */
  x: number[];
  value: number;
  iterations: number;
  evaluations: number;
  /** True when the last run met the tolerances within the evaluation budget. */
  converged: boolean;
}

/**
 * Nelder–Mead minimisation of an unconstrained function of x ∈ ℝᵈ. Pure: no state survives the call.
 * After convergence the search restarts from the best vertex (a guard against a collapsed simplex);
 * it stops early when a restart does not improve the value by more than the tolerance.
 */
export function nelderMead(f: Objective, x0: ArrayLike<number>, options: NelderMeadOptions = {}): MinimiseResult {
  const d = x0.length;
  if (d === 0) throw new Error('Expected at least one parameter to optimise, got none.');
  const fTol = options.fTolerance ?? 1e-8;
  const xTol = options.xTolerance ?? 1e-6;
  const maxEval = options.maxEvaluations ?? 400 * d;
  const restarts = options.restarts ?? 2;
  const steps = new Float64Array(d);
  for (let i = 0; i < d; i++) {
    const s = Array.isArray(options.step) ? options.step[i] : (options.step as number | undefined);
    steps[i] = s ?? Math.max(0.5, 0.05 * Math.abs(x0[i]));
  }

  let evaluations = 0;
  let iterations = 0;
  const safe = (x: Float64Array): number => {
    evaluations++;
    const v = f(x);
    return Number.isFinite(v) ? v : Infinity;
  };

  const best = Float64Array.from(x0);
  let bestValue = safe(best);
  let converged = false;

  // Vertex storage reused across restarts.
  const simplex: Float64Array[] = Array.from({ length: d + 1 }, () => new Float64Array(d));
  const values = new Float64Array(d + 1);
  const order = Array.from({ length: d + 1 }, (_, i) => i);
  const centroid = new Float64Array(d);
  const xr = new Float64Array(d);
  const xe = new Float64Array(d);
  const xc = new Float64Array(d);

  for (let run = 0; run <= restarts; run++) {
    const startValue = bestValue;
    simplex[0].set(best);
    values[0] = bestValue;
    for (let i = 1; i <= d; i++) {
      simplex[i].set(best);
      simplex[i][i - 1] += steps[i - 1];
      values[i] = safe(simplex[i]);
    }
    converged = false;
    while (evaluations < maxEval) {
      order.sort((a, b) => values[a] - values[b]);
      const lo = order[0];
      const hi = order[d];
      const second = order[d - 1];
      // Convergence: values flat and simplex small.
      let diameter = 0;
      for (let i = 1; i <= d; i++) {
        const v = simplex[order[i]];
        for (let k = 0; k < d; k++) diameter = Math.max(diameter, Math.abs(v[k] - simplex[lo][k]));
      }
      const spread = values[hi] - values[lo];
      if ((spread <= fTol * (Math.abs(values[lo]) + fTol) && diameter <= xTol) || diameter <= 1e-3 * xTol) {
        converged = Number.isFinite(values[lo]);
        break;
      }
      iterations++;
      centroid.fill(0);
      for (let i = 0; i < d; i++) {
        const v = simplex[order[i]];
        for (let k = 0; k < d; k++) centroid[k] += v[k] / d;
      }
      const worst = simplex[hi];
      for (let k = 0; k < d; k++) xr[k] = centroid[k] + (centroid[k] - worst[k]);
      const fr = safe(xr);
      if (fr < values[lo]) {
        for (let k = 0; k < d; k++) xe[k] = centroid[k] + 2 * (centroid[k] - worst[k]);
        const fe = safe(xe);
        if (fe < fr) { worst.set(xe); values[hi] = fe; } else { worst.set(xr); values[hi] = fr; }
        continue;
      }
      if (fr < values[second]) {
        worst.set(xr);
        values[hi] = fr;
        continue;
      }
      // Contraction: outside when the reflection beat the worst vertex, else inside.
      const outside = fr < values[hi];
      for (let k = 0; k < d; k++) {
        xc[k] = outside ? centroid[k] + 0.5 * (xr[k] - centroid[k]) : centroid[k] + 0.5 * (worst[k] - centroid[k]);
      }
      const fc = safe(xc);
      if (fc < (outside ? fr : values[hi])) {
        worst.set(xc);
        values[hi] = fc;
        continue;
      }
      // Shrink towards the best vertex.
      const b = simplex[lo];
      for (let i = 0; i <= d; i++) {
        if (i === lo) continue;
        const v = simplex[i];
        for (let k = 0; k < d; k++) v[k] = b[k] + 0.5 * (v[k] - b[k]);
        values[i] = safe(v);
      }
    }
    let lo = 0;
    for (let i = 1; i <= d; i++) if (values[i] < values[lo]) lo = i;
    if (values[lo] <= bestValue) {
      best.set(simplex[lo]);
      bestValue = values[lo];
    }
    if (evaluations >= maxEval) break;
    // A restart that gains nothing worth having ends the search.
    if (run > 0 && startValue - bestValue <= fTol * (Math.abs(bestValue) + fTol)) break;
  }
  return { x: Array.from(best), value: bestValue, iterations, evaluations, converged };
}

/** One parameter's search space: a box [lower, upper] (either side may be infinite), optionally on a log scale. */
export interface ParameterSpace {
  lower?: number;
  upper?: number;
  /** Search ln x instead of x (x must stay > 0; lower defaults to 0). */
  log?: boolean;
}

export interface BoundedOptions extends Omit<NelderMeadOptions, 'step'> {
  /** Initial step per parameter in the search scale: ln units for log parameters; default 0.5. */
  step?: number | number[];
}

/** Maps between a parameter x and the unconstrained variable u the simplex moves in. */
interface Transform {
  toX(u: number): number;
  toU(x: number): number;
  /** dz/du at u, where z is x or ln x: converts search-scale steps to u steps. */
  slope(u: number): number;
}

function makeTransform(p: ParameterSpace): Transform {
  const log = p.log ?? false;
  const lower = p.lower ?? (log ? 0 : -Infinity);
  const upper = p.upper ?? Infinity;
  const zl = log ? (lower > 0 ? Math.log(lower) : -Infinity) : lower;
  const zu = log ? Math.log(upper) : upper;
  const fromZ = (z: number) => (log ? Math.exp(z) : z);
  const toZ = (x: number) => (log ? Math.log(x) : x);
  if (Number.isFinite(zl) && Number.isFinite(zu)) {
    const w = zu - zl;
    return {
      toX: (u) => fromZ(zl + w / (1 + Math.exp(-u))),
      toU: (x) => {
        const t = Math.min(1 - 1e-12, Math.max(1e-12, (toZ(x) - zl) / w));
        return Math.log(t / (1 - t));
      },
      slope: (u) => {
        const s = 1 / (1 + Math.exp(-u));
        return w * s * (1 - s);
      },
    };
  }
  if (Number.isFinite(zl)) return { toX: (u) => fromZ(zl + Math.exp(u)), toU: (x) => Math.log(Math.max(1e-300, toZ(x) - zl)), slope: (u) => Math.exp(u) };
  if (Number.isFinite(zu)) return { toX: (u) => fromZ(zu - Math.exp(u)), toU: (x) => Math.log(Math.max(1e-300, zu - toZ(x))), slope: (u) => Math.exp(u) };
  return { toX: fromZ, toU: toZ, slope: () => 1 };
}

/**
 * Minimises f over a box, each parameter optionally on a log scale, by Nelder–Mead in transformed
 * coordinates (log, then logistic for a two-sided box). x0 must lie inside the box; it is pulled a
 * hair inside when on a bound. The result's x is in the caller's units.
 */
export function minimiseBounded(
  f: (x: number[]) => number,
  x0: ArrayLike<number>,
  space: ParameterSpace[],
  options: BoundedOptions = {},
): MinimiseResult {
  const d = x0.length;
  if (space.length !== d) throw new Error(`Expected ${d} parameter spaces, got ${space.length}.`);
  const transforms = space.map(makeTransform);
  const u0 = transforms.map((t, i) => t.toU(x0[i]));
  const steps = transforms.map((t, i) => {
    const s = Array.isArray(options.step) ? options.step[i] : (options.step as number | undefined) ?? 0.5;
    // A step of s in z = (ln) x is s/slope in u; keep it sane near a bound where the slope vanishes.
    return Math.min(4, Math.max(0.05, s / Math.max(1e-12, t.slope(u0[i]))));
  });
  const xBuf = new Array<number>(d);
  const g = (u: Float64Array): number => {
    for (let i = 0; i < d; i++) xBuf[i] = transforms[i].toX(u[i]);
    return f(xBuf);
  };
  const r = nelderMead(g, u0, { ...options, step: steps });
  return { ...r, x: r.x.map((u, i) => transforms[i].toX(u)) };
}

/**
 * Minimises f (parameters on log scales, clamped to their boxes) by Newton steps on a local
 * quadratic: the first step uses the gradient and Hessian from central differences at x, x ± h·eᵢ
 * and x + h·(eᵢ + eⱼ), h = 0.05; later steps keep that Hessian and take the gradient from forward
 * differences corrected by it (d + 1 values per step). Up to four steps, each at most 0.5 in any
 * ln-parameter. Converged when a step moves every ln-parameter by less than 0.02, or a step shorter
 * than 0.1 fails to lower f.
 */
export function newtonRefine(f: (x: number[]) => number, x0: number[], spaces: ParameterSpace[]): { x: number[]; value: number; converged: boolean; evaluations: number; iterations: number } {
  const d = x0.length;
  const h = 0.05;
  const lo = spaces.map((s) => Math.log(s.lower ?? 1e-300));
  const hi = spaces.map((s) => Math.log(s.upper ?? 1e300));
  const clamp = (z: number[]) => z.map((v, i) => Math.min(hi[i], Math.max(lo[i], v)));
  let evaluations = 0;
  const at = (z: number[]) => {
    evaluations++;
    return f(clamp(z).map(Math.exp));
  };
  let z = clamp(x0.map(Math.log));
  let fz = at(z);
  let converged = false;
  let iterations = 0;
  const g = new Float64Array(d);
  const H = new Float64Array(d * d);
  const L = new Float64Array(d * d);
  for (let iter = 0; iter < 4 && Number.isFinite(fz); iter++) {
    iterations++;
    const plus = new Array<number>(d);
    for (let i = 0; i < d; i++) {
      const zp = z.slice();
      zp[i] += h;
      plus[i] = at(zp);
    }
    if (iter === 0) {
      for (let i = 0; i < d; i++) {
        const zm = z.slice();
        zm[i] -= h;
        const minus = at(zm);
        g[i] = (plus[i] - minus) / (2 * h);
        H[i * d + i] = (plus[i] - 2 * fz + minus) / (h * h);
      }
      for (let i = 0; i < d; i++) {
        for (let j = 0; j < i; j++) {
          const zz = z.slice();
          zz[i] += h;
          zz[j] += h;
          const v = (at(zz) - plus[i] - plus[j] + fz) / (h * h);
          H[i * d + j] = v;
          H[j * d + i] = v;
        }
      }
      L.set(H);
      if (!H.every(Number.isFinite) || !choleskyInPlace(L, d)) break;
    } else {
      // f(z + h·eᵢ) − f(z) = h·gᵢ + ½h²·Hᵢᵢ + O(h³).
      for (let i = 0; i < d; i++) g[i] = (plus[i] - fz) / h - 0.5 * h * H[i * d + i];
    }
    if (!g.every(Number.isFinite)) break;
    const step = Float64Array.from(g, (v) => -v);
    solveLowerInPlace(L, d, step);
    for (let i = d - 1; i >= 0; i--) {
      let s = step[i];
      for (let k = i + 1; k < d; k++) s -= L[k * d + i] * step[k];
      step[i] = s / L[i * d + i];
    }
    let big = 0;
    for (let i = 0; i < d; i++) big = Math.max(big, Math.abs(step[i]));
    const shrink = big > 0.5 ? 0.5 / big : 1;
    if (big * shrink < 0.02) {
      // Already at the quadratic's optimum to within 2 % in every parameter: no need to move.
      converged = true;
      break;
    }
    const zn = clamp(z.map((v, i) => v + shrink * step[i]));
    const fn = at(zn);
    if (!(fn <= fz)) {
      // A short step that does not improve f: the optimum is within the resolution of the
      // difference quotients (h = 0.05), so stay and call it converged.
      converged = big * shrink < 0.1;
      break;
    }
    z = zn;
    fz = fn;
  }
  return { x: clamp(z).map(Math.exp), value: fz, converged, evaluations, iterations };
}
