/**
 * Writes the service worker of a built app: pwa/service-worker.js with the build's file list filled
 * in (every file under the output folder but sw.js itself and source maps, with the SHA-256 the
 * browser checks as it fetches each one) and a build id derived from that list, so a new build
 * always means a new sw.js and an unchanged build never does. `offlineApp()` runs it after
 * `vite build`; the browser tests run it on a changed copy of dist/ to make "a new deployment".
 */
import { createHash } from 'node:crypto';
import { readdirSync, readFileSync, renameSync, statSync, writeFileSync } from 'node:fs';
import { join, relative, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Plugin, ResolvedConfig } from 'vite';

export const SERVICE_WORKER_FILE = 'sw.js';
const TEMPLATE = fileURLToPath(new URL('./service-worker.js', import.meta.url));

export interface PrecacheEntry {
  /** Path relative to the app's folder, with "/" separators. */
  url: string;
  /** Subresource-integrity string: "sha256-" and the base64 digest. */
  integrity: string;
}

function filesUnder(dir: string): string[] {
  const out: string[] = [];
  for (const name of readdirSync(dir).sort()) {
    const path = join(dir, name);
    if (statSync(path).isDirectory()) out.push(...filesUnder(path));
    else out.push(path);
  }
  return out;
}

/** The files the service worker keeps, in a stable order. */
export function precacheList(outDir: string): PrecacheEntry[] {
  return filesUnder(outDir)
    .map((path) => ({ path, url: relative(outDir, path).split(sep).join('/') }))
    .filter(({ url }) => url !== SERVICE_WORKER_FILE && !url.endsWith('.map'))
    .map(({ path, url }) => ({ url, integrity: `sha256-${createHash('sha256').update(readFileSync(path)).digest('base64')}` }));
}

/** Writes `outDir/sw.js` (temporary file, then rename) and returns the build id. */
export function writeServiceWorker(outDir: string): { build: string; files: PrecacheEntry[] } {
  const files = precacheList(outDir);
  const build = createHash('sha256').update(JSON.stringify(files)).digest('hex').slice(0, 16);
  const text = readFileSync(TEMPLATE, 'utf8')
    .replace("'__GAPWISE_BUILD__'", JSON.stringify(build))
    .replace('__GAPWISE_FILES__', JSON.stringify(files, null, 1));
  const target = join(outDir, SERVICE_WORKER_FILE);
  writeFileSync(`${target}.tmp`, text);
  renameSync(`${target}.tmp`, target);
  return { build, files };
}

/** Vite plugin: after the build is written (public files included), adds the service worker. */
export function offlineApp(): Plugin {
  let config: ResolvedConfig;
  return {
    name: 'gapwise-offline-app',
    apply: 'build',
    configResolved(c) {
      config = c;
    },
    closeBundle: {
      order: 'post',
      sequential: true,
      handler() {
        const outDir = join(config.root, config.build.outDir);
        const { build, files } = writeServiceWorker(outDir);
        config.logger.info(`service worker: build ${build}, ${files.length} files kept for offline use`);
      },
    },
  };
}
