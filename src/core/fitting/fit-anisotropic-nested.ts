/**
 * Fits two correlated structures of one family (a short and a long scale) plus a nugget with one
 * geometric anisotropy shared by both, all by likelihood, and keeps the simpler anisotropic
 * one-structure model when the two structures are not identifiable.
 *
 * Model: C(h) = σ²·[w·ρ(h'; s₁) + (1 − w)·ρ(h'; s₂)] + nugget, with h' the separation rotated onto the
 * long axis (azimuth) and its across component divided by the ratio (covariance.ts), s₁ < s₂ the
 * scales along the long axis; σ² profiled out (likelihood.ts), searched over
 * (s₂, s₂/s₁, w, η, azimuth, ratio).
 * Method: the two simpler fits come first — one anisotropic structure (fit-anisotropy.ts, which fits
 * the isotropic model before it) and two isotropic structures (fit-nested.ts) — and both optima are
 * points of this model (equal scales; ratio 1), so both are anchors of the search (fit-search.ts):
 * the result's likelihood is at least the larger of theirs. Further starts split the anisotropic
 * scale into short/long pairs at the fitted azimuth and ratio. The identifiability guard of
 * fit-nested.ts (`nestedGuard`) then compares with the one anisotropic structure: scales merged,
 * a vanishing sill or no lower AIC keep that model, with a warning naming the reason.
 * Units: metres, degrees clockwise from grid north. Cost: the two simpler fits plus about 40–80
 * likelihood evaluations on all samples (n³/3 flops each) and a few hundred on a 200-sample subset.
 */
import type { CovarianceModel, CorrelatedStructure, FitInfo, Structure } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import type { FitOptions, FitProgress } from './fit.ts';
import type { CorrelationParameters, LikelihoodSetup } from './likelihood.ts';
import type { SearchParameter } from './fit-search.ts';
import { GapwiseError } from '../shared/errors.ts';
import { fitWarnings, withoutFitWarnings, type FitWarning } from '../covariance/fit-warnings.ts';
import { axisAzimuth, fitAnisotropic, MIN_FITTED_RATIO, type FitComparisonRow } from './fit-anisotropy.ts';
import { extentDiagonal, fitNested, nestedGuard, nestedStructures } from './fit-nested.ts';
import { fitModel } from './fit.ts';
import { practicalRange } from '../covariance/covariance.ts';
import { searchLikelihood } from './fit-search.ts';

export interface AnisotropicNestedFit {
  /** The model kept: two anisotropic structures when identifiable, else one anisotropic structure. */
  model: CovarianceModel;
  /** One anisotropic structure (fit-anisotropy.ts). */
  anisotropic: CovarianceModel;
  /** One isotropic structure. */
  isotropic: CovarianceModel;
  /** Two isotropic structures at their likelihood optimum (fit-nested.ts), kept there or not. */
  nestedIsotropic: CovarianceModel;
  /** Why fit-nested.ts's guard did not keep the two isotropic structures; absent when it did. */
  nestedIsotropicNotIdentifiable?: 'merged' | 'vanishing-sill' | 'no-gain';
  /** Two anisotropic structures at the likelihood optimum, kept or not. */
  nested: CovarianceModel;
  comparison: FitComparisonRow[];
  notIdentifiable?: 'merged' | 'vanishing-sill' | 'no-gain';
}

interface Parameters extends CorrelationParameters {
  spread: number;
  shortShare: number;
  azimuth: number;
  ratio: number;
}

function correlatedOf(model: CovarianceModel): CorrelatedStructure[] {
  return model.structures.filter((s) => s.type !== 'nugget') as CorrelatedStructure[];
}

function nuggetOf(model: CovarianceModel): number {
  return model.structures.filter((s) => s.type === 'nugget').reduce((a, s) => a + s.sill, 0);
}

/**
 * Fits one isotropic structure, one anisotropic structure, two isotropic structures and two
 * anisotropic structures with the same options (REML default, or ML; a fixed Matérn ν for all), and
 * keeps two anisotropic structures when the guard allows. Throws as fitAnisotropic and fitNested do
 * (a fixed anisotropy, method 'wls', a free ν). `onProgress` runs over the four fits in turn (the
 * isotropic one is fitted once and handed to both simpler fits).
 */
