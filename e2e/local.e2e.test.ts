/**
 * Local coordinates (a site grid with x, y and no coordinate system) in headless Chromium, dist/ on
 * 127.0.0.1 with every outside request aborted: samples, boundary, surface, suggested sites and
 * contours on a plain planar map (grid lines, a scale bar in coordinate units, metres once the user
 * says so), the surface read back by colour at sample positions under a zero-nugget model, the
 * exports in local x, y; then the kriged exports (grid CSV, GeoTIFF, report) written before and after
 * the realisations' layers are shown on the map, compared byte for byte. Screenshots at 1280 × 800
 * and 1920 × 1080: 7-local-*.png.
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import type { Download, Page } from 'playwright-core';
import { expectClean, openStep, WAIT, LONG, CAUTION, useHarness, openPage, openDemo, computeSurface, shot, pixelAt, type Watched } from './harness.ts';
import { localBoundaryGeoJson, localGridCsv } from './files.ts';
import { buildLut } from '../src/ui/map/colour-scales.ts';

const run = useHarness('Gapwise local-coordinate figures');
const figures = run.figures;

interface Hook {
  samplePoints(): Array<{ id: string; value: number; pageX: number; pageY: number }>;
  meanScale(): { domain: [number, number]; steps: number; log: boolean } | null;
  planarView(): { unit: string; lines: { x: number[]; y: number[] } | null; scale: number } | null;
}

const hook = <T>(page: Page, f: (h: Hook) => T): Promise<T> =>
  page.evaluate(`(${f.toString()})(window.__gapwiseTest)`) as Promise<T>;

/** Clicks a download button and returns the file's name and bytes. */
async function download(page: Page, selector: string): Promise<{ name: string; bytes: Buffer }> {
  const [d] = await Promise.all([page.waitForEvent('download') as Promise<Download>, page.click(selector)]);
  return { name: d.suggestedFilename(), bytes: readFileSync((await d.path())!) };
}

/** The RGBA of the surface canvas pixel under a page position, or null off the surface. */
/** The value a colour stands for on the mean layer's scale (nearest table entry; log scales too). */
function valueOfColour(rgb: number[], scale: { domain: [number, number]; steps: number; log: boolean }): { value: number; step: number } {
  const lut = buildLut('loam', scale.steps);
  let best = 0;
  let bestD = Infinity;
  for (let k = 0; k < scale.steps; k++) {
    const d = (lut[4 * k] - rgb[0]) ** 2 + (lut[4 * k + 1] - rgb[1]) ** 2 + (lut[4 * k + 2] - rgb[2]) ** 2;
    if (d < bestD) { bestD = d; best = k; }
  }
  const t = best / (scale.steps - 1);
  const [lo, hi] = scale.domain;
  if (!scale.log) return { value: lo + t * (hi - lo), step: (hi - lo) / (scale.steps - 1) };
  const value = Math.exp(Math.log(lo) + t * (Math.log(hi) - Math.log(lo)));
  // One table step at this value, on the data scale.
  return { value, step: value * (Math.log(hi) - Math.log(lo)) / (scale.steps - 1) };
}

