/**
 * Where to sample next: ranked new sample sites inside an area, by one of three criteria.
 *
 * - 'variance': greedy sites that most reduce the average variance of the noise-free surface over the
 *   area (./design-greedy.ts; exact rank-one updates of the kriging posterior covariance).
 * - 'decision': greedy sites that most reduce the expected misclassified area against an action level
 *   T (./design-misclassification.ts; Bect et al. 2012, Stat. Comput. 22:773).
 * - 'coverage': before any model, k-means spatial coverage with the samples held fixed
 *   (./design-coverage.ts; Walvoort, Brus & de Gruijter 2010, Comput. Geosci. 36:1261).
 * The area is a grid of cells: those with their centre inside the boundary polygons, or the samples'
 * bounding box without a boundary. Candidates are the cell centres inside the area and outside the
 * exclusion polygons, or given points (those inside the area and outside exclusions); every new site
 * keeps the minimum spacing to the samples and to the other new sites. The average over the area is
 * taken over the cells, thinned to a regular sub-lattice when there are more than
 * `maxEvaluationPoints` (a coarser quadrature of the same integral).
 * Covariates in the mean: the area grid is given (`grid`, e.g. a covariate raster's lattice, its mask
 * the cells with covariate values) with the encoded covariates of every cell (`covariates`), and given
 * candidate points carry their own (`candidates.covariates`); the posterior of ./design-greedy.ts then
 * has the covariate columns in its trend.
 * Units: working-CRS metres and m²; mean and sd in data units; variances on the kriging scale.
 * Cost: see ./design-greedy.ts and ./design-coverage.ts.
 */
import type { CovarianceModel } from '../covariance/model.ts';
import { nuggetOf } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import { GapwiseError, checkCount, type Warning } from '../shared/errors.ts';
import { CAUTION } from '../shared/caution.ts';
import { cellCentres, extentOfAll, gridForPolygons, gridFromExtent, type Grid, type Polygon } from '../geometry/grid.ts';
import { pointInPolygons, polygonsArea, polygonsExtent } from '../geometry/polygon.ts';
import { buildKrigingSystem, predictWithSystem, type Prediction } from '../prediction/kriging.ts';
import { createLocalPredictor } from '../prediction/local-kriging.ts';
import type { PathChoice, Tolerance } from '../prediction/path-choice.ts';
import type { LocalAccuracy } from '../prediction/local-accuracy.ts';
import { planDesignPath } from './design-path.ts';
import { exceedanceProbability } from '../shared/normal.ts';
import { NeighbourIndex } from '../geometry/neighbours.ts';
import { greedyDesign, type Points } from './design-greedy.ts';
import { checkCovariateRows, covariateColumnCount } from '../covariance/trend.ts';
import { coverageDesign } from './design-coverage.ts';

export type DesignMode = 'variance' | 'decision' | 'coverage';

/** Options of a design (plain data: the same object in the app, the worker, the CLI and tests). */
export interface DesignOptions {
  /** How many new sites, 1 to 500. */
  count: number;
  /** Default: 'decision' with a threshold, 'variance' with a model, 'coverage' without a model. */
  mode?: DesignMode;
  /** Action level in data units: the target of 'decision'; with 'variance', the misclassified area is reported too. */
  threshold?: number;
  /** Cell size of the area grid and of the candidate grid, metres. Default: about 10,000 cells over the area. */
  cell?: number;
  /** Area polygons in the working CRS ([outer ring, ...holes], rings of [x, y]). Default: the samples' bounding box. */
  boundary?: Polygon[];
  /** Places not to sample (working CRS). They still count in the area's average. */
  exclusions?: Polygon[];
  /** Least distance from a new site to the samples and to the other new sites, metres. Default 0. */
  minSpacing?: number;
  /**
   * Accessible points (working CRS) to choose from instead of the grid cells; with a covariate model
   * their encoded covariates (points × q, row-major).
   */
  candidates?: { x: ArrayLike<number>; y: ArrayLike<number>; covariates?: ArrayLike<number> };
  /**
   * The area grid itself (cells whose centre is in the area have mask 1), instead of one planned from
   * `cell` and `boundary` (see `designGrid`); a boundary still limits given candidates.
   */
  grid?: Grid;
  /** Covariate model: the encoded covariates of every cell of `grid` (nx·ny rows × q, row-major from the top). */
  covariates?: ArrayLike<number>;
  /** Noise variance of a new measurement (kriging scale). Default: the model's nugget. */
  noise?: number;
  /** Most evaluation points for the area average (default 1,000). */
  maxEvaluationPoints?: number;
  /** Most candidates examined in the screening pass before refinement (default 1,000). */
  maxScreenCandidates?: number;
  /** Coverage: most grid points for k-means (default 20,000). */
  maxCoveragePoints?: number;
  /** Coverage: seed and restarts (defaults 1 and 4). */
  seed?: number;
  restarts?: number;
  /**
   * Variance and decision designs: 'exact' takes the posterior from all samples, 'local' from
   * neighbourhoods; absent, ./design-path.ts chooses by cost and `tolerance`.
   */
  path?: 'exact' | 'local';
  /** Samples per neighbourhood of a local posterior (default 64). */
  neighbours?: number;
  /** How close a local posterior must come to the exact one (% of the prior sd; default mean 1, sd 2). */
  tolerance?: Tolerance;
}

