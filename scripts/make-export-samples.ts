/**
 * Writes the sample exports in tests/fixtures/exports/ from the invented project file there
 * (wells.gapwise.json: invented nitrate readings at invented wells), through the command line as a
 * user would run it:
 *   gapwise grid --project wells.gapwise.json --out wells-surface.tif   (GeoTIFF: mean, sd, P(exceed))
 *   gapwise grid --project wells.gapwise.json --out wells-grid.csv      (one row per cell)
 *   gapwise grid --project wells.gapwise.json --out wells-contours.geojson
 *   gapwise report --project wells.gapwise.json --out wells-report.html --no-compare
 * They show what each export looks like (gdalinfo, a text editor, a browser); no test reads them. The report carries the date it was made, the others are the same on
 * every run. Run `npx tsx scripts/make-export-samples.ts`.
 */
import { dirname, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { main } from '../src/cli/main.ts';

const folder = resolve(dirname(fileURLToPath(import.meta.url)), '..', 'tests', 'fixtures', 'exports');
const io = { stdout: () => {}, stderr: (t: string) => process.stderr.write(t), cwd: folder };
const runs: string[][] = [
  ['grid', '--project', 'wells.gapwise.json', '--out', 'wells-surface.tif'],
  ['grid', '--project', 'wells.gapwise.json', '--out', 'wells-grid.csv'],
  ['grid', '--project', 'wells.gapwise.json', '--out', 'wells-contours.geojson'],
  ['report', '--project', 'wells.gapwise.json', '--out', 'wells-report.html', '--no-compare'],
];
for (const args of runs) {
  const code = await main(args, io);
  if (code !== 0) {
    process.stderr.write(`gapwise ${args.join(' ')} failed with exit code ${code}\n`);
    process.exit(code);
  }
  process.stdout.write(`wrote ${args[args.indexOf('--out') + 1]}\n`);
}
