/**
 * Covariates of the mean on the command line: `--covariates A,B` and `--categorical A` for `fit`,
 * the samples' covariate columns for every command that uses a covariate model, and the targets'
 * columns for `predict` (a missing column, an empty or a non-numeric cell is exit 2 naming the column
 * and the line).
 */
import { GapwiseError } from '../core/shared/errors.ts';
import { encodeCovariates, resolveCovariateTrend, type CovariateColumn } from '../core/covariance/covariates.ts';
import { isCovariateTrend, isKnownTrend, parseCovariateTrend, type CovariateTrend, type Trend } from '../core/covariance/model.ts';
import type { Samples } from '../core/shared/samples.ts';
import type { IntakeResult } from '../io/types.ts';
import { covariateColumns } from '../io/sample-columns.ts';
import { chooseMark, isMissing, parseColumnNumber } from '../io/numbers.ts';
import type { OptionSpec } from './args.ts';
import { repeatedOption, stringOption } from './args.ts';
import { openInputFile } from './input-file.ts';
import { readCovariateRaster, type CovariateRaster } from '../io/covariate-raster.ts';
import type { CsvTable } from './csv.ts';
import type { OptionValues } from './common.ts';
import type { Warning } from '../core/shared/errors.ts';
import { clipToPolygons, type Grid, type Polygon } from '../core/geometry/grid.ts';
import { designGrid, type DesignOptions } from '../core/design/design.ts';
import { gridCovariates, rasterCovariatesAt, rasterLattice } from '../io/covariate-raster.ts';

/** The options `fit` takes for covariates. */
export const COVARIATE_OPTIONS: OptionSpec[] = [
  {
    name: 'covariates', kind: 'string', placeholder: 'A,B',
    help: 'sample columns that drive the mean (kriging with external drift): the mean is an unknown constant plus a coefficient times each; text columns are categories (one indicator per level after the first); with --trend linear the x, y drift is added',
    defaultText: 'none',
  },
  {
    name: 'categorical', kind: 'string', placeholder: 'A,B',
    help: 'covariates holding integer codes to treat as categories (text columns are categories anyway)', defaultText: 'none',
  },
];

function list(raw: string | undefined): string[] {
  return raw === undefined ? [] : raw.split(',').map((s) => s.trim()).filter((s) => s !== '');
}

/**
 * The trend of a fit: `base` (from --trend) alone, or with --covariates a covariate trend whose x, y
 * drift is on when base is 'linear'. Throws GapwiseError 'bad-option' for --covariates with a known
 * mean, and --categorical without --covariates or naming another column.
 */
export function trendWithCovariates(values: OptionValues, base: Trend): Trend {
  const names = list(stringOption(values, 'covariates'));
  const categorical = list(stringOption(values, 'categorical'));
  if (names.length === 0) {
    if (categorical.length > 0) throw new GapwiseError('bad-option', 'Option "--categorical" names covariates; expected --covariates too.');
    return base;
  }
  if (isKnownTrend(base)) {
    throw new GapwiseError('bad-option', `Option "--covariates" needs an estimated mean; expected --trend constant or linear, got known:${base.known}.`);
  }
  for (const c of categorical) {
    if (!names.includes(c)) throw new GapwiseError('bad-option', `Option "--categorical" names "${c}", which is not in --covariates (${names.join(', ')}).`);
  }
  const raw: Record<string, unknown> = { covariates: names };
  if (base === 'linear') raw.coordinates = true;
  if (categorical.length > 0) raw.categorical = categorical;
  try {
    return parseCovariateTrend(raw, '--covariates');
  } catch (e) {
    if (e instanceof GapwiseError) throw new GapwiseError('bad-option', e.message);
    throw e;
  }
}

/**
 * The samples with their encoded covariate columns, and the trend with its categorical levels
 * recorded (kept as the model records them when they already are). `fitted` (default): the trend of a
 * fitted model, so a covariate without levels must be numeric; false for the trend a fit starts from.
 * Other trends pass through.
 */
export function withSampleCovariates<T extends Trend>(intake: IntakeResult, samples: Samples, trend: T, fitted = true): { samples: Samples; trend: T } {
  if (!isCovariateTrend(trend)) return { samples, trend };
  const { columns, source } = covariateColumns(intake, trend, 'sample', fitted);
  const resolved = resolveCovariateTrend(trend, columns, source);
  const covariates = encodeCovariates(resolved, columns, samples.value.length, source);
  return { samples: { ...samples, covariates }, trend: resolved as T };
}

/**
 * The targets' encoded covariate columns (one row per record) under a trend with recorded levels;
 * undefined for other trends. A missing column, an empty cell, a non-number in a numeric covariate or
 * a level the samples did not have is GapwiseError (exit 2) naming the column and the line.
 */
