/**
 * The likelihood search shared by the fits whose correlation goes beyond one isotropic structure
 * (fit-anisotropy.ts: azimuth and ratio; fit-nested.ts: two structures): profiled REML or ML
 * (likelihood.ts, with the caller's correlation model at θ) maximised over the caller's parameters.
 *
 * Method, as fit.ts does it for one structure: every start is evaluated, Nelder–Mead (optimise.ts)
 * runs from the best few; above SCREEN_ABOVE samples those runs use a seeded subset of
 * SEARCH_SUBSET samples, the subset optima are ranked on all samples and the best is polished there
 * by Newton steps (optimise.ts newtonRefine, a second round when the first does not settle; a short
 * Nelder–Mead run when they still do not converge).
 * Newton steps work in one coordinate per parameter: ln x on a log scale, the logit of the position
 * in a two-sided box on a linear scale, x / unit otherwise (an angle in radians, say), so a finite
 * difference step of 0.05 is about 5 % of a scale, or 3° of an azimuth.
 * Units: the caller's. Cost: about 20–40 evaluations on all samples above SCREEN_ABOVE (n³/3 flops
 * each) plus a few hundred on the subset; 100–300 on all samples below.
 */
import type { ParameterSpace } from '../linalg/optimise.ts';
import type { CorrelationModelAt, Likelihood, LikelihoodSetup, LikelihoodValue, CorrelationParameters } from './likelihood.ts';
import type { Samples } from '../shared/samples.ts';
import type { FitProgress } from './fit.ts';
import { GapwiseError } from '../shared/errors.ts';
import { numericalFailureAdvice } from '../covariance/numerical-advice.ts';
import { createLikelihood } from './likelihood.ts';
import { minimiseBounded, newtonRefine } from '../linalg/optimise.ts';
import { subsetSamples } from './fit.ts';

/** From this many samples the starts are searched on a subset. */
const SCREEN_ABOVE = 250;
/** Samples in the search subset (the direction of an anisotropy needs more than the 150 of fit.ts). */
const SEARCH_SUBSET = 200;
const SUBSET_SEED = 20240611;

/** One parameter of the search: its box and scale, the first simplex step, the Newton unit. */
export interface SearchParameter extends ParameterSpace {
  /** Initial Nelder–Mead step: ln units on a log scale, the parameter's units otherwise. */
  step: number;
  /** For an unbounded linear parameter: the length of one Newton coordinate unit (default 1). */
  unit?: number;
}

export interface SearchProblem {
  parameters: SearchParameter[];
  /** Starting points in the parameters' units. */
  starts: number[][];
  /** Nelder–Mead runs from the best starts (default 3). */
  runs?: number;
  /**
   * A point the result must not fall below (the simpler model the richer one nests): evaluated on
   * all samples and ranked with the optimiser's candidates there, so the result's likelihood is at
   * least its likelihood.
   */
  anchor?: number[];
  /** More such points (the result is at least the best of them all). */
  anchors?: number[][];
  /** θ for the likelihood (it may carry extra fields that `correlationAt` reads). */
  toTheta(x: number[]): CorrelationParameters;
  /** Jitter R's diagonal when it cannot be factorised (fits without a nugget). */
  allowJitter: boolean;
}

export interface SearchResult {
  x: number[];
  /** The likelihood on all samples at x. */
  final: LikelihoodValue;
  likelihood: Likelihood;
  converged: boolean;
  iterations: number;
  evaluations: number;
  screenEvaluations: number;
}

/** Newton coordinate ↔ parameter, for newtonRefine (which works on ln of positive numbers). */
function newtonCoordinates(p: SearchParameter): { toZ(x: number): number; fromZ(z: number): number } {
  if (p.log) return { toZ: Math.log, fromZ: Math.exp };
  const lo = p.lower ?? -Infinity;
  const hi = p.upper ?? Infinity;
  if (Number.isFinite(lo) && Number.isFinite(hi)) {
    const w = hi - lo;
    return {
      toZ: (x) => {
        const t = Math.min(1 - 1e-12, Math.max(1e-12, (x - lo) / w));
        return Math.log(t / (1 - t));
      },
      fromZ: (z) => lo + w / (1 + Math.exp(-z)),
    };
  }
  const unit = p.unit ?? 1;
  return { toZ: (x) => x / unit, fromZ: (z) => z * unit };
}

/**
 * Maximises the profiled likelihood of `samples` under `setup` and `correlationAt` over the problem's
 * parameters. Throws GapwiseError 'fit-failed' when no start gives a finite likelihood.
 * `onProgress(done, total)` counts likelihood evaluations (total: the planned budget, raised when
 * passed); it never changes the result.
 */
