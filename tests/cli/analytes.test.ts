// Several analytes in one run (src/cli/analytes.ts): fit writes one model set whose models equal the
// one-analyte fits, grid writes each analyte's bands and columns equal to one-analyte runs bit for
// bit, per-analyte thresholds, '*' for every numeric column, and the errors.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fromArrayBuffer } from 'geotiff';
import { createRandom } from '../../src/core/shared/random.ts';
import { workspace, type Workspace } from './run-cli.ts';
import { analyteColumnName } from '../../src/io/grid-csv.ts';
import { createProject, saveProject } from '../../src/io/project.ts';
import { parseModel } from '../../src/core/covariance/model.ts';

/** Invented survey: 40 planar samples (EPSG:32633 metres) with three analytes of different pattern. */
function surveyCsv(): string {
  const rng = createRandom(7);
  const lines = ['id,easting,northing,zinc (mg/kg),lead (mg/kg),copper'];
  for (let i = 0; i < 40; i++) {
    const dx = 400 * rng.uniform();
    const dy = 400 * rng.uniform();
    const zinc = 500 + 150 * Math.sin(dx / 90) + 40 * rng.normal();
    const lead = 300 + 120 * Math.cos(dy / 70) + 30 * rng.normal();
    const copper = 40 + 10 * Math.sin((dx + dy) / 120) + 3 * rng.normal();
    lines.push(`P${i + 1},${(500000 + dx).toFixed(2)},${(5400000 + dy).toFixed(2)},${zinc.toFixed(1)},${lead.toFixed(1)},${copper.toFixed(2)}`);
  }
  return `${lines.join('\n')}\n`;
}

async function readBands(ws: Workspace, name: string): Promise<Float32Array[]> {
  const bytes = readFileSync(join(ws.dir, name));
  const image = await (await fromArrayBuffer(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength))).getImage();
  return (await image.readRasters()) as unknown as Float32Array[];
}

function csvRows(text: string): { header: string[]; rows: string[][] } {
  const lines = text.trim().split('\n').filter((l) => !l.startsWith('#'));
  return { header: lines[0].split(','), rows: lines.slice(1).map((l) => l.split(',')) };
}

