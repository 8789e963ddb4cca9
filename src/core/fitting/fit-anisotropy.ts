/**
 * Fits a geometric anisotropy with the other parameters by likelihood: the azimuth of the long axis
 * and the ratio short/long range are estimated jointly with the scale (along the long axis), the
 * nugget ratio and, when free, the Matérn ν, by maximising the profiled REML or ML likelihood
 * (likelihood.ts) with the anisotropic correlation (covariance.ts: separations rotated onto the long
 * axis and the across component divided by the ratio).
 *
 * Method: the isotropic fit comes first (fit.ts fitModel); its parameters seed starts at azimuths 0°,
 * 45°, 90°, 135° and ratios 0.6 and 0.3 (scale 1 and 1.5 × the isotropic one), and the isotropic
 * point itself; the search is fit-search.ts (subset screening above 250 samples, Newton polish).
 * The azimuth is searched unbounded and reported in [0°, 180°) (an axis, not a direction); the ratio
 * in [MIN_FITTED_RATIO, 1]. The isotropic model is the special case ratio = 1, so the anisotropic
 * log-likelihood is never below the isotropic one (the isotropic point is kept when the search ends
 * lower). AIC counts two more parameters than the isotropic fit.
 * Units: metres, degrees clockwise from grid north. Cost: the isotropic fit plus about 20–40
 * likelihood evaluations on all samples (n³/3 flops each) and a few hundred on a 200-sample subset.
 */
import type { CovarianceModel, CorrelatedStructure, FitInfo, Structure } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import type { FitOptions, FitProgress } from './fit.ts';
import type { CorrelationParameters, LikelihoodSetup } from './likelihood.ts';
import type { SearchParameter } from './fit-search.ts';
import { GapwiseError } from '../shared/errors.ts';
import { fitWarnings, type FitWarning } from '../covariance/fit-warnings.ts';
import { fitModel, NU_BOUNDS } from './fit.ts';
import { practicalRange } from '../covariance/covariance.ts';
import { searchLikelihood } from './fit-search.ts';

/** Smallest ratio (short / long range) the search considers. */
export const MIN_FITTED_RATIO = 0.02;

/** One row of the comparison of fits on the same samples (the command line prints it; the app shows it). */
export interface FitComparisonRow {
  /** Short label: "isotropic", "anisotropic", "one structure", "two structures". */
  label: string;
  logLikelihood: number;
  aic: number;
  parameters: number;
  /** The row whose model was kept. */
  chosen: boolean;
}

export interface AnisotropicFit {
  /** The anisotropic model (its fit.comparison lists both rows). */
  model: CovarianceModel;
  /** The isotropic model fitted first, with the same options. */
  isotropic: CovarianceModel;
  comparison: FitComparisonRow[];
}

interface AnisotropicParameters extends CorrelationParameters {
  azimuth: number;
  ratio: number;
}

/** Azimuth of an axis in [0°, 180°). */
export function axisAzimuth(degrees: number): number {
  const a = degrees % 180;
  return a < 0 ? a + 180 : a;
}

function correlatedOf(model: CovarianceModel): CorrelatedStructure {
  return model.structures.find((s) => s.type !== 'nugget') as CorrelatedStructure;
}

/**
 * Fits the isotropic model and the anisotropic one (azimuth and ratio estimated) with the same
 * options, by REML (default) or ML. `options.anisotropy` must be absent (it would fix them);
 * method 'wls' is refused. Throws as fitModel does. `onProgress` counts the isotropic fit as the
 * first half and the anisotropic search as the second. `isotropicFit`, when given, is fitModel's
 * answer for these samples and options, already computed by the caller (it is then not fitted again).
 */
