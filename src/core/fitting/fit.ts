/**
 * Fits a covariance model to point samples: REML (default), ML, or weighted least squares on the
 * empirical variogram; and fits the standard candidate set ranked by AIC.
 *
 * Likelihood fits (likelihood.ts; Patterson & Thompson 1971, Harville 1977) profile the sill out
 * and search θ = (scale, η = nugget/partial sill[, ν]) on log scales by Nelder–Mead (optimise.ts)
 * from several starts: scale from fractions of the largest sample distance, η from {0.01, 0.1, 0.5},
 * ν ∈ [0.2, 5] when free. Above 250 samples the starts are screened on a seeded 150-sample subset
 * before the best is polished on all samples, so most evaluations cost (150/n)³ of a full one. Above
 * 1,000 samples the best is first refined on the nearest-neighbour likelihood of all samples
 * (vecchia.ts, 30 neighbours, about n·10⁴ flops an evaluation) and then polished by Newton steps
 * on the exact likelihood (optimise.ts newtonRefine; Nelder–Mead when they do not converge).
 * WLS minimises Cressie's (1985, Math. Geol. 17:563) criterion Σ N_j[γ̂(h_j)/γ(h_j; θ) − 1]² over
 * sill, scale and nugget (and ν when free): first with the sill and nugget solved by iteratively
 * reweighted linear least squares for each scale, then jointly; its REML log-likelihood at the fitted
 * parameters is reported too so all fits compare.
 * AIC = 2k − 2ℓ, k = sill + scale + nugget (if fitted) + ν (if free) + p trend coefficients; REML
 * AICs compare models with the same trend only.
 * Units: metres, data units squared. Cost: a likelihood fit makes about 20–40 evaluations of n³/3
 * flops on all samples from 250 to 1,000 samples and about 10 above (plus about 100 on the subset
 * and the nearest-neighbour likelihood), 50–150 below 250; WLS is
 * O(n²) for the variogram plus the likelihood once.
 */
import type { Anisotropy, CovarianceModel, Family, FitInfo, Structure, Trend } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import type { VariogramOptions } from './variogram.ts';
import type { CorrelationParameters, Likelihood, LikelihoodSetup, LikelihoodValue } from './likelihood.ts';
import type { ParameterSpace } from '../linalg/optimise.ts';
import { numericalFailureAdvice } from '../covariance/numerical-advice.ts';
import { fitWarning, withoutFitWarnings, type FitWarning } from '../covariance/fit-warnings.ts';
import { GapwiseError } from '../shared/errors.ts';
import { centroid, pickSamples } from '../shared/samples.ts';
import { isCovariateTrend } from '../covariance/model.ts';
import { resolveFitTrend, leastSquaresResiduals, attachTrendCoefficients } from './covariate-fit.ts';
import { polishLikelihoodFit } from './fit-polish.ts';
import { createLikelihood, NU_BOUNDS } from './likelihood.ts';
import { minimiseBounded, newtonRefine } from '../linalg/optimise.ts';
import { createVecchiaLikelihood } from './vecchia.ts';
import { empiricalVariogram } from './variogram.ts';
import { correlation, practicalRange, toIsotropicCoordinates } from '../covariance/covariance.ts';
import { choleskyInPlace, solveLowerInPlace } from '../linalg/linalg.ts';
import { createRandom } from '../shared/random.ts';

export type { FitMethod, FitOptions } from './fit-options.ts';
import type { FitMethod, FitOptions } from './fit-options.ts';

/** Smoothness bounds when ν is estimated (defined beside the likelihood). */
export { NU_BOUNDS } from './likelihood.ts';
import { MAX_EXACT_SAMPLES } from '../shared/sizes.ts';
const SCREEN_ABOVE = 250;
const SCREEN_SIZE = 150;
const MID_ABOVE = 1000;
/** Neighbours of the nearest-neighbour likelihood that stands in for the exact one above MID_ABOVE samples. */
const NEAR_NEIGHBOURS = 30;
const NUGGET_RATIO_BOUNDS = { lower: 1e-6, upper: 1e3 };
const FAMILIES: ReadonlySet<string> = new Set(['matern', 'exponential', 'spherical', 'gaussian']);

interface Resolved {
  family: Family;
  nuFixed?: number;
  nuFree: boolean;
  method: FitMethod;
  trend: Trend;
  nugget: boolean;
  anisotropy?: Anisotropy;
  starts: number;
  p: number;
}