export function tableCovariates(table: CsvTable, file: string, trend: Trend): Float64Array | undefined {
  if (!isCovariateTrend(trend)) return undefined;
  const names = table.header.cells.map((c) => c.trim());
  const columns: Record<string, CovariateColumn> = {};
  for (const name of trend.covariates) {
    const col = names.indexOf(name);
    if (col === -1) {
      throw new GapwiseError('missing-column', `The targets have no column "${name}", a covariate of the model; expected the same covariate columns as the samples.`,
        { file, row: table.header.line, column: name });
    }
    const cells = table.records.map((r) => r.cells[col] ?? '');
    for (let i = 0; i < cells.length; i++) {
      if (isMissing(cells[i])) {
        throw new GapwiseError('bad-value', `The covariate "${name}" is empty; expected ${trend.levels?.[name] ? 'one of its levels' : 'a number'} at every target.`,
          { file, row: table.records[i].line, column: name, raw: cells[i] });
      }
    }
    if (trend.levels?.[name]) {
      const levels: string[] = [];
      const index = new Map<string, number>();
      const codes = new Uint32Array(cells.length);
      cells.forEach((c, i) => {
        const level = c.trim();
        if (!index.has(level)) { index.set(level, levels.length); levels.push(level); }
        codes[i] = index.get(level)!;
      });
      const allNumbers = trend.levels[name].every((l) => Number.isFinite(Number(l)));
      // Integer codes read as numbers ("3.0" is the level "3"); text levels as written.
      columns[name] = allNumbers
        ? { kind: 'numeric', values: Float64Array.from(cells, (c) => (Number.isFinite(Number(c.trim())) ? Number(c.trim()) : NaN)) }
        : { kind: 'text', codes, levels };
      if (allNumbers) {
        const bad = cells.findIndex((c) => !Number.isFinite(Number(c.trim())));
        if (bad >= 0) {
          throw new GapwiseError('bad-value', `The level "${cells[bad].trim()}" of the covariate "${name}" is not among the levels of the samples (${trend.levels[name].join(', ')}); expected one of those.`,
            { file, row: table.records[bad].line, column: name, raw: cells[bad] });
        }
      }
      continue;
    }
    const marks = chooseMark(cells, table.delimiter);
    const values = new Float64Array(cells.length);
    for (let i = 0; i < cells.length; i++) {
      const v = parseColumnNumber(cells[i], marks);
      if (!v.ok) {
        throw new GapwiseError('bad-value', `"${cells[i]}" ${v.reason}; expected a number for the covariate "${name}".`,
          { file, row: table.records[i].line, column: name, raw: cells[i] });
      }
      values[i] = v.value;
    }
    columns[name] = { kind: 'numeric', values };
  }
  return encodeCovariates(trend, columns, table.records.length, { file, line: (i) => table.records[i].line, what: 'target' });
}


/** The option `grid` takes for covariate rasters (repeatable). */
export const COVARIATE_RASTER_OPTION: OptionSpec = {
  name: 'covariate-raster', kind: 'string', placeholder: 'NAME=FILE.tif', repeatable: true,
  help: 'a model covariate on the grid from a single-band GeoTIFF in any EPSG CRS (reprojected; bilinear for numbers, nearest cell for categories); give it once per covariate. Without --cell the grid is the raster\'s own lattice (clipped by --boundary)',
  defaultText: 'none',
};

/** Raster size limit: the same as for sample files. */
const MAX_RASTER_BYTES = 512 * 1024 * 1024;

/** Reads every --covariate-raster NAME=FILE. Throws 'bad-option' for a malformed value or a name given twice. */
export async function readCovariateRasters(values: OptionValues, cwd: string): Promise<CovariateRaster[]> {
  const out: CovariateRaster[] = [];
  for (const raw of repeatedOption(values, 'covariate-raster')) {
    const eq = raw.indexOf('=');
    const name = eq > 0 ? raw.slice(0, eq).trim() : '';
    const file = eq > 0 ? raw.slice(eq + 1).trim() : '';
    if (name === '' || file === '') {
      throw new GapwiseError('bad-option', `Option "--covariate-raster" expects NAME=FILE.tif (e.g. workshop_dist_m=workshop-distance.tif), got "${raw}".`);
    }
    if (out.some((r) => r.name === name)) throw new GapwiseError('bad-option', `Option "--covariate-raster" names "${name}" twice; expected one raster per covariate.`);
    const { size, chunks } = openInputFile(cwd, file, MAX_RASTER_BYTES);
    const bytes = new Uint8Array(size);
    let at = 0;
    for (const c of chunks) { bytes.set(c.subarray(0, Math.min(c.length, size - at)), at); at += c.length; }
    out.push(await readCovariateRaster(bytes.subarray(0, Math.min(at, size)), name, file));
  }
  return out;
}

/**
 * Checks that --covariate-raster goes with a covariate model and that a covariate model has rasters.
 * Throws GapwiseError 'bad-option'.
 */
