/**
 * The Next samples and Report steps in headless Chromium, on the invented demo with every outside
 * request aborted: a variance and a decision design (table rows, numbered markers, figures), the
 * GeoJSON, CSV and GPX downloads, then the report, the surface exports and a project saved and
 * opened again. Screenshots 4-next-samples.png and 5-report.png.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../src/cli/main.ts';
import type { Download, Page } from 'playwright-core';
import { expectClean, openStep, WAIT, LONG, CAUTION, startHarness, openDemo, shot, type Harness, type Watched } from './harness.ts';
import { PROJECT_FORMAT, PROJECT_VERSION } from '../src/io/project.ts';

let h: Harness;
let w: Watched;

beforeAll(async () => {
  h = await startHarness();
});

afterAll(async () => {
  await h?.close();
});

/** Clicks a download button and returns the file's name and bytes. */
async function download(page: Page, selector: string): Promise<{ name: string; bytes: Buffer }> {
  const [d] = await Promise.all([page.waitForEvent('download') as Promise<Download>, page.click(selector)]);
  const path = await d.path();
  return { name: d.suggestedFilename(), bytes: readFileSync(path) };
}

/** The numeric rows of a grid CSV (comment and header lines skipped), as numbers. */
function gridRows(text: string): { header: string[]; rows: number[][] } {
  const lines = text.split(/\r?\n/).filter((l) => l !== '' && !l.startsWith('#'));
  return { header: lines[0].split(','), rows: lines.slice(1).map((l) => l.split(',').map(Number)) };
}

/** Runs a design with the given mode and count and waits for its table. */
async function design(page: Page, mode: 'variance' | 'decision', count: number): Promise<void> {
  await page.fill('#ns-count', String(count));
  await page.selectOption('#ns-mode', mode);
  await page.click('[data-testid=suggest-sites]');
  await page.waitForSelector(`[data-testid=next-result][data-mode=${mode}][data-count="${count}"]`, { timeout: WAIT });
}

async function markerNumbers(page: Page): Promise<string[]> {
  return page.locator('.gapwise-next-site').allInnerTexts();
}