function resolve(samples: Samples, options: FitOptions): Resolved {
  if (typeof options !== 'object' || options === null) throw new GapwiseError('bad-option', 'Expected fit options as an object.');
  if (!FAMILIES.has(options.family)) {
    throw new GapwiseError('bad-option', `Expected the family to be matern, exponential, spherical or gaussian, got ${JSON.stringify(options.family)}.`);
  }
  const method = options.method ?? 'reml';
  if (method !== 'reml' && method !== 'ml' && method !== 'wls') {
    throw new GapwiseError('bad-option', `Expected the method to be reml, ml or wls, got ${JSON.stringify(method)}.`);
  }
  const { trend, known, p } = resolveFitTrend(samples, options.trend);
  let nuFixed: number | undefined;
  let nuFree = false;
  if (options.family === 'matern') {
    if (options.nu === 'free') nuFree = true;
    else if (options.nu === undefined) nuFixed = 1.5;
    else if (typeof options.nu === 'number' && Number.isFinite(options.nu) && options.nu > 0) nuFixed = options.nu;
    else throw new GapwiseError('bad-option', `Expected nu to be a positive number or "free", got ${JSON.stringify(options.nu)}.`);
  }
  const starts = options.starts ?? 3;
  if (!(Number.isInteger(starts) && starts >= 1 && starts <= 27)) {
    throw new GapwiseError('bad-option', `Expected starts to be a whole number from 1 to 27, got ${JSON.stringify(options.starts)}.`);
  }
  if (options.anisotropy !== undefined) {
    const a = options.anisotropy;
    if (!Number.isFinite(a.azimuth) || !(a.ratio > 0 && a.ratio <= 1)) {
      throw new GapwiseError('bad-option', `Expected anisotropy with a finite azimuth and a ratio in (0, 1], got ${JSON.stringify(a)}.`);
    }
  }
  if (options.maxEvaluations !== undefined && !(Number.isInteger(options.maxEvaluations) && options.maxEvaluations >= 1)) {
    throw new GapwiseError('bad-option', `Expected maxEvaluations to be a positive whole number, got ${JSON.stringify(options.maxEvaluations)}.`);
  }
  const n = samples.value.length;
  if (samples.x.length !== n || samples.y.length !== n) {
    throw new GapwiseError('bad-value', `Expected x, y and value of equal length, got ${samples.x.length}, ${samples.y.length} and ${n}.`);
  }
  const minimum = p + 2 > 3 ? p + 2 : 3;
  if (n < minimum) {
    throw new GapwiseError('too-few-samples', `Expected at least ${minimum} samples to fit a model${isCovariateTrend(trend) ? ` with ${p} trend coefficients` : p === 3 ? ' with a linear trend' : ''}, got ${n}.`);
  }
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(samples.value[i]) || !Number.isFinite(samples.x[i]) || !Number.isFinite(samples.y[i])) {
      throw new GapwiseError('bad-value', `Expected finite coordinates and values, got ${samples.x[i]}, ${samples.y[i]}, ${samples.value[i]} at sample ${i + 1}.`);
    }
  }
  let same = true;
  for (let i = 1; i < n && same; i++) same = samples.value[i] === samples.value[0];
  if (same) {
    throw new GapwiseError('constant-values', `All ${n} values equal ${samples.value[0]}: there is no variation to model; expected at least two different values.`);
  }
  if ((method === 'reml' || method === 'ml') && n > MAX_EXACT_SAMPLES) {
    throw new GapwiseError('bad-option',
      `Exact ${method.toUpperCase()} fitting is limited to ${MAX_EXACT_SAMPLES.toLocaleString('en-US')} samples, got ${n.toLocaleString('en-US')}; use method "wls" for this many.`);
  }
  return {
    family: options.family, nuFixed, nuFree, method, trend: known ? { known: (trend as { known: number }).known } : trend,
    nugget: options.nugget ?? true, anisotropy: options.anisotropy, starts, p,
  };
}

/** Scale start fractions of the largest distance; the spherical scale is the range itself. */
function scaleStarts(family: Family, maxDistance: number): number[] {
  const f = family === 'spherical' ? [0.15, 0.45, 1.2] : [0.05, 0.15, 0.4];
  return f.map((v) => v * maxDistance);
}

/** Seeded subset of m distinct sample indices (partial Fisher–Yates). */
export function subsetSamples(samples: Samples, m: number, seed: number): Samples {
  const n = samples.value.length;
  const idx = Array.from({ length: n }, (_, i) => i);
  const random = createRandom(seed);
  for (let i = 0; i < m; i++) {
    const j = i + Math.floor(random.uniform() * (n - i));
    [idx[i], idx[j]] = [idx[j], idx[i]];
  }
  const pick = idx.slice(0, m).sort((a, b) => a - b);
  return pickSamples(samples, pick);
}

interface SearchLayout {
  spaces: ParameterSpace[];
  toTheta(x: number[]): CorrelationParameters;
}

function layout(r: Resolved, maxDistance: number): SearchLayout {
  const spaces: ParameterSpace[] = [{ log: true, lower: maxDistance * 1e-3, upper: maxDistance * 10 }];
  if (r.nugget) spaces.push({ log: true, ...NUGGET_RATIO_BOUNDS });
  if (r.nuFree) spaces.push({ log: true, ...NU_BOUNDS });
  return {
    spaces,
    toTheta: (x) => ({
      scale: x[0],
      nuggetRatio: r.nugget ? x[1] : 0,
      nu: r.nuFree ? x[x.length - 1] : undefined,
    }),
  };
}

function negLogLik(lik: Pick<Likelihood, 'evaluate'>, L: SearchLayout, allowJitter: boolean, tick?: () => void): (x: number[]) => number {
  if (!tick) return (x) => -lik.evaluate(L.toTheta(x), { allowJitter }).logLikelihood;
  return (x) => {
    const v = -lik.evaluate(L.toTheta(x), { allowJitter }).logLikelihood;
    tick();
    return v;
  };
}

/** Progress of a fit: the work done and the work in all (likelihood evaluations, or stages). */
export type FitProgress = (done: number, total: number) => void;