/** Progress and cancellation (functions, so outside the JSON options). */
export interface DesignHooks {
  onProgress?: (done: number, total: number, stage: string) => void;
  isCancelled?: () => boolean;
}

/** One suggested site. */
export interface Suggestion {
  /** 1 = the most useful. */
  rank: number;
  /** Working-CRS metres. */
  x: number;
  y: number;
  /** WGS 84, filled by the caller that knows the CRS. */
  lon?: number;
  lat?: number;
  /**
   * Expected benefit when added after the higher-ranked sites: 'variance' the drop of the average
   * variance over the area (kriging-scale units²); 'decision' the drop of the expected misclassified
   * area (m²); 'coverage' how much the mean squared distance to the nearest sample would rise without
   * this site (m²).
   */
  benefit: number;
  /** Current kriging mean and sd there (data units; null without a model). */
  mean: number | null;
  sd: number | null;
  /** Current P(value > threshold) there (null without a threshold or model). */
  pExceed: number | null;
}

export interface DesignResult {
  mode: DesignMode;
  /** Sites asked for (suggestions may be fewer when the constraints leave no room). */
  requested: number;
  suggestions: Suggestion[];
  /** What `benefit` measures, in words with its unit. */
  benefitMeaning: string;
  /** Scale of the variances and average sd: the data or, for a log model, ln(value). */
  scale: 'data' | 'log';
  /** Mean over the area of the sd of the noise-free surface, before and after the new sites (null in coverage without a model). */
  averageSdBefore: number | null;
  averageSdAfter: number | null;
  /** Expected misclassified area against the threshold, before and after, and their difference (m²). */
  misclassifiedAreaBefore: number | null;
  misclassifiedAreaAfter: number | null;
  /** m² expected to move from uncertain to decided: before − after. */
  areaDecided: number | null;
  /** Coverage: root mean squared distance from the area to the nearest sample, before and after (m). */
  coverageDistanceBefore: number | null;
  coverageDistanceAfter: number | null;
  threshold: number | null;
  /** Area of the grid cells inside the boundary (m²) and the cell size (m). */
  area: number;
  cell: number;
  minSpacing: number;
  evaluationPoints: number;
  /** Candidates after the constraints, and how many the screening pass examined. */
  candidatePoints: number;
  screenedCandidates: number;
  warnings: Warning[];
  caution: string;
  /** Variance and decision designs: the posterior used and why, and a local one's measured error. */
  path?: PathChoice & { neighbours?: number; accuracy?: LocalAccuracy };
}

const DEFAULT_CELLS = 10_000;
const MAX_COUNT = 500;
/** The most evaluation points and screened candidates of a variance-based design (each a row of n features). */
export const MAX_DESIGN_POINTS = 20_000;
/** The most points of a coverage design's objective. */
const MAX_COVERAGE_POINTS = 200_000;

