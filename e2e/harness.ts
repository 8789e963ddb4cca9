/**
 * Browser-test harness: serves the built app (dist/) with vite's preview server on 127.0.0.1 at a free
 * port, drives Debian's Chromium through playwright-core, aborts every request that leaves the
 * machine and records it, and collects console errors and dialogs.
 */
import { createServer } from 'node:net';
import { existsSync, mkdirSync } from 'node:fs';
import { resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { preview, type PreviewServer } from 'vite';
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core';
import { afterAll, beforeAll, expect } from 'vitest';
export { CAUTION } from '../src/core/shared/caution.ts';

export const ROOT = resolve(fileURLToPath(new URL('.', import.meta.url)), '..');
export const SCREENSHOTS = resolve(ROOT, 'e2e', 'screenshots');

export const CHROMIUM_ARGS = [
  '--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run',
  '--disable-background-networking', '--disable-component-update', '--disable-sync',
];

async function freePort(): Promise<number> {
  return new Promise((res, rej) => {
    const srv = createServer();
    srv.once('error', rej);
    srv.listen(0, '127.0.0.1', () => {
      const port = (srv.address() as { port: number }).port;
      srv.close(() => res(port));
    });
  });
}

export interface Harness {
  baseUrl: string;
  browser: Browser;
  server: PreviewServer;
  close(): Promise<void>;
}

/**
 * One harness for a test file: started before its tests, closed after them, and the figures the
 * tests collect printed under `title` at the end (figures are printed, never asserted).
 */
export function useHarness(title: string): { readonly h: Harness; figures: string[] } {
  let harness: Harness | null = null;
  const figures: string[] = [];
  beforeAll(async () => {
    harness = await startHarness();
  });
  afterAll(async () => {
    await harness?.close();
    if (figures.length) console.log(`\n${title}\n${figures.map((f) => `  ${f}`).join('\n')}\n`);
  });
  return {
    get h(): Harness {
      if (!harness) throw new Error('The browser harness has not started yet.');
      return harness;
    },
    figures,
  };
}

/** Debian's Chromium, headless, through playwright-core. */
export async function launchBrowser(): Promise<Browser> {
  if (!existsSync('/usr/bin/chromium')) throw new Error('/usr/bin/chromium is missing: apt-get install -y chromium.');
  return chromium.launch({ executablePath: '/usr/bin/chromium', args: CHROMIUM_ARGS });
}

export async function startHarness(): Promise<Harness> {
  if (!existsSync(resolve(ROOT, 'dist', 'index.html'))) {
    throw new Error('dist/index.html is missing: run `npx vite build` before the browser tests.');
  }
  if (!existsSync('/usr/bin/chromium')) throw new Error('/usr/bin/chromium is missing: apt-get install -y chromium.');
  mkdirSync(SCREENSHOTS, { recursive: true });
  const port = await freePort();
  const server = await preview({
    root: ROOT,
    configFile: resolve(ROOT, 'vite.config.ts'),
    logLevel: 'silent',
    preview: { host: '127.0.0.1', port, strictPort: true, open: false },
  });
  const browser = await launchBrowser();
  return {
    baseUrl: `http://127.0.0.1:${port}/`,
    browser,
    server,
    async close() {
      await browser.close();
      await new Promise<void>((r) => server.httpServer.close(() => r()));
    },
  };
}

export interface Watched {
  context: BrowserContext;
  page: Page;
  /** Requests to anything but the loopback server, aborted. */
  outside: string[];
  consoleErrors: string[];
  dialogs: string[];
  pageErrors: string[];
}

const LOOPBACK = /^(https?|wss?):\/\/(127\.0\.0\.1|localhost|\[::1\])(:\d+)?\//;

/** A fresh context (own IndexedDB) and page with the outside world cut off and problems recorded. */
export async function openPage(h: Pick<Harness, 'browser' | 'baseUrl'>, context?: BrowserContext, path = '?gapwise-test'): Promise<Watched> {
  const ctx = context ?? (await h.browser.newContext({ viewport: { width: 1360, height: 860 }, deviceScaleFactor: 1 }));
  const outside: string[] = [];
  await ctx.route('**/*', (route) => {
    const url = route.request().url();
    if (LOOPBACK.test(url) || url.startsWith('data:') || url.startsWith('blob:')) return route.continue();
    outside.push(url);
    return route.abort();
  });
  const page = await ctx.newPage();
  const consoleErrors: string[] = [];
  const dialogs: string[] = [];
  const pageErrors: string[] = [];
  page.on('console', (m) => { if (m.type() === 'error') consoleErrors.push(m.text()); });
  page.on('pageerror', (e) => pageErrors.push(String(e)));
  page.on('dialog', (d) => {
    dialogs.push(`${d.type()}: ${d.message()}`);
    // The app's own confirmation ("Start over?") is accepted; any other dialog is recorded and dismissed.
    if (d.type() === 'confirm' && d.message().startsWith('Start over?')) void d.accept();
    else void d.dismiss();
  });
  await page.addInitScript(() => {
    const w = window as unknown as { __longTasks: number[] };
    w.__longTasks = [];
    try {
      new PerformanceObserver((list) => {
        for (const e of list.getEntries()) w.__longTasks.push(e.duration);
      }).observe({ type: 'longtask', buffered: true });
    } catch {
      // longtask entries are not supported: the figure is reported as missing.
    }
  });
  await page.goto(h.baseUrl + path);
  await page.waitForSelector('.app[data-ready="yes"]');
  return { context: ctx, page, outside, consoleErrors, dialogs, pageErrors };
}

/** Longest main-thread task since the last reset, ms (null when longtask entries are unsupported). */
export async function takeLongestTask(page: Page): Promise<{ longest: number; count: number }> {
  return page.evaluate(() => {
    const w = window as unknown as { __longTasks: number[] };
    const t = w.__longTasks;
    w.__longTasks = [];
    return { longest: t.length ? Math.max(...t) : 0, count: t.length };
  });
}

export async function shot(page: Page, name: string): Promise<string> {
  const path = resolve(SCREENSHOTS, `${name}.png`);
  await page.screenshot({ path, fullPage: false });
  return path;
}

/** Per-test limit; the machine may be shared, so fits can take minutes. */
export const LONG = 600_000;
/** Longest wait for one step of the app (a fit, a surface). */
export const WAIT = 240_000;

/** Opens a step of the side column (if closed) and waits for its body. */
export async function openStep(page: Page, id: string): Promise<void> {
  const button = page.locator(`#${id}-heading button`);
  if ((await button.getAttribute('aria-expanded')) !== 'true') await button.click();
  await page.waitForSelector(`#${id}-body:not([hidden])`);
}

/** No request left the machine, no uncaught page error, no console error. */
export function expectClean(w: Watched): void {
  expect(w.outside, 'requests that left the machine').toEqual([]);
  expect(w.pageErrors, 'uncaught page errors').toEqual([]);
  expect(w.consoleErrors, 'console errors').toEqual([]);
}

/** The RGBA of the surface layer's canvas pixel under a screen point (null off the surface). */
export function pixelAt(page: Page, x: number, y: number): Promise<number[] | null> {
  return page.evaluate(([px, py]) => {
    for (const c of document.querySelectorAll<HTMLCanvasElement>('[data-testid=surface-layer] canvas')) {
      const r = c.getBoundingClientRect();
      if (px >= r.left && px < r.right && py >= r.top && py < r.bottom) {
        const ix = Math.floor(((px - r.left) * c.width) / r.width);
        const iy = Math.floor(((py - r.top) * c.height) / r.height);
        return Array.from(c.getContext('2d')!.getImageData(ix, iy, 1, 1).data);
      }
    }
    return null;
  }, [x, y]);
}

/** Chooses a coordinate system in the Samples step's picker by its code and waits until it is in use. */
export async function chooseCrs(page: Page, code: string): Promise<void> {
  const input = page.locator('#crs-picker');
  await input.click();
  await input.fill(code.replace('EPSG:', ''));
  await page.waitForSelector(`#crs-picker-list [role=option]:has-text("${code}")`);
  await input.press('Enter');
  await page.waitForSelector(`[data-testid=crs-current]:text-is("${code}")`);
}

/** How far openDemo takes the invented demo. */
export interface DemoOptions {
  /** Viewport of the new page (default openPage's 1360 × 860). */
  viewport?: { width: number; height: number };
  /** Choose the log transform before fitting. */
  log?: boolean;
  /** Fit the six candidates with this method ('reml', the app's default, or 'wls'); absent: stop after reading. */
  fit?: 'reml' | 'wls';
  /** Also wait for the cross-validation figures after the fit. */
  cv?: boolean;
  /** After the fit, compute the surface and wait until the map has drawn it. */
  surface?: boolean;
}

/**
 * A fresh page with the invented demo read (samples, boundary, action level) and, on request, the log
 * transform chosen, the candidates fitted and the surface computed and drawn: the start most browser
 * tests share. Resolves with the watched page.
 */
export async function openDemo(h: Harness, options: DemoOptions = {}): Promise<Watched> {
  const w = await openPage(h);
  const { page } = w;
  if (options.viewport) await page.setViewportSize(options.viewport);
  await page.click('[data-testid=load-demo]');
  await page.waitForSelector('[data-testid=read-report]');
  if (options.log) await page.locator('input[name=transform][value=log]').check();
  if (options.fit) {
    await openStep(page, 'structure');
    if (options.fit !== 'reml') await page.selectOption('#fit-method', options.fit);
    await page.click('[data-testid=fit-button]');
    await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
    if (options.cv) await page.waitForSelector('[data-testid=cv-figures]', { timeout: WAIT });
    if (options.surface) await computeSurface(page);
  }
  return w;
}

/**
 * Opens the Surface step, computes the surface and waits until it is done and drawn in full (as
 * `layer`, e.g. 'mean', when given).
 */
export async function computeSurface(page: Page, layer?: string): Promise<void> {
  await openStep(page, 'surface');
  await page.click('[data-testid=compute-surface]');
  await page.waitForSelector('[data-testid=surface-done]', { timeout: WAIT });
  const drawn = `[data-testid=surface-layer][data-complete=yes]${layer ? `[data-layer=${layer}]` : ''}`;
  await page.waitForSelector(drawn, { timeout: WAIT, state: 'attached' });
}

/** Waits until the autosave has been quiet for a second (it writes 300 ms after the last change). */
export async function waitForSave(page: Page): Promise<void> {
  // A change made just now is written 300 ms later: give it time to start, then wait for quiet.
  await page.waitForTimeout(1000);
  await page.waitForFunction(() => {
    const at = Number(document.querySelector('[data-testid=save-status]')?.getAttribute('data-saved-at') || 0);
    return at > 0 && Date.now() - at > 1000;
  }, null, { timeout: WAIT });
  expect(await page.locator('[data-testid=save-status]').innerText()).toBe('Saved in this browser');
}