/** Most evaluations newtonRefine makes in d parameters: 1 + (2d + d(d−1)/2 + 1) + 3·(d + 1). */
function newtonBudget(d: number): number {
  return 5 + 5 * d + (d * (d - 1)) / 2;
}

/**
 * Counts likelihood evaluations for a progress callback, against the budget still ahead: the rest
 * of the current stage's budget, the budgets of the stages after it and the final evaluation. A
 * stage that ends early (converged) or is skipped gives its unused budget back, and `cap` only
 * lowers budgets of later stages, so the total only shrinks and done/total only grows; `finish`
 * counts the final evaluation and reports done = total. `goTo(k)` starts stage k (k only grows).
 */
function evaluationCounter(onProgress: FitProgress, budgetsIn: number[]) {
  const budgets = budgetsIn.slice();
  let done = 0;
  let stage = 0;
  let stageEnd = budgets[0] ?? 0;
  let later = budgets.reduce((a, b) => a + b, 0) - (budgets[0] ?? 0);
  return {
    tick: () => {
      done++;
      onProgress(done, done + Math.max(0, stageEnd - done) + later + 1);
    },
    goTo: (k: number) => {
      for (let i = stage + 1; i <= k && i < budgets.length; i++) later -= budgets[i];
      stage = k;
      stageEnd = done + (budgets[k] ?? 0);
    },
    /** Lowers the budgets of stages `from` to `to` not yet started to at most `max`. */
    cap: (from: number, to: number, max: number) => {
      for (let i = Math.max(from, stage + 1); i <= to && i < budgets.length; i++) {
        if (budgets[i] > max) {
          later -= budgets[i] - max;
          budgets[i] = max;
        }
      }
    },
    finish: () => {
      done++;
      onProgress(done, done);
    },
  };
}

/** Flags parameters that ended within 1 % (log scale) of a bound. */
function boundWarnings(x: number[], L: SearchLayout, r: Resolved): FitWarning[] {
  const out: FitWarning[] = [];
  const near = (v: number, b: number | undefined) => b !== undefined && b > 0 && Math.abs(Math.log(v / b)) < 0.01;
  const [scaleSpace] = L.spaces;
  if (near(x[0], scaleSpace.upper)) {
    out.push({ code: 'scale-at-bound', message: `The scale reached its upper limit (${fmt(scaleSpace.upper!)} m, 10 × the largest sample distance): the data may hold a trend or the correlation length exceeds the sampled area; consider a linear trend.` });
  }
  if (near(x[0], scaleSpace.lower)) {
    out.push({ code: 'scale-at-bound', message: `The scale reached its lower limit (${fmt(scaleSpace.lower!)} m): the samples show no spatial correlation at their spacing (pure nugget).` });
  }
  if (r.nugget && near(x[1], NUGGET_RATIO_BOUNDS.upper)) {
    out.push({ code: 'nugget-at-bound', message: 'The nugget reached 1,000 × the partial sill: the samples show almost no spatial structure.' });
  }
  if (r.nuFree) {
    const nu = x[x.length - 1];
    if (near(nu, NU_BOUNDS.lower) || near(nu, NU_BOUNDS.upper)) out.push({ code: 'smoothness-at-bound', message: `The smoothness ν reached its limit (${fmt(nu)}; allowed ${NU_BOUNDS.lower}–${NU_BOUNDS.upper}).` });
  }
  return out;
}

function fmt(v: number): string {
  return Number(v.toPrecision(4)).toLocaleString('en-US');
}

function parameterCount(r: Resolved): number {
  return 2 + (r.nugget ? 1 : 0) + (r.nuFree ? 1 : 0) + r.p;
}

function buildModel(r: Resolved, scale: number, nu: number | undefined, sill: number, nugget: number, fit: FitInfo): CovarianceModel {
  const structures: Structure[] = [];
  if (r.nugget) structures.push({ type: 'nugget', sill: nugget });
  const s: Structure = { type: r.family, sill, scale };
  if (r.family === 'matern') s.nu = nu ?? r.nuFixed ?? 1.5;
  structures.push(s);
  const model: CovarianceModel = { structures, trend: r.trend, transform: 'none', fit };
  if (r.anisotropy) model.anisotropy = { ...r.anisotropy };
  model.practicalRange = practicalRange(model);
  return model;
}

/** Likelihood evaluations and optimiser iterations of a fit, as its fit details report them. */
interface Tally {
  iterations: number;
  /** Evaluations of the exact likelihood on all samples. */
  evaluations: number;
  /** Evaluations on the screening subset or of the nearest-neighbour likelihood. */
  screenEvaluations: number;
}

type Point = { x: number[]; value: number; converged: boolean };

/** The progress counter of a likelihood fit and the first stage of the screening ones. */
interface Progression {
  counter?: ReturnType<typeof evaluationCounter>;
  tick?: () => void;
  /** Stage index of the ranking that opens the screening stages. */
  rank: number;
}

/**
 * Screened fits (above SCREEN_ABOVE samples): the optima found on the subset are ranked on the next
 * stage and the best is polished on all samples. Above MID_ABOVE samples the nearest-neighbour
 * likelihood of all samples (./vecchia.ts, 30 neighbours: its optimum lies within a few per cent of
 * the exact one, at about 1/100 of the cost of an exact evaluation) takes the optimum most of the way
 * and Newton steps on the exact likelihood finish (Nelder–Mead when they do not converge); up to
 * MID_ABOVE samples the screened optima are polished on all samples directly.
 */
