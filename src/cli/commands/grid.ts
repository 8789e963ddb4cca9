/**
 * `gapwise grid`: mean, sd and (with --threshold) P(exceed) on a regular grid, written by the
 * extension of --out: .tif (GeoTIFF, one Float32 band per surface), .csv (one row per cell inside
 * the area) or .geojson (contour bands and isolines of the mean and P(exceed), WGS 84). A JSON
 * summary with the caution goes to stdout. With --project the grid is the project's own, cell for
 * cell, so the numbers are the app's.
 */
import { writeFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { GapwiseError, type Warning } from '../../core/errors.ts';
import { cellCount, type Grid } from '../../core/grid.ts';
import { computeSurface } from '../../core/surface.ts';
import { surfaceGeoTiff } from '../../io/geotiff.ts';
import { surfaceContours } from '../../io/contours.ts';
import { surfaceGridCsv } from '../../io/grid-csv.ts';
import { DEFAULT_PADDING, openProject, planSurfaceGrid, projectGrid, type Project } from '../../io/project.ts';
import { numberOption, stringOption } from '../args.ts';
import {
  CAUTION, SAMPLE_OPTIONS, jsonText, modelWorkCrs, naming, printWarnings, readModelFile, readSamplesFile, readText,
  type CliIo, type CommandSpec, type OptionValues,
} from '../common.ts';
import { readBoundaryFile } from '../boundary-file.ts';

type Format = 'tif' | 'csv' | 'geojson';

function formatOf(file: string): Format {
  const lower = file.toLowerCase();
  if (lower.endsWith('.tif') || lower.endsWith('.tiff')) return 'tif';
  if (lower.endsWith('.csv')) return 'csv';
  if (lower.endsWith('.geojson') || lower.endsWith('.json')) return 'geojson';
  throw new GapwiseError('bad-option', `Option "--out ${file}" has an extension Gapwise cannot write; expected .tif, .csv or .geojson.`);
}

/** "50,100,200" → [50, 100, 200]. */
export function parseLevels(raw: string, option: string): number[] {
  const parts = raw.split(',').map((s) => s.trim()).filter((s) => s !== '');
  const out = parts.map(Number);
  if (parts.length === 0 || out.some((v) => !Number.isFinite(v))) {
    throw new GapwiseError('bad-option', `Option "--${option}" expects numbers separated by commas (e.g. 50,100,200), got "${raw}".`);
  }
  return out;
}

function writeBytes(io: CliIo, file: string, bytes: Uint8Array | string): void {
  try {
    writeFileSync(resolve(io.cwd, file), bytes);
  } catch (e) {
    throw new GapwiseError('bad-file', `Cannot write the file: ${(e as Error).message}.`, { file });
  }
}

async function run(values: OptionValues, io: CliIo): Promise<number> {
  const out = stringOption(values, 'out') as string;
  const format = formatOf(out);
  const modelPath = stringOption(values, 'model') as string;
  const modelFile = readModelFile(io, modelPath);
  const { model } = modelFile;
  const intake = readSamplesFile(io, values, modelWorkCrs(values, modelFile, modelPath));
  const workCrs = intake.report.crs.work;
  if (modelFile.workCrs === undefined) printWarnings(io, [`${modelPath} does not say which working CRS its distances are in; ${workCrs} is assumed.`]);

  const projectPath = stringOption(values, 'project');
  const project: Project | null = projectPath === undefined ? null : openProject(readText(io, projectPath), projectPath).project;
  const boundaryPath = stringOption(values, 'boundary');
  const boundary = boundaryPath === undefined ? null : readBoundaryFile(io, boundaryPath, intake);
  const cell = numberOption(values, 'cell');
  const padding = numberOption(values, 'padding');
  if (cell !== undefined && !(cell > 0)) throw new GapwiseError('bad-option', `Option "--cell" expects a cell size above 0 m, got ${cell}.`);
  if (padding !== undefined && !(padding >= 0)) throw new GapwiseError('bad-option', `Option "--padding" expects a fraction of 0 or more, got ${padding}.`);

  // The project's grid as stored, unless the command line changed what it depends on.
  const projectBoundaryKey = project?.boundary ? `${projectPath}:${project.boundary.fileName}` : undefined;
  const sameArea = project !== null && padding === undefined
    && (project.grid.area === 'boundary' ? boundaryPath === projectBoundaryKey : boundaryPath === undefined);
  let grid: Grid;
  if (project && sameArea) {
    grid = projectGrid(project, intake, boundary ? { work: boundary.polygons } : null, cell !== undefined ? { cellSize: cell } : {});
  } else {
    grid = planSurfaceGrid({
      x: intake.samples.x, y: intake.samples.y,
      padding: padding ?? project?.grid.padding ?? DEFAULT_PADDING,
      cellSize: cell ?? project?.grid.cellSize ?? 0,
      polygons: boundary ? boundary.polygons.map((p) => p.rings) : null,
    });
  }

  const threshold = numberOption(values, 'threshold');
  if (threshold !== undefined && model.transform === 'log' && !(threshold > 0)) {
    throw new GapwiseError('bad-option', `Option "--threshold" must be above 0 with a log model, got ${threshold}.`);
  }
  const files = { samples: intake.report.fileName, model: modelPath };
  const surface = naming(files, () => computeSurface(intake.samples, model, grid, {
    ...(threshold !== undefined ? { threshold } : {}),
    precision: format === 'csv' ? 'float64' : 'float32',
  }));
  const warnings: Warning[] = [...surface.warnings];
  const unit = project?.samples.unit || intake.report.unit;
  const valueName = intake.report.valueColumn.replace(/\s*\([^)]*\)\s*$/, '');
  let bands: string[] | undefined;
  let features: number | undefined;
  if (format === 'tif') {
    const tif = surfaceGeoTiff({ grid, surface, workCrs, unit, valueName });
    warnings.push(...tif.warnings);
    bands = tif.bands;
    writeBytes(io, out, new Uint8Array(tif.buffer));
  } else if (format === 'csv') {
    writeBytes(io, out, surfaceGridCsv({ grid, surface, workCrs, unit }));
  } else {
    const levels = stringOption(values, 'levels');
    const fc = surfaceContours({ grid, surface, workCrs, unit, meanLevels: levels === undefined ? undefined : parseLevels(levels, 'levels') });
    features = fc.features.length;
    writeBytes(io, out, `${JSON.stringify(fc)}\n`);
  }
  printWarnings(io, warnings);
  io.stdout(jsonText({
    out, format, workCrs,
    grid: { x0: grid.x0, y0: grid.y0, cell: grid.cell, nx: grid.nx, ny: grid.ny, cells: cellCount(grid) },
    threshold: threshold ?? null,
    ...(bands ? { bands } : {}),
    ...(features !== undefined ? { features } : {}),
    range: surface.range,
    unit,
    caution: CAUTION,
  }));
  return 0;
}

