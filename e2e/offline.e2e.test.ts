/**
 * The built app as a static site: served by the package's own static server (src/cli/static-server.ts,
 * the one `gapwise app` uses), it keeps itself for offline use after the first visit and works with
 * the server stopped and the browser offline (demo, EPSG list, a fit and a surface); it works from a
 * sub-path (/tools/gapwise/); and a new build served in place of the old one is announced, taken only
 * when the user chooses, with the saved work intact. Every request is recorded: none may leave the machine.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cpSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { expectClean, launchBrowser, LONG, openPage, openStep, ROOT, shot, WAIT, waitForSave, type Watched } from './harness.ts';
import { serveStatic, type StaticServer } from '../src/cli/static-server.ts';
import { writeServiceWorker } from '../pwa/build-service-worker.ts';
import { SOFTWARE } from '../src/core/shared/version.ts';

const DIST = resolve(ROOT, 'dist');
const LOOPBACK = /^http:\/\/127\.0\.0\.1:\d+\//;
let browser: Browser;
let scratch: string;

beforeAll(async () => {
  browser = await launchBrowser();
  scratch = mkdtempSync(join(tmpdir(), 'gapwise-offline-'));
});

afterAll(async () => {
  await browser?.close();
  if (scratch) rmSync(scratch, { recursive: true, force: true });
});

/** A page on `server` with every request the browser makes recorded (page, workers, service worker). */
async function open(server: StaticServer): Promise<Watched & { requests: string[] }> {
  const context = await browser.newContext({ viewport: { width: 1360, height: 860 }, deviceScaleFactor: 1 });
  const requests: string[] = [];
  context.on('request', (r) => requests.push(r.url()));
  const w = await openPage({ browser, baseUrl: server.url }, context);
  return { ...w, requests };
}

/** Requests to anything but the app's own server (data: and blob: URLs stay in the page). */
function leaving(requests: string[], base: string): string[] {
  return requests.filter((u) => !u.startsWith(base) && !u.startsWith('data:') && !u.startsWith('blob:'));
}

/** Waits until a service worker controls the page and has kept the whole build (the footer says so). */
async function keptOffline(page: Page): Promise<void> {
  await page.waitForSelector('[data-testid=offline-ready]', { timeout: WAIT });
  expect(await page.evaluate(() => !!navigator.serviceWorker.controller)).toBe(true);
}

async function loadDemo(page: Page): Promise<void> {
  await openStep(page, 'samples');
  await page.click('[data-testid=load-demo]');
  await page.waitForSelector('[data-testid=read-report]');
  expect(await page.locator('[data-testid=rows-used]').innerText()).toBe('150');
}

async function fit(page: Page): Promise<void> {
  await openStep(page, 'structure');
  await page.click('[data-testid=fit-button]');
  await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
}

async function surface(page: Page): Promise<void> {
  await openStep(page, 'surface');
  await page.click('[data-testid=compute-surface]');
  await page.waitForSelector('[data-testid=surface-done]', { timeout: WAIT });
  await page.waitForSelector('[data-testid=surface-layer][data-complete=yes]', { timeout: WAIT, state: 'attached' });
}

type Hook = { sessionDigest(): Record<string, unknown> };
const digest = (page: Page) => page.evaluate(() => (window as unknown as { __gapwiseTest: Hook }).__gapwiseTest.sessionDigest());

describe('the built app offline', () => {
  it('after one visit, reloads and works with the server stopped and the browser offline: demo, EPSG list, fit, surface', async () => {
    const server = await serveStatic({ root: DIST, port: 0 });
    const w = await open(server);
    const { page, context } = w;
    expect(await page.locator('[data-testid=app-version]').innerText()).toBe(SOFTWARE);
    await keptOffline(page);
    await server.close();
    await context.setOffline(true);
    await page.reload();
    await page.waitForSelector('.app[data-ready="yes"]');
    expect(await page.locator('[data-testid=app-version]').innerText()).toBe(SOFTWARE);
    await loadDemo(page);
    await fit(page);
    await surface(page);
    // The whole EPSG list (a separate chunk, loaded on first search) comes from the kept build too.
    await openStep(page, 'samples');
    await page.locator('#crs-picker').click();
    await page.locator('#crs-picker').fill('2056');
    await page.waitForSelector('#crs-picker-list [role=option]:has-text("EPSG:2056")', { timeout: WAIT });
    await shot(page, 'offline-surface');
    expectClean(w);
    expect(leaving(w.requests, server.url), 'requests that left the machine').toEqual([]);
    await context.close();
  }, LONG);
});

