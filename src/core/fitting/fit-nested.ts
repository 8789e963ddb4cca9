/**
 * Fits two correlated structures of one family (a short and a long scale) plus a nugget by
 * likelihood, and keeps the simpler one-structure model when the two are not identifiable.
 *
 * Model: C(h) = σ²·[w·ρ(h; s₁) + (1 − w)·ρ(h; s₂)] + nugget, s₁ < s₂, 0 < w < 1 the short
 * structure's share of the partial sill σ²; σ² profiled out (likelihood.ts), searched over
 * (s₂, s₂/s₁, w, η), s₂ at most 10 × the samples' extent.
 * Method: the one-structure fit comes first (fit.ts fitModel); starts are its point split into two
 * nearly equal scales (the one-structure model as a limit of the nested one) and short/long pairs
 * around its scale; the search is fit-search.ts. A fixed anisotropy applies to both structures.
 * The identifiability guard keeps the one-structure model, with a warning naming the reason, when
 * the fitted scales lie within MERGE_RATIO of each other (the structures merge), when one carries
 * less than MIN_SHARE of the partial sill (its sill goes to zero), or when the second structure does
 * not lower the AIC (three more parameters for no gain).
 * Units: metres, data units squared. Cost: the one-structure fit plus about 30–60 likelihood
 * evaluations on all samples (n³/3 flops each) and a few hundred on a 200-sample subset.
 */
import type { CovarianceModel, CorrelatedStructure, FitInfo, Structure } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import type { FitOptions, FitProgress } from './fit.ts';
import type { CorrelationParameters, LikelihoodSetup } from './likelihood.ts';
import type { SearchParameter } from './fit-search.ts';
import type { FitComparisonRow } from './fit-anisotropy.ts';
import { GapwiseError } from '../shared/errors.ts';
import { fitWarnings, withoutFitWarnings, type FitWarning } from '../covariance/fit-warnings.ts';
import { fitModel } from './fit.ts';
import { practicalRange } from '../covariance/covariance.ts';
import { searchLikelihood } from './fit-search.ts';

/** Scales closer than this factor are one structure. */
export const MERGE_RATIO = 2;
/** A structure with less than this share of the partial sill has gone to zero. */
export const MIN_SHARE = 0.02;

export interface NestedFit {
  /** The model kept: two structures when identifiable, else the one-structure fit. */
  model: CovarianceModel;
  single: CovarianceModel;
  /** The two-structure model at the likelihood optimum, kept or not. */
  nested: CovarianceModel;
  comparison: FitComparisonRow[];
  /** Why the two-structure model was not kept; absent when it was. */
  notIdentifiable?: 'merged' | 'vanishing-sill' | 'no-gain';
}

/**
 * The structures of a two-range model: the nugget (when fitted), then the short structure with
 * `shortShare` of the sill at `scale` and the long one with the rest at `scale · spread`.
 */
export function nestedStructures(
  family: CorrelatedStructure['type'], nu: number | undefined, withNugget: boolean,
  t: { scale: number; spread: number; shortShare: number }, sill: number, nugget: number,
): Structure[] {
  const out: Structure[] = [];
  if (withNugget) out.push({ type: 'nugget', sill: nugget });
  const a: CorrelatedStructure = { type: family, sill: sill * t.shortShare, scale: t.scale };
  const b: CorrelatedStructure = { type: family, sill: sill * (1 - t.shortShare), scale: t.scale * t.spread };
  if (nu !== undefined) { a.nu = nu; b.nu = nu; }
  out.push(a, b);
  return out;
}

interface NestedParameters extends CorrelationParameters {
  /** s₂ / s₁ ≥ 1. */
  spread: number;
  /** w, the short structure's share of the partial sill. */
  shortShare: number;
}

/** Diagonal of the samples' bounding box, metres. */
export function extentDiagonal(samples: Samples): number {
  let xmin = Infinity, xmax = -Infinity, ymin = Infinity, ymax = -Infinity;
  for (let i = 0; i < samples.x.length; i++) {
    xmin = Math.min(xmin, samples.x[i]); xmax = Math.max(xmax, samples.x[i]);
    ymin = Math.min(ymin, samples.y[i]); ymax = Math.max(ymax, samples.y[i]);
  }
  return Math.hypot(xmax - xmin, ymax - ymin);
}