function polishScreened(
  samples: Samples, setup: LikelihoodSetup, L: SearchLayout, allowJitter: boolean, fFull: (x: number[]) => number,
  candidates: Point[], fallback: number[], tally: Tally, progression: Progression, maxEvaluations?: number,
): Point {
  const { counter, tick, rank } = progression;
  const d = L.spaces.length;
  const near = samples.value.length > MID_ABOVE;
  const fTolerance = (scaleOf: number) => 1e-3 / Math.max(1, Math.abs(scaleOf));
  const nearLik = near ? createVecchiaLikelihood(samples, { ...setup, neighbours: NEAR_NEIGHBOURS }) : undefined;
  const fStage = nearLik ? negLogLik(nearLik, L, allowJitter, tick) : fFull;
  counter?.goTo(rank);
  let best: Point | undefined;
  let top = { x: candidates[0].x, value: Infinity };
  for (const c of candidates) {
    const v = fStage(c.x);
    if (nearLik) tally.screenEvaluations++;
    else tally.evaluations++;
    if (v < top.value) top = { x: c.x, value: v };
  }
  if (!Number.isFinite(top.value)) top = { x: fallback, value: fStage(fallback) };
  let step = 0.2;
  counter?.goTo(rank + 1);
  if (nearLik) {
    const res = minimiseBounded(fStage, top.x, L.spaces, {
      step: 0.2, restarts: 0, xTolerance: 0.01, fTolerance: fTolerance(top.value), maxEvaluations: maxEvaluations ?? 80 * d,
    });
    tally.iterations += res.iterations;
    tally.screenEvaluations += res.evaluations;
    counter?.goTo(rank + 2);
    const refined = newtonRefine(fFull, res.x, L.spaces);
    tally.iterations += refined.iterations;
    tally.evaluations += refined.evaluations;
    top = { x: refined.x, value: refined.value };
    if (refined.converged) best = { x: refined.x, value: refined.value, converged: true };
    step = 0.1;
  }
  counter?.goTo(rank + 3);
  if (!best) {
    const res = minimiseBounded(fFull, top.x, L.spaces, {
      step, restarts: 0, xTolerance: 0.02, fTolerance: fTolerance(top.value), maxEvaluations: maxEvaluations ?? 80 * d,
    });
    tally.iterations += res.iterations;
    tally.evaluations += res.evaluations;
    best = res.value <= top.value || !Number.isFinite(top.value)
      ? { x: res.x, value: res.value, converged: res.converged }
      : { x: top.x, value: top.value, converged: res.converged };
  }
  return best;
}

/** The model at the optimum x, with its fit details and warnings (not converged, a bound reached, jitter). */
function likelihoodModel(r: Resolved, lik: Likelihood, L: SearchLayout, best: Point, final: LikelihoodValue, tally: Tally): CovarianceModel {
  const theta = L.toTheta(best.x);
  const warnings: FitWarning[] = [];
  if (!best.converged) warnings.push({ code: 'optimiser-stopped', message: `The optimiser stopped before meeting its tolerance (${tally.evaluations} likelihood evaluations); the fit may be improved by more starts.` });
  warnings.push(...boundWarnings(best.x, L, r));
  if (final.jitter > 0) warnings.push({ code: 'jitter', message: `The correlation matrix was not numerically positive definite; ${final.jitter.toExponential(0)} was added to its diagonal (consider a nugget).` });
  const k = parameterCount(r);
  const fit: FitInfo = {
    method: r.method, logLikelihood: final.logLikelihood, aic: 2 * k - 2 * final.logLikelihood, converged: best.converged,
    iterations: tally.iterations, n: lik.n, warnings, parameters: k, evaluations: tally.evaluations, screenEvaluations: tally.screenEvaluations,
    trendCoefficients: final.beta, centre: lik.centre,
  };
  const sill = final.sigma2;
  return buildModel(r, theta.scale, theta.nu, sill, theta.nuggetRatio * sill, fit);
}

