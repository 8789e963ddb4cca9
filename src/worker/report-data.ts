/**
 * The data a report shows, computed from a project the way the app computes it: the samples read from
 * the text the project holds, the empirical variogram with the stored settings, leave-one-out
 * cross-validation of the model, the surfaces on the project's grid with its threshold, the standard
 * candidate models for the comparison table, and (on request) conditional realisations with the area
 * above the action level. io/report.ts only formats the result.
 *
 * It reads the project's texts (io/project.ts, so proj4 and papaparse), so like the samples reader it
 * runs in the app's worker through ./operations.ts (request 'prepareReport'), never in the command
 * line's engine threads; the command line calls it in-process. A model with covariates needs the
 * covariate rasters (`rasters`) to give the grid its covariates when the surface or realisations are
 * computed here.
 */
import { GapwiseError, type Warning } from '../core/shared/errors.ts';
import type { CovarianceModel, CovariateTrend } from '../core/covariance/model.ts';
import { isCovariateTrend } from '../core/covariance/model.ts';
import { encodeCovariates, resolveCovariateTrend } from '../core/covariance/covariates.ts';
import type { Samples } from '../core/shared/samples.ts';
import type { Grid } from '../core/geometry/grid.ts';
import { computeSurface } from '../core/prediction/surface.ts';
import { leaveOneOut, type LeaveOneOutResult } from '../core/validation/cross-validation.ts';
import { empiricalVariogram, type EmpiricalVariogram } from '../core/fitting/variogram.ts';
import { CANDIDATES, fitModel } from '../core/fitting/fit.ts';
import { simulateConditional, type ConditionalSimulationOptions, type ConditionalSimulationResult } from '../core/simulation/conditional-simulation.ts';
import type { LocalAccuracy } from '../core/prediction/local-accuracy.ts';
import { LOCAL_CRS } from '../io/crs.ts';
import type { IntakeResult } from '../io/types.ts';
import { covariateColumns } from '../io/sample-columns.ts';
import { gridCovariates, type CovariateRaster } from '../io/covariate-raster.ts';
import {
  projectBoundary, projectGrid, projectIntake, projectSimulation,
  type ComparisonRow, type Project, type ProjectSimulation, type SimulationSettings,
} from '../io/project.ts';
import type { ReportInput, ReportSurface } from '../io/report.ts';
import type { Polygon } from '../io/boundary.ts';

/** What prepareReport takes besides the project; everything but the callbacks is plain data (crosses postMessage). */
export interface PrepareOptions {
  software: { name: string; version: string };
  /** Default: now. */
  created?: string;
  /**
   * Fit the standard candidate models for the comparison table when the project holds none
   * (default true; costs a few model fits).
   */
  compare?: boolean;
  /** Progress of the candidate fits for the comparison table: candidates done (fractional) and in all. */
  onCompareProgress?: (done: number, total: number) => void;
  /** Results already at hand (the app): used instead of recomputing. */
  surface?: ReportSurface | null;
  /** With `surface` from local neighbourhoods: their measured error, shown beside the surface. */
  localAccuracy?: LocalAccuracy | null;
  cv?: LeaveOneOutResult | null;
  comparison?: ComparisonRow[];
  /** Replaces the project's cell size (the grid is then planned anew). */
  cellSize?: number;
  /**
   * Draw conditional realisations on the report's grid with these settings and report the area (and,
   * with a depth, the volume) above the project's action level; replaces a summary the project holds.
   */
  simulate?: SimulationSettings;
  /**
   * The realisations for `simulate`, already drawn with the options reportSimulationJob gives (on
   * the report's grid): used instead of drawing them here.
   */
  drawn?: ConditionalSimulationResult;
  /** Progress of the realisations (done, total). */
  onProgress?: (done: number, total: number) => void;
  /**
   * A model with covariates: one raster per covariate (io/covariate-raster.ts), read for the grid's
   * cells (and block points) when the surface or the realisations are computed here. Cells without a
   * covariate value leave the grid, counted in a warning.
   */
  rasters?: CovariateRaster[];
}

/** Options of prepareReport that cross postMessage (the worker request 'prepareReport'); progress comes as messages. */
export type PrepareRequestOptions = Omit<PrepareOptions, 'onCompareProgress' | 'onProgress'>;

/** Realisations a report draws: the samples, model, grid and core options (plain data). */
export interface ReportSimulationJob {
  samples: Samples;
  model: CovarianceModel;
  grid: Grid;
  options: ConditionalSimulationOptions;
}

