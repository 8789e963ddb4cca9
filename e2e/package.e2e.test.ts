/**
 * The package as a user gets it: `npm pack` of the built checkout (dist/ and dist-cli/ from
 * `npm run build`), installed with npm into an empty folder outside the checkout (so nothing can come
 * from its node_modules; the two runtime dependencies come from the registry or npm's cache), then
 * `gapwise --help`, `--version`, `fit` and `grid` on the demo data copied there, and `gapwise app`
 * serving the app. The installed command runs the compiled JavaScript: no TypeScript loader is
 * installed (tsx is a development dependency) and the worker threads of `grid` start from .js files.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { execFileSync, spawn, spawnSync, type SpawnSyncReturns } from 'node:child_process';
import { copyFileSync, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { get } from 'node:http';
import { join, resolve } from 'node:path';
import { ROOT } from './harness.ts';
import { SOFTWARE, GAPWISE_VERSION } from '../src/core/shared/version.ts';
import { CAUTION } from '../src/core/shared/caution.ts';
import { readAsciiTag } from '../src/io/geotiff.ts';

let scratch: string;
let project: string;
let tgz: string;

/** The environment of a user's shell: no NODE_OPTIONS or NODE_PATH that could reach the checkout. */
function userEnv(): NodeJS.ProcessEnv {
  const { NODE_OPTIONS: _o, NODE_PATH: _p, ...rest } = process.env;
  return { ...rest, NO_COLOR: '1' };
}

function gapwise(...args: string[]): SpawnSyncReturns<string> {
  return spawnSync(join(project, 'node_modules', '.bin', 'gapwise'), args, { cwd: project, env: userEnv(), encoding: 'utf8', timeout: 300_000 });
}

beforeAll(() => {
  for (const built of ['dist/index.html', 'dist/sw.js', 'dist-cli/main.js']) {
    if (!existsSync(resolve(ROOT, built))) throw new Error(`${built} is missing: run "npm run build" before this test.`);
  }
  scratch = mkdtempSync(join(tmpdir(), 'gapwise-package-'));
  // --ignore-scripts: pack the build made before the tests instead of building again (prepack).
  const packed = JSON.parse(execFileSync('npm', ['pack', '--ignore-scripts', '--json', '--pack-destination', scratch], { cwd: ROOT, encoding: 'utf8', env: userEnv() })) as Array<{ filename: string; files: Array<{ path: string }> }>;
  tgz = join(scratch, packed[0].filename);
  project = join(scratch, 'site-survey');
  mkdirSync(project);
  writeFileSync(join(project, 'package.json'), '{ "name": "site-survey", "private": true }\n');
  execFileSync('npm', ['install', '--no-audit', '--no-fund', '--loglevel=error', tgz], { cwd: project, env: userEnv(), encoding: 'utf8', stdio: 'pipe' });
  for (const f of ['lead-topsoil.csv', 'site-boundary.geojson']) copyFileSync(resolve(ROOT, 'data-demo', f), join(project, f));
}, 600_000);

afterAll(() => {
  if (scratch) rmSync(scratch, { recursive: true, force: true });
});