/** REML or ML: multi-start Nelder–Mead on the profiled likelihood. */
function fitByLikelihood(samples: Samples, r: Resolved, maxEvaluations?: number, onProgress?: FitProgress): CovarianceModel {
  const method = r.method as 'reml' | 'ml';
  const setup = { family: r.family, nu: r.nuFixed, trend: r.trend, anisotropy: r.anisotropy, method };
  const lik = createLikelihood(samples, setup);
  if (!(lik.maxDistance > 0)) {
    throw new GapwiseError('too-few-samples', `Expected samples at two or more distinct places, got all ${lik.n} at one place.`);
  }
  const L = layout(r, lik.maxDistance);
  const allowJitter = !r.nugget;
  const n = lik.n;
  const screening = n > SCREEN_ABOVE;
  const screen = screening ? createLikelihood(subsetSamples(samples, SCREEN_SIZE, 20240611), setup) : lik;

  // Grid of starts, ranked on the screening likelihood.
  const etas = r.nugget ? [0.01, 0.1, 0.5] : [0];
  const nus = r.nuFree ? [0.5, 1.5, 2.5] : [undefined];
  const grid: { x: number[]; value: number }[] = [];
  const scales = scaleStarts(r.family, lik.maxDistance);
  const d = L.spaces.length;
  const near = screening && n > MID_ABOVE;
  // Stages, in order: starts grid, optimiser runs from the best starts, then when screening the
  // ranking on the next stage, the nearest-neighbour run and Newton steps, and the last run.
  const starts = Math.min(r.starts, scales.length * etas.length * nus.length);
  // Stage 0 the grid, 1..starts the optimiser runs (after the first, the others are expected to
  // take at most twice its evaluations), then the screening stages from RANK on.
  const RANK = starts + 1;
  const counter = onProgress ? evaluationCounter(onProgress, [
    scales.length * etas.length * nus.length, ...new Array<number>(starts).fill(maxEvaluations ?? 150 * d),
    ...(screening ? [starts, near ? maxEvaluations ?? 80 * d : 0, near ? newtonBudget(d) : 0, maxEvaluations ?? 80 * d] : []),
  ]) : undefined;
  const tick = counter?.tick;
  const fScreen = negLogLik(screen, L, allowJitter, tick);
  for (const scale of scales) {
    for (const eta of etas) {
      for (const nu of nus) {
        const x = [scale];
        if (r.nugget) x.push(eta);
        if (nu !== undefined) x.push(nu);
        grid.push({ x, value: fScreen(x) });
      }
    }
  }
  grid.sort((a, b) => a.value - b.value);
  if (!Number.isFinite(grid[0].value)) {
    throw new GapwiseError('fit-failed', `No starting value gave a finite likelihood for the ${r.family} model (${n} samples): ${numericalFailureAdvice(samples.x, samples.y, samples.value)}.`);
  }
  const tally: Tally = { iterations: 0, evaluations: grid.length * (screening ? 0 : 1), screenEvaluations: screening ? grid.length : 0 };
  const fFull = negLogLik(lik, L, allowJitter, tick);
  // Absolute tolerance on ℓ of about 1e-3 (immaterial next to AIC differences; a parameter error of
  // a few per cent of its standard error), relative to its size.
  const fTolerance = (scaleOf: number) => 1e-3 / Math.max(1, Math.abs(scaleOf));

  const candidates: Point[] = [];
  for (const start of grid.slice(0, r.starts)) {
    if (!Number.isFinite(start.value)) break;
    counter?.goTo(candidates.length + 1);
    const res = minimiseBounded(fScreen, start.x, L.spaces, {
      step: 0.7, restarts: screening ? 0 : 1, xTolerance: screening ? 0.1 : 0.01,
      fTolerance: screening ? 1e-2 / Math.max(1, Math.abs(start.value)) : fTolerance(start.value), maxEvaluations: maxEvaluations ?? 150 * d,
    });
    tally.iterations += res.iterations;
    if (screening) tally.screenEvaluations += res.evaluations;
    else tally.evaluations += res.evaluations;
    candidates.push({ x: res.x, value: res.value, converged: res.converged });
    if (candidates.length === 1) counter?.cap(2, starts, 2 * res.evaluations);
  }

  const best = screening
    ? polishScreened(samples, setup, L, allowJitter, fFull, candidates, grid[0].x, tally, { counter, tick, rank: RANK }, maxEvaluations)
    : candidates.sort((a, b) => a.value - b.value)[0];
  if (!Number.isFinite(best.value)) {
    throw new GapwiseError('fit-failed', `The optimiser found no finite likelihood for the ${r.family} model (${n} samples): ${numericalFailureAdvice(samples.x, samples.y, samples.value)}.`);
  }
  const final = lik.evaluate(L.toTheta(best.x), { allowJitter });
  counter?.finish();
  return likelihoodModel(r, lik, L, best, final, tally);
}

/** Residuals from an ordinary least-squares plane in centred coordinates (for the WLS variogram). */
function planeResiduals(samples: Samples): Float64Array {
  const n = samples.value.length;
  const { cx, cy } = centroid(samples.x, samples.y);
  const A = new Float64Array(9);
  const b = new Float64Array(3);
  const row = new Float64Array(3);
  for (let i = 0; i < n; i++) {
    row[0] = 1;
    row[1] = samples.x[i] - cx;
    row[2] = samples.y[i] - cy;
    for (let r = 0; r < 3; r++) {
      b[r] += row[r] * samples.value[i];
      for (let c = 0; c < 3; c++) A[r * 3 + c] += row[r] * row[c];
    }
  }
  if (!choleskyInPlace(A, 3)) {
    throw new GapwiseError('too-few-samples', `Expected samples that do not all lie on one line to fit a linear trend, got ${n} collinear samples.`);
  }
  solveLowerInPlace(A, 3, b);
  for (let i = 2; i >= 0; i--) {
    let s = b[i];
    for (let k = i + 1; k < 3; k++) s -= A[k * 3 + i] * b[k];
    b[i] = s / A[i * 3 + i];
  }
  const res = new Float64Array(n);
  for (let i = 0; i < n; i++) res[i] = samples.value[i] - b[0] - b[1] * (samples.x[i] - cx) - b[2] * (samples.y[i] - cy);
  return res;
}