describe('several analytes (--value a,b,c)', () => {
  let ws: Workspace;
  const base = ['--samples', 'survey.csv', '--crs', 'EPSG:32633'];
  beforeAll(async () => {
    ws = workspace();
    ws.write('survey.csv', surveyCsv());
    for (const [name, col] of [['zinc', 'zinc (mg/kg)'], ['lead', 'lead (mg/kg)'], ['copper', 'copper']]) {
      const r = await ws.run('fit', ...base, '--value', col, '--family', 'exponential', '--out', `${name}.json`);
      expect(r.code, r.stderr).toBe(0);
    }
    const set = await ws.run('fit', ...base, '--value', 'zinc (mg/kg),lead (mg/kg),copper', '--family', 'exponential', '--out', 'set.json');
    expect(set.code, set.stderr).toBe(0);
  }, 300_000);
  afterAll(() => ws.remove());

  it('fit --value a,b,c writes one model set whose models equal the one-analyte fits', () => {
    const set = JSON.parse(ws.read('set.json'));
    expect(Object.keys(set.analytes)).toEqual(['zinc (mg/kg)', 'lead (mg/kg)', 'copper']);
    expect(set.analytes['zinc (mg/kg)']).toEqual(JSON.parse(ws.read('zinc.json')));
    expect(set.analytes['lead (mg/kg)']).toEqual(JSON.parse(ws.read('lead.json')));
    expect(set.analytes.copper).toEqual(JSON.parse(ws.read('copper.json')));
    expect(typeof set.caution).toBe('string');
  });

  it('grid with a model set: each analyte\'s GeoTIFF bands equal the one-analyte run bit for bit, thresholds per analyte', async () => {
    // The one-analyte model files carry a one-analyte run; the grid is the same when all analytes
    // have values at the same samples (as here) and --cell is the same.
    const multi = await ws.run('grid', ...base, '--model', 'set.json', '--value', 'zinc (mg/kg),lead (mg/kg)', '--cell', '20',
      '--threshold', 'zinc (mg/kg)=720,lead (mg/kg)=530', '--workers', '2', '--out', 'multi.tif');
    expect(multi.code, multi.stderr).toBe(0);
    const summary = JSON.parse(multi.stdout);
    expect(summary.bands).toEqual(['mean zinc (mg/kg)', 'sd zinc (mg/kg)', 'P(zinc > 720 mg/kg)', 'mean lead (mg/kg)', 'sd lead (mg/kg)', 'P(lead > 530 mg/kg)']);
    const bands = await readBands(ws, 'multi.tif');
    expect(bands.length).toBe(6);
    for (const [k, [name, col, t]] of [['zinc', 'zinc (mg/kg)', '720'], ['lead', 'lead (mg/kg)', '530']].entries()) {
      const one = await ws.run('grid', ...base, '--model', `${name}.json`, '--value', col, '--cell', '20', '--threshold', t, '--workers', '2', '--out', `${name}.tif`);
      expect(one.code, one.stderr).toBe(0);
      const single = await readBands(ws, `${name}.tif`);
      for (let b = 0; b < 3; b++) expect(Array.from(bands[3 * k + b]), `${name} band ${b}`).toEqual(Array.from(single[b]));
    }
  }, 300_000);

  it('grid with a model set: CSV columns named by analyte equal the one-analyte CSV bit for bit', async () => {
    const multi = await ws.run('grid', ...base, '--model', 'set.json', '--value', '*', '--cell', '25', '--threshold', 'copper=45', '--out', 'multi.csv');
    expect(multi.code, multi.stderr).toBe(0);
    const m = csvRows(ws.read('multi.csv'));
    expect(m.header).toEqual(['x', 'y', 'lon', 'lat', 'zinc_mean', 'zinc_sd', 'lead_mean', 'lead_sd', 'copper_mean', 'copper_sd', 'copper_p_exceed']);
    const one = await ws.run('grid', ...base, '--model', 'copper.json', '--value', 'copper', '--cell', '25', '--threshold', '45', '--out', 'copper.csv');
    expect(one.code, one.stderr).toBe(0);
    const s = csvRows(ws.read('copper.csv'));
    expect(m.rows.length).toBe(s.rows.length);
    for (let i = 0; i < s.rows.length; i++) {
      expect(m.rows[i].slice(0, 4)).toEqual(s.rows[i].slice(0, 4));
      expect(m.rows[i].slice(8, 11)).toEqual(s.rows[i].slice(4, 7));
    }
  }, 300_000);

  it('grid with a model set on local neighbourhoods: each analyte equals its one-analyte run, with its measured error', async () => {
    const local = ['--local', '--neighbours', '12', '--cell', '25'];
    const multi = await ws.run('grid', ...base, '--model', 'set.json', '--value', 'zinc (mg/kg),copper', ...local, '--out', 'local.csv');
    expect(multi.code, multi.stderr).toBe(0);
    const summary = JSON.parse(multi.stdout);
    expect(Object.keys(summary.localError)).toEqual(['zinc (mg/kg)', 'copper']);
    expect(summary.localError.copper.neighbours).toBe(12);
    expect(multi.stderr).toMatch(/note: \[copper\] measured error of the local neighbourhoods/);
    const m = csvRows(ws.read('local.csv'));
    const one = await ws.run('grid', ...base, '--model', 'copper.json', '--value', 'copper', ...local, '--out', 'copper-local.csv');
    expect(one.code, one.stderr).toBe(0);
    expect(JSON.parse(one.stdout).localError).toEqual(summary.localError.copper);
    const c = csvRows(ws.read('copper-local.csv'));
    expect(m.rows.map((r) => r.slice(6, 8))).toEqual(c.rows.map((r) => r.slice(4, 6)));
  }, 300_000);

  it('grid --threshold NAME=T refuses an unknown analyte, a bad number, and pairs with one analyte', async () => {
    const unknown = await ws.run('grid', ...base, '--model', 'set.json', '--value', 'zinc (mg/kg),copper', '--threshold', 'nickel=5', '--out', 'x.tif');
    expect(unknown.code).toBe(2);
    expect(unknown.stderr).toMatch(/names "nickel", which is not one of the analytes/);
    const bad = await ws.run('grid', ...base, '--model', 'set.json', '--value', 'zinc (mg/kg),copper', '--threshold', 'copper=abc', '--out', 'x.tif');
    expect(bad.code).toBe(2);
    expect(bad.stderr).toMatch(/NAME=NUMBER pairs/);
    const single = await ws.run('grid', ...base, '--model', 'copper.json', '--value', 'copper', '--threshold', 'copper=45', '--out', 'x.tif');
    expect(single.code).toBe(2);
    expect(single.stderr).toMatch(/NAME=NUMBER pairs need several analytes/);
    const missing = await ws.run('grid', ...base, '--model', 'zinc.json', '--value', 'zinc (mg/kg),copper', '--out', 'x.tif');
    expect(missing.code).toBe(2);
    expect(missing.stderr).toMatch(/model set with "analytes"/);
  }, 120_000);

  it('predict --value a,b writes each analyte\'s columns equal to the one-analyte predict, thresholds per analyte', async () => {
    // Targets with a quoted id holding the delimiter, to check the rows are written back as read.
    ws.write('targets.csv', 'id,easting,northing\n"T,1",500100,5400100\nT2,500250.5,5400333\nT3,500390,5400010\n');
    const multi = await ws.run('predict', ...base, '--model', 'set.json', '--value', 'zinc (mg/kg),lead (mg/kg)', '--targets', 'targets.csv',
      '--threshold', 'lead (mg/kg)=330', '--out', 'multi-pred.csv');
    expect(multi.code, multi.stderr).toBe(0);
    expect(multi.stderr.match(/^caution: /gm)?.length).toBe(1);
    const m = ws.read('multi-pred.csv').trim().split('\n');
    expect(m[0]).toBe('id,easting,northing,zinc_mean,zinc_sd,zinc_sd_obs,lead_mean,lead_sd,lead_sd_obs,lead_p_exceed');
    expect(m[1].startsWith('"T,1",500100,5400100,')).toBe(true);
    const zinc = await ws.run('predict', ...base, '--model', 'zinc.json', '--value', 'zinc (mg/kg)', '--targets', 'targets.csv', '--out', 'zinc-pred.csv');
    const lead = await ws.run('predict', ...base, '--model', 'lead.json', '--value', 'lead (mg/kg)', '--targets', 'targets.csv', '--threshold', '330', '--out', 'lead-pred.csv');
    expect(zinc.code, zinc.stderr).toBe(0);
    expect(lead.code, lead.stderr).toBe(0);
    const z = ws.read('zinc-pred.csv').trim().split('\n');
    const l = ws.read('lead-pred.csv').trim().split('\n');
    for (let i = 1; i < z.length; i++) {
      // The appended cells, digit for digit: three of zinc, then four of lead.
      const cells = m[i].split(',');
      expect(cells.slice(-7, -4)).toEqual(z[i].split(',').slice(-3));
      expect(cells.slice(-4)).toEqual(l[i].split(',').slice(-4));
    }
  }, 300_000);

  it('predict and grid with a model set and one --value use that analyte\'s model: equal to its own model file', async () => {
    const fromSet = await ws.run('predict', ...base, '--model', 'set.json', '--value', 'copper', '--targets', 'targets.csv', '--threshold', '45');
    const own = await ws.run('predict', ...base, '--model', 'copper.json', '--value', 'copper', '--targets', 'targets.csv', '--threshold', '45');
    expect(fromSet.code, fromSet.stderr).toBe(0);
    expect(fromSet.stdout).toBe(own.stdout);
    const grid = await ws.run('grid', ...base, '--model', 'set.json', '--value', 'copper', '--cell', '50', '--out', 'copper-set.csv');
    const gridOwn = await ws.run('grid', ...base, '--model', 'copper.json', '--value', 'copper', '--cell', '50', '--out', 'copper-own.csv');
    expect(grid.code, grid.stderr).toBe(0);
    expect(gridOwn.code, gridOwn.stderr).toBe(0);
    expect(ws.read('copper-set.csv')).toBe(ws.read('copper-own.csv'));
    const none = await ws.run('predict', ...base, '--model', 'set.json', '--targets', 'targets.csv');
    expect(none.code).toBe(2);
    expect(none.stderr).toMatch(/model set of 3 analytes .*expected --value naming the analyte/);
  }, 120_000);

  it('cv --value a,b gives each analyte\'s summary keyed by analyte and every row, equal to one-analyte runs', async () => {
    const multi = await ws.run('cv', ...base, '--model', 'set.json', '--value', '*', '--out', 'multi-cv.csv');
    expect(multi.code, multi.stderr).toBe(0);
    const json = JSON.parse(multi.stdout);
    expect(Object.keys(json.analytes)).toEqual(['zinc (mg/kg)', 'lead (mg/kg)', 'copper']);
    expect(typeof json.caution).toBe('string');
    // The table on stderr: a header and one line per analyte.
    expect(multi.stderr).toMatch(/^analyte\s+n\s+me\s+rmse\s+msse\s+coverage95\s+scale$/m);
    expect(multi.stderr).toMatch(/^copper\s+40\s/m);
    const rows = ws.read('multi-cv.csv').trim().split('\n');
    expect(rows[0]).toBe('analyte,id,x,y,observed,predicted,sd_obs,error,standardised_error');
    for (const [name, col] of [['zinc', 'zinc (mg/kg)'], ['copper', 'copper']]) {
      const one = await ws.run('cv', ...base, '--model', `${name}.json`, '--value', col, '--out', `${name}-cv.csv`);
      expect(one.code, one.stderr).toBe(0);
      const { caution: _c, ...summary } = JSON.parse(one.stdout);
      expect(json.analytes[col]).toEqual(summary);
      const own = ws.read(`${name}-cv.csv`).trim().split('\n').slice(1);
      const prefix = col.includes(' ') ? `${col},` : `${col},`;
      expect(rows.filter((r) => r.startsWith(prefix)).map((r) => r.slice(prefix.length))).toEqual(own);
    }
  }, 300_000);

  it('predict and cv name an analyte missing from the model set or from the samples file (exit 2)', async () => {
    const notInSet = await ws.run('cv', ...base, '--model', 'set.json', '--value', 'zinc (mg/kg),nickel');
    expect(notInSet.code).toBe(2);
    expect(notInSet.stderr).toMatch(/no model for "nickel"/);
    ws.write('set-nickel.json', JSON.stringify({ analytes: { ...JSON.parse(ws.read('set.json')).analytes, nickel: JSON.parse(ws.read('copper.json')) } }));
    const notInFile = await ws.run('predict', ...base, '--model', 'set-nickel.json', '--value', 'copper,nickel', '--targets', 'targets.csv');
    expect(notInFile.code).toBe(2);
    expect(notInFile.stderr).toMatch(/no value column "nickel"/);
  }, 120_000);

  it('suggest takes one analyte: several are refused (exit 2), one from a model set equals its own model file', async () => {
    const several = await ws.run('suggest', ...base, '--model', 'set.json', '--value', 'zinc (mg/kg),copper', '--count', '3');
    expect(several.code).toBe(2);
    expect(several.stderr).toMatch(/one analyte at a time, got 2 analytes \(zinc \(mg\/kg\), copper\)/);
    const fromSet = await ws.run('suggest', ...base, '--model', 'set.json', '--value', 'copper', '--count', '3', '--cell', '40');
    const own = await ws.run('suggest', ...base, '--model', 'copper.json', '--value', 'copper', '--count', '3', '--cell', '40');
    expect(fromSet.code, fromSet.stderr).toBe(0);
    expect(JSON.parse(fromSet.stdout)).toEqual(JSON.parse(own.stdout));
    expect(JSON.parse(fromSet.stdout).count).toBe(3);
  }, 120_000);

  it('report --value a,b has a section per analyte equal to the one-analyte report of that analyte\'s project', async () => {
    const project = (value: string, model: string, threshold: number | null) => saveProject(createProject({
      samples: { fileName: 'survey.csv', text: surveyCsv(), intake: { crs: 'EPSG:32633', value } },
      model: parseModel(JSON.parse(ws.read(model))), grid: { cellSize: 40 }, threshold,
    }));
    ws.write('zinc-project.json', project('zinc (mg/kg)', 'zinc.json', 700));
    ws.write('lead-project.json', project('lead (mg/kg)', 'lead.json', 530));
    const multi = await ws.run('report', '--project', 'zinc-project.json', '--model', 'set.json', '--value', 'zinc (mg/kg),lead (mg/kg)',
      '--threshold', 'lead (mg/kg)=530', '--no-compare', '--out', 'multi.html');
    expect(multi.code, multi.stderr).toBe(0);
    const html = ws.read('multi.html');
    expect(html.match(/<section class="analyte page"/g)?.length).toBe(2);
    // Each section carries the caution, the model, the maps and the cross-validation of its analyte.
    const timeless = (t: string) => t.replace(/\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(\.\d+)?Z/g, 'TIME');
    const section = (k: number) => {
      const start = html.indexOf('>', html.indexOf(`id="analyte-${k}"`)) + 2;
      return timeless(html.slice(start, html.indexOf('\n</section>', start)).replaceAll(`a${k}-legend`, 'legend'));
    };
    for (const [k, name] of [[1, 'zinc'], [2, 'lead']] as const) {
      const one = await ws.run('report', '--project', `${name}-project.json`, '--no-compare', '--out', `${name}.html`);
      expect(one.code, one.stderr).toBe(0);
      const single = ws.read(`${name}.html`);
      const main = single.slice(single.indexOf('\n', single.indexOf('<div class="footer-caution">')) + 1, single.indexOf('\n</main>'));
      const s = section(k);
      expect(s).toContain('Screening only');
      expect(s).toContain('<h2>Cross-validation</h2>');
      expect(s).toContain('class="map"');
      expect(s).toContain(`P(${name} &gt;`);
      expect(s).toBe(timeless(main));
    }
  }, 300_000);

  it('report --value refuses an analyte missing from the model set or the project\'s samples, and realisations (exit 2)', async () => {
    const notInSet = await ws.run('report', '--project', 'zinc-project.json', '--model', 'set.json', '--value', 'zinc (mg/kg),nickel', '--no-compare');
    expect(notInSet.code).toBe(2);
    expect(notInSet.stderr).toMatch(/no model for "nickel"/);
    const notInFile = await ws.run('report', '--project', 'zinc-project.json', '--model', 'set-nickel.json', '--value', 'copper,nickel', '--no-compare');
    expect(notInFile.code).toBe(2);
    expect(notInFile.stderr).toMatch(/no value column "nickel"/);
    const noSet = await ws.run('report', '--project', 'zinc-project.json', '--value', 'zinc (mg/kg),copper');
    expect(noSet.code).toBe(2);
    expect(noSet.stderr).toMatch(/needs "--model FILE", a model set/);
    const sims = await ws.run('report', '--project', 'zinc-project.json', '--model', 'set.json', '--value', 'copper,zinc (mg/kg)', '--realisations', '10');
    expect(sims.code).toBe(2);
    expect(sims.stderr).toMatch(/"--realisations" is not available with several analytes/);
  }, 120_000);

  it('analyteColumnName keeps letters and digits, drops a unit in brackets', () => {
    expect(analyteColumnName('zinc (mg/kg)')).toBe('zinc');
    expect(analyteColumnName('Pb total')).toBe('Pb_total');
    expect(analyteColumnName('NO3-N')).toBe('NO3_N');
    expect(analyteColumnName('()')).toBe('value');
  });
});
