/**
 * `gapwise suggest`: where to sample next. With a model: the sites that most reduce the average
 * uncertainty of the map, or with --threshold the expected area classified on the wrong side of the
 * action level; without a model: sites that cover the area evenly. Writes .geojson, .csv or .gpx by
 * the extension of --out and prints a JSON summary (with the caution) on stdout.
 */
import { SOFTWARE } from '../../core/shared/version.ts';
import { COVARIATE_RASTER_OPTION, designWithCovariates } from '../covariates.ts';
import { GapwiseError, type Warning } from '../../core/shared/errors.ts';
import { suggestSites, type DesignMode, type DesignOptions, type DesignResult } from '../../core/design/design.ts';
import type { Polygon as CorePolygon } from '../../core/geometry/grid.ts';
import { createTransform, LOCAL_CRS } from '../../io/crs.ts';
import { projectPolygons, readPolygons } from '../../io/boundary.ts';
import { readPointFeatures } from '../../io/geojson.ts';
import { chooseMark, isMissing, parseColumnNumber } from '../../io/numbers.ts';
import { suggestionsToCsv, suggestionsToGeoJson } from '../../io/suggestions-export.ts';
import { suggestionsToGpx } from '../../io/gpx.ts';
import type { IntakeResult } from '../../io/types.ts';
import { numberOption, stringOption } from '../args.ts';
import {
  CAUTION, SAMPLE_OPTIONS, assignDefined, count as countText, findUsualColumn, jsonText, modelWorkCrs, naming, outOption,
  printNotes, printWarnings, progressLine, readModelFile, readSamplesFile, readText, warnUnstatedWorkCrs, writeOutput,
  type CliIo, type CommandSpec, type OptionValues,
} from '../common.ts';
import { USUAL_COORDINATE_NAMES } from '../../io/intake-columns.ts';
import { readBoundaryFile } from '../boundary-file.ts';
import { CSV_CAUTION, readCsvTable } from '../csv.ts';
import { analyteRequest } from '../analytes.ts';
import { modelFromSet, refuseSeveralAnalytes } from '../analyte-runs.ts';
import { readSimulationPathRequest } from '../simulation-options.ts';
import { DEFAULT_TOLERANCE, EXACT_SAMPLE_LIMIT } from '../../core/prediction/path-choice.ts';
import { describeAccuracy } from '../../core/prediction/local-accuracy.ts';
import { DEFAULT_DESIGN_NEIGHBOURS } from '../../core/design/design-path.ts';

/** The notes that say which posterior chose the sites and why, in the words predict uses, and a local one's measured error. */
function describeDesignPath(p: NonNullable<DesignResult['path']>, n: number): string[] {
  if (p.path === 'exact') {
    return [`sites chosen on the kriging posterior from all ${countText(n)} samples${p.automatic ? `; chosen automatically: ${p.reason} (--local overrides)` : ' (--exact)'}`];
  }
  const why = p.automatic ? `; chosen automatically: ${p.reason} (--exact overrides)` : ' (--local)';
  const notes = [`sites chosen on the posterior from the ${p.neighbours ?? DEFAULT_DESIGN_NEIGHBOURS} nearest samples of each point (local neighbourhoods); ${countText(n)} samples${why}`];
  if (p.accuracy) notes.push(`measured error of the local posterior ${describeAccuracy(p.accuracy)}`);
  return notes;
}

type Format = 'geojson' | 'csv' | 'gpx';

function formatOf(file: string): Format {
  const lower = file.toLowerCase();
  if (lower.endsWith('.geojson') || lower.endsWith('.json')) return 'geojson';
  if (lower.endsWith('.csv')) return 'csv';
  if (lower.endsWith('.gpx')) return 'gpx';
  throw new GapwiseError('bad-option', `Option "--out ${file}" has an extension Gapwise cannot write; expected .geojson, .csv or .gpx.`);
}

function isLocal(crs: string): boolean {
  return crs.trim().toLowerCase() === LOCAL_CRS;
}

