/**
 * `gapwise report`: one self-contained HTML report from a project file — the samples read from
 * the text the project holds, the variogram, the model and its comparison, cross-validation, the
 * maps on the project's grid and the suggestions — with the software version and date.
 */
import { readFileSync } from 'node:fs';
import { booleanOption, numberOption, stringOption } from '../args.ts';
import { GapwiseError } from '../../core/errors.ts';
import { prepareReport, reportHtml } from '../../io/report.ts';
import { CAUTION, naming, outOption, printWarnings, writeOutput, type CliIo, type CommandSpec, type OptionValues } from '../common.ts';
import { readProjectFile } from '../project-options.ts';

/** The name and version in package.json. */
export function softwareVersion(): { name: string; version: string } {
  try {
    const pkg = JSON.parse(readFileSync(new URL('../../../package.json', import.meta.url), 'utf8')) as { name?: string; version?: string };
    return { name: pkg.name ?? 'gapwise', version: pkg.version ?? 'unknown' };
  } catch {
    return { name: 'gapwise', version: 'unknown' };
  }
}

async function run(values: OptionValues, io: CliIo): Promise<number> {
  const file = stringOption(values, 'project') as string;
  const { project } = readProjectFile(io, file);
  const title = stringOption(values, 'title');
  if (title !== undefined) project.title = title;
  const cell = numberOption(values, 'cell');
  if (cell !== undefined && !(cell > 0)) throw new GapwiseError('bad-option', `Option "--cell" expects a cell size above 0 m, got ${cell}.`);
  const input = naming({ samples: `${file}:${project.samples.fileName}` }, () => prepareReport(project, {
    software: softwareVersion(),
    compare: !booleanOption(values, 'no-compare'),
    ...(cell !== undefined ? { cellSize: cell } : {}),
  }));
  printWarnings(io, input.warnings ?? []);
  writeOutput(io, stringOption(values, 'out'), reportHtml(input));
  io.stderr(`caution: ${CAUTION}\n`);
  return 0;
}

export const reportCommand: CommandSpec = {
  name: 'report',
  summary: 'a self-contained HTML report (print to PDF from the browser) from a project file',
  usage: 'gapwise report --project FILE [--out report.html] [options]',
  description: [
    'Recomputes everything from the project exactly as the app does (the samples from the text the project holds, '
      + 'the model as chosen, the project\'s grid and threshold) and writes one HTML file with no outside links: '
      + 'summary, samples and what was read, histogram, variogram with the model, model comparison, cross-validation, '
      + 'maps of the mean, the sd and P(exceed) with legends, scale bar and north arrow, suggested next samples, and '
      + 'every parameter needed to reproduce the result. Open it in a browser and print to PDF.',
    'When the project holds no model comparison, the standard candidate models are fitted for the table (a few '
      + 'seconds for a few hundred samples); --no-compare leaves the table out.',
  ],
  options: [
    { name: 'project', kind: 'string', placeholder: 'FILE', help: 'the project file (as saved by the app)', required: true },
    outOption('HTML file to write', 'stdout'),
    { name: 'title', kind: 'string', placeholder: 'TEXT', help: 'title at the top of the report', defaultText: 'the project\'s title, else "<value> screening map"' },
    { name: 'cell', kind: 'number', placeholder: 'M', help: 'draw the maps on a grid of this cell size instead of the project\'s', unit: 'm', defaultText: 'the project\'s grid' },
    { name: 'no-compare', kind: 'boolean', help: 'do not fit the candidate models when the project has no comparison table' },
  ],
  examples: ['gapwise report --project site.gapwise.json --out site-report.html'],
  run,
};
