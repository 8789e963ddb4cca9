import { describe, expect, it } from 'vitest';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Script } from 'node:vm';
import { precacheList, writeServiceWorker } from '../../pwa/build-service-worker.ts';

function fakeBuild(): string {
  const dir = mkdtempSync(join(tmpdir(), 'gapwise-sw-'));
  mkdirSync(join(dir, 'assets'));
  writeFileSync(join(dir, 'index.html'), '<!doctype html><title>x</title>');
  writeFileSync(join(dir, 'assets', 'index-1.js'), 'abc');
  writeFileSync(join(dir, 'assets', 'index-1.js.map'), '{}');
  writeFileSync(join(dir, 'sw.js'), 'an older service worker');
  return dir;
}

describe('writeServiceWorker', () => {
  it('precacheList lists every built file but sw.js and source maps, with "/" paths and SHA-256 integrity', () => {
    const dir = fakeBuild();
    try {
      const list = precacheList(dir);
      expect(list.map((f) => f.url)).toEqual(['assets/index-1.js', 'index.html']);
      // SHA-256 of "abc": FIPS 180-2 example B.1, ba7816bf…f20015ad, here in base64 as Subresource
      // Integrity writes it ("sha256-" and the base64 digest; W3C SRI, from memory).
      expect(list[0].integrity).toBe('sha256-ungWv48Bz+pBQUDeXa4iI7ADYaOWF3qctBD/YfIAFa0=');
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('writeServiceWorker writes sw.js that compiles, with the list and a build id that changes with any file and only then', () => {
    const dir = fakeBuild();
    try {
      const first = writeServiceWorker(dir);
      const text = readFileSync(join(dir, 'sw.js'), 'utf8');
      expect(() => new Script(text)).not.toThrow();
      expect(text).toContain(`const BUILD = "${first.build}";`);
      expect(text).toContain('"url": "assets/index-1.js"');
      expect(text).not.toContain('__GAPWISE_');
      expect(first.build).toMatch(/^[0-9a-f]{16}$/);
      // Writing again over its own output changes nothing (sw.js is not in its own list).
      expect(writeServiceWorker(dir).build).toBe(first.build);
      writeFileSync(join(dir, 'index.html'), '<!doctype html><title>y</title>');
      expect(writeServiceWorker(dir).build).not.toBe(first.build);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