/** Exclusion polygons from GeoJSON (WGS 84) in the working CRS. */
function readExclusions(io: CliIo, file: string, workCrs: string): CorePolygon[] {
  const text = readText(io, file);
  try {
    return projectPolygons(readPolygons(text, file), workCrs).map((p) => p.rings);
  } catch (e) {
    if (e instanceof GapwiseError && e.place.file === undefined) e.place.file = file;
    throw e;
  }
}

/** Accessible points: a CSV with coordinate columns, or GeoJSON points (WGS 84); returned in the working CRS. */
function readCandidates(io: CliIo, file: string, values: OptionValues, intake: IntakeResult): { x: Float64Array; y: Float64Array } {
  const workCrs = intake.report.crs.work;
  const text = readText(io, file);
  const lower = file.toLowerCase();
  let x: Float64Array;
  let y: Float64Array;
  let crs: string;
  let lines: number[];
  if (lower.endsWith('.geojson') || lower.endsWith('.json')) {
    const points = readPointFeatures(text, file);
    if (points.entries.length > 0) {
      const e = points.entries[0];
      throw new GapwiseError('bad-geometry', `Feature ${e.feature}: ${e.reason}`, { file, feature: e.feature });
    }
    x = Float64Array.from(points.records, (r) => r.lon);
    y = Float64Array.from(points.records, (r) => r.lat);
    crs = 'EPSG:4326';
    lines = points.records.map((r) => r.feature);
  } else {
    const table = readCsvTable(text, file);
    const names = table.header.cells.map((c) => c.trim());
    const xi = findUsualColumn(names, intake.report.xColumn, 'x');
    const yi = findUsualColumn(names, intake.report.yColumn, 'y');
    if (xi === -1 || yi === -1) {
      throw new GapwiseError('missing-column',
        `No ${xi === -1 ? 'x' : 'y'} coordinate column was found among ${names.map((n) => `"${n}"`).join(', ')}; expected the samples' column name or a usual name (${USUAL_COORDINATE_NAMES[xi === -1 ? 'x' : 'y']}).`,
        { file, row: table.header.line });
    }
    const read = (col: number): Float64Array => {
      const marks = chooseMark(table.records.map((r) => r.cells[col] ?? ''), table.delimiter);
      return Float64Array.from(table.records, (r) => {
        const raw = r.cells[col];
        if (raw === undefined || isMissing(raw)) {
          throw new GapwiseError('bad-value', `The ${names[col]} coordinate is missing; expected a number.`, { file, row: r.line, column: names[col], raw: raw ?? '' });
        }
        const v = parseColumnNumber(raw, marks);
        if (!v.ok) throw new GapwiseError('bad-value', `"${raw}" ${v.reason}; expected a number.`, { file, row: r.line, column: names[col], raw });
        return v.value;
      });
    };
    x = read(xi);
    y = read(yi);
    crs = stringOption(values, 'candidates-crs') ?? stringOption(values, 'crs') ?? intake.report.crs.input;
    lines = table.records.map((r) => r.line);
  }
  if (x.length === 0) throw new GapwiseError('bad-file', 'The candidates file holds no points; expected at least one.', { file });
  const work = createTransform(crs, workCrs).forwardMany(x, y);
  for (let i = 0; i < x.length; i++) {
    if (!Number.isFinite(work.x[i]) || !Number.isFinite(work.y[i])) {
      throw new GapwiseError('bad-value', `The point (${x[i]}, ${y[i]}) cannot be transformed from ${crs} to ${workCrs}; expected coordinates valid in ${crs}.`,
        { file, row: lines[i] });
    }
  }
  return work;
}

function rounded(v: number | null, digits = 6): number | null {
  return v === null || !Number.isFinite(v) ? null : Number(v.toPrecision(digits + 6));
}