export function fitAnisotropicNested(samples: Samples, options: FitOptions, onProgress?: FitProgress): AnisotropicNestedFit {
  if (options.anisotropy !== undefined) {
    throw new GapwiseError('bad-option', 'Expected no fixed anisotropy when the anisotropy is to be fitted; got both.');
  }
  const method = options.method ?? 'reml';
  if (method !== 'reml' && method !== 'ml') {
    throw new GapwiseError('bad-option', `Expected the method reml or ml to fit an anisotropy and two structures by likelihood, got ${JSON.stringify(method)}.`);
  }
  if (options.family === 'matern' && options.nu === 'free') {
    throw new GapwiseError('bad-option', 'Expected a fixed Matérn ν for two structures (one ν for both), got "free"; give a number such as 1.5.');
  }
  // One isotropic fit serves both simpler fits (each would otherwise fit it again).
  const quarter = (offset: number): FitProgress | undefined => (onProgress ? (d, t) => onProgress(offset + d / t, 4) : undefined);
  const isotropic = fitModel(samples, options, quarter(0));
  const aniso = fitAnisotropic(samples, options, quarter(1), isotropic);
  const iso = fitNested(samples, options, quarter(2), isotropic);
  const one = correlatedOf(aniso.model)[0];
  const an = aniso.model.anisotropy ?? { azimuth: 0, ratio: 1 };
  const withNugget = aniso.model.structures.some((s) => s.type === 'nugget');
  const nu = options.family === 'matern' ? one.nu : undefined;
  const setup: LikelihoodSetup = { family: options.family, nu, trend: aniso.model.trend, method };

  const reach = extentDiagonal(samples);
  const parameters: SearchParameter[] = [
    { log: true, lower: reach * 1e-3, upper: reach * 10, step: 0.7 },
    { log: true, lower: 1, upper: 1e3, step: 0.7 },
    { lower: 1e-3, upper: 1 - 1e-3, step: 0.2 },
  ];
  if (withNugget) parameters.push({ log: true, lower: 1e-6, upper: 1e3, step: 0.7 });
  parameters.push({ step: 30, unit: 180 / Math.PI });
  parameters.push({ log: true, lower: MIN_FITTED_RATIO, upper: 1, step: 0.5 });
  const toTheta = (x: number[]): Parameters => ({
    scale: x[0] / x[1], spread: x[1], shortShare: x[2], nuggetRatio: withNugget ? x[3] : 0,
    azimuth: x[x.length - 2], ratio: x[x.length - 1],
  });
  const clampScale = (s: number) => Math.min(reach * 10, Math.max(reach * 1e-3, s));
  const point = (s2: number, spread: number, w: number, eta: number, azimuth: number, ratio: number): number[] => {
    const x = [clampScale(s2), spread, w];
    if (withNugget) x.push(Math.min(1e3, Math.max(1e-6, eta)));
    x.push(azimuth, ratio);
    return x;
  };
  // The two simpler optima as points of this model.
  const anisoEta = nuggetOf(aniso.model) / Math.max(one.sill, 1e-300);
  const anchorAniso = point(one.scale, 1, 0.5, anisoEta, an.azimuth, an.ratio);
  const pair = correlatedOf(iso.nested);
  const pairSill = pair[0].sill + pair[1].sill;
  const anchorNested = point(pair[1].scale, pair[1].scale / pair[0].scale, pair[0].sill / pairSill, nuggetOf(iso.nested) / Math.max(pairSill, 1e-300), 0, 1);
  const starts: number[][] = [
    point(one.scale * 1.005, 1.01, 0.5, anisoEta, an.azimuth, an.ratio),
    point(pair[1].scale, pair[1].scale / pair[0].scale, pair[0].sill / pairSill, nuggetOf(iso.nested) / Math.max(pairSill, 1e-300), an.azimuth, Math.max(MIN_FITTED_RATIO, an.ratio)),
  ];
  for (const f of [5, 3]) for (const spread of [5, 15]) for (const w of [0.3, 0.6]) starts.push(point(one.scale / f * spread, spread, w, anisoEta, an.azimuth, an.ratio));
  const structuresAt = (t: Parameters, sill: number, nugget: number): Structure[] => nestedStructures(options.family, nu, withNugget, t, sill, nugget);
  const correlationAt = (theta: CorrelationParameters): CovarianceModel => {
    const t = theta as Parameters;
    const structures = structuresAt(t, 1, t.nuggetRatio);
    if (!withNugget) structures.unshift({ type: 'nugget', sill: 0 });
    return { structures, trend: 'constant', transform: 'none', anisotropy: { azimuth: t.azimuth, ratio: t.ratio } };
  };
  const found = searchLikelihood(samples, setup, correlationAt, {
    parameters, starts, anchors: [anchorAniso, anchorNested], runs: options.starts ?? 3, toTheta, allowJitter: !withNugget,
  }, { maxEvaluations: options.maxEvaluations, what: `anisotropic two-structure ${options.family} model` }, quarter(3));

  const theta = toTheta(found.x);
  const final = found.final;
  const anisoParameters = Number(aniso.model.fit!.parameters ?? 0);
  const k = anisoParameters + 2;
  const aic = 2 * k - 2 * final.logLikelihood;
  const anisoAic = aniso.model.fit!.aic ?? Infinity;
  const warnings: FitWarning[] = [];
  if (Math.abs(Math.log(found.x[0] / parameters[0].upper!)) < 0.01) {
    warnings.push({ code: 'scale-at-bound', message: 'The long scale reached its upper limit (10 × the samples\' extent): the data may hold a trend; consider a linear trend.' });
  }
  if (Math.abs(Math.log(theta.ratio / MIN_FITTED_RATIO)) < 0.01) {
    warnings.push({ code: 'ratio-at-bound', message: `The anisotropy ratio reached its lower limit (${MIN_FITTED_RATIO}): the correlation across the long axis is too short for the sample spacing to resolve.` });
  }
  if (!found.converged) warnings.push({ code: 'optimiser-stopped', message: `The optimiser stopped before meeting its tolerance (${found.evaluations} likelihood evaluations on all samples).` });
  const sill = final.sigma2;
  const fit: FitInfo = {
    method, logLikelihood: final.logLikelihood, aic, converged: found.converged, iterations: found.iterations,
    n: found.likelihood.n, warnings, parameters: k, evaluations: found.evaluations, screenEvaluations: found.screenEvaluations,
    trendCoefficients: final.beta, centre: found.likelihood.centre, anisotropyFitted: true,
  };
  const nested: CovarianceModel = {
    structures: structuresAt(theta, sill, theta.nuggetRatio * sill), trend: aniso.model.trend, transform: 'none',
    anisotropy: { azimuth: axisAzimuth(theta.azimuth), ratio: Math.min(1, theta.ratio) }, fit,
  };
  nested.practicalRange = practicalRange(nested);

  const { notIdentifiable, reason } = nestedGuard(theta.scale, theta.spread, theta.shortShare, aic, anisoAic, 'one anisotropic structure');
  const row = (label: string, m: CovarianceModel, chosen: boolean): FitComparisonRow => ({
    label, logLikelihood: m.fit!.logLikelihood ?? -Infinity, aic: m.fit!.aic ?? Infinity, parameters: Number(m.fit!.parameters ?? 0), chosen,
  });
  const comparison: FitComparisonRow[] = [
    row('isotropic', aniso.isotropic, false),
    row('anisotropic', aniso.model, notIdentifiable !== undefined),
    row('two structures', iso.nested, false),
    { label: 'anisotropic, two structures', logLikelihood: final.logLikelihood, aic, parameters: k, chosen: notIdentifiable === undefined },
  ];
  fit.comparison = comparison;
  if (notIdentifiable) {
    const kept: CovarianceModel = { ...aniso.model, fit: { ...aniso.model.fit!, comparison, nestedNotIdentifiable: notIdentifiable } };
    kept.fit!.warnings = [...fitWarnings(aniso.model.fit),
      { code: 'nested-not-identifiable', message: `Two structures are not identifiable from these samples: ${reason}; the one-structure anisotropic model is kept.` }];
    return { model: kept, anisotropic: aniso.model, isotropic: aniso.isotropic, nestedIsotropic: iso.nested, nestedIsotropicNotIdentifiable: iso.notIdentifiable, nested, comparison, notIdentifiable };
  }
  fit.warnings = [...withoutFitWarnings(aniso.model.fit!.warnings, 'optimiser-stopped', 'anisotropy-not-supported'), ...warnings];
  return { model: nested, anisotropic: aniso.model, isotropic: aniso.isotropic, nestedIsotropic: iso.nested, nestedIsotropicNotIdentifiable: iso.notIdentifiable, nested, comparison };
}