describe('the packed gapwise package', () => {
  it('npm pack holds the compiled command line, the built app and the demo, and no TypeScript source', () => {
    expect(tgz).toMatch(new RegExp(`gapwise-${GAPWISE_VERSION.replace(/\./g, '\\.')}\\.tgz$`));
    const installed = join(project, 'node_modules', 'gapwise');
    for (const f of ['bin/gapwise.js', 'dist-cli/main.js', 'dist-cli/engine.worker.js',
      'dist-cli/THIRD-PARTY-LICENSES.txt', 'dist/index.html', 'dist/sw.js', 'dist/manifest.webmanifest', 'data-demo/lead-topsoil.csv', 'CHANGELOG.md', 'README.md']) {
      expect(existsSync(join(installed, f)), f).toBe(true);
    }
    expect(existsSync(join(installed, 'src'))).toBe(false);
    // No loader installed: the command cannot be running TypeScript.
    expect(existsSync(join(project, 'node_modules', 'tsx'))).toBe(false);
  });

  it('gapwise --help and --version run from the installed package', () => {
    const help = gapwise('--help');
    expect(help.status, help.stderr).toBe(0);
    expect(help.stdout).toContain('Usage: gapwise <command> [options]');
    expect(help.stdout).toContain(CAUTION);
    const version = gapwise('--version');
    expect(version.stdout).toBe(`${SOFTWARE}\n`);
  });

  it('gapwise fit and gapwise grid (two worker threads) on the demo data, with the version in the outputs', () => {
    const fit = gapwise('fit', '--samples', 'lead-topsoil.csv', '--transform', 'log', '--out', 'lead-model.json');
    expect(fit.status, fit.stderr).toBe(0);
    const model = JSON.parse(readFileSync(join(project, 'lead-model.json'), 'utf8')) as { structures: unknown[]; transform: string; software: string; caution: string };
    expect(model.transform).toBe('log');
    expect(model.structures.length).toBeGreaterThanOrEqual(1);
    expect(model.software).toBe(SOFTWARE);
    expect(model.caution).toBe(CAUTION);

    const grid = gapwise('grid', '--samples', 'lead-topsoil.csv', '--model', 'lead-model.json', '--boundary', 'site-boundary.geojson',
      '--cell', '5', '--threshold', '200', '--workers', '2', '--out', 'lead.tif');
    expect(grid.status, grid.stderr).toBe(0);
    expect(grid.stderr).toMatch(/on 2 worker threads/);
    const summary = JSON.parse(grid.stdout) as { grid: { nx: number; ny: number } };
    const tif = readFileSync(join(project, 'lead.tif'));
    const buffer = tif.buffer.slice(tif.byteOffset, tif.byteOffset + tif.byteLength);
    expect(readAsciiTag(buffer, 305)).toBe(SOFTWARE);
    expect(summary.grid.nx).toBeGreaterThan(10);

    const csv = gapwise('grid', '--samples', 'lead-topsoil.csv', '--model', 'lead-model.json', '--boundary', 'site-boundary.geojson',
      '--cell', '10', '--out', 'lead.csv');
    expect(csv.status, csv.stderr).toBe(0);
    const first = readFileSync(join(project, 'lead.csv'), 'utf8').split('\n')[0];
    expect(first).toContain(`Written by ${SOFTWARE}.`);
  }, 600_000);

  it('gapwise app serves the installed package\'s app on 127.0.0.1 and prints the address', async () => {
    const child = spawn(join(project, 'node_modules', '.bin', 'gapwise'), ['app', '--port', '0'], { cwd: project, env: userEnv() });
    try {
      const url = await new Promise<string>((res, rej) => {
        let out = '';
        child.stdout.on('data', (d: Buffer) => {
          out += d.toString();
          const m = /(http:\/\/127\.0\.0\.1:\d+\/)/.exec(out);
          if (m) res(m[1]);
        });
        child.once('exit', (code) => rej(new Error(`gapwise app exited with ${code}: ${out}`)));
      });
      const page = await fetch(url);
      expect(page.status).toBe(200);
      expect(await page.text()).toContain('Content-Security-Policy');
      const sw = await fetch(`${url}sw.js`);
      expect(sw.status).toBe(200);
      expect(sw.headers.get('content-type')).toMatch(/javascript/);
      // The package's own package.json sits one folder above the app: an encoded ".." must not reach it.
      const escaped = await new Promise<number>((res, rej) => {
        get(`${url}%2e%2e/package.json`, (r) => { r.resume(); res(r.statusCode ?? 0); }).once('error', rej);
      });
      expect(escaped).toBe(404);
    } finally {
      child.kill('SIGTERM');
    }
  }, 120_000);
});
