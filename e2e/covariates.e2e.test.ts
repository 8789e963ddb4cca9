/**
 * Covariates of the mean in the browser: the demo's covariate file read, its distance column chosen
 * (scatter drawn), the residual variogram labelled, the candidates fitted with the covariate trend
 * (coefficients shown), the Surface step asking for the raster, the raster loaded and shown as its
 * own layer, and the surface drawn with the covariate on the grid.
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { expectClean, openStep, WAIT, LONG, CAUTION, ROOT, useHarness, openPage, shot, pixelAt } from './harness.ts';

const run = useHarness('Gapwise covariate figures');

describe('covariates of the mean in the app', () => {
  it('fits and maps lead with the distance to the workshop as a covariate', async () => {
    const w = await openPage(run.h);
    const { page } = w;
    const csv = readFileSync(resolve(ROOT, 'data-demo/lead-topsoil-covariates.csv'));
    await openStep(page, 'samples');
    await page.setInputFiles('#samples-file', { name: 'lead-topsoil-covariates.csv', mimeType: 'text/csv', buffer: csv });
    await page.waitForSelector('[data-testid=source-name], [data-testid=source-rejected]');
    if (await page.locator('[data-testid=source-rejected]').count()) {
      throw new Error(await page.locator('[data-testid=source-rejected]').innerText());
    }
    expect(await page.locator('[data-testid=source-name]').innerText()).toBe('lead-topsoil-covariates.csv');
    await page.waitForSelector('[data-testid=covariate-panel]');
    await page.locator('[data-testid=covariate-workshop_dist_m]').check();
    const scatter = page.locator('[data-testid=covariate-scatter-workshop_dist_m]');
    await scatter.waitFor();
    expect(Number(await scatter.getAttribute('data-points'))).toBeGreaterThan(100);

    await openStep(page, 'structure');
    expect(await page.locator('[data-testid=residual-variogram-label]').innerText()).toMatch(/Variogram of the residuals.*workshop_dist_m/);
    await page.click('[data-testid=fit-button]');
    await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
    await page.waitForSelector('[data-testid=cv-figures]', { timeout: WAIT });
    const table = page.locator('[data-testid=coefficient-table]');
    await table.waitFor();
    const rows = await table.locator('tbody tr').allInnerTexts();
    expect(rows.map((r) => r.split('\t')[0])).toEqual(['constant', 'workshop_dist_m']);
    // Lead falls with the distance from the workshop in this invented site.
    expect(Number(await table.locator('tbody tr').nth(1).locator('td').nth(1).getAttribute('data-value'))).toBeLessThan(0);
    const share = await page.locator('[data-testid=variance-explained]').innerText();
    expect(share).toMatch(/%/);

    await openStep(page, 'surface');
    expect(await page.locator('[data-testid=raster-needed]').innerText()).toMatch(/raster of workshop_dist_m/);
    await page.click('[data-testid=compute-surface]');
    await expect.poll(() => page.locator('#surface-body [role=alert]').allInnerTexts()).toEqual(expect.arrayContaining([expect.stringMatching(/workshop_dist_m needs a raster/)]));

    const tif = readFileSync(resolve(ROOT, 'data-demo/workshop-distance.tif'));
    await page.setInputFiles('#raster-workshop_dist_m', { name: 'workshop-distance.tif', mimeType: 'image/tiff', buffer: tif });
    await page.waitForSelector('[data-testid=raster-loaded-workshop_dist_m]');
    expect(await page.locator('[data-testid=raster-needed]').count()).toBe(0);
    await page.locator('[data-testid=raster-layer-workshop_dist_m]').check();
    await page.waitForSelector('[data-testid=covariate-layer]', { state: 'attached', timeout: WAIT });

    await page.click('[data-testid=compute-surface]');
    await page.waitForSelector('[data-testid=surface-done]', { timeout: WAIT });
    await page.waitForSelector('[data-testid=surface-layer][data-complete=yes]', { timeout: WAIT, state: 'attached' });
    // The covariate layer off again so the surface is what shows.
    await page.locator('[data-testid=raster-layer-workshop_dist_m]').uncheck();
    await expect.poll(() => page.locator('[data-testid=covariate-layer]').count()).toBe(0);
    const box = (await page.locator('[data-testid=map]').boundingBox())!;
    const px = await pixelAt(page, box.x + box.width / 2, box.y + box.height / 2);
    expect(px, 'a surface pixel at the map centre').not.toBeNull();
    expect(px![3]).toBeGreaterThan(0);
    const caution = await page.locator('#surface-body [data-caution]').allInnerTexts();
    expect(caution.join(' ')).toContain(CAUTION.slice(0, 40));
    await page.locator('[data-testid=raster-layer-workshop_dist_m]').check();
    await page.waitForSelector('[data-testid=covariate-layer]', { state: 'attached', timeout: WAIT });
    await shot(page, 'covariates-surface');
    expectClean(w);
    await w.context.close();
  }, LONG);
});
