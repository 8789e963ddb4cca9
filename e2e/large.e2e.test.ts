/**
 * Many samples in the app (headless Chromium, dist/ on 127.0.0.1, every outside request aborted): a
 * 20,000-row invented CSV is read, placed on one canvas rather than 20,000 SVG markers, and its
 * variograms (omnidirectional, four directions) come from a worker. The longest main-thread tasks
 * are printed as figures, never asserted.
 */
import { describe, expect, it } from 'vitest';
import { expectClean, openStep, WAIT, LONG, useHarness, openPage, shot, takeLongestTask } from './harness.ts';
import type { Page } from 'playwright-core';
import { createRandom } from '../src/core/shared/random.ts';

const run = useHarness('Gapwise many-sample figures');
const figures = run.figures;

/** n invented readings on a 5 km square at UTM-like coordinates: a band of higher values plus noise. */
function inventedCsv(n: number, side = 5000): string {
  const r = createRandom(5);
  const lines = ['x,y,lead_mg_kg'];
  for (let i = 0; i < n; i++) {
    const x = 500000 + side * r.uniform();
    const y = 6000000 + side * r.uniform();
    lines.push(`${x.toFixed(1)},${y.toFixed(1)},${(100 + 40 * Math.sin((x - 500000) / 700) + 10 * r.normal()).toFixed(2)}`);
  }
  return lines.join('\n');
}

describe('many samples in the app', () => {
  it('20,000 samples: dots on one canvas that can still be picked, variograms from a worker, the pair sample said', async () => {
    const w = await openPage(run.h);
    const { page } = w;
    await takeLongestTask(page);
    let t0 = Date.now();
    await page.setInputFiles('#samples-file', { name: 'invented-20k.csv', mimeType: 'text/csv', buffer: Buffer.from(inventedCsv(20000), 'utf8') });
    await page.waitForSelector('text=20,000 of 20,000 rows used');
    figures.push(`read 20,000 rows: ${Date.now() - t0} ms; longest task ${(await takeLongestTask(page)).longest} ms`);

    const input = page.locator('#crs-picker');
    await input.click();
    await input.fill('32633');
    await page.waitForSelector('#crs-picker-list [role=option]:has-text("EPSG:32633")');
    await takeLongestTask(page);
    t0 = Date.now();
    await input.press('Enter');
    await page.waitForSelector('[data-testid=crs-current]:text-is("EPSG:32633")');
    // The samples are dots on one canvas: no element per sample.
    await page.waitForSelector('canvas.gapwise-sample-points');
    expect(await page.locator('[data-sample-index]').count()).toBe(0);
    figures.push(`placed 20,000 samples (one canvas): ${Date.now() - t0} ms; longest task ${(await takeLongestTask(page)).longest} ms`);
    // A dot can still be picked: click the sample nearest the map's centre and read its row.
    const points = await page.evaluate(() => (window as unknown as { __gapwiseTest: { samplePoints(): Array<{ id: string; value: number; pageX: number; pageY: number }> } }).__gapwiseTest.samplePoints());
    expect(points.length).toBe(20000);
    const box = (await page.locator('.leaflet-container').boundingBox())!;
    const cx = box.x + box.width / 2;
    const cy = box.y + box.height / 2;
    let target = points[0];
    for (const q of points) if (Math.hypot(q.pageX - cx, q.pageY - cy) < Math.hypot(target.pageX - cx, target.pageY - cy)) target = q;
    await page.mouse.click(target.pageX, target.pageY);
    await page.waitForSelector('[data-testid=sample-panel-id]', { timeout: 10_000 });
    // Dots overlap at this zoom: the picked one is the nearest to the click, within a few pixels.
    const picked = await page.locator('[data-testid=sample-panel-id]').innerText();
    const hit = points.find((q) => q.id === picked)!;
    expect(Math.hypot(hit.pageX - target.pageX, hit.pageY - target.pageY)).toBeLessThanOrEqual(6);
    await page.locator('[data-testid=sample-panel] button').click();
    figures.push(`picked a dot and closed its row: longest task ${(await takeLongestTask(page)).longest} ms`);

    await openStep(page, 'structure');
    await page.check('text=Four directions');
    await page.waitForSelector('#structure-body svg', { timeout: WAIT });
    // The variogram comes from the seeded pair sample, and says so.
    await page.waitForSelector('text=a seeded sample of 12,497,500 pairs was used');
    await page.waitForSelector('[data-testid=variogram-pending]', { state: 'detached', timeout: WAIT });
    const longest = await takeLongestTask(page);
    figures.push(`variograms (omnidirectional + four directions) from a worker: longest main-thread task ${longest.longest} ms while they were computed and drawn`);
    await shot(page, '9-many-samples');
    expectClean(w);
    await w.context.close();
  }, LONG);

  it('5,000 samples: candidates by the nearest-neighbour likelihood with local leave-one-out figures, then a surface from local neighbourhoods', async () => {
    const w = await openPage(run.h);
    const { page } = w;
    await page.setInputFiles('#samples-file', { name: 'invented-5k.csv', mimeType: 'text/csv', buffer: Buffer.from(inventedCsv(5000, 3000), 'utf8') });
    await page.waitForSelector('text=5,000 of 5,000 rows used');
    await chooseUtm33(page);
    await openStep(page, 'structure');
    await takeLongestTask(page);
    let t0 = Date.now();
    await page.click('[data-testid=fit-button]');
    await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
    const fitSeconds = (Date.now() - t0) / 1000;
    // Every candidate has leave-one-out figures, from each sample's 64 nearest others.
    const rows = await page.locator('[data-testid=candidate-table] tbody tr').allInnerTexts();
    expect(rows.length).toBe(6);
    for (const row of rows) expect(row).toMatch(/\t\d[\d.,]*\t\d[\d.,]*$/);
    await page.waitForSelector('text=each sample predicted from its 64 nearest others');
    figures.push(`5,000 samples: 6 candidates (nearest-neighbour likelihood) + local leave-one-out in ${fitSeconds.toFixed(1)} s; longest task ${(await takeLongestTask(page)).longest} ms`);
    await openStep(page, 'surface');
    await page.waitForSelector('text=Fitted with a nearest-neighbour likelihood on 5,000 samples');
    await takeLongestTask(page);
    t0 = Date.now();
    await page.click('[data-testid=compute-surface]');
    await page.waitForSelector('[data-testid=surface-done]', { timeout: WAIT });
    const cells = await page.locator('[data-testid=surface-done]').innerText();
    figures.push(`5,000 samples: surface (${cells.replace(/^Computed /, '').replace(/\.$/, '')}) ${((Date.now() - t0) / 1000).toFixed(1)} s to done; longest task ${(await takeLongestTask(page)).longest} ms`);
    await shot(page, '9-five-thousand');
    expectClean(w);
    await w.context.close();
  }, LONG);
});

async function chooseUtm33(page: Page): Promise<void> {
  const input = page.locator('#crs-picker');
  await input.click();
  await input.fill('32633');
  await page.waitForSelector('#crs-picker-list [role=option]:has-text("EPSG:32633")');
  await input.press('Enter');
  await page.waitForSelector('[data-testid=crs-current]:text-is("EPSG:32633")');
}