export function checkCovariateRasters(trend: Trend, rasters: ReadonlyArray<CovariateRaster>): void {
  const covariateModel = isCovariateTrend(trend);
  if (rasters.length > 0 && !covariateModel) {
    throw new GapwiseError('bad-option', 'Option "--covariate-raster" applies to a model with covariates (fit --covariates); this model has none.');
  }
  if (covariateModel && rasters.length === 0) {
    throw new GapwiseError('bad-option', `The model's mean uses the covariates ${(trend as CovariateTrend).covariates.join(', ')}; expected --covariate-raster NAME=FILE.tif for each on the grid.`);
  }
}

/** The grid of a covariate model without --cell: the first covariate's raster lattice, clipped by the boundary. */
export function covariateLattice(trend: CovariateTrend, rasters: ReadonlyArray<CovariateRaster>, workCrs: string, polygons: ReadonlyArray<Polygon> | null): Grid {
  const first = rasters.find((r) => r.name === trend.covariates[0]) ?? rasters[0];
  const grid = rasterLattice(first, workCrs);
  return polygons && polygons.length > 0 ? clipToPolygons(grid, polygons) : grid;
}

/** What a command's grid needs for a covariate model (`simulate`, `grid`). */
export interface GridCovariates {
  /** The samples, with their encoded covariate columns for a covariate model. */
  samples: Samples;
  /** The grid, cells without covariate values masked out. */
  grid: Grid;
  /** The covariates at each cell's k × k block points (k = 1: the centre), for simulations and block kriging. */
  nodeCovariates?: Float64Array;
  warnings: Warning[];
}

/**
 * The samples, grid and covariates of a command that works on a grid: for a covariate model, the
 * rasters of --covariate-raster, the grid (`planned()` when --cell is given, else the first
 * covariate's raster lattice clipped by the boundary) and the covariates at each cell's `nodes` × `nodes`
 * block points; for other models the samples as read and `planned()`.
 */
export async function gridWithCovariates(
  values: OptionValues, cwd: string, intake: IntakeResult, trend: Trend,
  options: { cell?: number; polygons: ReadonlyArray<Polygon> | null; planned: () => Grid; nodes: number },
): Promise<GridCovariates> {
  const rasters = await readCovariateRasters(values, cwd);
  checkCovariateRasters(trend, rasters);
  if (!isCovariateTrend(trend)) return { samples: intake.samples, grid: options.planned(), warnings: [] };
  const workCrs = intake.report.crs.work;
  const { samples, trend: resolved } = withSampleCovariates(intake, intake.samples, trend);
  const grid = options.cell === undefined ? covariateLattice(resolved, rasters, workCrs, options.polygons) : options.planned();
  const g = gridCovariates(grid, resolved, rasters, workCrs, { nodes: options.nodes });
  return { samples, grid: g.grid, ...(g.nodeCovariates ? { nodeCovariates: g.nodeCovariates } : {}), warnings: g.warnings };
}

/**
 * `suggest` with a covariate model: the samples with their covariate columns and the design options
 * that carry the covariates — the area grid (`--cell` over the boundary, else the first covariate's
 * raster lattice clipped by the boundary) with its cells' covariates (cells without a value left out
 * of the area), and the covariates at given candidates (a candidate without a value is GapwiseError
 * 'bad-value' naming it). Other models: the samples as read, no additions.
 */
export async function designWithCovariates(
  values: OptionValues, cwd: string, intake: IntakeResult, trend: Trend | null, options: DesignOptions,
): Promise<{ samples: Samples; options: Pick<DesignOptions, 'grid' | 'covariates' | 'candidates'>; warnings: Warning[] }> {
  const rasters = await readCovariateRasters(values, cwd);
  if (trend === null) {
    if (rasters.length > 0) throw new GapwiseError('bad-option', 'Option "--covariate-raster" applies to a model with covariates (fit --covariates); none was given.');
    return { samples: intake.samples, options: {}, warnings: [] };
  }
  checkCovariateRasters(trend, rasters);
  if (!isCovariateTrend(trend)) return { samples: intake.samples, options: {}, warnings: [] };
  const workCrs = intake.report.crs.work;
  const { samples, trend: resolved } = withSampleCovariates(intake, intake.samples, trend);
  const planned = options.cell === undefined ? covariateLattice(resolved, rasters, workCrs, options.boundary ?? null) : designGrid(samples, options).grid;
  const g = gridCovariates(planned, resolved, rasters, workCrs);
  const out: Pick<DesignOptions, 'grid' | 'covariates' | 'candidates'> = { grid: g.grid, covariates: g.covariates };
  if (options.candidates) {
    const { x, y } = options.candidates;
    const at = rasterCovariatesAt(resolved, rasters, x, y, workCrs);
    const bad = at.missing.indexOf(1);
    if (bad >= 0) {
      throw new GapwiseError('bad-value', `Candidate ${bad + 1} at (${x[bad]}, ${y[bad]}) has no value in a covariate raster (${resolved.covariates.join(', ')}); expected candidates inside the rasters.`, { row: bad + 1 });
    }
    out.candidates = { x, y, covariates: at.covariates };
  }
  return { samples, options: out, warnings: g.warnings };
}