function fmt(v: number): string {
  return Number(v.toPrecision(3)).toLocaleString('en-US');
}

/**
 * The identifiability guard of a two-structure fit: 'merged' when the scales s₁ and s₁·spread lie
 * within MERGE_RATIO, 'vanishing-sill' when a structure carries less than MIN_SHARE of the partial
 * sill, 'no-gain' when its AIC is not below the simpler model's (`simpler` names it in the reason);
 * undefined when the two structures are identifiable.
 */
export function nestedGuard(
  shortScale: number, spread: number, shortShare: number, aic: number, simplerAic: number, simpler: string,
): { notIdentifiable?: 'merged' | 'vanishing-sill' | 'no-gain'; reason: string } {
  const minorShare = Math.min(shortShare, 1 - shortShare);
  if (spread < MERGE_RATIO) {
    return { notIdentifiable: 'merged', reason: `the two fitted scales (${fmt(shortScale)} m and ${fmt(shortScale * spread)} m) lie within a factor ${MERGE_RATIO} of each other, so they describe one structure` };
  }
  if (minorShare < MIN_SHARE) {
    return { notIdentifiable: 'vanishing-sill', reason: `the ${shortShare < 0.5 ? 'short' : 'long'} structure carries ${fmt(100 * minorShare)} % of the partial sill (expected at least ${100 * MIN_SHARE} %), so its sill goes to zero` };
  }
  if (!(aic < simplerAic)) {
    return { notIdentifiable: 'no-gain', reason: `the second structure does not lower the AIC (${aic.toFixed(2)} against ${simplerAic.toFixed(2)} with ${simpler})` };
  }
  return { reason: '' };
}

/**
 * Fits the one-structure model and the two-structure one with the same options (REML default, or
 * ML; a fixed Matérn ν applies to both structures) and applies the identifiability guard. Throws as
 * fitModel does, and GapwiseError 'bad-option' for method 'wls' or a free ν. `singleFit`, when given,
 * is fitModel's answer for these samples and options, already computed by the caller (it is then not
 * fitted again).
 */
