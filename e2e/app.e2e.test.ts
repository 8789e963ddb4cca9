/**
 * The app in headless Chromium, served from dist/ on 127.0.0.1 with every outside request aborted.
 * Walks the demo through Samples → Structure → Surface, reads colours back from the drawn surface,
 * feeds a hostile file, reloads, and prints timing figures (never asserted).
 */
import { describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { expectClean, openStep, WAIT, LONG, CAUTION, useHarness, openPage, shot, takeLongestTask, chooseCrs, pixelAt, type Watched } from './harness.ts';
import { fiveHundredCsv, hostileCsv, projectedGridCsv } from './files.ts';
import { buildLut } from '../src/ui/map/colour-scales.ts';

const run = useHarness('Gapwise browser figures');
const figures = run.figures;

async function loadFile(page: Page, name: string, text: string): Promise<void> {
  await openStep(page, 'samples');
  await page.setInputFiles('#samples-file', { name, mimeType: 'text/csv', buffer: Buffer.from(text, 'utf8') });
  await page.waitForSelector(`[data-testid=source-name]:text-is("${name}")`);
}

async function fitAll(page: Page, method: 'reml' | 'wls' = 'reml'): Promise<number> {
  await openStep(page, 'structure');
  await page.selectOption('#fit-method', method);
  await takeLongestTask(page);
  const t0 = Date.now();
  await page.click('[data-testid=fit-button]');
  await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
  await page.waitForSelector('[data-testid=cv-figures]', { timeout: WAIT });
  return (Date.now() - t0) / 1000;
}

async function computeSurface(page: Page): Promise<number> {
  await openStep(page, 'surface');
  await takeLongestTask(page);
  const t0 = Date.now();
  await page.click('[data-testid=compute-surface]');
  await page.waitForSelector('[data-testid=surface-done]', { timeout: WAIT });
  const seconds = (Date.now() - t0) / 1000;
  await page.waitForSelector('[data-testid=surface-layer][data-complete=yes]', { timeout: WAIT, state: 'attached' });
  return seconds;
}

async function cautionsIn(page: Page, stepId: string): Promise<string[]> {
  return page.locator(`#${stepId}-body [data-caution]`).allInnerTexts();
}

describe('Gapwise in the browser', () => {
  let demo: Watched;

  it('loads the invented demo in one click and shows what was read', async () => {
    demo = await openPage(run.h);
    const { page } = demo;
    expect(await page.locator('[data-testid=load-demo]').innerText()).toBe('Load the invented demo site');
    await page.click('[data-testid=load-demo]');
    await page.waitForSelector('[data-testid=read-report]');
    expect(await page.locator('[data-testid=source-name]').innerText()).toBe('lead-topsoil.csv');
    expect(await page.locator('[data-testid=invented-tag]').innerText()).toBe('invented');
    expect(await page.locator('[data-testid=invented-note]').innerText()).toMatch(/Invented demo data/);
    expect(await page.locator('[data-testid=map-invented]').innerText()).toMatch(/Invented demo site/);
    // 150 rows read, all used (the duplicate pair is merged into one sample).
    expect(await page.locator('[data-testid=rows-used]').innerText()).toBe('150');
    expect(await page.locator('#value-column').inputValue()).toBe('Pb (mg/kg)');
    expect(await page.locator('[data-testid=transform-advice]').innerText()).toMatch(/right-skewed/);
    // Samples on the map: one marker per sample (149 after the merge), and a legend.
    await page.waitForSelector('path[data-sample-id]');
    expect(await page.locator('path[data-sample-id]').count()).toBe(149);
    expect(await page.locator('[data-testid=sample-legend]').isVisible()).toBe(true);
    // The selected sample's row is shown as text.
    await page.locator('path[data-sample-id="WF-001"]').click();
    await page.waitForSelector('[data-testid=sample-panel-id]', { timeout: 10_000 });
    expect(await page.locator('[data-testid=sample-panel-id]').innerText()).toBe('WF-001');
    expect(await page.locator('[data-testid=sample-panel]').innerText()).toMatch(/Wrenfallow Works yard \(invented\)/);
    await page.locator('[data-testid=sample-panel] button').click();
    // Choose the log transform the advice suggests.
    await page.locator('input[name=transform][value=log]').check();
    await page.waitForSelector('[data-testid=log-histogram]');
    figures.push(`screenshot ${await shot(page, '1-samples')}`);
    expectClean(demo);
  }, LONG);

  it('fits the candidate models in workers, marks the best and keeps the choice', async () => {
    const { page } = demo;
    const seconds = await fitAll(page);
    const task = await takeLongestTask(page);
    figures.push(`demo fit (6 candidates + LOO, REML, n = 149): ${seconds.toFixed(1)} s; longest main-thread task ${task.longest.toFixed(0)} ms (${task.count} over 50 ms)`);
    const rows = page.locator('[data-testid=candidate-table] tbody tr');
    expect(await rows.count()).toBe(6);
    // Exactly one row is marked best, with text, and the best is in use by default.
    expect(await page.locator('[data-testid=candidate-table] .tag.best').count()).toBe(1);
    const bestRow = page.locator('[data-testid=candidate-table] tr:has(.tag.best)');
    expect(await bestRow.locator('input[type=radio]').isChecked()).toBe(true);
    // Choose another candidate: it is kept, and the curve and CV figures follow.
    const rmseBefore = await page.locator('[data-testid=cv-rmse]').innerText();
    await page.locator('[data-testid=candidate-table] tr[data-key="spherical"] input[type=radio]').check();
    await page.waitForFunction(
      (before) => document.querySelector('[data-testid=cv-rmse]')?.textContent !== before, rmseBefore, { timeout: WAIT });
    expect(await page.locator('[data-testid=model-in-use]').innerText()).toMatch(/Spherical/);
    // Variogram points carry their pair counts in a title and are focusable.
    const point = page.locator('[data-testid=variogram-chart] g.pt').first();
    expect(await point.getAttribute('tabindex')).toBe('0');
    expect(await point.locator('title').textContent()).toMatch(/\d+ pairs/);
    // The four directions and the anisotropy hint.
    await page.getByLabel('Four directions').check();
    await page.waitForSelector('[data-testid=anisotropy-hint]');
    expect(await cautionsIn(page, 'structure')).toContain(CAUTION);
    figures.push(`screenshot ${await shot(page, '2-structure')}`);
    await page.evaluate(() => document.querySelector('#structure-body [data-testid=cv-figures]')?.scrollIntoView());
    figures.push(`screenshot ${await shot(page, '2-structure-cv')}`);
    await page.getByLabel('Four directions').uncheck();
    expectClean(demo);
  }, LONG);

  it('computes the surface in workers and shows mean, sd and exceedance with legends in data units', async () => {
    const { page } = demo;
    await openStep(page, 'surface');
    expect(await page.locator('#threshold').inputValue()).toBe('200');
    expect(await page.locator('[data-testid=cell-count]').innerText()).toMatch(/^[\d,]+$/);
    const seconds = await computeSurface(page);
    const task = await takeLongestTask(page);
    const info = await page.evaluate(() => (window as unknown as { __gapwiseTest: { surfaceInfo(): { cells: number } } }).__gapwiseTest.surfaceInfo());
    figures.push(`demo surface (${info.cells} cells, n = 149): ${seconds.toFixed(1)} s; longest main-thread task ${task.longest.toFixed(0)} ms (${task.count} over 50 ms)`);
    expect(await page.locator('[data-testid=surface-legend]').getAttribute('data-kind')).toBe('mean');
    expect(await page.locator('[data-testid=surface-legend]').innerText()).toMatch(/Estimated value \(mg\/kg\)/);
    await page.mouse.move(870, 450);
    await page.waitForSelector('[data-testid=readout]');
    expect(await page.locator('[data-testid=readout]').innerText()).toMatch(/Pb: [\d.,]+ ± [\d.,]+ mg\/kg/);
    expect(await cautionsIn(page, 'surface')).toContain(CAUTION);
    figures.push(`screenshot ${await shot(page, '3-surface-mean')}`);

    await page.locator('input[name=layer][value=sd]').check();
    await page.waitForSelector('[data-testid=surface-legend][data-kind=sd]');
    await page.waitForSelector('[data-testid=surface-layer][data-layer=sd]', { state: 'attached' });
    figures.push(`screenshot ${await shot(page, '3-surface-sd')}`);

    await page.locator('input[name=layer][value=exceed]').check();
    await page.waitForSelector('[data-testid=surface-legend][data-kind=pExceed]');
    await page.waitForSelector('[data-testid=surface-layer][data-layer=pExceed]', { state: 'attached' });
    const legend = await page.locator('[data-testid=surface-legend]').innerText();
    expect(legend).toMatch(/Chance of exceeding 200 mg\/kg/);
    expect(legend).toMatch(/unlikely/);
    expect(legend).toMatch(/likely/);
    figures.push(`screenshot ${await shot(page, '3-surface-exceed')}`);
    await page.locator('input[name=layer][value=mean]').check();
    expectClean(demo);
  }, LONG);

  it('gives Next samples and Report their places, each with the caution', async () => {
    const { page } = demo;
    for (const [id, name] of [['next', '4-next-samples'], ['report', '5-report']] as const) {
      await openStep(page, id);
      expect(await cautionsIn(page, id)).toContain(CAUTION);
      figures.push(`screenshot ${await shot(page, name)}`);
    }
    await openStep(page, 'surface');
    expectClean(demo);
  }, LONG);

  it('restores the session after a reload', async () => {
    const { page } = demo;
    await page.waitForFunction(() => document.querySelector('[data-testid=save-status]')?.getAttribute('data-saved-at') !== '');
    await page.waitForTimeout(600);
    await page.reload();
    await page.waitForSelector('.app[data-ready=yes][data-restored=yes]');
    // The surface step was open and a surface was wanted: it is computed again.
    await page.waitForSelector('[data-testid=surface-done]', { timeout: WAIT });
    await page.waitForSelector('[data-testid=surface-layer][data-complete=yes]', { timeout: WAIT, state: 'attached' });
    expect(await page.locator('#threshold').inputValue()).toBe('200');
    await openStep(page, 'structure');
    expect(await page.locator('[data-testid=model-in-use]').innerText()).toMatch(/Spherical/);
    await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
    expect(await page.locator('[data-testid=candidate-table] tr[data-key="spherical"] input[type=radio]').isChecked()).toBe(true);
    await openStep(page, 'samples');
    expect(await page.locator('[data-testid=source-name]').innerText()).toBe('lead-topsoil.csv');
    expect(await page.locator('input[name=transform][value=log]').isChecked()).toBe(true);
    // Start over clears it after the confirmation.
    await page.click('[data-testid=start-over]');
    await page.waitForSelector('[data-testid=load-demo]');
    expect(demo.dialogs.filter((d) => d.startsWith('confirm: Start over?')).length).toBe(1);
    await page.reload();
    await page.waitForSelector('.app[data-ready=yes][data-restored=no]');
    expectClean(demo);
    await demo.context.close();
  }, LONG);

  it('draws the mean layer in the right place: colours at three samples match their values (zero nugget)', async () => {
    const w = await openPage(run.h);
    const { page } = w;
    const { text, values } = projectedGridCsv();
    await loadFile(page, 'zinc-grid.csv', text);
    await chooseCrs(page, 'EPSG:32633');
    await page.waitForSelector('path[data-sample-id]');
    await fitAll(page);
    // The exponential candidate with a zero nugget and a 30 m scale: the surface passes through the
    // samples (a well-conditioned system, no jitter) and changes within a few cells of each one.
    await page.locator('[data-testid=candidate-table] tr[data-key="exponential"] input[type=radio]').check();
    await page.fill('#model-nugget', '0');
    await page.locator('#model-nugget').press('Enter');
    await page.fill('#model-scale', '30');
    await page.locator('#model-scale').press('Enter');
    await page.waitForFunction(() => /Exponential \(edited by hand\); practical range 89\.9 m/.test(document.querySelector('[data-testid=model-in-use]')?.textContent ?? ''));
    await page.waitForFunction(() => /edited by hand/.test(document.querySelector('[data-testid=model-in-use]')?.textContent ?? ''));
    await openStep(page, 'surface');
    await page.fill('#cell-size', '5');
    await page.locator('#cell-size').press('Enter');
    await page.waitForFunction(() => /cells of 5 m/.test(document.querySelector('[data-testid=grid-summary]')?.textContent ?? ''));
    await computeSurface(page);
    const scale = await page.evaluate(() => (window as unknown as { __gapwiseTest: { meanScale(): { domain: [number, number]; steps: number } } }).__gapwiseTest.meanScale());
    const points = await page.evaluate(() => (window as unknown as { __gapwiseTest: { samplePoints(): Array<{ id: string; value: number; pageX: number; pageY: number }> } }).__gapwiseTest.samplePoints());
    expect(points.length).toBe(25);
    const lut = buildLut('loam', scale.steps);
    const step = (scale.domain[1] - scale.domain[0]) / (scale.steps - 1);
    const valueOf = (rgb: number[]): number => {
      let best = 0;
      let bestD = Infinity;
      for (let k = 0; k < scale.steps; k++) {
        const d = (lut[4 * k] - rgb[0]) ** 2 + (lut[4 * k + 1] - rgb[1]) ** 2 + (lut[4 * k + 2] - rgb[2]) ** 2;
        if (d < bestD) { bestD = d; best = k; }
      }
      return scale.domain[0] + best * step;
    };
    const chosen = ['G11', 'G23', 'G42'].map((id) => points.find((p) => p.id === id)!);
    for (const p of chosen) {
      const rgba = await pixelAt(page, p.pageX, p.pageY);
      expect(rgba, `a surface pixel under ${p.id}`).not.toBeNull();
      expect(rgba![3]).toBe(255);
      const v = valueOf(rgba!);
      expect(p.value).toBe(values.get(p.id));
      // Within one colour step of the sample value (plus rounding of the Float32 surface).
      expect(Math.abs(v - p.value), `${p.id}: colour reads ${v.toFixed(2)}, sample ${p.value}, step ${step.toFixed(3)}`).toBeLessThanOrEqual(step * 1.01);
    }
    // The check can fail: 12 m (a little over 2 cells) beside a sample the colour reads another value.
    const mPerPx = await page.evaluate(() => {
      const bar = document.querySelector('.leaflet-control-scale-line') as HTMLElement;
      const m = Number(/([\d.]+)\s*m/.exec(bar.textContent ?? '')?.[1]);
      return m / bar.getBoundingClientRect().width;
    });
    const off = chosen[1];
    const rgbaOff = await pixelAt(page, off.pageX + 12 / mPerPx, off.pageY);
    expect(Math.abs(valueOf(rgbaOff!) - off.value)).toBeGreaterThan(2 * step);
    figures.push(`colour read-back: 3 samples within one colour step (${step.toFixed(3)} data units) in EPSG:32633, ${mPerPx.toFixed(3)} m per pixel`);
    figures.push(`screenshot ${await shot(page, '6-readback-grid')}`);
    expectClean(w);
    await w.context.close();
  }, LONG);

  it('shows a hostile file as text and runs nothing from it', async () => {
    const w = await openPage(run.h);
    const { page } = w;
    const scriptsBefore = await page.evaluate(() => document.scripts.length);
    await loadFile(page, 'hostile<script>.csv', hostileCsv());
    await page.waitForSelector('[data-testid=read-report]');
    await page.waitForSelector('path[data-sample-id]');
    // The column name with markup is an option's text.
    const options = await page.locator('#value-column option').allInnerTexts();
    expect(options).toContain('lead <script>window.__pwned=2</script>');
    // The rejected cell appears in the report as raw text.
    expect(await page.locator('[data-testid=read-report]').innerText()).toContain('<b onmouseover=alert(4)>60</b>');
    // Open a sample with hostile text: it is shown as text.
    await page.locator('path[data-sample-index="0"]').click();
    const panel = await page.locator('[data-testid=sample-panel]').innerText();
    expect(panel).toContain('<script>window.__pwned=3</script>');
    expect(panel).toContain('<img src=x onerror=alert(1)>');
    expect(panel).toContain('name<img src=x onerror="window.__pwned=1">');
    await page.locator('path[data-sample-index="2"]').click();
    expect(await page.locator('[data-testid=sample-panel]').innerText()).toContain('</td></tr></table><h1 id=injected>x</h1>');
    await page.waitForTimeout(500);
    const injected = await page.evaluate(() => ({
      pwned: (window as unknown as { __pwned?: unknown }).__pwned ?? null,
      imgs: document.querySelectorAll('img[src="x"], img[src$="/x"]').length,
      iframes: document.querySelectorAll('iframe').length,
      h1: document.querySelectorAll('#injected').length,
      svgOnload: document.querySelectorAll('svg[onload]').length,
      bold: document.querySelectorAll('b[onmouseover]').length,
      scripts: document.scripts.length,
    }));
    expect(injected).toEqual({ pwned: null, imgs: 0, iframes: 0, h1: 0, svgOnload: 0, bold: 0, scripts: scriptsBefore });
    expect(w.dialogs).toEqual([]);
    figures.push(`screenshot ${await shot(page, '7-hostile-file')}`);
    expectClean(w);
    await w.context.close();
  }, LONG);

  it('times a 200 × 200 surface from 500 samples (figures only)', async () => {
    const w = await openPage(run.h);
    const { page } = w;
    await loadFile(page, 'nitrate-500.csv', fiveHundredCsv());
    await chooseCrs(page, 'EPSG:32632');
    expect(await page.locator('[data-testid=rows-used]').innerText()).toBe('500');
    const fitSeconds = await fitAll(page, 'wls');
    const fitTask = await takeLongestTask(page);
    figures.push(`500-sample fit (6 candidates by WLS + LOO): ${fitSeconds.toFixed(1)} s; longest main-thread task ${fitTask.longest.toFixed(0)} ms`);
    await openStep(page, 'surface');
    await page.fill('#padding', '0');
    await page.fill('#cell-size', '5');
    await page.locator('#cell-size').press('Enter');
    await page.waitForFunction(() => /200 × 200 cells of 5 m/.test(document.querySelector('[data-testid=grid-summary]')?.textContent ?? ''));
    const estimate = await page.locator('[data-testid=grid-summary]').innerText();
    const seconds = await computeSurface(page);
    const task = await takeLongestTask(page);
    const ms = Number(await page.locator('[data-testid=surface-done]').getAttribute('data-ms'));
    figures.push(`200 × 200 surface from 500 samples: ${(ms / 1000).toFixed(2)} s in the app (${seconds.toFixed(2)} s to the done message); longest main-thread task ${task.longest.toFixed(0)} ms (${task.count} over 50 ms); estimate shown before: "${estimate.replace(/\s+/g, ' ')}"`);
    figures.push(`screenshot ${await shot(page, '8-five-hundred')}`);
    expectClean(w);
    await w.context.close();
  }, LONG);
});
