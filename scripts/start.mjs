#!/usr/bin/env node
// `npm start`: builds the app and the command line (`npm run build`) when a build is missing or older
// than the sources, then serves the built app on 127.0.0.1 with `gapwise app` and prints its address.
// Arguments after `--` go to `gapwise app` (`npm start -- --port 8080`).
import { spawnSync } from 'node:child_process';
import { existsSync, readdirSync, statSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..');
const SOURCES = ['src', 'pwa', 'public', 'data-demo', 'index.html', 'vite.config.ts', 'package.json', 'package-lock.json', 'scripts/build-cli.mjs'];
const BUILT = ['dist/sw.js', 'dist-cli/main.js'];

function newest(path) {
  const st = statSync(path);
  if (!st.isDirectory()) return st.mtimeMs;
  return Math.max(0, ...readdirSync(path).map((name) => newest(join(path, name))));
}

const built = BUILT.map((f) => join(ROOT, f));
const stale = !built.every(existsSync)
  || Math.max(...SOURCES.map((f) => join(ROOT, f)).filter(existsSync).map(newest)) > Math.min(...built.map((f) => statSync(f).mtimeMs));
if (stale) {
  console.error('Building the app and the command line (npm run build) ...');
  const b = spawnSync('npm', ['run', 'build', '--silent'], { cwd: ROOT, stdio: 'inherit' });
  if (b.status !== 0) process.exit(b.status ?? 1);
}
const r = spawnSync(process.execPath, [join(ROOT, 'bin', 'gapwise.js'), 'app', ...process.argv.slice(2)], { cwd: ROOT, stdio: 'inherit' });
process.exit(r.status ?? 0);