async function run(values: OptionValues, ioGiven: CliIo): Promise<number> {
  const analytes = analyteRequest(values);
  if (analytes) refuseSeveralAnalytes('suggest', analytes);
  const io = modelFromSet(values, ioGiven);
  const modelPath = stringOption(values, 'model');
  const out = stringOption(values, 'out');
  const format = out === undefined ? null : formatOf(out);
  const modelFile = modelPath === undefined ? null : readModelFile(io, modelPath);
  const intake = readSamplesFile(io, values, modelFile && modelPath ? modelWorkCrs(values, modelFile, modelPath) : undefined);
  const workCrs = intake.report.crs.work;
  const inputCrs = intake.report.crs.input;
  if (modelFile && modelPath) warnUnstatedWorkCrs(io, modelFile, modelPath, workCrs);
  const local = isLocal(workCrs);
  if (local && (format === 'geojson' || format === 'gpx')) {
    throw new GapwiseError('bad-option', `The samples have local coordinates without a CRS, so ${format === 'gpx' ? 'GPX' : 'GeoJSON'} (longitude, latitude) cannot be written; give --crs, or write .csv.`);
  }

  const options = assignDefined<DesignOptions>({ count: numberOption(values, 'count') ?? 10 }, {
    threshold: numberOption(values, 'threshold'),
    mode: stringOption(values, 'mode') as DesignMode | undefined,
    cell: numberOption(values, 'cell'),
    minSpacing: numberOption(values, 'min-spacing'),
    seed: numberOption(values, 'seed'),
  });
  const boundaryPath = stringOption(values, 'boundary');
  if (boundaryPath !== undefined) options.boundary = readBoundaryFile(io, boundaryPath, intake).polygons.map((p) => p.rings);
  const excludePath = stringOption(values, 'exclude');
  if (excludePath !== undefined) options.exclusions = readExclusions(io, excludePath, workCrs);
  const candidatesPath = stringOption(values, 'candidates');
  if (candidatesPath !== undefined) options.candidates = readCandidates(io, candidatesPath, values, intake);
  const pathRequest = readSimulationPathRequest(values);
  if (pathRequest.force) options.path = pathRequest.force;
  if (pathRequest.neighbours !== undefined) options.neighbours = pathRequest.neighbours;
  options.tolerance = pathRequest.tolerance;

  // A covariate model: the area grid and candidates with the rasters' values (--covariate-raster).
  const covariates = await designWithCovariates(values, io.cwd, intake, modelFile?.model.trend ?? null, options);
  Object.assign(options, covariates.options);
  printWarnings(io, covariates.warnings);
  const files = { samples: intake.report.fileName, model: modelPath };
  const sitesProgress = progressLine(io, 'sites');
  const result: DesignResult = naming(files, () => suggestSites(covariates.samples, modelFile?.model ?? null, options, {
    onProgress: (done, total, stage) => { if (stage === 'sites') sitesProgress(done, total); },
  }));
  const warnings: Warning[] = result.warnings;
  if (result.path) printNotes(io, describeDesignPath(result.path, covariates.samples.x.length));
  printWarnings(io, warnings);

  const xs = result.suggestions.map((s) => s.x);
  const ys = result.suggestions.map((s) => s.y);
  if (!local) {
    const ll = createTransform(workCrs, 'EPSG:4326').forwardMany(xs, ys);
    result.suggestions.forEach((s, k) => {
      s.lon = ll.x[k];
      s.lat = ll.y[k];
    });
  }
  const input = isLocal(inputCrs) || inputCrs === workCrs
    ? { x: Float64Array.from(xs), y: Float64Array.from(ys) }
    : createTransform(workCrs, inputCrs).forwardMany(xs, ys);

  if (out !== undefined && format !== null) {
    const text = format === 'geojson' ? suggestionsToGeoJson(result)
      : format === 'gpx' ? suggestionsToGpx(result, { unit: intake.report.unit || undefined })
        : suggestionsToCsv(result, { inputX: input.x, inputY: input.y });
    await writeOutput(io, out, text);
    if (format === 'csv') io.stderr(`caution: ${CSV_CAUTION} Written by ${SOFTWARE}.\n`);
  }

  const unit = intake.report.unit;
  io.stdout(jsonText({
    mode: result.mode,
    requested: result.requested,
    count: result.suggestions.length,
    benefit: result.benefitMeaning,
    threshold: result.threshold,
    unit,
    scale: result.scale,
    average_sd_before: rounded(result.averageSdBefore),
    average_sd_after: rounded(result.averageSdAfter),
    misclassified_area_before_m2: rounded(result.misclassifiedAreaBefore),
    misclassified_area_after_m2: rounded(result.misclassifiedAreaAfter),
    area_decided_m2: rounded(result.areaDecided),
    coverage_distance_before_m: rounded(result.coverageDistanceBefore),
    coverage_distance_after_m: rounded(result.coverageDistanceAfter),
    area_m2: rounded(result.area),
    cell_m: result.cell,
    min_spacing_m: result.minSpacing,
    candidates: result.candidatePoints,
    evaluation_points: result.evaluationPoints,
    crs: { input: inputCrs, work: workCrs },
    suggestions: result.suggestions.map((s, k) => ({
      rank: s.rank,
      x: rounded(input.x[k], 9),
      y: rounded(input.y[k], 9),
      lon: s.lon === undefined ? null : Number(s.lon.toFixed(7)),
      lat: s.lat === undefined ? null : Number(s.lat.toFixed(7)),
      benefit: rounded(s.benefit),
      mean: rounded(s.mean),
      sd: rounded(s.sd),
      p_exceed: rounded(s.pExceed),
    })),
    ...(result.path ? {
      path: { path: result.path.path, automatic: result.path.automatic, reason: result.path.reason, tolerance: pathRequest.tolerance },
      ...(result.path.accuracy ? { localError: result.path.accuracy } : {}),
    } : {}),
    out: out ?? null,
    warnings: warnings.map((w) => w.message),
    caution: CAUTION,
  }));
  return 0;
}

