// Every name exported from src/ is imported somewhere: by another file of src/, or by tests/, e2e/,
// bench/ or scripts/. An export nobody imports is either dead code (delete it) or a file's private
// helper (drop the `export`). The few public entry points that only a tool outside these folders
// loads are listed in ENTRY_POINTS with the reason. Read as text: import and re-export statements
// (static and dynamic `import('…')`), resolved to the file they name.
// Values only (functions, constants, classes, enums): an exported interface or type may name the shape
// of an exported function's options or result without anyone importing it by name.
import { describe, expect, it } from 'vitest';
import { existsSync, readdirSync, readFileSync, statSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';

const ROOT = resolve(__dirname, '..');
const SRC = join(ROOT, 'src');
const IMPORTERS = ['src', 'tests', 'e2e', 'bench', 'scripts'].map((d) => join(ROOT, d));

/** `path (from the repository root)#name` → why nothing in the scanned folders imports it. */
const ENTRY_POINTS: Record<string, string> = {
  'src/cli/main.ts#main': 'the command line entry: bin/gapwise.js and the CLI build (scripts/build-cli.mjs) load it',
};

function files(dir: string, pattern: RegExp): string[] {
  if (!existsSync(dir)) return [];
  return readdirSync(dir).flatMap((f) => {
    if (f === 'node_modules' || f === 'fixtures' || f === 'screenshots') return [];
    const p = join(dir, f);
    return statSync(p).isDirectory() ? files(p, pattern) : pattern.test(f) ? [p] : [];
  });
}

/** Names a module exports (declarations, `export { a, b as c }`; not `export *`, not default); values only unless `types`. */
function exportedNames(text: string, types = false): string[] {
  const names = new Set<string>();
  const kinds = `function\\*?|const|let|var|class|enum|abstract\\s+class${types ? '|interface|type' : ''}`;
  const declaration = new RegExp(`^export\\s+(?:declare\\s+)?(?:async\\s+)?(?:${kinds})\\s+([A-Za-z_$][\\w$]*)`, 'gm');
  for (const m of text.matchAll(declaration)) names.add(m[1]);
  for (const m of text.matchAll(/^export\s+(type\s+)?\{([^}]*)\}(?!\s*from)/gm)) {
    if (m[1] && !types) continue;
    for (const part of m[2].split(',')) {
      if (/^\s*type\s/.test(part) && !types) continue;
      const name = part.trim().replace(/^type\s+/, '').split(/\s+as\s+/).pop()!.trim();
      if (name) names.add(name);
    }
  }
  return [...names];
}

/** The file a relative specifier names, as written (.ts, .svelte, .svelte.ts) or with .ts added. */
function resolveSpecifier(from: string, spec: string): string | null {
  const base = resolve(dirname(from), spec.replace(/\?.*$/, ''));
  for (const p of [base, `${base}.ts`, join(base, 'index.ts')]) if (existsSync(p) && statSync(p).isFile()) return p;
  return null;
}

interface Use { names: Set<string>; all: boolean }

/** For each src file: the names other files import from it (or `all` for `import * as` / `export *`). */
function collectUses(): Map<string, Use> {
  const uses = new Map<string, Use>();
  const use = (file: string): Use => {
    let u = uses.get(file);
    if (!u) uses.set(file, (u = { names: new Set(), all: false }));
    return u;
  };
  const importers = IMPORTERS.flatMap((d) => files(d, /\.(ts|svelte|mjs|js)$/));
  for (const file of importers) {
    const text = readFileSync(file, 'utf8');
    // import a, { b, c as d } from '…'; import type { … } from '…'; export { … } from '…'; export * from '…'
    for (const m of text.matchAll(/(?:^|[;\n])\s*(import|export)\s+(type\s+)?([^'";]*?)\s*from\s*['"](\.[^'"]+)['"]/g)) {
      const target = resolveSpecifier(file, m[4]);
      if (!target) continue;
      const clause = m[3];
      const u = use(target);
      if (/\*/.test(clause)) u.all = true;
      const braces = clause.match(/\{([^}]*)\}/);
      if (braces) {
        for (const part of braces[1].split(',')) {
          const name = part.trim().replace(/^type\s+/, '').split(/\s+as\s+/)[0].trim();
          if (name) u.names.add(name);
        }
      }
      if (/^[A-Za-z_$][\w$]*\s*(,|$)/.test(clause.trim()) && m[1] === 'import') u.names.add('default');
    }
    // import('…'): the target's exported names that the importing file mentions.
    for (const m of text.matchAll(/import\(\s*['"](\.[^'"]+)['"]\s*\)/g)) {
      const target = resolveSpecifier(file, m[1]);
      if (!target) continue;
      for (const name of exportedNames(readFileSync(target, 'utf8'), true)) {
        if (new RegExp(`\\b${name.replace(/\$/g, '\\$')}\\b`).test(text)) use(target).names.add(name);
      }
    }
  }
  return uses;
}

describe('unused exports', () => {
  const sources = files(SRC, /\.ts$/);
  const uses = collectUses();

  it('finds exports and their importers to check', () => {
    expect(sources.length).toBeGreaterThan(100);
    expect(uses.size).toBeGreaterThan(100);
  });

  it('every name exported from src/ is imported by src/, tests/, e2e/, bench/ or scripts/ (or is a listed entry point)', () => {
    const unused: string[] = [];
    for (const file of sources) {
      const u = uses.get(file);
      if (u?.all) continue;
      const rel = relative(ROOT, file).split('\\').join('/');
      for (const name of exportedNames(readFileSync(file, 'utf8'))) {
        if (u?.names.has(name) || `${rel}#${name}` in ENTRY_POINTS) continue;
        unused.push(`${rel}#${name}`);
      }
    }
    expect(unused, 'exported but imported by nothing: delete it if nothing uses it, or drop the export').toEqual([]);
  });

  it('every entry point listed is still exported (a stale entry would hide nothing)', () => {
    for (const key of Object.keys(ENTRY_POINTS)) {
      const [path, name] = key.split('#');
      expect(exportedNames(readFileSync(join(ROOT, path), 'utf8')), key).toContain(name);
    }
  });
});
