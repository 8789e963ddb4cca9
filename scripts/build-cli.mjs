#!/usr/bin/env node
// Compiles the command line and its worker-thread entries to plain JavaScript in dist-cli/, so the
// installed package runs with no TypeScript loader. One ES module per entry (main.js and the
// engine's worker-thread entry engine.worker.js) plus shared chunks, all in one folder: the pool finds
// the worker entry beside its own chunk (src/cli/engine-threads.ts startWorker).
// The packages the CLI uses are bundled in (Node then starts it without parsing CommonJS modules one
// by one: `gapwise --help` takes about half the CPU time), their licences gathered in
// dist-cli/THIRD-PARTY-LICENSES.txt. Two stay packages, installed as "dependencies": the EPSG list
// (read entry by entry on demand) and geojson-validation (LGPL, kept a separate library). The build
// fails when the CLI imports a package that is not in "dependencies".
import { build } from 'esbuild';
import { existsSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { isBuiltin } from 'node:module';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..');
export const CLI_OUT = join(ROOT, 'dist-cli');
const ENTRIES = ['main', 'engine.worker'];
/**
 * Packages left as imports, installed with the package ("dependencies"): the EPSG list (8 MB of
 * JSON read on demand) and geojson-validation (LGPL: kept a separate, replaceable library).
 */
const EXTERNAL = ['epsg-index', 'geojson-validation'];

export async function buildCli() {
  rmSync(CLI_OUT, { recursive: true, force: true });
  const result = await build({
    absWorkingDir: ROOT,
    entryPoints: Object.fromEntries(ENTRIES.map((e) => [e, `src/cli/${e}.ts`])),
    outdir: CLI_OUT,
    entryNames: '[name]',
    chunkNames: '[name]-[hash]',
    bundle: true,
    splitting: true,
    format: 'esm',
    platform: 'node',
    target: 'node20',
    external: EXTERNAL.flatMap((p) => [p, `${p}/*`]),
    // Bundled CommonJS packages call require() for Node's own modules.
    banner: { js: "import { createRequire as gapwiseCreateRequire } from 'node:module'; const require = gapwiseCreateRequire(import.meta.url);" },
    legalComments: 'none',
    metafile: true,
    logLevel: 'warning',
  });
  const pkg = JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8'));
  const runtime = new Set(Object.keys(pkg.dependencies ?? {}));
  const missing = new Set();
  for (const output of Object.values(result.metafile.outputs)) {
    for (const imp of output.imports) {
      if (!imp.external || isBuiltin(imp.path)) continue;
      const name = imp.path.startsWith('@') ? imp.path.split('/').slice(0, 2).join('/') : imp.path.split('/')[0];
      if (!runtime.has(name)) missing.add(name);
    }
  }
  if (missing.size) throw new Error(`The command line imports ${[...missing].join(', ')}, not in "dependencies" of package.json.`);
  writeFileSync(join(CLI_OUT, 'THIRD-PARTY-LICENSES.txt'), licences(result.metafile));
  return result;
}

/** The name of the package a bundled input file belongs to, or null for our own sources. */
function packageOf(input) {
  const m = /node_modules\/((?:@[^/]+\/)?[^/]+)\//.exec(input);
  return m ? m[1] : null;
}

/** Each bundled package's name, version, licence and licence text. */
function licences(metafile) {
  const names = [...new Set(Object.keys(metafile.inputs).map(packageOf).filter(Boolean))].sort();
  const parts = ['Packages bundled into the gapwise command line, with their licences.', ''];
  for (const name of names) {
    const dir = join(ROOT, 'node_modules', name);
    const pkg = JSON.parse(readFileSync(join(dir, 'package.json'), 'utf8'));
    const file = readdirSync(dir).find((f) => /^(licen[cs]e|copying)/i.test(f));
    parts.push(`== ${name} ${pkg.version} (${pkg.license ?? 'see text'}) ==`);
    parts.push(file && existsSync(join(dir, file)) ? readFileSync(join(dir, file), 'utf8').trim() : `No licence file in the package; package.json says: ${pkg.license}.`, '');
  }
  return parts.join('\n');
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  await buildCli();
}
