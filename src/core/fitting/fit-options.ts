/**
 * The options of a model fit, in a file of their own so that the likelihoods (./vecchia.ts) can name
 * them without importing the fitting code that calls them.
 */
import type { Anisotropy, Family, Trend } from '../covariance/model.ts';
import type { VariogramOptions } from './variogram.ts';

export type FitMethod = 'reml' | 'ml' | 'wls';

/** Plain-data fitting options (the same object from the app, a project file, the CLI and tests). */
export interface FitOptions {
  family: Family;
  /** Matérn smoothness: a fixed value (default 1.5) or 'free' to estimate it in [0.2, 5]. */
  nu?: number | 'free';
  /** Default 'reml'. */
  method?: FitMethod;
  /** Default 'constant'. */
  trend?: Trend;
  /** Fit a nugget (default true); false fixes it at 0. */
  nugget?: boolean;
  /** Fixed geometric anisotropy (not estimated). */
  anisotropy?: Anisotropy;
  /** Number of optimiser runs from the best starting points; default 3. */
  starts?: number;
  /** Empirical variogram settings for 'wls' (defaults from variogram.ts). */
  variogram?: VariogramOptions;
  /** Evaluation budget of each optimiser run (default: enough to converge); small values leave the fit unconverged. */
  maxEvaluations?: number;
  /**
   * Absolute tolerance on ℓ at a REML/ML optimum; default about 1e-3. A smaller value polishes the
   * optimum on the exact likelihood (./fit-polish.ts), at tens of extra evaluations.
   */
  tolerance?: number;
}