export const gridCommand: CommandSpec = {
  name: 'grid',
  summary: 'surfaces on a grid: GeoTIFF (.tif), CSV (.csv) or contour GeoJSON (.geojson)',
  usage: 'gapwise grid --samples FILE --model FILE --out FILE.tif|.csv|.geojson [--cell M] [--boundary FILE] [--threshold T] [options]',
  description: [
    'Kriging with the model as given (never refitted) on a north-up grid in the working CRS: over the samples\' '
      + 'extent widened by --padding, or over --boundary, where only cells whose centre lies inside are computed. '
      + 'The extension of --out chooses the output: .tif writes a GeoTIFF with one Float32 band each for the mean, '
      + 'the sd and, with --threshold, P(value > T), with the working CRS\'s EPSG code, band names and no-data '
      + '-9999 outside the area; .csv writes x, y, lon, lat, mean, sd (and p_exceed) for each cell inside the area; '
      + '.geojson writes filled bands and isolines of the mean (and of P(exceed)) in WGS 84 longitude/latitude.',
    'A JSON summary (grid, bands, value ranges and the screening caution) goes to stdout. The caution is also in '
      + 'the GeoTIFF description, on the first line of the CSV and in every contour.',
  ],
  options: [
    { name: 'model', kind: 'string', placeholder: 'FILE', help: 'model JSON, as written by "gapwise fit"', required: true },
    { name: 'out', kind: 'string', placeholder: 'FILE', help: 'file to write: .tif, .csv or .geojson', required: true },
    { name: 'cell', kind: 'number', placeholder: 'M', help: 'cell size', unit: 'm', defaultText: 'the project\'s, else about 40,000 cells rounded to 1, 2, 2.5 or 5 × 10^k m' },
    { name: 'boundary', kind: 'string', placeholder: 'FILE', help: 'GeoJSON polygon(s) of the area (longitude/latitude); cells outside are no-data', defaultText: 'none: the samples\' extent' },
    { name: 'padding', kind: 'number', placeholder: 'F', help: 'margin around the samples\' extent as a fraction of its larger side (without --boundary)', defaultText: '0.05' },
    { name: 'threshold', kind: 'number', placeholder: 'T', help: 'action level: adds P(value > T)', unit: 'the samples\' unit', defaultText: 'none' },
    { name: 'levels', kind: 'string', placeholder: 'LIST', help: 'contour levels of the mean for .geojson, comma-separated', defaultText: 'about 8 round values over the range' },
    ...SAMPLE_OPTIONS,
  ],
  examples: [
    'gapwise grid --samples data-demo/lead-topsoil.csv --model lead-model.json --boundary data-demo/site-boundary.geojson --cell 2 --threshold 200 --out lead.tif',
    'gapwise grid --project site.gapwise.json --out lead-contours.geojson',
  ],
  run,
};
