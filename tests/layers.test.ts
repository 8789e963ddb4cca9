// The layer rule of the design: core imports only core; io imports core; worker imports core and io;
// cli imports core and io; ui imports anything but cli. Checked by reading every import in src/.
import { describe, expect, it } from 'vitest';
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative, resolve, dirname } from 'node:path';

const SRC = resolve(__dirname, '..', 'src');
const ALLOWED: Record<string, string[]> = {
  core: ['core'],
  io: ['core', 'io'],
  worker: ['core', 'io', 'worker'],
  cli: ['core', 'io', 'cli'],
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
        }
      }
      if (layer === 'core') expect(/\b(document|window|self)\.\w/.test(text.replace(/\/\/.*$/gm, ''))).toBe(false);
    });
  }
});