export function fitNested(samples: Samples, options: FitOptions, onProgress?: FitProgress, singleFit?: CovarianceModel): NestedFit {
  const method = options.method ?? 'reml';
  if (method !== 'reml' && method !== 'ml') {
    throw new GapwiseError('bad-option', `Expected the method reml or ml to fit two structures by likelihood, got ${JSON.stringify(method)}.`);
  }
  if (options.family === 'matern' && options.nu === 'free') {
    throw new GapwiseError('bad-option', 'Expected a fixed Matérn ν for two structures (one ν for both), got "free"; give a number such as 1.5.');
  }
  const half = (offset: number): FitProgress | undefined => (onProgress ? (d, t) => onProgress(offset + d / t, 2) : undefined);
  const single = singleFit ?? fitModel(samples, options, half(0));
  const one = single.structures.find((s) => s.type !== 'nugget') as CorrelatedStructure;
  const nuggetStructure = single.structures.find((s) => s.type === 'nugget');
  const withNugget = nuggetStructure !== undefined;
  const nu = options.family === 'matern' ? one.nu : undefined;
  const setup: LikelihoodSetup = { family: options.family, nu, trend: single.trend, anisotropy: options.anisotropy, method };

  // Parameters: s₂ (bounded like fit.ts bounds one scale: 10 × the samples' extent), s₂/s₁, w [, η].
  const reach = extentDiagonal(samples) / (options.anisotropy?.ratio ?? 1);
  const parameters: SearchParameter[] = [
    { log: true, lower: reach * 1e-3, upper: reach * 10, step: 0.7 },
    { log: true, lower: 1, upper: 1e3, step: 0.7 },
    { lower: 1e-3, upper: 1 - 1e-3, step: 0.2 },
  ];
  if (withNugget) parameters.push({ log: true, lower: 1e-6, upper: 1e3, step: 0.7 });
  const eta0 = withNugget ? Math.min(1e3, Math.max(1e-6, nuggetStructure!.sill / Math.max(one.sill, 1e-300))) : 0;
  const toTheta = (x: number[]): NestedParameters => ({ scale: x[0] / x[1], spread: x[1], shortShare: x[2], nuggetRatio: withNugget ? x[3] : 0 });
  const point = (s1: number, spread: number, w: number) => {
    const s2 = Math.min(reach * 10, Math.max(reach * 1e-3, s1 * spread));
    return withNugget ? [s2, spread, w, eta0] : [s2, spread, w];
  };
  // The one-structure optimum is the nested model with equal scales (s₂/s₁ = 1): the anchor.
  const starts: number[][] = [point(one.scale / 1.005, 1.01, 0.5)];
  const anchor = point(one.scale, 1, 0.5);
  for (const f of [5, 3]) for (const spread of [5, 15]) for (const w of [0.3, 0.6]) starts.push(point(one.scale / f, spread, w));
  const structuresAt = (t: NestedParameters, sill: number, nugget: number): Structure[] => nestedStructures(options.family, nu, withNugget, t, sill, nugget);
  const correlationAt = (theta: CorrelationParameters): CovarianceModel => {
    const t = theta as NestedParameters;
    const structures = structuresAt(t, 1, t.nuggetRatio);
    if (!withNugget) structures.unshift({ type: 'nugget', sill: 0 });
    return { structures, trend: 'constant', transform: 'none', anisotropy: options.anisotropy };
  };
  const found = searchLikelihood(samples, setup, correlationAt, {
    parameters, starts, anchor, runs: options.starts ?? 3, toTheta, allowJitter: !withNugget,
  }, { maxEvaluations: options.maxEvaluations, what: `two-structure ${options.family} model` }, half(1));

  const theta = toTheta(found.x);
  const final = found.final;
  const singleParameters = Number(single.fit!.parameters ?? 0);
  const k = singleParameters + 2;
  const aic = 2 * k - 2 * final.logLikelihood;
  const singleAic = single.fit!.aic ?? Infinity;
  const warnings: FitWarning[] = [];
  if (Math.abs(Math.log(found.x[0] / parameters[0].upper!)) < 0.01) {
    warnings.push({ code: 'scale-at-bound', message: `The long scale reached its upper limit (${fmt(parameters[0].upper!)} m, 10 × the samples' extent): the data may hold a trend; consider a linear trend.` });
  }
  if (!found.converged) warnings.push({ code: 'optimiser-stopped', message: `The optimiser stopped before meeting its tolerance (${found.evaluations} likelihood evaluations on all samples).` });
  const sill = final.sigma2;
  const fit: FitInfo = {
    method, logLikelihood: final.logLikelihood, aic, converged: found.converged, iterations: found.iterations,
    n: found.likelihood.n, warnings, parameters: k, evaluations: found.evaluations, screenEvaluations: found.screenEvaluations,
    trendCoefficients: final.beta, centre: found.likelihood.centre,
  };
  const nested: CovarianceModel = { structures: structuresAt(theta, sill, theta.nuggetRatio * sill), trend: single.trend, transform: 'none', fit };
  if (options.anisotropy) nested.anisotropy = { ...options.anisotropy };
  nested.practicalRange = practicalRange(nested);

  const { notIdentifiable, reason } = nestedGuard(theta.scale, theta.spread, theta.shortShare, aic, singleAic, 'one structure');
  const comparison: FitComparisonRow[] = [
    { label: 'one structure', logLikelihood: single.fit!.logLikelihood ?? -Infinity, aic: singleAic, parameters: singleParameters, chosen: notIdentifiable !== undefined },
    { label: 'two structures', logLikelihood: final.logLikelihood, aic, parameters: k, chosen: notIdentifiable === undefined },
  ];
  fit.comparison = comparison;
  if (notIdentifiable) {
    const kept: CovarianceModel = { ...single, fit: { ...single.fit!, comparison, nestedNotIdentifiable: notIdentifiable } };
    kept.fit!.warnings = [...fitWarnings(single.fit),
      { code: 'nested-not-identifiable', message: `Two structures are not identifiable from these samples: ${reason}; the one-structure model is kept.` }];
    return { model: kept, single, nested, comparison, notIdentifiable };
  }
  fit.warnings = [...withoutFitWarnings(single.fit!.warnings, 'optimiser-stopped'), ...warnings];
  return { model: nested, single, nested, comparison };
}