/** The project read for a report: samples, boundary and, with a model, the samples it is used with. */
interface ReadProject {
  intake: IntakeResult;
  work: string;
  boundary: { lonLat: Polygon[]; work: Polygon[] } | null;
  /** The samples with the encoded columns of the model's covariates (the samples as read otherwise). */
  samples: Samples;
}

/** The report's grid: the project's (or `cellSize`'s), with a covariate model's cells that have covariate values. */
interface ReportGrid {
  grid: Grid;
  /** A covariate model: the covariates at each cell's centre, and at its block points for realisations. */
  covariates?: Float64Array;
  nodeCovariates?: Float64Array;
  warnings: Warning[];
}

/** Core options for the report's realisations; throws GapwiseError('bad-option') for an unusable action level. */
function simulationOptions(threshold: number | null, model: CovarianceModel, set: SimulationSettings): ConditionalSimulationOptions {
  if (threshold === null || !Number.isFinite(threshold)) {
    throw new GapwiseError('bad-option', 'The area above the action level needs an action level, and the project has none; expected a threshold (for example "--threshold 200").');
  }
  if (model.transform === 'log' && !(threshold > 0)) {
    throw new GapwiseError('bad-option', `The action level ${threshold} cannot be used with a log model; expected a level above 0.`);
  }
  return {
    count: set.count, seed: set.seed, support: set.support, blockPoints: set.support === 'block' ? set.blockPoints : 1,
    threshold, keepRealisations: false,
    ...(set.depth !== null ? { depth: set.depth } : {}),
  };
}

/** The samples a covariate model is used with: the encoded columns of its (fitted) trend's covariates. */
function covariateSamples(intake: IntakeResult, trend: CovariateTrend): Samples {
  const { columns, source } = covariateColumns(intake, trend, 'sample', true);
  const resolved = resolveCovariateTrend(trend, columns, source);
  return { ...intake.samples, covariates: encodeCovariates(resolved, columns, intake.samples.value.length, source) };
}

/** Reads the project's samples (and boundary) as the app reads them. */
function readProject(project: Project): ReadProject {
  const intake = projectIntake(project);
  const work = intake.report.crs.work;
  const boundary = project.boundary && work !== LOCAL_CRS ? projectBoundary(project, work) : null;
  const trend = project.model?.trend;
  const samples = trend && isCovariateTrend(trend) ? covariateSamples(intake, trend) : intake.samples;
  return { intake, work, boundary, samples };
}

/**
 * The report's grid. For a covariate model whose surface or realisations are computed here, the
 * rasters give every cell its covariates (at `nodes` × `nodes` block points too for realisations) and
 * cells without a value are masked out; a covariate without a raster is GapwiseError('bad-option')
 * naming it.
 */
function reportGrid(project: Project, read: ReadProject, model: CovarianceModel, o: { cellSize?: number; rasters?: CovariateRaster[]; covariatesNeeded: boolean; nodes?: number }): ReportGrid {
  const grid = projectGrid(project, read.intake, read.boundary, o.cellSize !== undefined ? { cellSize: o.cellSize } : {});
  if (!isCovariateTrend(model.trend) || !o.covariatesNeeded) return { grid, warnings: [] };
  const rasters = o.rasters ?? [];
  const missing = model.trend.covariates.filter((name) => !rasters.some((r) => r.name === name));
  if (missing.length > 0) {
    throw new GapwiseError('bad-option', `The model's mean uses the covariate${missing.length > 1 ? 's' : ''} ${missing.map((m) => `"${m}"`).join(', ')}, and no raster of ${missing.length > 1 ? 'them' : 'it'} was given; expected one raster per covariate for the report's maps (on the command line: --covariate-raster NAME=FILE.tif).`);
  }
  const g = gridCovariates(grid, model.trend, rasters, read.work, o.nodes !== undefined ? { nodes: o.nodes } : {});
  return { grid: g.grid, covariates: g.covariates, ...(g.nodeCovariates ? { nodeCovariates: g.nodeCovariates } : {}), warnings: g.warnings };
}

/** The simulation options with a covariate model's block-point covariates. */
function withNodeCovariates(options: ConditionalSimulationOptions, reportGridOf: ReportGrid): ConditionalSimulationOptions {
  return reportGridOf.nodeCovariates ? { ...options, covariates: reportGridOf.nodeCovariates } : options;
}

/**
 * The realisations prepareReport(project, { simulate, cellSize }) would draw, to be drawn elsewhere
 * and passed back as `drawn`: the samples read from the project, its model, the report's grid and
 * the core options. Null when the project has no model (prepareReport then warns that none were
 * drawn). Throws GapwiseError('bad-option') as prepareReport does for a missing or unusable action level.
 */
