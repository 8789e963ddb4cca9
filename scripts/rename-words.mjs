// rename-words: keep-file (this script names the old spellings it replaces)
// One spelling per word (British) and one name per method, applied to a Gapwise checkout.
// Run from the repository root: node scripts/rename-words.mjs [--dry-run]
// Idempotent: a second run changes nothing. Prints every file it rewrote or moved.
//
// Scope: src/, tests/, e2e/, bench/, scripts/, README.md, DEVELOPERS.md; text files ending in
// .ts .svelte .js .mjs .md .css .html. Never: JSON (fixtures' data, package files), Python reference
// scripts (they speak their libraries' names, e.g. n_neighbors), node_modules, CHANGELOG.md,
// tests/fixtures/ (input files as users write them).
// A file whose first line holds "rename-words: keep-file" is left whole; a line with "rename-words: keep" is left as is
// (the CLI's alias table and the tests that type the old option names on purpose).
import { execFileSync } from 'node:child_process';
import { existsSync, readdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { join, relative, sep } from 'node:path';

const ROOT = process.cwd();
const DRY = process.argv.includes('--dry-run');
const DIRS = ['src', 'tests', 'e2e', 'bench', 'scripts'];
const FILES = ['README.md', 'DEVELOPERS.md'];
const EXTENSIONS = ['.ts', '.svelte', '.js', '.mjs', '.md', '.css', '.html'];
const SKIP_DIRS = new Set(['node_modules', 'dist', 'dist-cli', 'screenshots', 'results', '.git']);
const SKIP_PATHS = ['tests/fixtures/'];

if (!existsSync(join(ROOT, 'package.json')) || !existsSync(join(ROOT, 'src'))) {
  console.error('rename-words: run this from the repository root (package.json and src/ expected).');
  process.exit(2);
}

/** Keeps the case pattern of `found` (lower, Capitalised, UPPER) on `replacement`. */
function matchCase(found, replacement) {
  if (found === found.toUpperCase() && found !== found.toLowerCase()) return replacement.toUpperCase();
  if (found[0] === found[0].toUpperCase()) return replacement[0].toUpperCase() + replacement.slice(1);
  return replacement;
}

// Spelling: American stem -> British stem, matched anywhere in a word (identifiers, prose, paths,
// option names) whatever its case. Each stem was checked against the libraries in use: none of their
// names contain these (CSS `color`/`center` and Leaflet's `getCenter` are why those are not here).
const SPELLINGS = [
  ['neighbor', 'neighbour'],
  ['realiz', 'realis'],
  ['optimiz', 'optimis'],
  ['minimiz', 'minimis'],
  ['factoriz', 'factoris'],
];

// One name per method. The nearest-neighbour (Vecchia) likelihood: identifiers use the stem
// "vecchia", screens and messages say "nearest-neighbour likelihood", and "nnl" is only the value
// code in data and on the command line (`--method nnl`, the model JSON's fit.method, project files),
// kept because it is a documented contract. Applied after SPELLINGS, as exact identifiers.
const IDENTIFIERS = [
  ['fitNearestNeighbour', 'fitVecchia'],
  ['nnlNeighbours', 'vecchiaNeighbours'],
];
// The app engine's local flag named after the value code (that file only).
const LOCAL_NAMES_FILE = 'src/ui/state/engine.ts';
const LOCAL_NAMES = [
  [/\bconst nnl = /g, 'const vecchia = '],
  [/\bif \(nnl\)/g, 'if (vecchia)'],
];

function rewrite(text, rel = '') {
  const lines = text.split('\n');
  let changed = false;
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i];
    if (line.includes('rename-words: keep')) continue;
    let next = line;
    for (const [from, to] of SPELLINGS) {
      next = next.replace(new RegExp(from, 'gi'), (found) => matchCase(found, to));
    }
    for (const [from, to] of IDENTIFIERS) next = next.replace(new RegExp(`\\b${from}\\b`, 'g'), to);
    if (rel === LOCAL_NAMES_FILE) for (const [re, to] of LOCAL_NAMES) next = next.replace(re, to);
    if (next !== line) {
      lines[i] = next;
      changed = true;
    }
  }
  return changed ? lines.join('\n') : text;
}

function walk(dir, out) {
  for (const name of readdirSync(dir)) {
    if (SKIP_DIRS.has(name)) continue;
    const path = join(dir, name);
    const rel = relative(ROOT, path).split(sep).join('/');
    if (SKIP_PATHS.some((p) => rel.startsWith(p))) continue;
    if (statSync(path).isDirectory()) walk(path, out);
    else if (EXTENSIONS.some((e) => name.endsWith(e))) out.push(rel);
  }
  return out;
}

const files = [];
for (const d of DIRS) if (existsSync(join(ROOT, d))) walk(join(ROOT, d), files);
for (const f of FILES) if (existsSync(join(ROOT, f))) files.push(f);

// 1. Contents.
let contentCount = 0;
for (const rel of files) {
  const path = join(ROOT, rel);
  const text = readFileSync(path, 'utf8');
  // The file marker counts only in the file's first line (a guide that mentions it is still rewritten).
  if (text.split('\n', 1)[0].includes('rename-words: keep-file')) continue;
  const next = rewrite(text, rel);
  if (next === text) continue;
  const before = text.split('\n');
  const after = next.split('\n');
  const n = before.filter((l, i) => l !== after[i]).length;
  console.log(`edit  ${rel} (${n} line${n === 1 ? '' : 's'})`);
  contentCount++;
  if (!DRY) writeFileSync(path, next);
}

// 2. File names (imports were rewritten above by the same rules), through git mv.
let moveCount = 0;
for (const rel of files) {
  const parts = rel.split('/');
  const base = parts.pop();
  const renamed = rewrite(base);
  if (renamed === base) continue;
  const target = [...parts, renamed].join('/');
  if (existsSync(join(ROOT, target))) {
    console.error(`rename-words: ${target} exists already; ${rel} left where it is.`);
    process.exitCode = 1;
    continue;
  }
  console.log(`move  ${rel} -> ${target}`);
  moveCount++;
  if (!DRY) execFileSync('git', ['mv', rel, target], { cwd: ROOT, stdio: 'inherit' });
}

console.log(`rename-words: ${contentCount} file${contentCount === 1 ? '' : 's'} edited, ${moveCount} moved${DRY ? ' (dry run: nothing written)' : ''}.`);
