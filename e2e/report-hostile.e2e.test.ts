/**
 * A report whose every string field holds hostile text (elements, event handlers, a meta refresh,
 * quotes that end attributes), opened in headless Chromium with its Content-Security-Policy removed,
 * so that only escaping stands between the text and the page: no script runs, no dialog opens, the
 * page does not navigate or fetch, and it has exactly the elements of the same report with plain text.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type Browser } from 'playwright-core';
import { CHROMIUM_ARGS } from './harness.ts';
import { reportHtml } from '../src/io/report.ts';
import { fillStrings, fullReportInput, HOSTILE_TEXT } from '../tests/helpers/hostile-report.ts';

const CSP = /<meta http-equiv="Content-Security-Policy"[^>]*>/;

/** The report with `pick(k)` in its k-th string field, without its CSP. */
function reportWithout(pick: (k: number) => string): string {
  const input = fullReportInput();
  fillStrings(input, pick);
  const html = reportHtml(input);
  expect(html).toMatch(CSP);
  return html.replace(CSP, '');
}

interface Opened {
  tags: string[];
  pwned: unknown;
  navigations: string[];
  outside: string[];
  dialogs: string[];
  pageErrors: string[];
  url: string;
}

describe('hostile report in the browser', () => {
  let browser: Browser;
  let dir: string;
  beforeAll(async () => {
    browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: CHROMIUM_ARGS });
    dir = mkdtempSync(join(tmpdir(), 'gapwise-hostile-'));
  });
  afterAll(async () => {
    await browser?.close();
    rmSync(dir, { recursive: true, force: true });
  });

  async function open(name: string, html: string): Promise<Opened> {
    const file = join(dir, name);
    writeFileSync(file, html);
    const context = await browser.newContext();
    const outside: string[] = [];
    await context.route('**/*', (route) => {
      const url = route.request().url();
      if (url === pathToFileURL(file).href || url.startsWith('data:')) return route.continue();
      outside.push(url);
      return route.abort();
    });
    const page = await context.newPage();
    const navigations: string[] = [];
    const dialogs: string[] = [];
    const pageErrors: string[] = [];
    page.on('framenavigated', (f) => { if (f === page.mainFrame()) navigations.push(f.url()); });
    page.on('dialog', (d) => { dialogs.push(d.message()); void d.dismiss(); });
    page.on('pageerror', (e) => pageErrors.push(String(e)));
    await page.goto(pathToFileURL(file).href);
    await page.waitForLoadState('load');
    // A refresh with a 0 s delay or an onerror handler acts right after load: give them the chance.
    await page.waitForTimeout(1500);
    const tags = await page.evaluate(() => [...document.querySelectorAll('*')].map((e) => e.tagName.toLowerCase()));
    const pwned = await page.evaluate(() => (window as unknown as { __gapwisePwned?: unknown }).__gapwisePwned);
    const url = page.url();
    await context.close();
    return { tags, pwned, navigations, outside, dialogs, pageErrors, url };
  }

  it('a report with hostile text in every string field runs no script, does not navigate or fetch, and adds no element (CSP removed)', async () => {
    const clean = await open('clean.html', reportWithout((k) => `plain text ${k}`));
    expect(clean.tags.length).toBeGreaterThan(300);
    expect(clean.outside).toEqual([]);
    // Four pages, each with the hostile texts spread over the fields in a different rotation.
    for (let shift = 0; shift < HOSTILE_TEXT.length; shift += 3) {
      const hostile = await open(`hostile-${shift}.html`, reportWithout((k) => `${HOSTILE_TEXT[(k + shift) % HOSTILE_TEXT.length]} ${k}`));
      expect(hostile.pwned, `shift ${shift}`).toBeUndefined();
      expect(hostile.dialogs).toEqual([]);
      expect(hostile.pageErrors).toEqual([]);
      expect(hostile.navigations).toHaveLength(1);
      expect(hostile.url).toMatch(/^file:/);
      expect(hostile.outside).toEqual([]);
      expect(hostile.tags).toEqual(clean.tags);
    }
  });
});