export const suggestCommand: CommandSpec = {
  name: 'suggest',
  summary: 'where to sample next: ranked new sites (.geojson, .csv or .gpx) and a JSON summary',
  usage: 'gapwise suggest --samples FILE [--model FILE] [--count N] [--threshold T] [--out FILE] [options]',
  description: [
    'With a model (--model, as written by "gapwise fit") the sites are chosen one at a time, each where it '
      + 'most lowers the average uncertainty (variance) of the map over the area, counting the sites already '
      + 'chosen. With --threshold they are chosen where they most shrink the area expected to be put on the '
      + 'wrong side of the action level. Without a model the sites spread to cover the area evenly around the '
      + 'existing samples (k-means, seeded).',
    'The area is the --boundary polygon (GeoJSON, longitude/latitude) cut into cells of --cell metres, or '
      + 'the samples\' bounding box. New sites lie inside it, outside the --exclude polygons, at least '
      + '--min-spacing metres from every sample and from each other, and at cell centres or at the points of '
      + '--candidates (CSV with coordinate columns, or GeoJSON points).',
    '--out writes the sites by its extension: .geojson (WGS 84 points with rank, benefit, mean, sd, p_exceed, '
      + 'and the caution), .csv (rank, x, y in the samples\' CRS, lon, lat, benefit, mean, sd, p_exceed) or '
      + '.gpx (waypoints S01, S02, ... for a field GPS). stdout gets a JSON summary: the sites, the average sd '
      + 'before and after, the expected misclassified area before and after (m²), and the caution.',
    'One analyte at a time: with a model set from "gapwise fit --value a,b" as --model, --value names the analyte '
      + 'whose model chooses the sites; several analytes in --value are refused (exit 2), since each analyte\'s map '
      + 'has its own uncertainty and action level: run suggest once per analyte and pool the sites in the field plan.',
    'A model with covariates (fit --covariates) needs --covariate-raster NAME=FILE.tif for each: the area grid is '
      + 'the first raster\'s lattice clipped by --boundary (or the --cell grid), cells without a value are left out, '
      + 'and --candidates take the rasters\' values at their points.',
  ],
  options: [
    { name: 'model', kind: 'string', placeholder: 'FILE', help: 'model JSON, as written by "gapwise fit" (a model set from "gapwise fit --value a,b" with --value naming one analyte)', defaultText: 'none: a coverage design' },
    { name: 'count', kind: 'number', placeholder: 'N', help: 'number of new sites (1 to 500)', defaultText: '10' },
    { name: 'threshold', kind: 'number', placeholder: 'T', help: 'action level: choose the sites that best settle which side of it each place is on', unit: 'the samples\' unit', defaultText: 'none: reduce the average variance' },
    { name: 'mode', kind: 'string', placeholder: 'MODE', choices: ['variance', 'decision', 'coverage'], help: 'the criterion', defaultText: 'decision with --threshold, variance with --model, else coverage' },
    { name: 'boundary', kind: 'string', placeholder: 'FILE', help: 'GeoJSON polygon(s) of the area, longitude/latitude', defaultText: 'the samples\' bounding box' },
    { name: 'exclude', kind: 'string', placeholder: 'FILE', help: 'GeoJSON polygon(s) where no site may go (buildings, water), longitude/latitude', defaultText: 'none' },
    { name: 'min-spacing', kind: 'number', placeholder: 'M', help: 'least distance from a new site to any sample and to the other new sites', unit: 'm', defaultText: '0' },
    { name: 'candidates', kind: 'string', placeholder: 'FILE', help: 'accessible points to choose from: CSV with coordinate columns, or GeoJSON points', defaultText: 'the cell centres of the area' },
    { name: 'candidates-crs', kind: 'string', placeholder: 'CRS', help: 'CRS of a CSV candidates file', defaultText: '--crs, else the samples\' CRS' },
    { name: 'cell', kind: 'number', placeholder: 'M', help: 'cell size of the area grid and the candidate grid', unit: 'm', defaultText: 'about 10,000 cells over the area (a covariate model: the raster\'s lattice)' },
    COVARIATE_RASTER_OPTION,
    { name: 'seed', kind: 'number', placeholder: 'N', help: 'seed of the coverage design', defaultText: '1' },
    {
      name: 'exact', kind: 'boolean', help: `variance and decision designs: the posterior from all samples (up to ${countText(EXACT_SAMPLE_LIMIT)})`,
      defaultText: 'automatic: the cheaper of the posterior from all samples and from local neighbourhoods by estimated cost (samples, evaluation points, '
        + 'candidates, sites); a local posterior is measured against exact kriging at seeded evaluation points and replaced by the exact one when it misses --tolerance',
    },
    { name: 'local', kind: 'boolean', help: 'variance and decision designs: the posterior from local neighbourhoods (its error is still measured and reported)', defaultText: 'automatic, as for --exact' },
    { name: 'neighbours', kind: 'number', placeholder: 'M', unit: 'samples', help: 'local posterior: each point\'s M nearest samples', defaultText: String(DEFAULT_DESIGN_NEIGHBOURS) },
    {
      name: 'tolerance', kind: 'string', placeholder: 'mean=P,sd=P',
      help: 'how close a local posterior must come to exact kriging: largest difference of the mean and sd, in % of the prior sd (0 takes the exact posterior)',
      defaultText: `mean=${DEFAULT_TOLERANCE.mean},sd=${DEFAULT_TOLERANCE.sd}`,
    },
    outOption('sites file: .geojson, .csv or .gpx', 'not written (the sites are in the JSON summary)'),
    ...SAMPLE_OPTIONS,
  ],
  examples: [
    'gapwise suggest --samples data-demo/lead-topsoil.csv --model lead-model.json --count 8 --threshold 200 --boundary data-demo/site-boundary.geojson --min-spacing 10 --out next.gpx',
    'gapwise suggest --samples data-demo/lead-topsoil.csv --count 12 --boundary data-demo/site-boundary.geojson --out first-round.csv',
  ],
  run,
};