function checkNumber(v: unknown, name: string, min: number, inclusive: boolean): number {
  if (typeof v !== 'number' || !Number.isFinite(v) || (inclusive ? v < min : v <= min)) {
    throw new GapwiseError('bad-option', `Expected ${name} to be a number ${inclusive ? '≥' : '>'} ${min}, got ${String(v)}.`);
  }
  return v;
}

/** A round cell size near `raw`: 1, 2, 2.5 or 5 times a power of ten. */
export function niceCell(raw: number): number {
  if (!(raw > 0) || !Number.isFinite(raw)) return 1;
  const p = 10 ** Math.floor(Math.log10(raw));
  const f = raw / p;
  const step = f < 1.5 ? 1 : f < 2.25 ? 2 : f < 3.5 ? 2.5 : f < 7.5 ? 5 : 10;
  return step * p;
}

/** The default cell size: about 10,000 cells over the area (m² → m). */
export function defaultCell(area: number): number {
  return niceCell(Math.sqrt(area / DEFAULT_CELLS));
}

/** Points at cells (indices into the grid) with their rows of the cells' covariates, when there are any. */
function cellPoints(grid: Grid, x: Float64Array, y: Float64Array, cells: ArrayLike<number>, covariates: ArrayLike<number> | undefined): Points {
  if (!covariates) return { x, y };
  const q = covariates.length / (grid.nx * grid.ny);
  const c = new Float64Array(cells.length * q);
  for (let k = 0; k < cells.length; k++) for (let a = 0; a < q; a++) c[k * q + a] = covariates[cells[k] * q + a];
  return { x, y, covariates: c };
}

/** Active cells thinned to at most `max`: a regular sub-lattice, else every k-th cell. */
function thinCells(grid: Grid, max: number, covariates?: ArrayLike<number>): Points {
  const all = cellCentres(grid);
  const total = all.x.length;
  if (total <= max) return cellPoints(grid, all.x, all.y, all.index, covariates);
  const f = Math.ceil(Math.sqrt(total / max));
  const off = f >> 1;
  const xs: number[] = [];
  const ys: number[] = [];
  const ids: number[] = [];
  for (let k = 0; k < total; k++) {
    const idx = all.index[k];
    const i = idx % grid.nx;
    const j = Math.floor(idx / grid.nx);
    if (i % f === off && j % f === off) {
      xs.push(all.x[k]);
      ys.push(all.y[k]);
      ids.push(idx);
    }
  }
  if (xs.length >= Math.min(max, total) / 8 && xs.length <= max) return cellPoints(grid, Float64Array.from(xs), Float64Array.from(ys), ids, covariates);
  const stride = total / max;
  const m = Math.floor(total / stride);
  const x = new Float64Array(m);
  const y = new Float64Array(m);
  const cells = new Uint32Array(m);
  for (let k = 0; k < m; k++) {
    const at = Math.floor((k + 0.5) * stride);
    x[k] = all.x[at];
    y[k] = all.y[at];
    cells[k] = all.index[at];
  }
  return cellPoints(grid, x, y, cells, covariates);
}

/** One candidate per square bucket of side `size` (the one nearest the bucket's centre). */
function screenSubset(c: Points, size: number): Uint32Array {
  const best = new Map<string, { id: number; d: number }>();
  for (let i = 0; i < c.x.length; i++) {
    const bi = Math.floor(c.x[i] / size);
    const bj = Math.floor(c.y[i] / size);
    const d = Math.hypot(c.x[i] - (bi + 0.5) * size, c.y[i] - (bj + 0.5) * size);
    const key = `${bi},${bj}`;
    const b = best.get(key);
    if (!b || d < b.d || (d === b.d && i < b.id)) best.set(key, { id: i, d });
  }
  return Uint32Array.from([...best.values()].map((b) => b.id).sort((a, b) => a - b));
}

/**
 * The area grid a design plans from its options (without `grid`): the cells of `cell` metres (default
 * about 10,000 over the area) whose centre lies in the boundary, or the bounding box of the samples
 * and given candidates without one; `extent` bounds given candidates without a boundary. Throws
 * GapwiseError 'bad-option' / 'bad-geometry' for an empty area or a bad cell size.
 */
