/**
 * The HTML report in headless Chromium: built from the invented demo data with a fixed model, opened
 * from a file with every outside request aborted and recorded; no console error, every map image
 * decoded, printable to PDF; screenshots of the top and of the maps.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync, writeFileSync, mkdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type Browser } from 'playwright-core';
import { CHROMIUM_ARGS, ROOT, SCREENSHOTS } from './harness.ts';
import { createProject, projectIntake } from '../src/io/project.ts';
import { reportHtml } from '../src/io/report.ts';
import { prepareReport } from '../src/worker/report-data.ts';
import type { CovarianceModel } from '../src/core/covariance/model.ts';

const CAUTION = 'Screening only: results that feed remediation or safety decisions need a licensed professional and local regulation.';

function demoReport(): string {
  const model: CovarianceModel = {
    structures: [{ type: 'nugget', sill: 0.0206 }, { type: 'matern', sill: 1.303, scale: 78.6, nu: 1.5 }],
    trend: 'constant', transform: 'log', fit: { method: 'reml', converged: true, logLikelihood: -75.67, aic: 159.35 },
  };
  const base = createProject({
    samples: { fileName: 'lead-topsoil.csv', text: readFileSync(resolve(ROOT, 'data-demo', 'lead-topsoil.csv'), 'utf8'), invented: true },
    boundary: { fileName: 'site-boundary.geojson', text: readFileSync(resolve(ROOT, 'data-demo', 'site-boundary.geojson'), 'utf8'), invented: true },
    model, structure: {
      chosen: 'matern-1.5',
      comparison: [
        { key: 'matern-0.5', label: 'Matérn ν = ½', model: null, logLikelihood: -84.16, aic: 176.33, rmse: 0.298, msse: 0.72 },
        { key: 'matern-1.5', label: 'Matérn ν = 3/2', model, logLikelihood: -75.67, aic: 159.35, rmse: 0.284, msse: 0.98 },
      ],
    },
    grid: { cellSize: 2 }, threshold: 200, title: 'Wrenfallow Works yard (invented): topsoil lead',
  });
  const intake = projectIntake(base);
  const suggestions = [0, 40, 90].map((i, k) => ({
    rank: k + 1, x: intake.samples.x[i] + 7, y: intake.samples.y[i] - 9, lon: intake.table.inputX[i], lat: intake.table.inputY[i],
    benefit: 0.2 - 0.05 * k, mean: 150, sd: 60, pExceed: 0.35,
  }));
  const project = { ...base, suggestions };
  return reportHtml(prepareReport(project, { software: { name: 'gapwise', version: 'e2e' }, created: '2026-03-01T10:00:00.000Z' }));
}

describe('report in the browser', () => {
  let browser: Browser;
  let dir: string;
  beforeAll(async () => {
    browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: CHROMIUM_ARGS });
    dir = mkdtempSync(join(tmpdir(), 'gapwise-report-'));
    mkdirSync(SCREENSHOTS, { recursive: true });
  });
  afterAll(async () => {
    await browser?.close();
    rmSync(dir, { recursive: true, force: true });
  });

  it('the report opens with no outside request and no console error, shows the caution, decodes its maps and prints to PDF', async () => {
    const file = join(dir, 'report.html');
    writeFileSync(file, demoReport());
    const context = await browser.newContext({ viewport: { width: 1100, height: 1400 }, deviceScaleFactor: 1 });
    const outside: string[] = [];
    await context.route('**/*', (route) => {
      const url = route.request().url();
      if (url.startsWith('file:') || url.startsWith('data:')) return route.continue();
      outside.push(url);
      return route.abort();
    });
    const page = await context.newPage();
    const consoleErrors: string[] = [];
    const pageErrors: string[] = [];
    const requests: string[] = [];
    page.on('console', (m) => { if (m.type() === 'error') consoleErrors.push(m.text()); });
    page.on('pageerror', (e) => pageErrors.push(String(e)));
    page.on('request', (r) => { if (!/^(file|data):/.test(r.url())) requests.push(r.url()); });
    await page.goto(pathToFileURL(file).href);
    await page.waitForLoadState('load');

    expect(outside).toEqual([]);
    expect(requests).toEqual([]);
    expect(consoleErrors).toEqual([]);
    expect(pageErrors).toEqual([]);
    expect(await page.locator('.caution').first().textContent()).toBe(CAUTION);
    expect(await page.locator('h2').allTextContents()).toEqual(['Summary', 'Samples', 'Spatial structure', 'Cross-validation', 'Maps', 'Suggested next samples', 'How to reproduce']);

    // Each map's PNG decodes in the browser to an image of the grid's size.
    const sizes = await page.evaluate(async () => Promise.all([...document.querySelectorAll('image')].map(async (el) => {
      const img = new Image();
      img.src = el.getAttribute('href') ?? '';
      await img.decode();
      return [img.naturalWidth, img.naturalHeight];
    })));
    expect(sizes).toHaveLength(3);
    for (const s of sizes) expect(s[0]).toBeGreaterThan(100);

    await page.screenshot({ path: resolve(SCREENSHOTS, 'report.png') });
    await page.locator('h2:text-is("Maps")').scrollIntoViewIfNeeded();
    await page.screenshot({ path: resolve(SCREENSHOTS, 'report-maps.png') });
    const pdf = await page.pdf({ format: 'A4', printBackground: true });
    expect(Buffer.from(pdf.subarray(0, 5)).toString('latin1')).toBe('%PDF-');
    const pages = (Buffer.from(pdf).toString('latin1').match(/\/Type\s*\/Page[^s]/g) ?? []).length;
    expect(pages).toBeGreaterThanOrEqual(6);
    console.log(`report: ${(readFileSync(file).length / 1024).toFixed(0)} KB, ${pages} A4 pages`);
    await context.close();
  });
});
