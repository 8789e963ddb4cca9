/**
 * Covariates of the mean in the browser: the demo's covariate file read, its distance column chosen
 * (scatter drawn), the residual variogram labelled, the candidates fitted with the covariate trend
 * (coefficients shown), the Surface step asking for the raster, the raster loaded and shown as its
 * own layer, the surface drawn with the covariate on the grid, and the raster still there after a reload.
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import type { Download } from 'playwright-core';
import { readSamples } from '../src/io/intake.ts';
import { attachTrendCoefficients } from '../src/core/fitting/covariate-fit.ts';
import { withChosenCovariates } from '../src/ui/state/covariates.ts';
import type { CovarianceModel } from '../src/core/covariance/model.ts';
import { expectClean, openStep, WAIT, LONG, CAUTION, ROOT, useHarness, openPage, shot, pixelAt, waitForSave } from './harness.ts';

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
    await page.locator('input[name=transform][value=log]').check();
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
    await table.scrollIntoViewIfNeeded();
    await shot(page, 'covariates-structure');

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
    await shot(page, 'covariates-mean');
    const caution = await page.locator('#surface-body [data-caution]').allInnerTexts();
    expect(caution.join(' ')).toContain(CAUTION.slice(0, 40));
    await page.locator('[data-testid=raster-layer-workshop_dist_m]').check();
    await page.waitForSelector('[data-testid=covariate-layer]', { state: 'attached', timeout: WAIT });
    await page.waitForSelector('[data-testid=covariate-legend]');
    await shot(page, 'covariates-surface');

    // The saved project's model carries the coefficients the engine gives for that model on the
    // file's ln values and distances (computed here in Node from the file itself).
    await openStep(page, 'report');
    const [pd] = await Promise.all([page.waitForEvent('download') as Promise<Download>, page.click('[data-export=project]')]);
    const project = JSON.parse(readFileSync((await pd.path())!, 'utf8')) as { model: CovarianceModel; covariateRasters: unknown };
    expect(project.model.trend).toEqual({ covariates: ['workshop_dist_m'] });
    // The project names the raster it does not hold, and the page says it was saved without it.
    expect(project.covariateRasters).toEqual([{ covariate: 'workshop_dist_m', fileName: 'workshop-distance.tif' }]);
    expect(await page.locator('.report-panel .done').innerText()).toMatch(/without the covariate raster file workshop-distance\.tif \(workshop_dist_m\)/);
    const intake = readSamples(csv.toString('utf8'), { fileName: 'lead-topsoil-covariates.csv', value: 'Pb (mg/kg)' });
    const chosen = withChosenCovariates(intake, ['workshop_dist_m'])!;
    const lnSamples = { ...chosen.samples, value: Float64Array.from(chosen.samples.value, Math.log) };
    const expected = attachTrendCoefficients(lnSamples, { ...project.model, fit: undefined });
    const got = project.model.fit!.coefficients as Array<{ name: string; estimate: number; standardError: number }>;
    const want = expected.fit!.coefficients as typeof got;
    for (let k = 0; k < want.length; k++) {
      expect(got[k].name).toBe(want[k].name);
      expect(Math.abs(got[k].estimate - want[k].estimate)).toBeLessThan(1e-8 * Math.max(1, Math.abs(want[k].estimate)));
      expect(Math.abs(got[k].standardError - want[k].standardError)).toBeLessThan(1e-8 * Math.max(1, want[k].standardError));
    }
    expect(project.model.fit!.trendVarianceExplained).toBeCloseTo(expected.fit!.trendVarianceExplained as number, 8);
    run.figures.push(`workshop_dist_m on ln(Pb): ${want[1].estimate.toPrecision(3)} ± ${want[1].standardError.toPrecision(2)} per m; explained ${(expected.fit!.trendVarianceExplained as number).toFixed(3)}`);

    // The report lists the coefficients with their standard errors and the share explained.
    await openStep(page, 'report');
    const [d] = await Promise.all([page.waitForEvent('download') as Promise<Download>, page.click('[data-export=report]')]);
    const report = readFileSync((await d.path())!, 'utf8');
    expect(report).toContain('Trend coefficients');
    expect(report).toContain('data-figure="coefficient workshop_dist_m"');
    expect(report).toContain('data-figure="variance explained"');
    expect(report).toContain(CAUTION);

    // After a reload the choice is kept and the raster is back (read again from the browser's store).
    await waitForSave(page);
    await page.reload();
    await page.waitForSelector('.app[data-ready="yes"]');
    await openStep(page, 'samples');
    expect(await page.locator('[data-testid=covariate-workshop_dist_m]').isChecked()).toBe(true);
    await openStep(page, 'structure');
    await page.waitForSelector('[data-testid=residual-variogram-label]');
    await page.waitForSelector('[data-testid=coefficient-table]');
    await openStep(page, 'surface');
    await page.waitForSelector('[data-testid=raster-loaded-workshop_dist_m]');
    await page.waitForSelector('[data-testid=raster-kept-workshop_dist_m]');
    expect(await page.locator('[data-testid=raster-needed]').count()).toBe(0);
    await page.locator('[data-testid=raster-layer-workshop_dist_m]').check();
    await page.waitForSelector('[data-testid=covariate-layer]', { state: 'attached', timeout: WAIT });
    expectClean(w);
    await w.context.close();
  }, LONG);
});
