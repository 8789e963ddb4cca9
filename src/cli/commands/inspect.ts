/**
 * `gapwise inspect`: reads the samples (and a boundary) exactly as every other command does and
 * reports what was read: a JSON read report on stdout; --out writes the parsed samples as CSV.
 */
import { SOFTWARE } from '../../core/shared/version.ts';
import { stringOption } from '../args.ts';
import {
  CAUTION, SAMPLE_OPTIONS, jsonText, outOption, readSamplesFile, writeOutput,
  type CliIo, type CommandSpec, type OptionValues,
} from '../common.ts';
import { readBoundaryFile } from '../boundary-file.ts';
import { CSV_CAUTION, PIECE_CHARS, csvLine, formatFullPrecision, linePieces } from '../csv.ts';
import { sampleFlags, sampleId, type SampleTable } from '../../io/sample-table.ts';

/**
 * The samples as read, as CSV (id, x, y in the input CRS, value, flags; LF line ends), in pieces of
 * whole lines of about `chunkChars` characters: a writer that takes them one by one never holds the
 * text of ten million samples as one string.
 */
export function samplesCsvChunks(t: SampleTable, chunkChars = PIECE_CHARS): Generator<string> {
  return linePieces(t.length + 1, (k) => {
    if (k === 0) return csvLine(['id', 'x', 'y', 'value', 'flags']);
    const i = k - 1;
    return csvLine([sampleId(t, i), formatFullPrecision(t.inputX[i]), formatFullPrecision(t.inputY[i]), formatFullPrecision(t.value[i]), sampleFlags(t, i).join(';')]);
  }, '\n', chunkChars);
}

async function run(values: OptionValues, io: CliIo): Promise<number> {
  const intake = readSamplesFile(io, values);
  const boundaryPath = stringOption(values, 'boundary');
  const boundary = boundaryPath === undefined ? undefined : readBoundaryFile(io, boundaryPath, intake).report;

  const out = stringOption(values, 'out');
  if (out !== undefined) {
    const r = intake.report;
    await writeOutput(io, out, samplesCsvChunks(intake.table));
    io.stderr(`wrote ${intake.table.length} samples (x, y in ${r.crs.input}; value in ${r.unit || 'the file\'s unit'}) to ${out}\n`);
    io.stderr(`caution: ${CSV_CAUTION} Written by ${SOFTWARE}.\n`);
  }
  const report: Record<string, unknown> = { caution: CAUTION, ...intake.report };
  if (boundary) report.boundary = boundary;
  io.stdout(jsonText(report));
  return 0;
}

export const inspectCommand: CommandSpec = {
  name: 'inspect',
  summary: 'read the samples (and a boundary) and report what was read',
  usage: 'gapwise inspect --samples FILE [--boundary FILE] [--out FILE] [options]',
  description: [
    'Reads the samples exactly as every other command does and prints a JSON read report on stdout: rows read '
      + 'and used, the columns chosen for x, y and the value (and its unit), the coordinate systems (input and '
      + 'working), non-detects and the rule applied, merged duplicate locations, every rejected or changed row '
      + 'with its line and reason, summary statistics and transform advice.',
    'Nothing is dropped silently: a rejected row appears in "entries" with its line. A file that cannot be read '
      + 'at all stops with exit code 2 and a message naming the line and column.',
  ],
  options: [
    ...SAMPLE_OPTIONS,
    { name: 'boundary', kind: 'string', placeholder: 'FILE', help: 'GeoJSON polygon(s) of the area (RFC 7946 longitude/latitude); reported with their area and how many samples lie outside', defaultText: 'none' },
    outOption('CSV of the samples as read: id, x, y (input CRS), value (after the non-detect rule), flags (nd non-detect, dup merged duplicate, outlier)', 'not written'),
  ],
  examples: ['gapwise inspect --samples data-demo/lead-topsoil.csv --boundary data-demo/site-boundary.geojson --out samples-read.csv'],
  run,
};
