#!/usr/bin/env node
// Runs the whole test suite: unit tests, then the build (app and command line) and the browser
// (end-to-end) tests, among them the offline app and the packed package.
// Ends with the plain line "N passed, N failed" and exits non-zero on any failure.
// `node scripts/test.mjs --unit` runs only the type checks and unit tests (no browser needed).
// The type checks (tsc for the TypeScript, svelte-check for the components) count as one test each.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';

const unitOnly = process.argv.includes('--unit');
const outDir = join('node_modules', '.gapwise-test');
mkdirSync(outDir, { recursive: true });
const env = { ...process.env, NO_COLOR: '1', FORCE_COLOR: '0' };

let passed = 0;
let failed = 0;
let broken = false;

function vitest(label, args) {
  const out = join(outDir, `${label}.json`);
  rmSync(out, { force: true });
  const r = spawnSync('npx', ['vitest', 'run', ...args, '--reporter=default', '--reporter=json', `--outputFile=${out}`],
    { stdio: 'inherit', env });
  if (!existsSync(out)) {
    console.error(`${label}: vitest wrote no results (exit ${r.status}).`);
    broken = true;
    return;
  }
  const j = JSON.parse(readFileSync(out, 'utf8'));
  passed += j.numPassedTests;
  failed += j.numFailedTests;
  // A suite that fails to load counts as a failure even when no test inside it ran.
  const badSuites = (j.testResults ?? []).filter((t) => t.status === 'failed' && (t.assertionResults ?? []).length === 0).length;
  failed += badSuites;
  if (r.status !== 0 && j.numFailedTests === 0 && badSuites === 0) broken = true;
}

function typeCheck(label, command, args) {
  const r = spawnSync(command, args, { stdio: 'inherit', env });
  if (r.status === 0) passed += 1;
  else {
    console.error(`${label} found errors (exit ${r.status}).`);
    failed += 1;
  }
}

typeCheck('tsc', 'npx', ['tsc', '-p', '.', '--noEmit']);
typeCheck('svelte-check', 'npx', ['svelte-check', '--tsconfig', './tsconfig.json', '--fail-on-warnings', '--output', 'machine']);
vitest('unit', []);
if (!unitOnly) {
  // The app (dist/) and the compiled command line (dist-cli/): the browser tests and the package test use both.
  const b = spawnSync('npx', ['vite', 'build', '--logLevel', 'warn'], { stdio: 'inherit', env });
  const c = b.status === 0 ? spawnSync('node', ['scripts/build-cli.mjs'], { stdio: 'inherit', env }) : b;
  if (b.status !== 0 || c.status !== 0) {
    console.error('The build (app or command line) failed.');
    failed += 1;
  } else {
    vitest('e2e', ['--config', 'vitest.e2e.config.ts', '--passWithNoTests']);
  }
}
console.log(`${passed} passed, ${failed} failed`);
process.exit(failed > 0 || broken ? 1 : 0);