describe('Local coordinates in the browser', () => {
  let w: Watched;

  it('draws samples, boundary, surface, suggested sites and contours of a site grid with no CRS on a planar map, and exports them in local x, y', async () => {
    w = await openPage(run.h);
    const { page } = w;
    await page.setViewportSize({ width: 1280, height: 800 });
    const { text, values } = localGridCsv();
    await openStep(page, 'samples');
    await page.setInputFiles('#samples-file', { name: 'site-grid.csv', mimeType: 'text/csv', buffer: Buffer.from(text, 'utf8') });
    await page.waitForSelector('[data-testid=source-name]:text-is("site-grid.csv")');
    await page.waitForSelector('path[data-sample-id]');
    expect(await page.locator('path[data-sample-id]').count()).toBe(40);
    // The planar map: no basemap, grid lines and a scale bar in coordinate units.
    expect(await page.locator('[data-testid=map]').getAttribute('data-planar')).toBe('yes');
    expect(await page.locator('[data-testid=local-coordinates]').isVisible()).toBe(true);
    expect(await page.locator('[data-testid=planar-scale]').innerText()).toMatch(/^\d[\d,.]* coordinate units$/);
    const view = (await hook(page, (h) => h.planarView()))!;
    expect(view.unit).toBe('coordinate units');
    // The lines cover the site: round x values across 0–200 and y values across 0–120.
    expect(Math.min(...view.lines!.x)).toBeLessThanOrEqual(25);
    expect(Math.max(...view.lines!.x)).toBeGreaterThanOrEqual(175);
    expect(view.lines!.y.length).toBeGreaterThanOrEqual(3);
    // Sample positions follow x and y: P00 (x 9) left of P07, P40 (y larger) above P00.
    const pts = await hook(page, (h) => h.samplePoints());
    const at = (id: string) => pts.find((p) => p.id === id)!;
    expect(at('P00').pageX).toBeLessThan(at('P07').pageX);
    expect(at('P40').pageY).toBeLessThan(at('P00').pageY);

    // A boundary in the same local x, y.
    await openStep(page, 'structure');
    await page.selectOption('#fit-method', 'reml');
    await page.click('[data-testid=fit-button]');
    await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
    await page.locator('[data-testid=candidate-table] tr[data-key="exponential"] input[type=radio]').check();
    await page.fill('#model-nugget', '0');
    await page.locator('#model-nugget').press('Enter');
    await page.fill('#model-scale', '30');
    await page.locator('#model-scale').press('Enter');
    await page.waitForFunction(() => /Exponential \(edited by hand\); practical range 89\.9 coordinate units/.test(document.querySelector('[data-testid=model-in-use]')?.textContent ?? ''));
    expect(await page.locator('label[for=lag-width]').innerText()).toMatch(/coordinate units/);

    await openStep(page, 'surface');
    await page.setInputFiles('#boundary-file', { name: 'fence.geojson', mimeType: 'application/geo+json', buffer: Buffer.from(localBoundaryGeoJson(), 'utf8') });
    await page.waitForSelector('.leaflet-boundary-pane path');
    expect(await page.locator('input[name=area][value=boundary]').isChecked()).toBe(true);
    await page.fill('#cell-size', '2');
    await page.locator('#cell-size').press('Enter');
    await page.waitForFunction(() => /cells of 2 coordinate units/.test(document.querySelector('[data-testid=grid-summary]')?.textContent ?? ''));
    await computeSurface(page);

    // Read back: the colour under three samples is their value (zero nugget: the surface passes through them).
    await page.mouse.move(5, 795);
    const scale = (await hook(page, (h) => h.meanScale()))!;
    const points = await hook(page, (h) => h.samplePoints());
    for (const id of ['P11', 'P23', 'P35']) {
      const p = points.find((q) => q.id === id)!;
      expect(p.value).toBe(values.get(id));
      const rgba = await pixelAt(page, p.pageX, p.pageY);
      expect(rgba, `a surface pixel under ${id}`).not.toBeNull();
      expect(rgba![3]).toBe(255);
      const read = valueOfColour(rgba!, scale);
      expect(Math.abs(read.value - p.value), `${id}: colour reads ${read.value.toFixed(2)}, sample ${p.value}`).toBeLessThanOrEqual(read.step * 1.01);
    }
    // The check can fail: 14 units beside a sample the colour reads another value.
    const unitsPerPx = view.scale / (await page.locator('[data-testid=planar-scale] .leaflet-control-scale-line').boundingBox())!.width;
    const p23 = points.find((q) => q.id === 'P23')!;
    const off = valueOfColour((await pixelAt(page, p23.pageX + 14 / unitsPerPx, p23.pageY))!, scale);
    expect(Math.abs(off.value - p23.value)).toBeGreaterThan(2 * off.step);
    figures.push(`local read-back: 3 samples within one colour step; ${unitsPerPx.toFixed(3)} coordinate units per pixel; mean scale ${scale.log ? 'log' : 'linear'} ${scale.domain.map((d) => d.toFixed(2)).join('–')}`);
    expect(await page.locator('[data-testid=surface-legend]').isVisible()).toBe(true);

    // Next samples: sites in local x, y, marked on the map; CSV and GeoJSON in x, y; no GPX.
    await openStep(page, 'next');
    await page.fill('#ns-count', '5');
    await page.selectOption('#ns-mode', 'variance');
    await page.click('[data-testid=suggest-sites]');
    await page.waitForSelector('[data-testid=next-result][data-count="5"]', { timeout: WAIT });
    expect(await page.locator('.gapwise-next-site').count()).toBe(5);
    expect(await page.locator('[data-export=next-gpx]').count()).toBe(0);
    expect(await page.locator('[data-testid=next-local-note]').innerText()).toMatch(/GPX .* needs longitude\/latitude/);
    const csv = (await download(page, '[data-export=next-csv]')).bytes.toString('utf8').trim().split('\n');
    expect(csv[0]).toMatch(/^# Screening only: .* Written by Gapwise /);
    expect(csv[1]).toBe('rank,x,y,benefit,mean,sd');
    const sites = csv.slice(2).map((l) => l.split(',').map(Number));
    expect(sites).toHaveLength(5);
    for (const [, x, y] of sites) {
      expect(x).toBeGreaterThanOrEqual(-1);
      expect(x).toBeLessThanOrEqual(203);
      expect(y).toBeGreaterThanOrEqual(-1);
      expect(y).toBeLessThanOrEqual(131);
    }
    const gj = await download(page, '[data-export=next-geojson]');
    expect(gj.name).toMatch(/-local-xy\.geojson$/);
    const fc = JSON.parse(gj.bytes.toString('utf8')) as { properties: Record<string, unknown>; features: Array<{ geometry: { coordinates: number[] } }> };
    expect(fc.properties.coordinates).toBe('local');
    expect(fc.properties.caution).toBe(CAUTION);
    expect(fc.features.map((f) => f.geometry.coordinates)).toEqual(sites.map(([, x, y]) => [x, y]));
    // Marker 1 sits at its x, y on the map: left of marker 2 exactly when its x is smaller.
    const marks = await page.locator('.gapwise-next-site').evaluateAll((els) => els.map((e) => ({ n: e.textContent?.trim(), x: e.getBoundingClientRect().x, y: e.getBoundingClientRect().y })));
    const m1 = marks.find((m) => m.n === '1')!, m2 = marks.find((m) => m.n === '2')!;
    expect(m1.x < m2.x).toBe(sites[0][1] < sites[1][1]);
    expect(m1.y < m2.y).toBe(sites[0][2] > sites[1][2]);
    figures.push(`screenshot ${await shot(page, '7-local-1280x800')}`);
    await page.setViewportSize({ width: 1920, height: 1080 });
    await page.waitForTimeout(400);
    figures.push(`screenshot ${await shot(page, '7-local-1920x1080')}`);
    await page.setViewportSize({ width: 1280, height: 800 });

    // Report: contours and grid CSV in the local x, y; the report draws the surface.
    await openStep(page, 'report');
    const contours = JSON.parse((await download(page, '[data-export=contours]')).bytes.toString('utf8')) as { coordinates: string; features: Array<{ geometry: { type: string; coordinates: number[][][] } }> };
    expect(contours.coordinates).toBe('local');
    expect(contours.features.length).toBeGreaterThan(0);
    const first = contours.features.find((f) => f.geometry.type === 'MultiLineString')!.geometry.coordinates[0][0];
    expect(first[0]).toBeGreaterThanOrEqual(-2);
    expect(first[0]).toBeLessThanOrEqual(204);
    const grid = (await download(page, '[data-export=csv]')).bytes.toString('utf8').split('\n');
    expect(grid[0]).toMatch(/^# .*local coordinates \(no coordinate system\)/);
    expect(grid[1]).toBe('x,y,mean,sd');
    const report = (await download(page, '[data-export=report]')).bytes.toString('utf8');
    expect(report).toContain(CAUTION);
    expect(report).toMatch(/<svg[^>]*>[\s\S]*<image|<img/);

    // Metres once the user says so: the scale bar and labels follow.
    await openStep(page, 'samples');
    await page.locator('[data-testid=local-metres]').check();
    await page.waitForFunction(() => / m$/.test(document.querySelector('[data-testid=planar-scale]')?.textContent ?? ''));
    expect((await hook(page, (h) => h.planarView()))!.unit).toBe('m');
    await page.locator('[data-testid=local-metres]').uncheck();
    expectClean(w);
  }, LONG);

  it('exports the kriged grid CSV, GeoTIFF and report byte for byte the same before and after the realisations are shown, and the realisation layers only on their own buttons, named as such', async () => {
    const { page } = w;
    await openStep(page, 'surface');
    await page.fill('#threshold', '80');
    await page.locator('#threshold').press('Enter');
    await page.waitForSelector('[data-testid=surface-stale]');
    await computeSurface(page);
    // The action level on the mean legend, at its place on the bar.
    await page.locator('input[name=layer][value=mean]').check();
    const level = page.locator('[data-testid=surface-legend] [data-testid=legend-level]');
    await level.waitFor();
    expect(await level.getAttribute('data-value')).toBe('80');
    expect(await page.locator('[data-testid=surface-legend]').innerText()).toMatch(/action level 80/);
    // Log colour steps on request: the scale says so and the legend's ticks follow.
    await page.selectOption('#mean-colours', 'log');
    await page.waitForFunction(() => (window as unknown as { __gapwiseTest: { meanScale(): { log: boolean } | null } }).__gapwiseTest.meanScale()?.log === true);
    expect(await page.locator('[data-testid=surface-legend]').innerText()).toMatch(/colours in log steps/);
    await page.selectOption('#mean-colours', 'auto');
    await page.fill('#sim-count', '20');
    await page.locator('#sim-count').press('Enter');
    await page.click('[data-testid=simulate]');
    await page.waitForSelector('[data-testid=sim-done]', { timeout: WAIT });

    const exportsNow = async () => {
      await openStep(page, 'report');
      const csv = await download(page, '[data-export=csv]');
      const tif = await download(page, '[data-export=geotiff]');
      const rep = await download(page, '[data-export=report]');
      // The report states the moment it was written; everything else must be equal.
      const html = rep.bytes.toString('utf8').replace(/\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(\.\d+)?Z/g, 'TIME');
      return { csv, tif, html };
    };
    const before = await exportsNow();
    await openStep(page, 'surface');
    await page.click('[data-testid=show-simulation]');
    await page.waitForSelector('[data-testid=sim-on-map]');
    await page.waitForTimeout(300);
    await page.waitForSelector('[data-testid=surface-layer][data-complete=yes][data-layer=pExceed]', { timeout: WAIT, state: 'attached' });
    const after = await exportsNow();
    expect(after.csv.name).toBe(before.csv.name);
    expect(after.csv.bytes.equals(before.csv.bytes), 'grid CSV the same').toBe(true);
    expect(after.tif.name).toBe(before.tif.name);
    expect(after.tif.bytes.equals(before.tif.bytes), 'GeoTIFF the same').toBe(true);
    expect(after.html === before.html, 'report the same').toBe(true);
    expect(before.csv.bytes.toString('utf8').split('\n')[1]).toBe('x,y,mean,sd,p_exceed');

    // The realisation layers, asked for on their own: named as such.
    const rc = await download(page, '[data-export=realisation-csv]');
    expect(rc.name).toMatch(/-realisations-20-seed-1-grid\.csv$/);
    const rcLines = rc.bytes.toString('utf8').split('\n');
    expect(rcLines[0]).toMatch(/over 20 conditional realisations, not the kriged surface/);
    expect(rcLines[1]).toBe('x,y,realisation_mean,realisation_sd,realisation_p_exceed');
    const rt = await download(page, '[data-export=realisation-geotiff]');
    expect(rt.name).toMatch(/-realisations-20-seed-1\.tif$/);
    const tifText = rt.bytes.toString('latin1');
    expect(tifText).toMatch(/realisations(&apos;|&#39;|') mean/);
    expect(tifText).toMatch(/share of realisations with .* &gt; 80/);
    expect(rt.bytes.equals(before.tif.bytes)).toBe(false);

    // Back to the kriged surface on the map.
    await openStep(page, 'surface');
    await page.click('[data-testid=show-kriged]');
    await page.waitForSelector('[data-testid=show-simulation]');
    figures.push(`screenshot ${await shot(page, '7-local-realisations')}`);
    expectClean(w);
    await w.context.close();
  }, LONG);

  it('colours the demo (a log model) in log steps by default, with the action level on the mean legend', async () => {
    const d = await openDemo(run.h, { viewport: { width: 1280, height: 800 }, log: true, fit: 'wls', surface: true });
    const { page } = d;
    const scale = (await hook(page, (h) => h.meanScale()))!;
    expect(scale.log).toBe(true);
    expect(await page.locator('[data-testid=legend-level]').getAttribute('data-value')).toBe('200');
    // Log steps spread the demo's colours: the drawn mean cells use many distinct colours, not one dark one.
    // Where the drawn cells sit along the colour scale (0 = darkest, 1 = lightest), every 7th pixel.
    const lut = buildLut('loam');
    const colours = async (): Promise<number> => {
      const rgb = await page.evaluate(() => {
        const out: number[] = [];
        for (const c of document.querySelectorAll<HTMLCanvasElement>('[data-testid=surface-layer] canvas')) {
          const data = c.getContext('2d')!.getImageData(0, 0, c.width, c.height).data;
          for (let k = 0; k < data.length; k += 4 * 7) if (data[k + 3] === 255) out.push(data[k], data[k + 1], data[k + 2]);
        }
        return out;
      });
      const n = lut.length / 4;
      const positions: number[] = [];
      for (let p = 0; p < rgb.length; p += 3) {
        let best = 0, bestD = Infinity;
        for (let k = 0; k < n; k += 2) {
          const d = (lut[4 * k] - rgb[p]) ** 2 + (lut[4 * k + 1] - rgb[p + 1]) ** 2 + (lut[4 * k + 2] - rgb[p + 2]) ** 2;
          if (d < bestD) { bestD = d; best = k; }
        }
        positions.push(best / (n - 1));
      }
      // The share of drawn cells in the darkest quarter of the scale.
      return positions.filter((t) => t < 0.25).length / Math.max(1, positions.length);
    };
    const distinct = await colours();
    figures.push(`screenshot ${await shot(page, '3-surface-demo-log-1280x800')}`);
    // The same surface in even steps, for comparison: most cells crowd at the dark end.
    await page.selectOption('#mean-colours', 'linear');
    await page.waitForFunction(() => (window as unknown as { __gapwiseTest: { meanScale(): { log: boolean } | null } }).__gapwiseTest.meanScale()?.log === false);
    await page.waitForSelector('[data-testid=surface-layer][data-layer=mean]', { state: 'attached', timeout: WAIT });
    await page.waitForTimeout(500);
    const even = await colours();
    figures.push(`screenshot ${await shot(page, '3-surface-demo-linear-1280x800')}`);
    figures.push(`demo mean layer: ${(100 * distinct).toFixed(0)} % of the drawn cells in the darkest quarter of the scale in log steps, ${(100 * even).toFixed(0)} % in even steps`);
    // Even steps crowd the skewed demo at the dark end; log steps spread it.
    expect(even).toBeGreaterThan(0.5);
    expect(distinct).toBeLessThan(even / 2);
    await page.selectOption('#mean-colours', 'auto');
    await page.waitForFunction(() => (window as unknown as { __gapwiseTest: { meanScale(): { log: boolean } | null } }).__gapwiseTest.meanScale()?.log === true);
    await page.waitForTimeout(500);
    await page.setViewportSize({ width: 1920, height: 1080 });
    await page.waitForTimeout(400);
    figures.push(`screenshot ${await shot(page, '3-surface-demo-log-1920x1080')}`);
    expectClean(d);
    await d.context.close();
  }, LONG);
});