/** Coordinates in which plain distance is the anisotropic effective distance (covariance.ts). */
function isotropicFrame(samples: Samples, values: Float64Array, anisotropy?: Anisotropy): Samples {
  const { cx, cy } = centroid(samples.x, samples.y);
  const { u, v } = toIsotropicCoordinates(anisotropy, samples.x, samples.y, cx, cy);
  return { x: u, y: v, value: values };
}

/** Options of a variogram-only fit (plain data). */
export interface LagCurveFitOptions {
  family: Family;
  /** Fixed Matérn smoothness (default 1.5) or 'free' (in [0.2, 5]). */
  nu?: number | 'free';
  /** Fit a nugget (default true). */
  nugget?: boolean;
  /** Largest sample distance, metres, for the scale's starts and bounds; default twice the last lag. */
  maxDistance?: number;
  /** Evaluation budget of the joint search; default 2,000 per parameter. */
  maxEvaluations?: number;
}

export interface LagCurveFit {
  family: Family;
  nu?: number;
  nugget: number;
  /** Partial sill of the correlated structure. */
  sill: number;
  scale: number;
  /** Σ N_j[γ̂(h_j)/γ(h_j)− 1]² at the result. */
  criterion: number;
  converged: boolean;
  iterations: number;
}

/** An empirical lag as fitToEmpiricalLags needs it (variogram.ts VariogramLag fits). */
export interface LagPoint {
  distance: number;
  semivariance: number;
  pairs: number;
}

/**
 * Weighted least squares fit of γ(h) = nugget + sill·(1 − ρ(h; scale, ν)) to empirical lags with
 * Cressie's (1985) criterion Σ N_j[γ̂(h_j)/γ(h_j; θ) − 1]². For each trial shape (scale, ν) the
 * nugget and sill come from iteratively reweighted linear least squares (weights N_j/γ_j² from the
 * previous pass; nugget ≥ 0); the best shape then seeds a joint Nelder–Mead search of the exact
 * criterion over (scale, sill, √nugget[, ν]). Lags at zero distance are ignored.
 */