export function designGrid(
  samples: Pick<Samples, 'x' | 'y'>, options: Pick<DesignOptions, 'boundary' | 'candidates' | 'cell'>,
): { grid: Grid; extent: { xmin: number; ymin: number; xmax: number; ymax: number }; warnings: Warning[] } {
  const boundary = options.boundary && options.boundary.length > 0 ? options.boundary : null;
  const given = options.candidates;
  if (given && given.x.length !== given.y.length) {
    throw new GapwiseError('bad-option', `Expected candidate x and y of equal length, got ${given.x.length} and ${given.y.length}.`);
  }
  const warnings: Warning[] = [];
  let areaGuess: number;
  let extent: { xmin: number; ymin: number; xmax: number; ymax: number } | null;
  if (boundary) {
    extent = polygonsExtent(boundary);
    areaGuess = polygonsArea(boundary);
  } else {
    const xs: ArrayLike<number>[] = [samples.x];
    const ys: ArrayLike<number>[] = [samples.y];
    if (given) {
      xs.push(given.x);
      ys.push(given.y);
    }
    extent = extentOfAll(xs, ys);
    if (!(extent.xmax > extent.xmin && extent.ymax > extent.ymin)) {
      throw new GapwiseError('bad-option', 'Without a boundary the area is the samples\' bounding box, which is empty here; expected a boundary polygon or samples spread in both directions.');
    }
    areaGuess = (extent.xmax - extent.xmin) * (extent.ymax - extent.ymin);
    warnings.push({ code: 'no-boundary', message: 'No boundary was given: the area is the bounding box of the samples.' });
  }
  if (!extent || !(areaGuess > 0)) throw new GapwiseError('bad-geometry', 'The boundary encloses no area; expected polygons with a positive area.');
  const cell = options.cell === undefined ? defaultCell(areaGuess) : checkNumber(options.cell, 'the cell size (m)', 0, false);
  const grid = boundary ? gridForPolygons(boundary, cell) : gridFromExtent(extent.xmin, extent.ymin, extent.xmax, extent.ymax, cell);
  return { grid, extent, warnings };
}

function resolveMode(options: DesignOptions, model: CovarianceModel | null): DesignMode {
  const mode = options.mode ?? (model === null ? 'coverage' : options.threshold !== undefined ? 'decision' : 'variance');
  if (mode !== 'variance' && mode !== 'decision' && mode !== 'coverage') {
    throw new GapwiseError('bad-option', `Expected the mode to be "variance", "decision" or "coverage", got ${JSON.stringify(mode)}.`);
  }
  if (mode !== 'coverage' && model === null) {
    throw new GapwiseError('bad-option', `The ${mode} design needs a fitted model; without one, use the coverage design.`);
  }
  if (mode === 'decision' && options.threshold === undefined) {
    throw new GapwiseError('bad-option', 'The decision design needs an action level (threshold); expected a number in data units.');
  }
  return mode;
}

/** The checked counts and limits of a design's options. */
interface DesignLimits {
  count: number;
  mode: DesignMode;
  minSpacing: number;
  maxEval: number;
  maxScreen: number;
  maxCoverage: number;
}