export function reportSimulationJob(project: Project, options: { simulate: SimulationSettings; cellSize?: number; rasters?: CovariateRaster[] }): ReportSimulationJob | null {
  const model = project.model;
  if (!model) return null;
  const read = readProject(project);
  const core = simulationOptions(project.threshold, model, options.simulate);
  const g = reportGrid(project, read, model, { ...options, covariatesNeeded: true, nodes: core.blockPoints ?? 1 });
  return { samples: read.samples, model, grid: g.grid, options: withNodeCovariates(core, g) };
}

/** Throws GapwiseError('bad-option') unless `drawn` is a run of these options on this grid. */
function checkDrawn(drawn: ConditionalSimulationResult, grid: Grid, o: ConditionalSimulationOptions): void {
  const g = drawn.grid;
  if (g.nx !== grid.nx || g.ny !== grid.ny || g.x0 !== grid.x0 || g.y0 !== grid.y0 || g.cell !== grid.cell) {
    throw new GapwiseError('bad-option', `Expected realisations drawn on the report's grid (${grid.nx} × ${grid.ny} cells of ${grid.cell} m), got ${g.nx} × ${g.ny} cells of ${g.cell} m.`);
  }
  if (drawn.count !== o.count || drawn.threshold !== o.threshold || drawn.support !== o.support || !drawn.area) {
    throw new GapwiseError('bad-option', `Expected ${o.count} realisations with the area above ${o.threshold} (${o.support} support), got ${drawn.count} (${drawn.support} support)${drawn.area ? ` above ${drawn.threshold}` : ' without an area'}.`);
  }
}

/** The samples on the modelling scale (ln values for a log model), covariate columns kept. */
function modelSamples(samples: Samples, log: boolean): Samples {
  if (!log) return samples;
  return { x: samples.x, y: samples.y, value: Float64Array.from(samples.value, Math.log), ...(samples.covariates ? { covariates: samples.covariates } : {}) };
}

/** Label of a candidate: "Matérn ν = 1.5", "Matérn, ν estimated", "Exponential". */
export function candidateLabel(family: string, nu?: number | 'free'): string {
  if (family === 'matern') return nu === 'free' ? 'Matérn, ν estimated' : `Matérn ν = ${nu === 0.5 ? '½' : nu === 1.5 ? '3/2' : nu === 2.5 ? '5/2' : String(nu)}`;
  return family.charAt(0).toUpperCase() + family.slice(1);
}

/**
 * Fits the standard candidates (REML/ML/WLS as the project says, on ln values for a log model) and
 * cross-validates each, as the app's comparison table does. A candidate that cannot be fitted keeps
 * its row with `error`. With `trend` a covariate trend, every candidate has that mean (the samples then
 * carry its columns), so the rows compare with the chosen model.
 */
function compareCandidates(
  intake: IntakeResult, method: 'reml' | 'ml' | 'wls', transform: 'none' | 'log', onProgress?: (done: number, total: number) => void,
  covariates?: { samples: Samples; trend: CovariateTrend },
): ComparisonRow[] {
  const samples = covariates?.samples ?? intake.samples;
  const fitSamples = modelSamples(samples, transform === 'log');
  const total = CANDIDATES.length;
  return CANDIDATES.map((c, i): ComparisonRow => {
    const key = c.family === 'matern' ? `matern-${c.nu}` : c.family;
    const label = candidateLabel(c.family, c.nu);
    try {
      // Progress counts candidates: nine tenths of each for its fit, the rest for its leave-one-out.
      const fitOptions = { family: c.family, nu: c.nu, method, ...(covariates ? { trend: covariates.trend } : {}) };
      const m = fitModel(fitSamples, fitOptions, onProgress ? (d, t) => onProgress(i + 0.9 * Math.min(1, d / t), total) : undefined);
      m.transform = transform;
      const cv = leaveOneOut(samples, m);
      onProgress?.(i + 1, total);
      return {
        key, label, model: m, logLikelihood: m.fit?.logLikelihood ?? null, aic: m.fit?.aic ?? null,
        rmse: cv.summary.rmse, msse: cv.summary.msse,
      };
    } catch (e) {
      if (e instanceof GapwiseError && (e.code === 'fit-failed' || e.code === 'not-positive-definite')) {
        onProgress?.(i + 1, total);
        return { key, label, model: null, logLikelihood: null, aic: null, rmse: null, msse: null, error: e.message };
      }
      throw e;
    }
  });
}