describe('Next samples and Report steps', () => {
  it('NextSamplesPanel runs a variance and a decision design on the demo and marks the sites', { timeout: LONG }, async () => {
    w = await openDemo(h, { fit: 'reml', surface: true });
    const { page } = w;

    await openStep(page, 'next');
    expect(await page.locator('#next-body [data-caution]').allInnerTexts()).toContain(CAUTION);
    // The action level comes from the Surface step (the demo sets one).
    expect(await page.inputValue('#ns-level')).not.toBe('');

    await design(page, 'variance', 6);
    expect(await page.locator('[data-testid=next-table] tbody tr').count()).toBe(6);
    expect(await markerNumbers(page)).toEqual(['1', '2', '3', '4', '5', '6']);
    const varianceFigures = await page.locator('[data-testid=next-figures]').innerText();
    expect(varianceFigures).toMatch(/Average sd over the area/);
    expect(varianceFigures).toMatch(/→/);

    await design(page, 'decision', 5);
    expect(await page.locator('[data-testid=next-table] tbody tr').count()).toBe(5);
    expect(await page.locator('[data-testid=next-table] thead').innerText()).toMatch(/Chance\s>\slevel\s\(%\)/);
    expect(await markerNumbers(page)).toEqual(['1', '2', '3', '4', '5']);
    expect(await page.locator('[data-testid=next-figures]').innerText()).toMatch(/Expected area on the wrong side of/);

    // GPX: well-formed XML with one waypoint per suggested site, at the table's positions.
    const gpx = await download(page, '[data-export=next-gpx]');
    expect(gpx.name).toMatch(/\.gpx$/);
    const parsed = await page.evaluate((text) => {
      const doc = new DOMParser().parseFromString(text, 'application/xml');
      const wpts = [...doc.getElementsByTagName('wpt')];
      return {
        error: doc.getElementsByTagName('parsererror').length,
        points: wpts.map((p) => [Number(p.getAttribute('lat')), Number(p.getAttribute('lon'))]),
      };
    }, gpx.bytes.toString('utf8'));
    expect(parsed.error).toBe(0);
    expect(parsed.points.length).toBe(5);
    const first = page.locator('[data-testid=next-table] tbody tr:first-child td.coords');
    expect(parsed.points[0][0]).toBeCloseTo(Number(await first.getAttribute('data-lat')), 6);
    expect(parsed.points[0][1]).toBeCloseTo(Number(await first.getAttribute('data-lon')), 6);

    const geojson = JSON.parse((await download(page, '[data-export=next-geojson]')).bytes.toString('utf8')) as { type: string; features: unknown[] };
    expect(geojson.type).toBe('FeatureCollection');
    expect(geojson.features.length).toBe(5);
    const csv = (await download(page, '[data-export=next-csv]')).bytes.toString('utf8').trim().split(/\r?\n/);
    expect(csv.filter((l) => /^\d/.test(l)).length).toBe(5);

    console.log(`screenshot ${await shot(page, '4-next-samples')}`);
    expectClean(w);
  });

  it('ReportPanel writes the report, the surface exports and a project that opens again and gives the same grid through gapwise grid --project', { timeout: LONG }, async () => {
    const { page } = w;
    await openStep(page, 'report');
    expect(await page.locator('#report-body [data-caution]').allInnerTexts()).toContain(CAUTION);
    // The sites stay on the map when another step is open.
    expect((await markerNumbers(page)).length).toBe(5);

    const report = await download(page, '[data-export=report]');
    expect(report.name).toMatch(/-report\.html$/);
    const html = report.bytes.toString('utf8');
    expect(html).toContain(CAUTION);
    expect(html).toContain('Suggested next samples');
    // No address of another host: only XML namespace names (not fetched) may spell http.
    const urls = html.match(/https?:\/\/[^\s"'<>)]+/g) ?? [];
    expect(urls.filter((u) => !u.startsWith('http://www.w3.org/'))).toEqual([]);

    const tiff = await download(page, '[data-export=geotiff]');
    expect(tiff.name).toMatch(/\.tif$/);
    expect(tiff.bytes.subarray(0, 4).toString('latin1')).toMatch(/^(II\*\0|MM\0\*)$/);
    const contours = JSON.parse((await download(page, '[data-export=contours]')).bytes.toString('utf8')) as { type: string; features: unknown[] };
    expect(contours.type).toBe('FeatureCollection');
    expect(contours.features.length).toBeGreaterThan(0);
    const grid = (await download(page, '[data-export=csv]')).bytes.toString('utf8');
    expect(grid.split(/\r?\n/).filter((l) => /^-?\d/.test(l)).length).toBeGreaterThan(100);

    const saved = await download(page, '[data-export=project]');
    const project = JSON.parse(saved.bytes.toString('utf8')) as {
      format: string; version: number; samples: { invented?: boolean; text: string };
      model: unknown; suggestions?: unknown[]; software: { name: string; version: string };
    };
    expect(project.format).toBe(PROJECT_FORMAT);
    expect(project.version).toBe(PROJECT_VERSION);
    expect(project.samples.invented).toBe(true);
    expect(project.model).not.toBeNull();
    expect(project.suggestions?.length).toBe(5);
    expect(project.software.name).toBe('Gapwise');
    console.log(`screenshot ${await shot(page, '5-report')}`);

    // The same project through the command line gives the app's numbers: `gapwise grid --project`.
    const dir = mkdtempSync(join(tmpdir(), 'gapwise-parity-'));
    writeFileSync(join(dir, 'project.json'), saved.bytes);
    let stderr = '';
    const code = await main(['grid', '--project', join(dir, 'project.json'), '--out', join(dir, 'cli-grid.csv')],
      { cwd: dir, stdout: () => {}, stderr: (t) => { stderr += t; } });
    expect(code, stderr).toBe(0);
    const fromApp = gridRows(grid);
    const fromCli = gridRows(readFileSync(join(dir, 'cli-grid.csv'), 'utf8'));
    expect(fromCli.header).toEqual(fromApp.header);
    expect(fromCli.rows.length).toBe(fromApp.rows.length);
    for (let r = 0; r < fromApp.rows.length; r++) {
      for (let c = 0; c < fromApp.header.length; c++) {
        const a = fromApp.rows[r][c];
        const b = fromCli.rows[r][c];
        // Both are written from float32 surface arrays: equal to float32 precision.
        expect(Math.abs(a - b) <= 1e-6 * Math.max(1, Math.abs(a)), `row ${r + 1}, ${fromApp.header[c]}: app ${a}, CLI ${b}`).toBe(true);
      }
    }

    // Start over, then open the saved project: the samples and the model come back.
    await page.click('[data-testid=start-over]');
    await page.waitForSelector('[data-testid=start-over]', { state: 'detached' });
    await openStep(page, 'report');
    await page.setInputFiles('#report-body input[type=file]', { name: saved.name, mimeType: 'application/json', buffer: saved.bytes });
    await page.waitForSelector(`#report-body [role=status]:has-text("Opened ${saved.name}")`);
    await page.waitForSelector('[data-testid=start-over]');
    await page.waitForSelector('#report-body [data-export=project]:not([disabled])');
    // The suggested sites the project holds come back on the map and in the project saved again.
    await page.waitForFunction(() => document.querySelectorAll('.gapwise-next-site').length === 5);
    const again = JSON.parse((await download(page, '[data-export=project]')).bytes.toString('utf8')) as typeof project;
    expect(again.samples.text).toBe(project.samples.text);
    expect(again.model).toEqual(project.model);
    expect(await markerNumbers(page)).toEqual(['1', '2', '3', '4', '5']);
    expect(again.suggestions).toEqual(project.suggestions);
    expectClean(w);
  });
});