export function searchLikelihood(
  samples: Samples, setup: LikelihoodSetup, correlationAt: CorrelationModelAt, problem: SearchProblem,
  options: { maxEvaluations?: number; what: string }, onProgress?: FitProgress,
): SearchResult {
  const lik = createLikelihood(samples, setup, correlationAt);
  const n = lik.n;
  const screening = n > SCREEN_ABOVE;
  const screen = screening ? createLikelihood(subsetSamples(samples, SEARCH_SUBSET, SUBSET_SEED), setup, correlationAt) : lik;
  const d = problem.parameters.length;
  const runs = Math.min(problem.runs ?? 3, problem.starts.length);
  const perRun = options.maxEvaluations ?? 150 * d;
  const planned = problem.starts.length + runs * perRun + (screening ? runs + 80 : 0);
  let done = 0;
  const tick = onProgress ? () => {
    done++;
    onProgress(done, Math.max(planned, done + 1));
  } : undefined;
  const objective = (L: Likelihood) => (x: number[]): number => {
    const v = -L.evaluate(problem.toTheta(x), { allowJitter: problem.allowJitter }).logLikelihood;
    tick?.();
    return v;
  };
  const fScreen = objective(screen);
  const fFull = objective(lik);
  let evaluations = 0;
  let screenEvaluations = 0;
  let iterations = 0;
  const count = (k: number, onSubset: boolean) => {
    if (onSubset) screenEvaluations += k;
    else evaluations += k;
  };

  const ranked = problem.starts.map((x) => ({ x, value: fScreen(x) })).sort((a, b) => a.value - b.value);
  count(ranked.length, screening);
  if (!Number.isFinite(ranked[0].value)) {
    throw new GapwiseError('fit-failed', `No starting value gave a finite likelihood for the ${options.what} (${n} samples): ${numericalFailureAdvice(samples.x, samples.y, samples.value)}.`);
  }
  const spaces: ParameterSpace[] = problem.parameters.map(({ lower, upper, log }) => ({ lower, upper, log }));
  const steps = problem.parameters.map((p) => p.step);
  const fTolerance = (f: number) => 1e-3 / Math.max(1, Math.abs(f));
  const candidates: { x: number[]; value: number; converged: boolean }[] = [];
  for (const start of ranked.slice(0, runs)) {
    if (!Number.isFinite(start.value)) break;
    const res = minimiseBounded(fScreen, start.x, spaces, {
      step: steps, restarts: screening ? 0 : 1, xTolerance: screening ? 0.05 : 0.005,
      fTolerance: screening ? 1e-2 / Math.max(1, Math.abs(start.value)) : fTolerance(start.value), maxEvaluations: perRun,
    });
    iterations += res.iterations;
    count(res.evaluations, screening);
    candidates.push({ x: res.x, value: res.value, converged: res.converged });
  }

  let best: { x: number[]; value: number; converged: boolean };
  const anchors = [...(problem.anchor ? [problem.anchor] : []), ...(problem.anchors ?? [])];
  if (!screening) {
    for (const a of anchors) {
      candidates.push({ x: a, value: fFull(a), converged: true });
      evaluations++;
    }
  }
  if (!screening) {
    best = candidates.sort((a, b) => a.value - b.value)[0];
  } else {
    let top = { x: candidates[0].x, value: Infinity };
    for (const c of [...candidates, ...anchors.map((x) => ({ x }))]) {
      const v = fFull(c.x);
      evaluations++;
      if (v < top.value) top = { x: c.x, value: v };
    }
    const coordinates = problem.parameters.map(newtonCoordinates);
    const toPositive = (x: number[]) => x.map((v, i) => Math.exp(coordinates[i].toZ(v)));
    const fromPositive = (p: number[]) => p.map((v, i) => coordinates[i].fromZ(Math.log(v)));
    const boxes: ParameterSpace[] = problem.parameters.map((p, i) => {
      if (p.log) return { lower: p.lower, upper: p.upper };
      if (Number.isFinite(p.lower ?? -Infinity) && Number.isFinite(p.upper ?? Infinity)) return {};
      return { lower: p.lower !== undefined ? Math.exp(coordinates[i].toZ(p.lower)) : undefined, upper: p.upper !== undefined ? Math.exp(coordinates[i].toZ(p.upper)) : undefined };
    });
    // A second round of Newton steps (a fresh Hessian) when the first moved but did not settle.
    let refined = newtonRefine((pos) => fFull(fromPositive(pos)), toPositive(top.x), boxes);
    iterations += refined.iterations;
    evaluations += refined.evaluations;
    if (!refined.converged && refined.value < top.value) {
      const again = newtonRefine((pos) => fFull(fromPositive(pos)), refined.x, boxes);
      iterations += again.iterations;
      evaluations += again.evaluations;
      if (again.value <= refined.value) refined = again;
    }
    const refinedX = fromPositive(refined.x);
    if (refined.converged && refined.value <= top.value) {
      best = { x: refinedX, value: refined.value, converged: true };
    } else {
      const from = refined.value <= top.value ? { x: refinedX, value: refined.value } : top;
      const res = minimiseBounded(fFull, from.x, spaces, {
        step: steps.map((s) => s / 4), restarts: 0, xTolerance: 0.02, fTolerance: fTolerance(from.value), maxEvaluations: options.maxEvaluations ?? 40 * d,
      });
      iterations += res.iterations;
      evaluations += res.evaluations;
      best = res.value <= from.value ? { x: res.x, value: res.value, converged: res.converged } : { x: from.x, value: from.value, converged: res.converged };
    }
  }
  if (!Number.isFinite(best.value)) {
    throw new GapwiseError('fit-failed', `The optimiser found no finite likelihood for the ${options.what} (${n} samples): ${numericalFailureAdvice(samples.x, samples.y, samples.value)}.`);
  }
  const final = lik.evaluate(problem.toTheta(best.x), { allowJitter: problem.allowJitter });
  if (onProgress) onProgress(done + 1, done + 1);
  return { x: best.x, final, likelihood: lik, converged: best.converged, iterations, evaluations, screenEvaluations };
}
