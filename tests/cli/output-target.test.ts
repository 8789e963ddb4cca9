import { afterAll, describe, expect, it } from 'vitest';
import { linkSync, mkdirSync, readdirSync, readFileSync, symlinkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { COMMANDS } from '../../src/cli/commands/index.ts';
import { runInputs } from '../../src/cli/main.ts';
import { checkOutputTarget, resolvedPath } from '../../src/cli/safe-write.ts';
import { FIELD_MODEL, planarSamplesCsv, workspace } from './run-cli.ts';

const ws = workspace();
afterAll(() => ws.remove());

// A valid file for every input option, so that without the check each command would read them and write.
const boundary = JSON.stringify({
  type: 'FeatureCollection',
  features: [{ type: 'Feature', properties: {}, geometry: { type: 'Polygon', coordinates: [[[14.99, 48.7], [15.01, 48.7], [15.01, 48.72], [14.99, 48.72], [14.99, 48.7]]] } }],
});
const INPUT_TEXT: Record<string, string> = {
  samples: planarSamplesCsv(),
  model: `${JSON.stringify(FIELD_MODEL)}\n`,
  targets: 'easting,northing\n500050,5400050\n',
  candidates: 'easting,northing\n500050,5400050\n500100,5400100\n',
  boundary,
  exclude: boundary,
  project: '{"format":"not read: the check comes first"}\n',
};
const NAME: Record<string, string> = {
  samples: 'v.csv', model: 'model.json', targets: 'targets.csv', candidates: 'candidates.csv',
  boundary: 'boundary.geojson', exclude: 'exclude.geojson', project: 'p.json',
};

function writeInputs(dir: string): void {
  for (const [option, text] of Object.entries(INPUT_TEXT)) writeFileSync(join(dir, NAME[option]), text);
}

function snapshot(dir: string): Record<string, string> {
  const out: Record<string, string> = {};
  for (const f of readdirSync(dir).sort()) out[f] = readFileSync(join(dir, f), 'latin1');
  return out;
}

describe('checkOutputTarget', () => {
  it('checkOutputTarget refuses --out equal to each input of every command (same name, ./name, absolute path): exit 2, the message names both, inputs byte-identical', async () => {
    writeInputs(ws.dir);
    const before = snapshot(ws.dir);
    let cases = 0;
    for (const command of COMMANDS) {
      const inputs = command.options.filter((o) => o.placeholder === 'FILE' && o.name !== 'out').map((o) => o.name);
      // A command that reads no file and writes none (app: serves the built app) has nothing to check.
      if (inputs.length === 0 && command.name === 'app') continue;
      expect(command.options.some((o) => o.name === 'out'), command.name).toBe(true);
      for (const option of inputs) {
        for (const out of [NAME[option], `./${NAME[option]}`, join(ws.dir, NAME[option])]) {
          const argv = [command.name, ...inputs.flatMap((o) => [`--${o}`, NAME[o]]), '--out', out];
          if (command.name === 'simulate') argv.push('--count', '2');
          const r = await ws.run(...argv);
          expect(r.code, argv.join(' ')).toBe(2);
          expect(r.stderr, argv.join(' ')).toContain(`"--out ${out}" names the same file as "--${option} ${NAME[option]}"`);
          cases++;
        }
      }
    }
    // fit --samples v.csv --out v.csv, report --project p.json --out p.json, grid --out model.json, suggest --out boundary.geojson among them.
    expect(cases).toBeGreaterThanOrEqual(3 * 20);
    expect(snapshot(ws.dir)).toEqual(before);
  });

  it('checkOutputTarget follows symbolic links of the file and of its folder, and hard links', () => {
    const dir = join(ws.dir, 'links');
    mkdirSync(join(dir, 'data'), { recursive: true });
    writeFileSync(join(dir, 'data', 'v.csv'), planarSamplesCsv());
    symlinkSync(join(dir, 'data', 'v.csv'), join(dir, 'alias.csv'));
    symlinkSync(join(dir, 'data'), join(dir, 'folder-link'));
    linkSync(join(dir, 'data', 'v.csv'), join(dir, 'hard.csv'));
    const inputs = [{ option: 'samples', file: 'data/v.csv' }];
    for (const out of ['alias.csv', 'folder-link/v.csv', 'hard.csv', 'data/../data/v.csv', 'folder-link/../data/v.csv']) {
      expect(() => checkOutputTarget(dir, out, inputs), out).toThrow(/names the same file as "--samples data\/v.csv"/);
    }
    // An input named through a link, the output by its real name.
    expect(() => checkOutputTarget(dir, 'data/v.csv', [{ option: 'samples', file: 'alias.csv' }])).toThrow(/names the same file/);
    // A new file in a linked folder resolves through the link.
    expect(resolvedPath(dir, 'folder-link/new.csv')).toBe(join(resolvedPath(dir, 'data'), 'new.csv'));
    expect(() => checkOutputTarget(dir, 'folder-link/new.csv', inputs)).not.toThrow();
  });

  it('checkOutputTarget refuses a missing output folder, a file used as a folder and a folder as output, naming the folder (exit 2) before reading any input', async () => {
    // The samples file does not exist either: the folder is named, so nothing was read first.
    const r = await ws.run('fit', '--samples', 'missing.csv', '--out', 'no-such-folder/model.json');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/The output folder .*no-such-folder does not exist; expected an existing folder for "--out no-such-folder\/model.json"/);
    ws.write('plain.txt', 'x');
    const f = await ws.run('grid', '--samples', 'missing.csv', '--model', 'm.json', '--out', 'plain.txt/grid.tif');
    expect(f.code).toBe(2);
    expect(f.stderr).toMatch(/The output folder .*plain\.txt is not a folder/);
    mkdirSync(join(ws.dir, 'sub'), { recursive: true });
    const d = await ws.run('inspect', '--samples', 'missing.csv', '--out', 'sub');
    expect(d.code).toBe(2);
    expect(d.stderr).toContain('Option "--out sub" names a folder; expected a file name.');
  });

  it.skipIf(process.getuid?.() === 0)('checkOutputTarget refuses a read-only output folder before any work (not checkable as root)', async () => {
    const { chmodSync } = await import('node:fs');
    mkdirSync(join(ws.dir, 'locked'), { recursive: true });
    chmodSync(join(ws.dir, 'locked'), 0o555);
    const r = await ws.run('fit', '--samples', 'missing.csv', '--out', 'locked/model.json');
    chmodSync(join(ws.dir, 'locked'), 0o755);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/The output folder .*locked is not writable/);
  });

  it('runInputs lists every FILE option but --out as given', () => {
    const grid = COMMANDS.find((c) => c.name === 'grid')!;
    expect(runInputs(grid, { samples: 'a.csv', model: 'm.json', out: 'g.tif', cell: 2, project: 'p.json' }))
      .toEqual([{ option: 'model', file: 'm.json' }, { option: 'samples', file: 'a.csv' }, { option: 'project', file: 'p.json' }].sort((a, b) => grid.options.findIndex((o) => o.name === a.option) - grid.options.findIndex((o) => o.name === b.option)));
  });
});