function checkDesignOptions(options: DesignOptions, model: CovarianceModel | null): DesignLimits {
  if (!options || typeof options !== 'object') throw new GapwiseError('bad-option', 'Expected design options with at least a count.');
  const count = checkNumber(options.count, 'the count of new sites', 1, true);
  if (!Number.isInteger(count) || count > MAX_COUNT) {
    throw new GapwiseError('bad-option', `Expected the count of new sites to be a whole number from 1 to ${MAX_COUNT}, got ${count}.`);
  }
  const mode = resolveMode(options, model);
  const minSpacing = options.minSpacing === undefined ? 0 : checkNumber(options.minSpacing, 'the minimum spacing (m)', 0, true);
  if (options.threshold !== undefined) checkNumber(options.threshold, 'the threshold', -Infinity, false);
  if (options.noise !== undefined) checkNumber(options.noise, 'the noise variance', 0, true);
  const maxEval = Math.floor(checkNumber(options.maxEvaluationPoints ?? 1000, 'maxEvaluationPoints', 1, true));
  const maxScreen = Math.floor(checkNumber(options.maxScreenCandidates ?? 1000, 'maxScreenCandidates', 1, true));
  const maxCoverage = Math.floor(checkNumber(options.maxCoveragePoints ?? 20_000, 'maxCoveragePoints', 1, true));
  // Each evaluation point and screened candidate holds a row of n posterior features.
  checkCount(maxEval, MAX_DESIGN_POINTS, 'The evaluation points (maxEvaluationPoints)', 'choose fewer');
  checkCount(maxScreen, MAX_DESIGN_POINTS, 'The screened candidates (maxScreenCandidates)', 'choose fewer');
  checkCount(maxCoverage, MAX_COVERAGE_POINTS, 'The coverage points (maxCoveragePoints)', 'choose fewer');
  return { count, mode, minSpacing, maxEval, maxScreen, maxCoverage };
}

/** The area grid, its cells inside the area and their area, and the covariate columns of the model. */
interface DesignArea {
  grid: Grid;
  extent: { xmin: number; ymin: number; xmax: number; ymax: number };
  cell: number;
  q: number;
  cellsIn: ReturnType<typeof cellCentres>;
  area: number;
}

function designArea(samples: Samples, model: CovarianceModel | null, options: DesignOptions, warnings: Warning[]): DesignArea {
  const given = options.candidates;
  const planned = designGrid(samples, options);
  warnings.push(...planned.warnings);
  const grid = options.grid ?? planned.grid;
  const q = model ? covariateColumnCount(model.trend) : 0;
  if (q > 0) {
    if (!options.grid) throw new GapwiseError('bad-option', 'A model with covariates needs the area grid with the covariates of its cells; expected grid and covariates.');
    checkCovariateRows(model!.trend, grid.nx * grid.ny, options.covariates, 'grid cell');
    if (given) checkCovariateRows(model!.trend, given.x.length, given.covariates, 'candidate');
  }
  const cellsIn = cellCentres(grid);
  return { grid, extent: planned.extent, cell: grid.cell, q, cellsIn, area: cellsIn.x.length * grid.cell * grid.cell };
}

/** Candidates inside the area, outside exclusions and spaced from the samples, with their covariate rows (a given point's own, or its cell's). */
function keepCandidates(samples: Samples, options: DesignOptions, areaOf: DesignArea, minSpacing: number, warnings: Warning[]): Points {
  const { grid, extent, q, cellsIn } = areaOf;
  const boundary = options.boundary && options.boundary.length > 0 ? options.boundary : null;
  const exclusions = options.exclusions ?? [];
  const given = options.candidates;
  const gx = given ? Float64Array.from(given.x) : null;
  const gy = given ? Float64Array.from(given.y) : null;
  const rawX = gx ?? cellsIn.x;
  const rawY = gy ?? cellsIn.y;
  const rawCovariates = q === 0 ? undefined : given ? given.covariates! : cellPoints(grid, cellsIn.x, cellsIn.y, cellsIn.index, options.covariates).covariates!;
  const keepCovariates: number[] = [];
  const sampleIndex = samples.x.length > 0 ? new NeighbourIndex(samples.x, samples.y) : null;
  const keepX: number[] = [];
  const keepY: number[] = [];
  let outside = 0, excluded = 0, tooClose = 0;
  const nearId = new Uint32Array(1);
  const nearD2 = new Float64Array(1);
  for (let i = 0; i < rawX.length; i++) {
    const x = rawX[i], y = rawY[i];
    if (!Number.isFinite(x) || !Number.isFinite(y)) {
      throw new GapwiseError('bad-option', `Candidate ${i + 1} has coordinates (${x}, ${y}); expected finite numbers.`, { row: i + 1 });
    }
    if (boundary ? !pointInPolygons(x, y, boundary) : gx !== null && (x < extent.xmin || x > extent.xmax || y < extent.ymin || y > extent.ymax)) {
      outside++;
      continue;
    }
    if (exclusions.length > 0 && pointInPolygons(x, y, exclusions)) {
      excluded++;
      continue;
    }
    if (minSpacing > 0 && sampleIndex) {
      sampleIndex.nearest(x, y, 1, nearId, nearD2);
      if (Math.sqrt(nearD2[0]) < minSpacing) {
        tooClose++;
        continue;
      }
    }
    keepX.push(x);
    keepY.push(y);
    for (let a = 0; a < q; a++) keepCovariates.push(rawCovariates![i * q + a]);
  }
  if (gx && outside > 0) warnings.push({ code: 'candidates-outside', message: `${outside} of ${gx.length} candidate points lie outside the area and were left out.` });
  if (gx && excluded > 0) warnings.push({ code: 'candidates-excluded', message: `${excluded} of ${gx.length} candidate points lie in an excluded area and were left out.` });
  if (gx && tooClose > 0) warnings.push({ code: 'candidates-too-close', message: `${tooClose} of ${gx.length} candidate points lie closer than ${minSpacing} m to a sample and were left out.` });
  if (keepX.length === 0) {
    throw new GapwiseError('bad-option', `No candidate site is left after the constraints (${outside} outside the area, ${excluded} excluded, ${tooClose} closer than ${minSpacing} m to a sample); expected at least one: relax the spacing or the exclusions.`);
  }
  return { x: Float64Array.from(keepX), y: Float64Array.from(keepY), ...(q > 0 ? { covariates: Float64Array.from(keepCovariates) } : {}) };
}

