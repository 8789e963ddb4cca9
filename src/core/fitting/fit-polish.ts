/**
 * Polishing a likelihood fit to a tighter tolerance on ℓ than the fit's own (about 1e-3, immaterial
 * next to AIC differences): Nelder–Mead on the exact profiled REML/ML likelihood (./likelihood.ts)
 * over ln scale, ln nugget ratio (and ln ν when it was free) from the fitted values, stopping when the
 * simplex values agree to `tolerance` and its diameter is below 1e-5 in log units. Used where a fit is
 * compared with an outside optimiser; the parameters move only when ℓ improves.
 * Cost: tens of exact evaluations (n³/3 flops each); exact fits only (n ≤ MAX_EXACT_SAMPLES, core/shared/sizes.ts).
 */
import type { CovarianceModel, CorrelatedStructure, Structure } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import { createLikelihood, NU_BOUNDS, type CorrelationParameters } from './likelihood.ts';
import { minimiseBounded, type ParameterSpace } from '../linalg/optimise.ts';
import { practicalRange } from '../covariance/covariance.ts';

/**
 * The model with its correlation parameters and sills moved to the likelihood optimum within
 * `tolerance` (absolute, on ℓ), and `fit.logLikelihood` / `fit.aic` updated; the model as given when
 * its fit is not 'reml' or 'ml' or the polish finds nothing better.
 */
export function polishLikelihoodFit(samples: Samples, model: CovarianceModel, tolerance: number, nuFree = false): CovarianceModel {
  const method = model.fit?.method;
  if (method !== 'reml' && method !== 'ml') return model;
  const main = model.structures.find((s) => s.type !== 'nugget') as CorrelatedStructure | undefined;
  if (!main) return model;
  const nuggetStructure = model.structures.find((s) => s.type === 'nugget');
  const lik = createLikelihood(samples, { family: main.type, nu: main.nu, trend: model.trend, anisotropy: model.anisotropy, method });
  const fitNugget = nuggetStructure !== undefined;
  const x0 = [main.scale];
  const spaces: ParameterSpace[] = [{ log: true, lower: lik.maxDistance * 1e-4, upper: lik.maxDistance * 10 }];
  if (fitNugget) {
    x0.push(Math.max(1e-6, nuggetStructure.sill / main.sill));
    spaces.push({ log: true, lower: 1e-6, upper: 1e3 });
  }
  if (nuFree && main.type === 'matern') {
    x0.push(main.nu ?? 1.5);
    spaces.push({ log: true, ...NU_BOUNDS });
  }
  const toTheta = (x: number[]): CorrelationParameters => ({
    scale: x[0], nuggetRatio: fitNugget ? x[1] : 0, nu: nuFree && main.type === 'matern' ? x[x.length - 1] : undefined,
  });
  const f = (x: number[]) => -lik.evaluate(toTheta(x), { allowJitter: !fitNugget }).logLikelihood;
  const start = f(x0);
  const res = minimiseBounded(f, x0, spaces, {
    step: 0.05, restarts: 1, xTolerance: 1e-5, fTolerance: tolerance / Math.max(1, Math.abs(start)), maxEvaluations: 400 * x0.length,
  });
  if (!(res.value < start)) return model;
  const theta = toTheta(res.x);
  const value = lik.evaluate(theta, { allowJitter: !fitNugget });
  const sill = value.sigma2;
  const structures: Structure[] = model.structures.map((s) => {
    if (s.type === 'nugget') return { type: 'nugget', sill: theta.nuggetRatio * sill };
    const out: CorrelatedStructure = { ...s, sill, scale: theta.scale };
    if (theta.nu !== undefined) out.nu = theta.nu;
    return out;
  });
  const k = typeof model.fit?.parameters === 'number' ? model.fit.parameters : 0;
  const polished: CovarianceModel = {
    ...model, structures,
    fit: { ...model.fit!, logLikelihood: value.logLikelihood, aic: 2 * k - 2 * value.logLikelihood, converged: res.converged, polished: true, trendCoefficients: value.beta },
  };
  polished.practicalRange = practicalRange(polished);
  return polished;
}
