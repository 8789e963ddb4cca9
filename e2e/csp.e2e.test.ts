/**
 * The built app's Content-Security-Policy: dist/index.html carries it before any script or style, it
 * has no 'unsafe-eval' or 'unsafe-inline' (only 'wasm-unsafe-eval', for the WebAssembly kernel), and the
 * served app runs the demo under it with no violation while an inline script is refused, WebAssembly
 * compiles, and only the image sources the policy names load.
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { expectClean, openPage, ROOT, useHarness } from './harness.ts';
import { CONTENT_SECURITY_POLICY } from '../vite.config.ts';

const run = useHarness('Content-Security-Policy');

describe('Content-Security-Policy of the built app', () => {
  it('dist/index.html carries the policy as the first thing after the charset, strict (no unsafe-eval, no unsafe-inline)', () => {
    const html = readFileSync(resolve(ROOT, 'dist', 'index.html'), 'utf8');
    const meta = /<meta http-equiv="Content-Security-Policy" content="([^"]*)"/.exec(html);
    expect(meta).not.toBeNull();
    expect(meta![1]).toBe(CONTENT_SECURITY_POLICY);
    expect(meta![1]).not.toMatch(/(?<!wasm-)unsafe-eval|unsafe-inline|\*/);
    expect(meta![1]).toMatch(/script-src 'self' 'wasm-unsafe-eval';/);
    expect(meta![1]).toMatch(/default-src 'self'/);
    expect(meta![1]).toMatch(/object-src 'none'/);
    const at = meta!.index;
    for (const m of html.matchAll(/<script|<link rel="stylesheet"|<style/g)) expect(m.index).toBeGreaterThan(at);
    expect(html.indexOf('<meta charset')).toBeLessThan(at);
  });

  it('the app loads the demo under the policy with no violation; an inline script and plain-http images are refused, https: tiles allowed', async () => {
    const context = await run.h.browser.newContext({ viewport: { width: 1360, height: 860 } });
    await context.addInitScript(() => {
      const w = window as unknown as { __violations: string[] };
      w.__violations = [];
      document.addEventListener('securitypolicyviolation', (e) => w.__violations.push(`${e.effectiveDirective} ${e.blockedURI}`));
    });
    const w = await openPage(run.h, context);
    const { page } = w;
    await page.click('[data-testid=load-demo]');
    await page.waitForSelector('path[data-sample-id]');
    const violations = () => page.evaluate(() => (window as unknown as { __violations: string[] }).__violations.splice(0));
    expect(await violations()).toEqual([]);
    expectClean(w);

    // An inline script added to the page does not run (script-src 'self' only).
    const ran = await page.evaluate(async () => {
      const el = document.createElement('script');
      el.textContent = 'window.__inlineRan = true;';
      document.body.append(el);
      await new Promise((r) => setTimeout(r, 50));
      return (window as unknown as { __inlineRan?: boolean }).__inlineRan === true;
    });
    expect(ran).toBe(false);
    expect((await violations()).map((v) => v.split(' ')[0])).toEqual(['script-src-elem']);

    // WebAssembly compiles in the page (the linear-algebra kernel, src/core/linalg/linalg-wasm.ts) with no violation.
    const compiled = await page.evaluate(() => {
      try {
        return new WebAssembly.Module(new Uint8Array([0, 97, 115, 109, 1, 0, 0, 0])) instanceof WebAssembly.Module;
      } catch {
        return false;
      }
    });
    expect(compiled).toBe(true);
    expect(await violations()).toEqual([]);

    // Images: https: (a chosen tile server) passes the policy, plain http: does not.
    await page.evaluate(async () => {
      for (const src of ['https://tiles.example.invalid/1/0/0.png', 'http://tiles.example.invalid/1/0/0.png']) {
        const img = new Image();
        const done = new Promise((r) => { img.onload = r; img.onerror = r; });
        img.src = src;
        document.body.append(img);
        await done;
      }
    });
    expect(await violations()).toEqual(['img-src http://tiles.example.invalid/1/0/0.png']);
    await context.close();
  });
});
