/**
 * `gapwise simulate`: conditional realisations of the surface on a grid, written as GeoTIFF bands
 * (one Float32 band per realisation, data units, no-data -9999 outside the area), and a JSON summary
 * on stdout: the area (and with --depth the volume) above --threshold as a median with a 90 %
 * interval, the simulation lattice, warnings and the screening caution.
 *
 * The GeoTIFF: geotiff.js keeps every tag in a fixed 1,000-byte header, which N bands' BitsPerSample,
 * SampleFormat and ExtraSamples arrays overflow (GDAL then reports the GeoKeys as corrupt), so this
 * command encodes its multi-band file itself: a little-endian baseline TIFF 6.0, uncompressed,
 * PlanarConfiguration = 2 (one strip per band), with the same georeferencing as src/io/geotiff.ts
 * (ModelPixelScale, ModelTiepoint, GTModelType = 1, GTRasterType = 1 PixelIsArea, ProjectedCSType
 * = the working CRS's EPSG code), GDAL_NODATA, GDAL_METADATA band names and the caution in
 * ImageDescription (OGC 19-008r4; TIFF 6.0 §2 and §8).
 */
import { writeFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { GapwiseError, type Warning } from '../../core/errors.ts';
import { cellCount, type Grid } from '../../core/grid.ts';
import { simulateConditional } from '../../core/conditional-simulation.ts';
import { epsgCode, LOCAL_CRS } from '../../io/crs.ts';
import { NO_DATA, gdalMetadataXml } from '../../io/geotiff.ts';
import { DEFAULT_PADDING, planSurfaceGrid } from '../../io/project.ts';
import { numberOption, stringOption } from '../args.ts';
import {
  CAUTION, SAMPLE_OPTIONS, jsonText, modelWorkCrs, naming, printWarnings, readModelFile, readSamplesFile,
  type CliIo, type CommandSpec, type OptionValues,
} from '../common.ts';
import { readBoundaryFile } from '../boundary-file.ts';
import { SIMULATE_OPTIONS, readSimulationChoice } from '../simulation-options.ts';

/** One tag of the IFD: type 2 ASCII, 3 SHORT, 4 LONG, 12 DOUBLE. */
interface Tag {
  code: number;
  type: 2 | 3 | 4 | 12;
  values: number[] | string;
}

const TYPE_SIZE = { 2: 1, 3: 2, 4: 4, 12: 8 } as const;

function asciiBytes(text: string): number[] {
  return [...new TextEncoder().encode(text), 0];
}

/**
 * A little-endian multi-band Float32 GeoTIFF (PlanarConfiguration 2, one strip per band) of the
 * grid; bands are nx·ny cells row-major from the top, NaN written as NO_DATA.
 */
export function bandsGeoTiff(
  grid: Grid, bands: ReadonlyArray<ArrayLike<number>>, names: readonly string[], workCrs: string, description: string,
): { bytes: Uint8Array; epsg: number | null; warnings: Warning[] } {
  const { nx, ny } = grid;
  const nb = bands.length;
  if (nb === 0) throw new GapwiseError('bad-option', 'Expected at least 1 band to write, got 0.');
  const warnings: Warning[] = [];
  const code = workCrs === LOCAL_CRS ? null : epsgCode(workCrs);
  const epsg = code !== null && Number(code) <= 65535 ? Number(code) : null;
  if (epsg === null) {
    warnings.push({ code: 'crs-not-epsg', message: `The working CRS ${workCrs} has no EPSG code: the GeoTIFF carries its cell size and corner but no CRS; use an EPSG working CRS.` });
  }
  const geoKeys = [1, 1, 0, epsg === null ? 2 : 3, 1024, 0, 1, 1, 1025, 0, 1, 1];
  if (epsg !== null) geoKeys.push(3072, 0, 1, epsg);
  const bandBytes = nx * ny * 4;
  const tags: Tag[] = [
    { code: 256, type: 4, values: [nx] },
    { code: 257, type: 4, values: [ny] },
    { code: 258, type: 3, values: new Array(nb).fill(32) },
    { code: 259, type: 3, values: [1] },
    { code: 262, type: 3, values: [1] },
    { code: 270, type: 2, values: description },
    { code: 273, type: 4, values: new Array(nb).fill(0) }, // strip offsets, filled below
    { code: 277, type: 3, values: [nb] },
    { code: 278, type: 4, values: [ny] },
    { code: 279, type: 4, values: new Array(nb).fill(bandBytes) },
    { code: 284, type: 3, values: [2] },
    ...(nb > 1 ? [{ code: 338, type: 3 as const, values: new Array(nb - 1).fill(0) }] : []),
    { code: 339, type: 3, values: new Array(nb).fill(3) },
    { code: 33550, type: 12, values: [grid.cell, grid.cell, 0] },
    { code: 33922, type: 12, values: [0, 0, 0, grid.x0, grid.y0, 0] },
    { code: 34735, type: 3, values: geoKeys },
    { code: 42112, type: 2, values: gdalMetadataXml(names) },
    { code: 42113, type: 2, values: String(NO_DATA) },
  ];
  const payloads = tags.map((t) => (typeof t.values === 'string' ? asciiBytes(t.values) : t.values));
  const ifdOffset = 8;
  const ifdSize = 2 + 12 * tags.length + 4;
  let extra = ifdOffset + ifdSize;
  const extraOffsets = tags.map((t, k) => {
    const size = payloads[k].length * TYPE_SIZE[t.type];
    if (size <= 4) return -1;
    extra += extra % 2; // word boundary
    const at = extra;
    extra += size;
    return at;
  });
  const dataStart = extra + ((8 - (extra % 8)) % 8);
  const strips = tags.findIndex((t) => t.code === 273);
  const stripOffsets = payloads[strips] as number[];
  for (let b = 0; b < nb; b++) stripOffsets[b] = dataStart + b * bandBytes;
  const total = dataStart + nb * bandBytes;
  if (total > 0xffffffff) throw new GapwiseError('bad-option', `The GeoTIFF would have ${total} bytes; the most a classic TIFF holds is 4 GiB: write fewer realisations or use a larger cell.`);
  const bytes = new Uint8Array(total);
  const view = new DataView(bytes.buffer);
  bytes[0] = 0x49; bytes[1] = 0x49; // "II": little-endian
  view.setUint16(2, 42, true);
  view.setUint32(4, ifdOffset, true);
  view.setUint16(ifdOffset, tags.length, true);
  const write = (type: Tag['type'], values: number[], at: number): void => {
    values.forEach((v, i) => {
      if (type === 2) view.setUint8(at + i, v);
      else if (type === 3) view.setUint16(at + 2 * i, v, true);
      else if (type === 4) view.setUint32(at + 4 * i, v, true);
      else view.setFloat64(at + 8 * i, v, true);
    });
  };
  tags.forEach((t, k) => {
    const e = ifdOffset + 2 + 12 * k;
    view.setUint16(e, t.code, true);
    view.setUint16(e + 2, t.type, true);
    view.setUint32(e + 4, payloads[k].length, true);
    if (extraOffsets[k] >= 0) view.setUint32(e + 8, extraOffsets[k], true);
    write(t.type, payloads[k], extraOffsets[k] < 0 ? e + 8 : extraOffsets[k]);
  });
  view.setUint32(ifdOffset + 2 + 12 * tags.length, 0, true);
  const mask = grid.mask;
  for (let b = 0; b < nb; b++) {
    const band = bands[b];
    if (band.length !== nx * ny) throw new GapwiseError('bad-option', `Expected band ${b + 1} to have ${nx * ny} cells (${nx} × ${ny}), got ${band.length}.`);
    const o = dataStart + b * bandBytes;
    for (let k = 0; k < nx * ny; k++) {
      const v = band[k];
      view.setFloat32(o + 4 * k, (!mask || mask[k] === 1) && Number.isFinite(v) ? v : NO_DATA, true);
    }
  }
  return { bytes, epsg, warnings };
}

async function run(values: OptionValues, io: CliIo): Promise<number> {
  const out = stringOption(values, 'out') as string;
  if (!/\.tiff?$/i.test(out)) throw new GapwiseError('bad-option', `Option "--out ${out}" must name a GeoTIFF (.tif); realisations are written as its bands.`);
  const modelPath = stringOption(values, 'model') as string;
  const modelFile = readModelFile(io, modelPath);
  const { model } = modelFile;
  const intake = readSamplesFile(io, values, modelWorkCrs(values, modelFile, modelPath));
  const workCrs = intake.report.crs.work;
  if (modelFile.workCrs === undefined) printWarnings(io, [`${modelPath} does not say which working CRS its distances are in; ${workCrs} is assumed.`]);
  const boundaryPath = stringOption(values, 'boundary');
  const boundary = boundaryPath === undefined ? null : readBoundaryFile(io, boundaryPath, intake);
  const cell = numberOption(values, 'cell');
  if (cell !== undefined && !(cell > 0)) throw new GapwiseError('bad-option', `Option "--cell" expects a cell size above 0 m, got ${cell}.`);
  const grid = planSurfaceGrid({
    x: intake.samples.x, y: intake.samples.y, padding: DEFAULT_PADDING, cellSize: cell ?? 0,
    polygons: boundary ? boundary.polygons.map((p) => p.rings) : null,
  });
  const choice = readSimulationChoice(values, model, 'count');
  const threshold = numberOption(values, 'threshold');
  const files = { samples: intake.report.fileName, model: modelPath };
  const sim = naming(files, () => simulateConditional(intake.samples, model, grid, {
    count: choice.realizations ?? 0,
    seed: choice.seed,
    support: choice.support,
    blockPoints: choice.blockPoints,
    ...(threshold !== undefined ? { threshold } : {}),
    ...(choice.depth !== undefined ? { depth: choice.depth } : {}),
  }));
  const unit = intake.report.unit;
  const names = sim.realisations!.map((_, r) => `realisation ${r + 1}${unit ? ` (${unit})` : ''}`);
  const tif = bandsGeoTiff(grid, sim.realisations!, names, workCrs, `Gapwise conditional realisations (${sim.support} support). ${CAUTION}`);
  try {
    writeFileSync(resolve(io.cwd, out), tif.bytes);
  } catch (e) {
    throw new GapwiseError('bad-file', `Cannot write the file: ${(e as Error).message}.`, { file: out });
  }
  printWarnings(io, [...sim.warnings, ...tif.warnings]);
  const area = sim.area;
  io.stdout(jsonText({
    out, format: 'tif', workCrs, epsg: tif.epsg,
    grid: { x0: grid.x0, y0: grid.y0, cell: grid.cell, nx: grid.nx, ny: grid.ny, cells: cellCount(grid) },
    realisations: sim.count, seed: choice.seed, support: sim.support, blockPoints: sim.points,
    unit,
    threshold: threshold ?? null,
    ...(area ? {
      areaAbove: { median: area.area.median, p5: area.area.p05, p95: area.area.p95, mean: area.area.mean, unit: 'm²' },
      cellsAbove: { median: area.cells.median, p5: area.cells.p05, p95: area.cells.p95 },
      ...(area.volume ? { volumeAbove: { median: area.volume.median, p5: area.volume.p05, p95: area.volume.p95, mean: area.volume.mean, unit: 'm³', depth: area.volume.depth } } : {}),
    } : {}),
    lattice: sim.lattice,
    placementError: sim.placementError,
    neighbors: sim.neighbors,
    caution: CAUTION,
  }));
  return 0;
}

export const simulateCommand: CommandSpec = {
  name: 'simulate',
  summary: 'conditional realisations on a grid (GeoTIFF bands) and the area above an action level',
  usage: 'gapwise simulate --samples FILE --model FILE --count N --out FILE.tif [--cell M] [--boundary FILE] [--threshold T [--depth D]] [options]',
  description: [
    'Draws N realisations of the surface that honour the samples and the model (never refitted): each is as '
      + 'likely as any other given the data, and together they show how the surface may vary. Fields are simulated '
      + 'by FFT on a lattice and conditioned by kriging; for a log model each cell is back-transformed. '
      + 'Each realisation is one Float32 band of the GeoTIFF (data units, -9999 outside the area).',
    'With --threshold the JSON summary on stdout gives the area above T (square metres) as the median over the '
      + 'realisations with a 90 % interval (5 % and 95 %), and with --depth the volume (cubic metres = area × depth). '
      + 'With --support block each cell is the average of --block-points × --block-points lattice points.',
    'The screening caution is in the summary and in the GeoTIFF description.',
  ],
  options: [
    { name: 'model', kind: 'string', placeholder: 'FILE', help: 'model JSON, as written by "gapwise fit"', required: true },
    { name: 'out', kind: 'string', placeholder: 'FILE', help: 'GeoTIFF to write, one band per realisation', required: true },
    { name: 'cell', kind: 'number', placeholder: 'M', help: 'cell size', unit: 'm', defaultText: 'about 40,000 cells over the area' },
    { name: 'boundary', kind: 'string', placeholder: 'FILE', help: 'GeoJSON polygon(s): only cells whose centre lies inside', defaultText: 'the samples\' extent' },
    { name: 'threshold', kind: 'number', placeholder: 'T', help: 'action level for the area (and volume) above it', unit: 'the samples\' unit', defaultText: 'none' },
    ...SIMULATE_OPTIONS,
    ...SAMPLE_OPTIONS,
  ],
  examples: [
    'gapwise simulate --samples data-demo/lead-topsoil.csv --model lead-model.json --count 100 --seed 7 --threshold 200 --depth 0.3 --out lead-realisations.tif',
  ],
  run,
};