/** The empirical variogram with the project's settings, or a warning saying why there is none. */
function projectVariogram(project: Project, read: ReadProject, warnings: Warning[]): EmpiricalVariogram | null {
  const vg = project.structure.variogram;
  try {
    return empiricalVariogram(modelSamples(read.intake.samples, project.structure.transform === 'log'), {
      lagWidth: vg.lagWidth || undefined, maxLag: vg.maxLag || undefined, estimator: vg.estimator,
    });
  } catch (e) {
    if (!(e instanceof GapwiseError)) throw e;
    warnings.push({ code: 'no-variogram', message: `No variogram: ${e.message}` });
    return null;
  }
}

/** The surfaces on the report's grid with the project's threshold (none for a log model and a level ≤ 0, with a warning). */
function projectSurface(project: Project, read: ReadProject, model: CovarianceModel, g: ReportGrid, warnings: Warning[]): ReportSurface {
  const t = project.threshold;
  const useThreshold = t !== null && Number.isFinite(t) && (model.transform !== 'log' || t > 0);
  if (t !== null && !useThreshold) warnings.push({ code: 'threshold-ignored', message: `The threshold ${t} cannot be used with a log model (it must be above 0); no exceedance map.` });
  return computeSurface(read.samples, model, g.grid, { ...(useThreshold ? { threshold: t } : {}), ...(g.covariates ? { covariates: g.covariates } : {}) });
}

/** The realisations the report shows: drawn here (or taken as drawn elsewhere) with `options.simulate`, else the project's saved ones. */
function reportSimulation(
  project: Project, read: ReadProject, model: CovarianceModel | null, g: ReportGrid | null, options: PrepareOptions, warnings: Warning[],
): ProjectSimulation | null {
  const saved = project.simulation?.summary ? project.simulation : null;
  if (!options.simulate) return saved;
  if (!model || !g) {
    warnings.push({ code: 'no-simulation', message: 'No realisations were drawn: the project has no model.' });
    return saved;
  }
  const set = options.simulate;
  const simOptions = simulationOptions(project.threshold, model, set);
  if (options.drawn) checkDrawn(options.drawn, g.grid, simOptions);
  const sim = options.drawn ?? simulateConditional(read.samples, model, g.grid, {
    ...withNodeCovariates(simOptions, g), ...(options.onProgress ? { onProgress: options.onProgress } : {}),
  });
  warnings.push(...sim.warnings);
  return projectSimulation(sim, { seed: set.seed, depth: set.depth, log: model.transform === 'log', made: options.created ?? new Date().toISOString() });
}

/**
 * Computes what the report shows from a project, the way the app computes it: the samples read
 * from the stored text, the variogram with the stored settings, leave-one-out cross-validation of
 * the model, and the surfaces on the project's grid with its threshold.
 */
export function prepareReport(project: Project, options: PrepareOptions): ReportInput {
  const warnings: Warning[] = [];
  const read = readProject(project);
  const variogram = projectVariogram(project, read, warnings);
  const model = project.model;
  let cv = options.cv ?? null;
  let g: ReportGrid | null = null;
  let surface = options.surface ?? null;
  let exactSurface = false;
  if (model) {
    if (!cv) cv = leaveOneOut(read.samples, model);
    const covariatesNeeded = !surface || (options.simulate !== undefined && !options.drawn);
    const nodes = options.simulate ? (options.simulate.support === 'block' ? options.simulate.blockPoints : 1) : undefined;
    g = reportGrid(project, read, model, { cellSize: options.cellSize, rasters: options.rasters, covariatesNeeded, ...(nodes !== undefined ? { nodes } : {}) });
    warnings.push(...g.warnings);
    if (!surface) {
      surface = projectSurface(project, read, model, g, warnings);
      exactSurface = true;
    }
  } else {
    warnings.push({ code: 'no-model', message: 'The project has no model yet: the report shows the samples and the variogram only.' });
  }
  const simulation = reportSimulation(project, read, model, g, options, warnings);
  let comparison = options.comparison ?? project.structure.comparison ?? [];
  if (comparison.length === 0 && model && options.compare !== false) {
    const covariates = isCovariateTrend(model.trend) ? { samples: read.samples, trend: model.trend } : undefined;
    comparison = compareCandidates(read.intake, project.structure.method, project.structure.transform, options.onCompareProgress, covariates);
  }
  return {
    project, intake: read.intake, boundary: read.boundary, variogram, comparison, cv, grid: g?.grid ?? null, surface, simulation,
    software: options.software, created: options.created ?? new Date().toISOString(), warnings,
    ...(options.surface && options.localAccuracy ? { localAccuracy: options.localAccuracy } : {}),
    ...(exactSurface ? { exactSurface } : {}),
  };
}