export function fitToEmpiricalLags(lagsIn: ReadonlyArray<LagPoint>, options: LagCurveFitOptions): LagCurveFit {
  if (!FAMILIES.has(options.family)) {
    throw new GapwiseError('bad-option', `Expected the family to be matern, exponential, spherical or gaussian, got ${JSON.stringify(options.family)}.`);
  }
  const nuFree = options.family === 'matern' && options.nu === 'free';
  const nuFixed = options.family === 'matern' && !nuFree ? (typeof options.nu === 'number' ? options.nu : 1.5) : undefined;
  const withNugget = options.nugget ?? true;
  const lags = lagsIn.filter((l) => l.distance > 0 && l.pairs > 0 && Number.isFinite(l.semivariance) && l.semivariance >= 0);
  const m = lags.length;
  if (m < 2) {
    throw new GapwiseError('too-few-samples', `Expected at least 2 non-empty lag classes to fit a variogram, got ${m}; add samples or widen the lags.`);
  }
  const h = lags.map((l) => l.distance);
  const g = lags.map((l) => l.semivariance);
  const N = lags.map((l) => l.pairs);
  const gMax = Math.max(...g);
  if (!(gMax > 0)) {
    throw new GapwiseError('constant-values', 'Every lag of the empirical variogram is zero: there is no variation to model; expected some differences between samples.');
  }
  const family = options.family;
  const rise = new Float64Array(m);
  const fillRise = (scale: number, nu?: number) => {
    const s = { type: family, sill: 1, scale, nu: nu ?? nuFixed ?? 1.5 };
    for (let j = 0; j < m; j++) rise[j] = 1 - correlation(s, h[j]);
  };
  const cressie = (nugget: number, sill: number) => {
    let S = 0;
    for (let j = 0; j < m; j++) {
      const model = nugget + sill * rise[j];
      if (!(model > 0)) return Infinity;
      S += N[j] * (g[j] / model - 1) ** 2;
    }
    return S;
  };
  // For a fixed shape γ is linear in (nugget, sill): weighted least squares with weights N_j/γ_j²,
  // γ_j from the previous pass (the empirical values first), nugget ≥ 0 and sill > 0 enforced.
  const prev = new Float64Array(m);
  const linear = (): { nugget: number; sill: number } => {
    let nugget = 0;
    let sill = gMax;
    for (let j = 0; j < m; j++) prev[j] = Math.max(g[j], 1e-12 * gMax);
    for (let pass = 0; pass < 6; pass++) {
      let sw = 0, swr = 0, swrr = 0, swg = 0, swrg = 0;
      for (let j = 0; j < m; j++) {
        const w = N[j] / (prev[j] * prev[j]);
        sw += w; swr += w * rise[j]; swrr += w * rise[j] * rise[j]; swg += w * g[j]; swrg += w * rise[j] * g[j];
      }
      const det = sw * swrr - swr * swr;
      let a = 0;
      let c = swrg / swrr;
      if (withNugget && det > 1e-12 * sw * swrr) {
        a = (swrr * swg - swr * swrg) / det;
        c = (sw * swrg - swr * swg) / det;
        if (a < 0) { a = 0; c = swrg / swrr; }
      }
      if (!(c > 0)) { c = 1e-6 * gMax; a = withNugget ? Math.max(0, (swg - c * swr) / sw) : 0; }
      nugget = a;
      sill = c;
      for (let j = 0; j < m; j++) prev[j] = Math.max(a + c * rise[j], 1e-12 * gMax);
    }
    return { nugget, sill };
  };

  const maxDistance = options.maxDistance ?? 2 * Math.max(...h);
  const shapeSpaces: ParameterSpace[] = [{ log: true, lower: maxDistance * 1e-3, upper: maxDistance * 10 }];
  if (nuFree) shapeSpaces.push({ log: true, ...NU_BOUNDS });
  const shapeObjective = (x: number[]) => {
    fillRise(x[0], nuFree ? x[1] : undefined);
    const { nugget, sill } = linear();
    return cressie(nugget, sill);
  };
  let iterations = 0;
  let stage1 = { x: [0], value: Infinity };
  for (const scale of scaleStarts(family, maxDistance)) {
    for (const nu of nuFree ? [0.5, 1.5, 2.5] : [undefined]) {
      const x0 = nu === undefined ? [scale] : [scale, nu];
      const res = minimiseBounded(shapeObjective, x0, shapeSpaces, { step: 0.5, restarts: 1, xTolerance: 1e-6, fTolerance: 1e-12 });
      iterations += res.iterations;
      if (res.value < stage1.value) stage1 = { x: res.x, value: res.value };
    }
  }
  fillRise(stage1.x[0], nuFree ? stage1.x[1] : undefined);
  const lin = linear();
  // Joint search of the exact criterion over (scale, sill, √nugget[, ν]); √nugget lets the nugget reach 0.
  const spaces: ParameterSpace[] = [shapeSpaces[0], { log: true, lower: 1e-9 * gMax, upper: 1e3 * gMax }];
  const x0 = [stage1.x[0], lin.sill];
  if (withNugget) { spaces.push({}); x0.push(Math.sqrt(lin.nugget)); }
  if (nuFree) { spaces.push(shapeSpaces[1]); x0.push(stage1.x[1]); }
  const joint = (x: number[]) => {
    fillRise(x[0], nuFree ? x[x.length - 1] : undefined);
    return cressie(withNugget ? x[2] * x[2] : 0, x[1]);
  };
  const steps = x0.map((v, i) => (i === 2 && withNugget ? Math.max(0.05 * Math.sqrt(gMax), 0.2 * v) : 0.3));
  const polish = minimiseBounded(joint, x0, spaces, {
    step: steps, restarts: 2, xTolerance: 1e-8, fTolerance: 1e-12, maxEvaluations: options.maxEvaluations ?? 2000 * x0.length,
  });
  iterations += polish.iterations;
  const useJoint = polish.value <= stage1.value;
  const result: LagCurveFit = {
    family,
    nugget: withNugget ? (useJoint ? polish.x[2] ** 2 : lin.nugget) : 0,
    sill: useJoint ? polish.x[1] : lin.sill,
    scale: useJoint ? polish.x[0] : stage1.x[0],
    criterion: Math.min(polish.value, stage1.value),
    converged: polish.converged,
    iterations,
  };
  if (family === 'matern') result.nu = nuFree ? (useJoint ? polish.x[polish.x.length - 1] : stage1.x[1]) : nuFixed;
  return result;
}

/** WLS on the empirical variogram (of plane residuals for a linear trend), then the REML likelihood there. */
function fitByWls(samples: Samples, r: Resolved, variogramOptions: VariogramOptions, maxEvaluations?: number, onProgress?: FitProgress): CovarianceModel {
  const n = samples.value.length;
  const values = isCovariateTrend(r.trend) ? leastSquaresResiduals(samples, r.trend)
    : r.p === 3 ? planeResiduals(samples) : Float64Array.from(samples.value);
  const v = empiricalVariogram(isotropicFrame(samples, values, r.anisotropy), variogramOptions);
  // Progress in three stages: the empirical variogram, the least-squares search, the likelihood.
  onProgress?.(1, 3);
  const w = fitToEmpiricalLags(v.lags, {
    family: r.family, nu: r.nuFree ? 'free' : r.nuFixed, nugget: r.nugget, maxDistance: v.maxDistance, maxEvaluations,
  });
  onProgress?.(2, 3);
  const { scale, sill, nugget, nu } = w;
  const warnings: FitWarning[] = v.warnings.map((x) => fitWarning(x as FitWarning));
  if (!w.converged) warnings.push({ code: 'optimiser-stopped', message: 'The weighted least-squares search stopped before meeting its tolerance.' });
  const L = layout(r, v.maxDistance);
  const xEnd = [scale];
  if (r.nugget) xEnd.push(Math.max(nugget / sill, NUGGET_RATIO_BOUNDS.lower));
  if (r.nuFree) xEnd.push(nu!);
  warnings.push(...withoutFitWarnings(boundWarnings(xEnd, L, r), 'nugget-at-bound'));
  const k = parameterCount(r);
  const fit: FitInfo = {
    method: 'wls', converged: w.converged, iterations: w.iterations, n, warnings, parameters: k,
    wlsCriterion: w.criterion, lags: v.lags.length, variogram: v.options,
  };
  if (n <= MAX_EXACT_SAMPLES) {
    const lik = createLikelihood(samples, { family: r.family, nu: r.nuFixed, trend: r.trend, anisotropy: r.anisotropy, method: 'reml' });
    const value = lik.evaluate({ scale, nuggetRatio: nugget / sill, nu: r.nuFree ? nu : undefined }, { sigma2: sill, allowJitter: true });
    fit.trendCoefficients = value.beta;
    fit.centre = lik.centre;
    if (value.jitter > 0 || !Number.isFinite(value.logLikelihood)) {
      // With values added to the diagonal the likelihood is that of another model: none is reported
      // rather than a number that does not describe this fit.
      warnings.push({ code: 'no-likelihood', message: 'No likelihood reported: at the least-squares parameters the samples\' correlations are too close to singular (almost no nugget with a smooth, long-range model); compare this fit by its cross-validation instead.' });
    } else {
      fit.likelihoodMethod = 'reml';
      fit.logLikelihood = value.logLikelihood;
      fit.aic = 2 * k - 2 * value.logLikelihood;
    }
  } else {
    warnings.push({ code: 'no-likelihood', message: `No likelihood reported: the exact likelihood is limited to ${MAX_EXACT_SAMPLES.toLocaleString('en-US')} samples.` });
  }
  onProgress?.(3, 3);
  return buildModel(r, scale, nu, sill, nugget, fit);
}

