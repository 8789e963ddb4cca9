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

  it('analyteColumnName keeps letters and digits, drops a unit in brackets', () => {
    expect(analyteColumnName('zinc (mg/kg)')).toBe('zinc');
    expect(analyteColumnName('Pb total')).toBe('Pb_total');
    expect(analyteColumnName('NO3-N')).toBe('NO3_N');
    expect(analyteColumnName('()')).toBe('value');
  });
});