export function fitAnisotropic(samples: Samples, options: FitOptions, onProgress?: FitProgress, isotropicFit?: CovarianceModel): AnisotropicFit {
  if (options.anisotropy !== undefined) {
    throw new GapwiseError('bad-option', 'Expected no fixed anisotropy when the anisotropy is to be fitted; got both.');
  }
  const method = options.method ?? 'reml';
  if (method !== 'reml' && method !== 'ml') {
    throw new GapwiseError('bad-option', `Expected the method reml or ml to fit an anisotropy by likelihood, got ${JSON.stringify(method)}.`);
  }
  const half = (offset: number): FitProgress | undefined => (onProgress ? (d, t) => onProgress(offset + d / t, 2) : undefined);
  const isotropic = isotropicFit ?? fitModel(samples, options, half(0));
  const iso = correlatedOf(isotropic);
  const isoNugget = isotropic.structures.find((s) => s.type === 'nugget');
  const withNugget = isoNugget !== undefined;
  const nuFree = options.family === 'matern' && options.nu === 'free';
  const nuFixed = options.family === 'matern' && !nuFree ? iso.nu : undefined;
  const setup: LikelihoodSetup = { family: options.family, nu: nuFixed, trend: isotropic.trend, method };

  // Parameters: scale along the long axis [, η][, ν], azimuth (degrees, unbounded), ratio.
  const parameters: SearchParameter[] = [{ log: true, lower: iso.scale * 1e-2, upper: iso.scale * 1e2, step: 0.5 }];
  if (withNugget) parameters.push({ log: true, lower: 1e-6, upper: 1e3, step: 0.7 });
  if (nuFree) parameters.push({ log: true, ...NU_BOUNDS, step: 0.5 });
  parameters.push({ step: 30, unit: 180 / Math.PI });
  parameters.push({ log: true, lower: MIN_FITTED_RATIO, upper: 1, step: 0.5 });
  const eta0 = withNugget ? Math.max(1e-6, isoNugget!.sill / Math.max(iso.sill, 1e-300)) : 0;
  const toTheta = (x: number[]): AnisotropicParameters => ({
    scale: x[0], nuggetRatio: withNugget ? x[1] : 0, nu: nuFree ? x[withNugget ? 2 : 1] : undefined,
    azimuth: x[x.length - 2], ratio: x[x.length - 1],
  });
  const point = (scale: number, azimuth: number, ratio: number): number[] => {
    const x = [scale];
    if (withNugget) x.push(Math.min(1e3, eta0));
    if (nuFree) x.push(iso.nu!);
    x.push(azimuth, ratio);
    return x;
  };
  const starts: number[][] = [point(iso.scale, 0, 1 - 1e-9)];
  for (const ratio of [0.6, 0.3]) {
    for (const azimuth of [0, 45, 90, 135]) {
      for (const f of [1, 1.5]) starts.push(point(iso.scale * f, azimuth, ratio));
    }
  }
  const correlationAt = (theta: CorrelationParameters): CovarianceModel => {
    const t = theta as AnisotropicParameters;
    const structures: Structure[] = [{ type: 'nugget', sill: t.nuggetRatio }];
    const s: CorrelatedStructure = { type: options.family, sill: 1, scale: t.scale };
    if (options.family === 'matern') s.nu = t.nu ?? nuFixed ?? 1.5;
    structures.push(s);
    return { structures, trend: 'constant', transform: 'none', anisotropy: { azimuth: t.azimuth, ratio: t.ratio } };
  };
  const found = searchLikelihood(samples, setup, correlationAt, {
    parameters, starts, anchor: point(iso.scale, 0, 1), runs: options.starts ?? 3, toTheta, allowJitter: !withNugget,
  }, { maxEvaluations: options.maxEvaluations, what: `anisotropic ${options.family} model` }, half(1));

  const isoLogLik = isotropic.fit!.logLikelihood ?? -Infinity;
  const isoParameters = Number(isotropic.fit!.parameters ?? 0);
  const k = isoParameters + 2;
  const warnings: FitWarning[] = [];
  let theta = toTheta(found.x);
  let final = found.final;
  if (!(final.logLikelihood >= isoLogLik)) {
    // The search ended below the isotropic optimum: keep that point (ratio 1), which the model nests.
    theta = { scale: iso.scale, nuggetRatio: eta0, nu: nuFree ? iso.nu : undefined, azimuth: 0, ratio: 1 };
    final = found.likelihood.evaluate(theta, { allowJitter: !withNugget });
    warnings.push({ code: 'anisotropy-search-below', message: 'The anisotropic search ended below the isotropic fit; the isotropic parameters (ratio 1) are kept.' });
  }
  const near = (v: number, b: number) => Math.abs(Math.log(v / b)) < 0.01;
  if (near(theta.ratio, MIN_FITTED_RATIO)) warnings.push({ code: 'ratio-at-bound', message: `The anisotropy ratio reached its lower limit (${MIN_FITTED_RATIO}): the correlation across the long axis is too short for the sample spacing to resolve.` });
  if (near(theta.scale, parameters[0].upper!)) warnings.push({ code: 'scale-at-bound', message: 'The scale along the long axis reached its upper limit (100 × the isotropic scale): the data may hold a trend along that axis.' });
  if (!found.converged) warnings.push({ code: 'optimiser-stopped', message: `The optimiser stopped before meeting its tolerance (${found.evaluations} likelihood evaluations on all samples).` });
  const aic = 2 * k - 2 * final.logLikelihood;
  const isoAic = isotropic.fit!.aic ?? Infinity;
  if (isoAic <= aic) warnings.push({ code: 'anisotropy-not-supported', message: `The isotropic model has the lower AIC (${isoAic.toFixed(2)} against ${aic.toFixed(2)}): the data do not support an anisotropy.` });
  const comparison: FitComparisonRow[] = [
    { label: 'isotropic', logLikelihood: isoLogLik, aic: isoAic, parameters: isoParameters, chosen: false },
    { label: 'anisotropic', logLikelihood: final.logLikelihood, aic, parameters: k, chosen: true },
  ];

  const sill = final.sigma2;
  const structures: Structure[] = [];
  if (withNugget) structures.push({ type: 'nugget', sill: theta.nuggetRatio * sill });
  const s: CorrelatedStructure = { type: options.family, sill, scale: theta.scale };
  if (options.family === 'matern') s.nu = theta.nu ?? nuFixed ?? 1.5;
  structures.push(s);
  const fit: FitInfo = {
    method, logLikelihood: final.logLikelihood, aic, converged: found.converged, iterations: found.iterations,
    n: found.likelihood.n, warnings: [...fitWarnings(isotropic.fit), ...warnings], parameters: k,
    evaluations: found.evaluations, screenEvaluations: found.screenEvaluations,
    trendCoefficients: final.beta, centre: found.likelihood.centre, anisotropyFitted: true, comparison,
  };
  const model: CovarianceModel = {
    structures, trend: isotropic.trend, transform: 'none',
    anisotropy: { azimuth: axisAzimuth(theta.azimuth), ratio: Math.min(1, theta.ratio) }, fit,
  };
  model.practicalRange = practicalRange(model);
  isotropic.fit!.comparison = comparison.map((r) => ({ ...r, chosen: r.label === 'isotropic' }));
  return { model, isotropic, comparison };
}