/**
 * Fits one covariance model to the samples and returns it as the model JSON, with `fit`
 * (method, logLikelihood, aic, converged, iterations, n, warnings, …) and `practicalRange`.
 * Throws GapwiseError 'too-few-samples' (n < 3, or n < 5 with a linear trend), 'constant-values'
 * (all values identical), 'bad-option' or 'fit-failed'. Non-convergence is a warning in fit.warnings.
 *
 * `onProgress(done, total)`, when given, is called as the work goes: for REML/ML after every
 * likelihood evaluation, with the evaluations done and those done plus the budget still ahead (the
 * total shrinks when a search converges before its budget; done/total only grows), for WLS after
 * each of three stages; the last call has done = total. It never changes the result.
 */
export function fitModel(samples: Samples, options: FitOptions, onProgress?: FitProgress): CovarianceModel {
  const r = resolve(samples, options);
  let model = r.method === 'wls'
    ? fitByWls(samples, r, options.variogram ?? {}, options.maxEvaluations, onProgress)
    : fitByLikelihood(samples, r, options.maxEvaluations, onProgress);
  if (options.tolerance !== undefined && options.tolerance < 1e-3) model = polishLikelihoodFit(samples, model, options.tolerance, r.nuFree);
  return isCovariateTrend(model.trend) ? attachTrendCoefficients(samples, model) : model;
}

/**
 * The standard candidates: exponential (which is Matérn ν = ½: the same correlation, so it is listed
 * once), Matérn ν = 3/2, 5/2 and free ν; spherical; gaussian.
 */
export const CANDIDATES: ReadonlyArray<{ family: Family; nu?: number | 'free' }> = [
  { family: 'exponential' }, { family: 'matern', nu: 1.5 }, { family: 'matern', nu: 2.5 }, { family: 'matern', nu: 'free' },
  { family: 'spherical' }, { family: 'gaussian' },
];

/**
 * Fits every standard candidate with the same options and returns them sorted by AIC (best first).
 * A candidate that cannot be fitted ('fit-failed', 'not-positive-definite') is left out and named in
 * the warnings of every returned model; input errors are thrown as by fitModel.
 * `onProgress(done, total)` counts candidates (total = CANDIDATES.length), a fractional `done`
 * while one is being fitted; it only grows and ends at the total.
 */
export function fitCandidates(samples: Samples, options: Omit<FitOptions, 'family' | 'nu'> = {}, onProgress?: FitProgress): CovarianceModel[] {
  const models: CovarianceModel[] = [];
  const failures: FitWarning[] = [];
  const total = CANDIDATES.length;
  let shown = 0;
  const report = (done: number) => {
    if (done > shown) {
      shown = done;
      onProgress!(done, total);
    }
  };
  for (let i = 0; i < total; i++) {
    const c = CANDIDATES[i];
    try {
      const inner = onProgress ? (d: number, t: number) => report(i + Math.min(1, d / t)) : undefined;
      models.push(fitModel(samples, { ...options, family: c.family, nu: c.nu }, inner));
    } catch (e) {
      if (e instanceof GapwiseError && (e.code === 'fit-failed' || e.code === 'not-positive-definite')) {
        failures.push({ code: 'candidate-failed', message: `The ${c.family}${c.nu !== undefined ? ` (ν ${c.nu})` : ''} candidate could not be fitted: ${e.message}` });
      } else {
        throw e;
      }
    }
    if (onProgress) report(i + 1);
  }
  if (models.length === 0) throw new GapwiseError('fit-failed', `None of the ${CANDIDATES.length} candidate models could be fitted. ${failures.map((f) => f.message).join(' ')}`);
  for (const m of models) m.fit!.warnings = [...(m.fit!.warnings ?? []), ...failures];
  const aic = (m: CovarianceModel) => (typeof m.fit?.aic === 'number' && Number.isFinite(m.fit.aic) ? m.fit.aic : Infinity);
  return models.sort((a, b) => aic(a) - aic(b));
}
