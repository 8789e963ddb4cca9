// The layer rule of the design: core imports only core; io imports core; worker imports core and io;
// cli imports core, io and worker (the engine's protocol, handler and pool, run over worker threads);
// ui imports anything but cli. Checked by reading every import in src/.
import { describe, expect, it } from 'vitest';
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative, resolve, dirname } from 'node:path';

const SRC = resolve(__dirname, '..', 'src');
const ALLOWED: Record<string, string[]> = {
  core: ['core'],
  io: ['core', 'io'],
  worker: ['core', 'io', 'worker'],
  cli: ['core', 'io', 'worker', 'cli'],
  ui: ['core', 'io', 'worker', 'ui'],
};
// Packages each layer may use besides relative imports.
const CORE_FORBIDDEN_PACKAGES = /^(svelte|leaflet|node:|fs$|path$|papaparse|proj4|geotiff|idb-keyval)/;

function files(dir: string): string[] {
  return readdirSync(dir).flatMap((f) => {
    const p = join(dir, f);
    return statSync(p).isDirectory() ? files(p) : /\.(ts|svelte)$/.test(f) ? [p] : [];
  });
}

describe('layer rule', () => {
  const all = files(SRC);
  it('finds source files to check', () => {
    expect(all.length).toBeGreaterThan(3);
  });
  for (const file of all) {
    const layer = relative(SRC, file).split(/[\\/]/)[0];
    it(`imports of ${relative(SRC, file)} stay inside their layers`, () => {
      const text = readFileSync(file, 'utf8');
      const specs = [...text.matchAll(/(?:import|export)[^'"]*?from\s*['"]([^'"]+)['"]|import\(\s*['"]([^'"]+)['"]\s*\)/g)]
        .map((m) => m[1] ?? m[2]);
      for (const spec of specs) {
        if (spec.startsWith('.')) {
          const targetPath = relative(SRC, resolve(dirname(file), spec.replace(/\?.*$/, '')));
          // The app bundles the invented demo files (data-demo/) as text; nothing else outside src/.
          if (layer === 'ui' && targetPath.startsWith('../data-demo/')) continue;
          const target = targetPath.split(/[\\/]/)[0];
          expect(ALLOWED[layer] ?? [], `${relative(SRC, file)} imports ${spec}`).toContain(target);
        } else if (layer === 'core') {
          expect(CORE_FORBIDDEN_PACKAGES.test(spec), `core file ${relative(SRC, file)} imports ${spec}`).toBe(false);
        } else if (layer === 'worker') {
          // The worker layer runs in the browser too: Node's modules stay in the cli's adapter.
          expect(/^node:/.test(spec), `worker file ${relative(SRC, file)} imports ${spec}`).toBe(false);
        }
      }
      if (layer === 'core') expect(/\b(document|window|self)\.\w/.test(text.replace(/\/\/.*$/gm, ''))).toBe(false);
    });
  }
});

// Import loops. In core and io none at all, type imports included (a loop there means two files
// that should be one, or a shared type in the wrong file); elsewhere none that runs (value imports).
describe('no import loops', () => {
  const all = files(SRC);
  const edges = new Map<string, { to: string; typeOnly: boolean }[]>();
  for (const file of all) {
    const text = readFileSync(file, 'utf8');
    const deps = [...text.matchAll(/(?:import|export)([^'";]*?)from\s*['"](\.[^'"]+)['"]/g)]
      .map((m) => ({ to: resolve(dirname(file), m[2]), typeOnly: /^\s*type\b/.test(m[1]) }))
      .filter((d) => all.includes(d.to));
    edges.set(file, deps);
  }
  /** Strongly connected groups of more than one file (Tarjan), following the given edges. */
  function loops(follow: (from: string, d: { to: string; typeOnly: boolean }) => boolean): string[][] {
    let next = 0;
    const index = new Map<string, number>();
    const low = new Map<string, number>();
    const stack: string[] = [];
    const onStack = new Set<string>();
    const out: string[][] = [];
    const visit = (v: string): void => {
      index.set(v, next); low.set(v, next); next++;
      stack.push(v); onStack.add(v);
      for (const d of edges.get(v) ?? []) {
        if (!follow(v, d)) continue;
        if (!index.has(d.to)) { visit(d.to); low.set(v, Math.min(low.get(v)!, low.get(d.to)!)); }
        else if (onStack.has(d.to)) low.set(v, Math.min(low.get(v)!, index.get(d.to)!));
      }
      if (low.get(v) === index.get(v)) {
        const group: string[] = [];
        let w: string;
        do { w = stack.pop()!; onStack.delete(w); group.push(relative(SRC, w)); } while (w !== v);
        if (group.length > 1) out.push(group.sort());
      }
    };
    for (const v of edges.keys()) if (!index.has(v)) visit(v);
    return out;
  }
  const layerOf = (f: string): string => relative(SRC, f).split(/[\\/]/)[0];
  it('core and io have no import loops, type imports included', () => {
    expect(loops((from) => layerOf(from) === 'core' || layerOf(from) === 'io')).toEqual([]);
  });
  it('no file takes part in a loop of value imports', () => {
    expect(loops((_from, d) => !d.typeOnly)).toEqual([]);
  });
  it('the loop finder finds a loop when there is one', () => {
    const a = resolve(SRC, 'core/fitting/fit.ts');
    const b = resolve(SRC, 'core/fitting/fit-options.ts');
    const saved = edges.get(b)!;
    edges.set(b, [...saved, { to: a, typeOnly: true }]);
    try {
      const found = loops((from) => layerOf(from) === 'core');
      expect(found).toHaveLength(1);
      expect(found[0]).toEqual(expect.arrayContaining(['core/fitting/fit-options.ts', 'core/fitting/fit.ts']));
    } finally {
      edges.set(b, saved);
    }
  });
});

// The engine's folders, in the order they may depend on each other: a folder imports only itself and
// folders before it. Fitting and prediction are the one pair that use each other (a fit estimates the
// trend with the kriging system; the local predictor takes the nearest-neighbour trend estimate).
const CORE_FOLDERS = ['shared', 'covariance', 'linalg', 'geometry', 'fitting', 'prediction', 'validation', 'design', 'simulation'];
const PEERS = new Set(['fitting>prediction', 'prediction>fitting']);

describe('core folders', () => {
  const CORE = resolve(SRC, 'core');
  const coreFiles = files(CORE);
  it('every engine file lives in one of the capability folders, each with a README saying what it holds', () => {
    const folders = new Set(coreFiles.map((f) => relative(CORE, f).split(/[\\/]/)[0]));
    expect([...folders].sort()).toEqual([...CORE_FOLDERS].sort());
    for (const folder of CORE_FOLDERS) {
      const readme = readFileSync(join(CORE, folder, 'README.md'), 'utf8');
      expect(readme.length, `core/${folder}/README.md`).toBeGreaterThan(80);
    }
  });
  it('unit tests mirror the folders', () => {
    const testFolders = readdirSync(resolve(SRC, '..', 'tests', 'core')).filter((f) => statSync(resolve(SRC, '..', 'tests', 'core', f)).isDirectory());
    for (const f of testFolders) expect(CORE_FOLDERS, `tests/core/${f}`).toContain(f);
    const loose = readdirSync(resolve(SRC, '..', 'tests', 'core')).filter((f) => f.endsWith('.ts'));
    expect(loose).toEqual([]);
  });
  for (const file of coreFiles) {
    const folder = relative(CORE, file).split(/[\\/]/)[0];
    it(`core/${relative(CORE, file)} imports only its own folder and the folders before it`, () => {
      const text = readFileSync(file, 'utf8');
      const specs = [...text.matchAll(/(?:import|export)[^'"]*?from\s*['"](\.[^'"]+)['"]/g)].map((m) => m[1]);
      for (const spec of specs) {
        const target = relative(CORE, resolve(dirname(file), spec)).split(/[\\/]/)[0];
        if (target === folder || PEERS.has(`${folder}>${target}`)) continue;
        expect(CORE_FOLDERS.indexOf(target), `core/${relative(CORE, file)} imports ${spec}`).toBeGreaterThanOrEqual(0);
        expect(CORE_FOLDERS.indexOf(target), `core/${relative(CORE, file)} imports ${spec}`).toBeLessThan(CORE_FOLDERS.indexOf(folder));
      }
    });
  }
});
