/**
 * Exact or local posterior for a variance or decision design (./design-greedy.ts): the choice by
 * estimated cost and the accuracy tolerance, as ../prediction/path-choice.ts chooses for kriging, and
 * the measured error of the local posterior.
 *
 * Costs in multiply-adds (K = KERNEL_COST a covariance evaluation; n samples, E evaluation points,
 * C screened candidates, s sites, m samples per neighbourhood):
 *   exact = n³/6 + K·n²/2 + (E + C)·(n²/2 + K·n) + E·C·(n + K) + s·C·(n + K)
 *   local = (E + C)·(m³/6 + K·m²/2 + m²) + E·C·K·m + s·C·K·m + n·log₂n + reference
 * (./design-posterior.ts: features, the cross-covariance k₀(E, C), one column per site), with the
 * reference of the measured error (../prediction/path-choice.ts referenceCost, at the evaluation
 * points). Never exact above EXACT_SAMPLE_LIMIT samples; exact for a tolerance of 0, when a
 * neighbourhood would hold every sample, or for a covariate trend (its GLS trend needs all samples).
 * Measured error: the local posterior's mean and sd (its variance's square root) at a seeded subset of
 * the evaluation points against the reference (exact kriging up to MAX_EXACT_SAMPLES samples), in % of
 * the prior sd, on the kriging scale. A miss takes the exact posterior when the choice was automatic
 * (up to EXACT_SAMPLE_LIMIT samples), else it is warned.
 */
import type { CovarianceModel } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import { GapwiseError, type Warning } from '../shared/errors.ts';
import {
  DEFAULT_TOLERANCE, EXACT_SAMPLE_LIMIT, billions, KERNEL_COST, choosePredictionPath, checkCount, referenceCost, type PathChoice, type Tolerance,
} from '../prediction/path-choice.ts';
import { DEFAULT_CHECK_SEED, chooseCheckTargets, compareWithReference, describeAccuracy, referencePredictions, type LocalAccuracy } from '../prediction/local-accuracy.ts';
import { createLocalPosterior, type LocalPosterior } from './design-posterior.ts';
import type { Points } from './design-greedy.ts';

/** Default samples per neighbourhood of a local design posterior. */
export const DEFAULT_DESIGN_NEIGHBOURS = 64;

/** The design job the posterior is chosen for (plain data). */
export interface DesignJob {
  samples: number;
  evaluation: number;
  candidates: number;
  sites: number;
  neighbours?: number;
  covariates?: boolean;
  tolerance?: Tolerance;
  force?: 'exact' | 'local';
}

/** Estimated multiply-adds of a design on the exact posterior (see the file header). */
export function designExactCost(samples: number, evaluation: number, candidates: number, sites: number): number {
  const n = samples;
  return n ** 3 / 6 + (KERNEL_COST * n * n) / 2 + (evaluation + candidates) * (n * n / 2 + KERNEL_COST * n)
    + evaluation * candidates * (n + KERNEL_COST) + sites * candidates * (n + KERNEL_COST);
}

/** Estimated multiply-adds of a design on the local posterior, its measured error included. */
export function designLocalCost(samples: number, evaluation: number, candidates: number, sites: number, neighbours = DEFAULT_DESIGN_NEIGHBOURS): number {
  const n = samples;
  const m = Math.min(neighbours, n);
  return (evaluation + candidates) * (m ** 3 / 6 + (KERNEL_COST * m * m) / 2 + m * m) + evaluation * candidates * KERNEL_COST * m
    + sites * candidates * KERNEL_COST * m + n * Math.log2(Math.max(2, n)) + referenceCost(n, evaluation);
}