/** The candidates' covariate rows at `ids` (nothing without covariates). */
function covariatesAtIds(candidates: Points, q: number, ids: number[]): { covariates?: Float64Array } {
  return q > 0
    ? { covariates: Float64Array.from(ids.flatMap((id) => Array.from(candidates.covariates!.subarray(id * q, id * q + q)))) }
    : {};
}

/** The suggestions with their current mean, sd and P(exceed) (from `predicted`, the kriging at the sites). */
function rankedSuggestions(sites: Array<{ x: number; y: number; benefit: number }>, predicted: Prediction | null, threshold: number | undefined, log: boolean): Suggestion[] {
  return sites.map((s, k) => {
    let pExceed: number | null = null;
    if (predicted && threshold !== undefined) {
      const t = threshold;
      pExceed = log
        ? t <= 0 ? 1 : exceedanceProbability(predicted.logMean![k], predicted.logSd![k], Math.log(t))
        : exceedanceProbability(predicted.mean[k], predicted.sd[k], t);
    }
    return {
      rank: k + 1, x: s.x, y: s.y, benefit: s.benefit,
      mean: predicted ? predicted.mean[k] : null, sd: predicted ? predicted.sd[k] : null, pExceed,
    };
  });
}

function shortfallWarning(got: number, count: number, minSpacing: number, warnings: Warning[]): void {
  if (got < count) warnings.push({ code: 'too-few-sites', message: `Only ${got} of ${count} sites fit the constraints (area, exclusions, a spacing of ${minSpacing} m).` });
}

/** The fields every design result shares. */
type DesignBase = Pick<DesignResult, 'mode' | 'requested' | 'threshold' | 'area' | 'cell' | 'minSpacing' | 'candidatePoints' | 'warnings' | 'caution'>;

