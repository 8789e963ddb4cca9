import { afterAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { resolve } from 'node:path';
import { main } from '../../src/cli/main.ts';
import { CAUTION } from '../../src/cli/common.ts';
import { COMMANDS, PLANNED } from '../../src/cli/commands/index.ts';
import { workspace } from './run-cli.ts';
import { SOFTWARE } from '../../src/core/shared/version.ts';

const ws = workspace();
afterAll(() => ws.remove());

describe('main', () => {
  it('main prints the tool help with every command and the caution, exit 0', async () => {
    const r = await ws.run('--help');
    expect(r.code).toBe(0);
    for (const c of ['inspect', 'fit', 'predict', 'cv', 'grid', 'suggest', 'report']) expect(r.stdout).toMatch(new RegExp(`^  ${c} `, 'm'));
    if (PLANNED.length) expect(r.stdout).toContain(`Not available yet: ${PLANNED.join(', ')}.`);
    else expect(r.stdout).not.toContain('Not available yet');
    expect(r.stdout).toContain(CAUTION);
  });

  it('main prints each command\'s help: usage, every option with its default, an example, the caution', async () => {
    for (const c of COMMANDS) {
      const r = await ws.run(c.name, '--help');
      expect(r.code, c.name).toBe(0);
      expect(r.stdout).toContain(`Usage: gapwise ${c.name} `);
      // Help text wraps; compare with runs of white space collapsed.
      const flat = r.stdout.replace(/\s+/g, ' ');
      for (const o of c.options) {
        expect(flat, `${c.name} --${o.name}`).toContain(`--${o.name}`);
        if (o.defaultText !== undefined && !o.required) expect(flat, `${c.name} --${o.name} default`).toContain(`default: ${o.defaultText})`);
        if (o.unit !== undefined) expect(flat, `${c.name} --${o.name} unit`).toContain(`unit: ${o.unit}`);
      }
      expect(r.stdout).toMatch(/Examples?:\n  gapwise /);
      expect(r.stdout).toContain(CAUTION);
      expect((await ws.run('help', c.name)).stdout).toBe(r.stdout);
    }
  });

  it('main prints the version for --version and -v, exit 0', async () => {
    for (const flag of ['--version', '-v']) {
      const r = await ws.run(flag);
      expect(r.code).toBe(0);
      expect(r.stdout).toBe(`${SOFTWARE}\n`);
    }
  });

  it('main returns 2 for no command, an unknown command, a planned command and an unknown option', async () => {
    const none = await ws.run();
    expect(none.code).toBe(2);
    expect(none.stderr).toContain('Usage: gapwise <command>');
    const unknown = await ws.run('krige');
    expect(unknown).toMatchObject({ code: 2, stdout: '' });
    expect(unknown.stderr).toBe(`error: Unknown command "krige"; expected one of ${COMMANDS.map((c) => c.name).join(', ')} (see "gapwise --help").\n`);
    for (const name of PLANNED) {
      const planned = await ws.run(name);
      expect(planned.code).toBe(2);
      expect(planned.stderr).toContain(`"${name}" is not available yet`);
    }
    const option = await ws.run('fit', '--samples', 'a.csv', '--famliy', 'matern');
    expect(option.code).toBe(2);
    expect(option.stderr).toBe('error: Unknown option "--famliy" for "gapwise fit"; "gapwise fit --help" lists the options.\n');
  });

  it('main returns 2 naming the file when it does not exist, with no stack trace', async () => {
    const r = await ws.run('inspect', '--samples', 'nowhere.csv');
    expect(r.code).toBe(2);
    expect(r.stderr).toBe('error: nowhere.csv: Cannot read the file: the file does not exist.\n');
  });

  it('main returns 2 with the line and column of a bad cell', async () => {
    // Most rows out of range refuse the file (one such row alone would be rejected with its line).
    ws.write('swapped.csv', 'id,lon,lat,pb\n1,11.25,48.5,10\n2,11.251,48.5,20\n3,11.25,123.5,30\n4,11.252,123.501,12\n5,11.253,123.502,14\n');
    const r = await ws.run('inspect', '--samples', 'swapped.csv');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/^error: swapped\.csv, line 4, column "lat": /);
    expect(r.stderr).not.toMatch(/\n\s+at /);
  });

  it('main returns 1 with a stack trace for a bug (an exception that is not a GapwiseError)', async () => {
    let stderr = '';
    const code = await main(['--help'], {
      stdout: () => { throw new TypeError('stdout exploded'); },
      stderr: (t) => { stderr += t; },
      cwd: ws.dir,
    });
    expect(code).toBe(1);
    expect(stderr).toContain('this is a bug in gapwise');
    expect(stderr).toContain('TypeError: stdout exploded');
    expect(stderr).toMatch(/\n\s+at /);
  });

  it('main runs through bin/gapwise.js in a child process (--help, exit 0; unknown option, exit 2)', () => {
    const bin = resolve(__dirname, '..', '..', 'bin', 'gapwise.js');
    const ok = spawnSync(process.execPath, [bin, '--help'], { encoding: 'utf8', timeout: 60000 });
    expect(ok.status).toBe(0);
    expect(ok.stdout).toContain('Usage: gapwise <command> [options]');
    const bad = spawnSync(process.execPath, [bin, 'cv', '--bogus'], { encoding: 'utf8', timeout: 60000 });
    expect(bad.status).toBe(2);
    expect(bad.stderr).toContain('Unknown option "--bogus"');
  }, 60000);
});