/** Chooses the exact or local posterior for a design (see the file header). Throws GapwiseError('bad-option') for --exact beyond EXACT_SAMPLE_LIMIT samples or --local with covariates. */
export function chooseDesignPath(job: DesignJob): PathChoice {
  const n = job.samples;
  const m = job.neighbours ?? DEFAULT_DESIGN_NEIGHBOURS;
  const ex = n <= EXACT_SAMPLE_LIMIT ? designExactCost(n, job.evaluation, job.candidates, job.sites) : Infinity;
  const lo = designLocalCost(n, job.evaluation, job.candidates, job.sites, m);
  const tolerance = job.tolerance ?? DEFAULT_TOLERANCE;
  const choice = (path: 'exact' | 'local', automatic: boolean, reason: string): PathChoice => ({ path, automatic, exactCost: ex, localCost: lo, reason });
  if (job.force === 'exact' && n > EXACT_SAMPLE_LIMIT) choosePredictionPath({ samples: n, targets: job.evaluation, force: 'exact' }); // throws its message
  if (job.force === 'local' && job.covariates) {
    throw new GapwiseError('bad-option', 'A model with covariates estimates its trend from all samples, so its design takes the exact posterior; leave out --local.');
  }
  if (job.force) return choice(job.force, false, `as asked (--${job.force})`);
  if (job.covariates) return choice('exact', true, 'a model with covariates estimates its trend from all samples');
  if (n > EXACT_SAMPLE_LIMIT) return choice('local', true, `more than ${EXACT_SAMPLE_LIMIT.toLocaleString('en-US')} samples are too many to factorise together`);
  if (tolerance.mean === 0 || tolerance.sd === 0) return choice('exact', true, 'a tolerance of 0 needs the exact posterior');
  if (m >= n) return choice('exact', true, `a neighbourhood of ${m.toLocaleString('en-US')} would hold all ${n.toLocaleString('en-US')} samples`);
  const costs = `about ${billions(lo)} billion operations local, ${billions(ex)} exact`;
  if (lo < ex) return choice('local', true, `local neighbourhoods are cheaper here (${costs})`);
  return choice('exact', true, `the exact posterior is cheaper here (${costs})`);
}

/** The posterior a design runs on, why, and the local one's measured error (plain data, and the posterior itself). */
export interface DesignPath {
  choice: PathChoice;
  neighbours?: number;
  accuracy?: LocalAccuracy;
  warnings: Warning[];
  /** The local posterior to use (absent on the exact path). */
  local?: LocalPosterior;
}

/**
 * Chooses the posterior for a design and, on the local path, measures it at a seeded subset of the
 * evaluation points; a miss takes the exact posterior when the choice was automatic.
 */
export function planDesignPath(samples: Samples, model: CovarianceModel, evaluation: Points, job: Omit<DesignJob, 'samples' | 'evaluation'>): DesignPath {
  const n = samples.x.length;
  const mE = evaluation.x.length;
  const tolerance = job.tolerance ?? DEFAULT_TOLERANCE;
  const first = chooseDesignPath({ ...job, samples: n, evaluation: mE });
  if (first.path === 'exact') return { choice: first, warnings: [] };
  const local = createLocalPosterior(samples, model, job.neighbours ?? DEFAULT_DESIGN_NEIGHBOURS);
  const seed = DEFAULT_CHECK_SEED;
  const idx = chooseCheckTargets(mE, checkCount(n, mE), seed);
  const x = Float64Array.from(idx, (i) => evaluation.x[i]);
  const y = Float64Array.from(idx, (i) => evaluation.y[i]);
  const reference = referencePredictions(samples, model, x, y);
  const f = local.features(x, y);
  const accuracy = compareWithReference(model, reference, { mean: f.mean, sd: Float64Array.from(f.variance, Math.sqrt) },
    { targets: mE, seed, neighbours: local.neighbours, globalMean: false, tolerance });
  if (!accuracy.within && first.automatic && n <= EXACT_SAMPLE_LIMIT) {
    return {
      choice: { ...first, path: 'exact', reason: `local neighbourhoods of ${local.neighbours} samples missed the tolerance (mean ${accuracy.mean.max.toFixed(2)} %, sd ${accuracy.sd.max.toFixed(2)} % of the prior sd)` },
      warnings: [],
    };
  }
  const warnings: Warning[] = [...local.warnings];
  if (!accuracy.within) {
    warnings.push({ code: 'tolerance-missed', message: `The local posterior missed the tolerance (${describeAccuracy(accuracy)}); more neighbours or the exact posterior come closer.` });
  }
  return { choice: first, neighbours: local.neighbours, accuracy, warnings, local };
}