/** The coverage design (k-means with the samples fixed), and the kriging at its sites when there is a model. */
function coverageSuggestions(
  samples: Samples, model: CovarianceModel | null, options: DesignOptions, limits: DesignLimits, areaOf: DesignArea, candidates: Points,
  base: DesignBase, hooks: DesignHooks,
): DesignResult {
  const { count, minSpacing, maxCoverage } = limits;
  const warnings = base.warnings;
  const log = model?.transform === 'log';
  const points = thinCells(areaOf.grid, maxCoverage, options.covariates);
  const result = coverageDesign({
    points, fixed: { x: samples.x, y: samples.y }, candidates, count, minSpacing,
    seed: options.seed ?? 1, restarts: Math.max(1, Math.floor(options.restarts ?? 4)), maxIterations: 100,
  }, hooks.isCancelled);
  shortfallWarning(result.sites.length, count, minSpacing, warnings);
  let predicted: Prediction | null = null;
  if (model && samples.x.length > 0 && result.sites.length > 0) {
    const sys = buildKrigingSystem(samples, model);
    warnings.push(...sys.warnings);
    predicted = predictWithSystem(sys, result.sites.map((s) => s.x), result.sites.map((s) => s.y), covariatesAtIds(candidates, areaOf.q, result.sites.map((s) => s.index)));
  }
  hooks.onProgress?.(1, 1, 'done');
  return {
    ...base,
    suggestions: rankedSuggestions(result.sites, predicted, options.threshold, log),
    benefitMeaning: 'how much the mean squared distance from the area to the nearest sample would rise without this site (m²)',
    scale: log ? 'log' : 'data',
    averageSdBefore: null, averageSdAfter: null,
    misclassifiedAreaBefore: null, misclassifiedAreaAfter: null, areaDecided: null,
    coverageDistanceBefore: Number.isFinite(result.objectiveBefore) ? Math.sqrt(result.objectiveBefore) : null,
    coverageDistanceAfter: Math.sqrt(result.objectiveAfter),
    evaluationPoints: points.x.length, screenedCandidates: candidates.x.length,
  };
}

/** The screened subset of a large candidate set and the radius its picks are refined within (with a warning), or nothing. */
function screening(candidates: Points, maxScreen: number, areaOf: DesignArea, given: boolean, warnings: Warning[]): { screen?: Uint32Array; refineRadius?: number } {
  if (candidates.x.length <= maxScreen) return {};
  const spacing = given ? Math.sqrt(Math.max(areaOf.area, 1) / candidates.x.length) : areaOf.cell;
  let size = spacing * Math.ceil(Math.sqrt(candidates.x.length / maxScreen));
  let screen = screenSubset(candidates, size);
  while (screen.length > maxScreen) {
    size *= 1.15;
    screen = screenSubset(candidates, size);
  }
  const refineRadius = 0.75 * size;
  warnings.push({
    code: 'screened',
    message: `${candidates.x.length.toLocaleString('en')} candidates were screened on ${screen.length.toLocaleString('en')} of them, and each pick refined among the candidates within ${Math.round(refineRadius)} m.`,
  });
  return { screen, refineRadius };
}

