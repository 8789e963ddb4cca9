/**
 * The covariates of a covariate model at grid cells in the app, from the rasters loaded in the Surface
 * step: the one way the surface, the realisations and the next-sample design get them. The rasters are
 * sampled by io/covariate-raster.ts `gridCovariates` (bilinear for numbers, nearest cell for
 * categories); cells without a value in every raster are masked out of the grid and counted in a
 * warning. A model covariate without a loaded raster is GapwiseError 'bad-option' saying which.
 * The raster module (geotiff.js) is loaded only when a covariate model needs it.
 */
import type { CovarianceModel } from '../../core/covariance/model.ts';
import { isCovariateTrend } from '../../core/covariance/model.ts';
import { GapwiseError, type Warning } from '../../core/shared/errors.ts';
import type { Grid } from '../../core/geometry/grid.ts';
import type { Samples } from '../../core/shared/samples.ts';
import type { DesignResult } from '../../core/design/design.ts';
import type { CovariateRaster } from '../../io/covariate-raster.ts';
import type { IntakeResult } from '../../io/types.ts';
import type { DesignRequestPayload } from '../../worker/design-handler.ts';
import { withModelCovariates } from './covariates.ts';

/** The model's covariates that have no loaded raster (empty for a model without covariates). */
export function missingRasters(model: CovarianceModel | null, rasters: ReadonlyArray<Pick<CovariateRaster, 'name'>>): string[] {
  const t = model?.trend;
  if (!t || !isCovariateTrend(t)) return [];
  return t.covariates.filter((c) => !rasters.some((r) => r.name === c));
}

/** The sentence shown when covariates of the model have no raster yet. */
export function missingRasterMessage(missing: readonly string[]): string {
  const several = missing.length > 1;
  return `The model's covariate${several ? 's' : ''} ${missing.join(', ')} need${several ? '' : 's'} a raster on the map area; expected "Load covariate raster…" for ${several ? 'each' : 'it'} first.`;
}

/** Throws GapwiseError 'bad-option' (missingRasterMessage) when a covariate of the model has no raster. */
export function checkRasters(model: CovarianceModel | null, rasters: ReadonlyArray<Pick<CovariateRaster, 'name'>>): void {
  const missing = missingRasters(model, rasters);
  if (missing.length > 0) throw new GapwiseError('bad-option', missingRasterMessage(missing));
}

/** What a grid computation of the app needs for a model: samples, grid and (covariate model) the covariates on it. */
export interface CovariateGrid {
  /** The samples, with the encoded columns of the model's covariates for a covariate model. */
  samples: Samples;
  /** The grid, with the cells that lack a covariate value masked out. */
  grid: Grid;
  /** Encoded covariates at every cell centre (nx·ny rows × q). */
  covariates?: Float64Array;
  /** With `nodes`: the covariates at each cell's nodes × nodes points (nx·ny cells × nodes² rows × q). */
  nodeCovariates?: Float64Array;
  /** Cells without a covariate value, counted. */
  warnings: Warning[];
}

/**
 * The samples and the grid a model is mapped with: for a covariate model, the samples' covariate
 * columns and the rasters' covariates at the grid's cells (and, with `nodes` k, at the k × k points
 * of every cell: block support and realisations); other models get the samples as read and the grid
 * unchanged. Throws GapwiseError 'bad-option' for a covariate without a raster or a grid none of
 * whose cells has every covariate, and the samples' column errors (naming column and line).
 */
export async function covariatesOnGrid(
  intake: IntakeResult, model: CovarianceModel, rasters: ReadonlyArray<CovariateRaster>, grid: Grid, options: { nodes?: number } = {},
): Promise<CovariateGrid> {
  if (!isCovariateTrend(model.trend)) return { samples: intake.samples, grid, warnings: [] };
  checkRasters(model, rasters);
  const { samples, trend } = withModelCovariates(intake, model);
  const { gridCovariates } = await import('../../io/covariate-raster.ts');
  const g = gridCovariates(grid, trend, rasters, intake.report.crs.work, options.nodes !== undefined ? { nodes: options.nodes } : {});
  return {
    samples, grid: g.grid, covariates: g.covariates,
    ...(g.nodeCovariates ? { nodeCovariates: g.nodeCovariates } : {}),
    warnings: g.warnings,
  };
}

function activeCells(grid: Grid): number {
  if (!grid.mask) return grid.nx * grid.ny;
  let n = 0;
  for (const m of grid.mask) n += m;
  return n;
}

/**
 * A next-sample design with a covariate model, as `gapwise suggest --covariate-raster` with `--cell`
 * makes it: the area grid the design plans from its options (core/design/design.ts `designGrid`), its
 * cells' covariates from the rasters (candidates are cell centres, so each carries its cell's values),
 * the cells without a value left out of the candidates and of the area's average and counted in a
 * warning on the result; the samples with their covariate columns. Other models (or none) run as given.
 * `run` makes the design (the app's worker request; a test may call the engine directly).
 * Throws GapwiseError as covariatesOnGrid.
 */
export async function designWithCovariates(
  intake: IntakeResult, rasters: ReadonlyArray<CovariateRaster>, payload: DesignRequestPayload,
  run: (payload: DesignRequestPayload) => Promise<DesignResult>,
): Promise<DesignResult> {
  const model = payload.model;
  if (!model || !isCovariateTrend(model.trend)) return run(payload);
  checkRasters(model, rasters);
  const { designGrid } = await import('../../core/design/design.ts');
  const planned = designGrid(payload.samples, payload.options).grid;
  const g = await covariatesOnGrid(intake, model, rasters, planned);
  const before = activeCells(planned);
  const lost = before - activeCells(g.grid);
  const warnings: Warning[] = lost > 0
    ? [{ code: 'covariate-no-data', message: `${lost} of ${before} cells of the area have no value in a covariate raster (outside it, or no-data there) and are left out of the candidates and of the area's average.` }]
    : [];
  const result = await run({ samples: g.samples, model, options: { ...payload.options, grid: g.grid, covariates: g.covariates } });
  return { ...result, warnings: [...warnings, ...result.warnings] };
}