describe('the built app from a sub-path', () => {
  it('served under /tools/gapwise/, loads, keeps itself for offline use within that path, and fits and maps the demo', async () => {
    const server = await serveStatic({ root: DIST, port: 0, prefix: '/tools/gapwise/' });
    try {
      expect(server.url).toMatch(/\/tools\/gapwise\/$/);
      const w = await open(server);
      const { page } = w;
      await keptOffline(page);
      const scope = await page.evaluate(async () => (await navigator.serviceWorker.getRegistration())?.scope);
      expect(scope).toBe(server.url);
      await loadDemo(page);
      await fit(page);
      await surface(page);
      expectClean(w);
      // Every request stayed under the sub-path of the app's own server.
      expect(leaving(w.requests, server.url)).toEqual([]);
      expect(w.requests.some((u) => u.endsWith('/sw.js'))).toBe(true);
      await w.context.close();
    } finally {
      await server.close();
    }
  }, LONG);
});

describe('a new deployment', () => {
  it('a new build served in place of the old one is announced; the old one stays until the user reloads; the saved work is intact after', async () => {
    const first = join(scratch, 'first');
    const second = join(scratch, 'second');
    cpSync(DIST, first, { recursive: true });
    const server = await serveStatic({ root: first, port: 0 });
    try {
      const w = await open(server);
      const { page } = w;
      await keptOffline(page);
      await loadDemo(page);
      await fit(page);
      await waitForSave(page);
      const before = await digest(page);

      // The next build: another page (a marker in index.html) and its own service worker.
      cpSync(first, second, { recursive: true });
      const index = join(second, 'index.html');
      writeFileSync(index, readFileSync(index, 'utf8').replace('<head>', '<head>\n    <meta name="gapwise-test-build" content="second" />'));
      const built = writeServiceWorker(second);
      server.setRoot(second);

      // A visit finds it: it installs beside the build in use, and the page says so.
      await page.reload();
      await page.waitForSelector('.app[data-ready="yes"][data-restored="yes"]', { timeout: WAIT });
      await page.waitForSelector('[data-testid=update-notice]', { timeout: WAIT });
      expect(await page.locator('[data-testid=update-notice]').innerText()).toMatch(/A new version of Gapwise is ready/);
      expect(await page.locator('meta[name=gapwise-test-build]').count()).toBe(0);
      await shot(page, 'update-notice');

      // "Later" keeps the build in use, with a way back in the footer.
      await page.click('[data-testid=update-later]');
      expect(await page.locator('[data-testid=update-notice]').count()).toBe(0);
      await page.click('[data-testid=app-footer] button:has-text("New version ready")');
      await page.waitForSelector('meta[name=gapwise-test-build]', { state: 'attached', timeout: WAIT });
      await page.waitForSelector('.app[data-ready="yes"][data-restored="yes"]', { timeout: WAIT });
      const build = await page.evaluate(() => new Promise<string>((res) => {
        const channel = new MessageChannel();
        channel.port1.onmessage = (e) => res((e.data as { build: string }).build);
        navigator.serviceWorker.controller!.postMessage({ type: 'build' }, [channel.port2]);
      }));
      expect(build).toBe(built.build);
      expect(await page.locator('[data-testid=update-notice]').count()).toBe(0);
      expect(await digest(page)).toEqual(before);
      expectClean(w);
      expect(leaving(w.requests, server.url)).toEqual([]);
      await w.context.close();
    } finally {
      await server.close();
    }
  }, LONG);
});