/** The variance or decision design on the exact or local posterior (./design-path.ts chooses). */
function greedySuggestions(
  samples: Samples, model: CovarianceModel, options: DesignOptions, limits: DesignLimits, areaOf: DesignArea, candidates: Points,
  base: DesignBase, hooks: DesignHooks,
): DesignResult {
  const { count, mode, minSpacing, maxEval, maxScreen } = limits;
  const warnings = base.warnings;
  const systemWarningsAt = warnings.length; // the kriging system's warnings come first
  const log = model.transform === 'log';
  const noise = options.noise ?? nuggetOf(model);
  if (noise === 0) warnings.push({ code: 'no-nugget', message: 'The model has no nugget: new measurements are treated as exact.' });
  let threshold: number | undefined;
  if (options.threshold !== undefined) {
    if (log && !(options.threshold > 0)) {
      throw new GapwiseError('bad-option', `A log model needs a threshold greater than 0, got ${options.threshold}.`);
    }
    threshold = log ? Math.log(options.threshold) : options.threshold;
  }
  const evaluation = thinCells(areaOf.grid, maxEval, options.covariates);
  const mE = evaluation.x.length;
  const { screen, refineRadius } = screening(candidates, maxScreen, areaOf, options.candidates !== undefined, warnings);
  if (mE < areaOf.cellsIn.x.length) {
    warnings.push({ code: 'thinned-area', message: `The area's average is taken over ${mE.toLocaleString('en')} of its ${areaOf.cellsIn.x.length.toLocaleString('en')} cells (a regular sub-lattice).` });
  }
  const path = planDesignPath(samples, model, evaluation, {
    candidates: screen ? screen.length : candidates.x.length, sites: count, covariates: areaOf.q > 0,
    ...(options.neighbours !== undefined ? { neighbours: options.neighbours } : {}),
    ...(options.tolerance ? { tolerance: options.tolerance } : {}), ...(options.path ? { force: options.path } : {}),
  });
  warnings.push(...path.warnings);
  const sys = path.local ? undefined : buildKrigingSystem(samples, model);
  if (sys) warnings.splice(systemWarningsAt, 0, ...sys.warnings);
  const candIndex = new NeighbourIndex(candidates.x, candidates.y);
  const result = greedyDesign({
    ...(sys ? { system: sys } : {}), ...(path.local ? { local: path.local } : {}),
    evaluation, evaluationArea: areaOf.area / mE, candidates, screen, refineRadius, within: (x, y, r) => candIndex.within(x, y, r),
    allowed: new Uint8Array(candidates.x.length).fill(1), count, noise, minSpacing,
    threshold: mode === 'decision' ? threshold : undefined,
    reportThreshold: threshold,
  }, { onProgress: (d, t) => hooks.onProgress?.(d, t, 'sites'), isCancelled: hooks.isCancelled });
  shortfallWarning(result.picks.length, count, minSpacing, warnings);
  const sites = { x: result.picks.map((s) => s.x), y: result.picks.map((s) => s.y) };
  const predicted = result.picks.length === 0 ? null
    : sys ? predictWithSystem(sys, sites.x, sites.y, covariatesAtIds(candidates, areaOf.q, result.picks.map((s) => s.index)))
      : createLocalPredictor(samples, model, { neighbours: path.neighbours }).predict(sites.x, sites.y);
  let sdBefore = 0;
  let sdAfter = 0;
  for (let e = 0; e < mE; e++) {
    sdBefore += Math.sqrt(result.varianceBefore[e]);
    sdAfter += Math.sqrt(result.varianceAfter[e]);
  }
  hooks.onProgress?.(1, 1, 'done');
  const before = result.misclassifiedBefore ?? null;
  const after = result.misclassifiedAfter ?? null;
  return {
    ...base,
    suggestions: rankedSuggestions(result.picks, predicted, options.threshold, log),
    benefitMeaning: mode === 'decision'
      ? 'drop of the expected misclassified area against the threshold (m²)'
      : `drop of the average variance of the surface over the area (${log ? 'ln(value)' : 'data unit'} squared)`,
    scale: log ? 'log' : 'data',
    averageSdBefore: sdBefore / mE,
    averageSdAfter: sdAfter / mE,
    misclassifiedAreaBefore: before,
    misclassifiedAreaAfter: after,
    areaDecided: before !== null && after !== null ? before - after : null,
    coverageDistanceBefore: null,
    coverageDistanceAfter: null,
    evaluationPoints: mE,
    screenedCandidates: screen ? screen.length : candidates.x.length,
    path: { ...path.choice, ...(path.neighbours !== undefined ? { neighbours: path.neighbours } : {}), ...(path.accuracy ? { accuracy: path.accuracy } : {}) },
  };
}

/**
 * Suggests where to sample next. `model` may be null (coverage design only).
 * Throws GapwiseError: 'bad-option' (count, cell, spacing, mode, no room for candidates),
 * 'bad-geometry' (boundary), 'cancelled', and the kriging errors of ./kriging.ts.
 */
export function suggestSites(
  samples: Samples, model: CovarianceModel | null, options: DesignOptions, hooks: DesignHooks = {},
): DesignResult {
  const limits = checkDesignOptions(options, model);
  const warnings: Warning[] = [];
  hooks.onProgress?.(0, 1, 'area');
  const areaOf = designArea(samples, model, options, warnings);
  const candidates = keepCandidates(samples, options, areaOf, limits.minSpacing, warnings);
  const base: DesignBase = {
    mode: limits.mode, requested: limits.count, threshold: options.threshold ?? null, area: areaOf.area, cell: areaOf.cell, minSpacing: limits.minSpacing,
    candidatePoints: candidates.x.length, warnings, caution: CAUTION,
  };
  if (limits.mode === 'coverage') return coverageSuggestions(samples, model, options, limits, areaOf, candidates, base, hooks);
  return greedySuggestions(samples, model as CovarianceModel, options, limits, areaOf, candidates, base, hooks);
}
