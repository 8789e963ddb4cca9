/**
 * Realisations and next samples with a covariate model in the browser, on the invented demo: the
 * distance to the workshop chosen as a covariate of ln(lead), the candidates fitted, the distance
 * raster loaded, the surface drawn, realisations drawn and shown on the map (no refusal), and the next
 * sample sites suggested; each site's mean in the exported CSV is the kriging mean with the raster's
 * distance at the site, computed here in Node from the saved project's model and the files themselves.
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import type { Download, Page } from 'playwright-core';
import { readSamples } from '../src/io/intake.ts';
import { readCovariateRaster, sampleRaster } from '../src/io/covariate-raster.ts';
import { createTransform } from '../src/io/crs.ts';
import { createPredictor } from '../src/core/prediction/kriging.ts';
import { samplesForModel } from '../src/ui/state/covariates.ts';
import { parseModel } from '../src/core/covariance/model.ts';
import { expectClean, openStep, WAIT, LONG, ROOT, useHarness, openPage, shot } from './harness.ts';

const run = useHarness('Gapwise covariate realisations and next samples');

async function download(page: Page, selector: string): Promise<string> {
  const [d] = await Promise.all([page.waitForEvent('download') as Promise<Download>, page.click(selector)]);
  return readFileSync((await d.path())!, 'utf8');
}

describe('realisations and next samples with covariates in the app', () => {
  it('draws realisations and suggests sites with the distance to the workshop in the mean', async () => {
    const w = await openPage(run.h);
    const { page } = w;
    const csv = readFileSync(resolve(ROOT, 'data-demo/lead-topsoil-covariates.csv'));
    const tif = readFileSync(resolve(ROOT, 'data-demo/workshop-distance.tif'));
    await openStep(page, 'samples');
    await page.setInputFiles('#samples-file', { name: 'lead-topsoil-covariates.csv', mimeType: 'text/csv', buffer: csv });
    await page.waitForSelector('[data-testid=source-name], [data-testid=source-rejected]');
    if (await page.locator('[data-testid=source-rejected]').count()) throw new Error(await page.locator('[data-testid=source-rejected]').innerText());
    await page.waitForSelector('[data-testid=covariate-panel]');
    await page.locator('input[name=transform][value=log]').check();
    await page.locator('[data-testid=covariate-workshop_dist_m]').check();

    await openStep(page, 'structure');
    await page.click('[data-testid=fit-button]');
    await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
    await page.waitForSelector('[data-testid=coefficient-table]');

    // Next samples before the raster is loaded: the step says which raster is needed.
    await openStep(page, 'next');
    expect(await page.locator('[data-testid=next-raster-needed]').innerText()).toMatch(/uses workshop_dist_m: load its raster in the Surface step/);
    await page.fill('#ns-count', '5');
    await page.selectOption('#ns-mode', 'variance');
    await page.click('[data-testid=suggest-sites]');
    await expect.poll(() => page.locator('[data-testid=next-samples] [role=alert]').allInnerTexts(), { timeout: WAIT })
      .toEqual([expect.stringMatching(/covariate workshop_dist_m needs a raster/)]);

    await openStep(page, 'surface');
    await page.fill('#threshold', '200');
    await page.locator('#threshold').press('Enter');
    await page.setInputFiles('#raster-workshop_dist_m', { name: 'workshop-distance.tif', mimeType: 'image/tiff', buffer: tif });
    await page.waitForSelector('[data-testid=raster-loaded-workshop_dist_m]');
    await page.click('[data-testid=compute-surface]');
    await page.waitForSelector('[data-testid=surface-done]', { timeout: WAIT });
    await page.waitForSelector('[data-testid=surface-layer][data-complete=yes]', { timeout: WAIT, state: 'attached' });

    // Realisations: drawn, with the area above the action level, and shown on the map.
    await page.fill('#sim-count', '20');
    await page.locator('#sim-count').press('Enter');
    await page.click('[data-testid=simulate]');
    await page.waitForSelector('[data-testid=sim-done]', { timeout: WAIT });
    expect(await page.locator('#surface-body [role=alert]').count()).toBe(0);
    expect(await page.locator('[data-testid=sim-done]').innerText()).toMatch(/^20 realisations/);
    // The conditioning was chosen by cost in a worker (150 samples: kriging from all of them) and is said.
    expect(await page.locator('[data-testid=sim-path]').getAttribute('data-path')).toBe('exact');
    expect(await page.locator('[data-testid=sim-path]').innerText()).toMatch(/^Conditioned by kriging from all samples; chosen automatically: /);
    // Four realisations drawn small, each with coloured cells.
    const painted = await page.$$eval('[data-testid=realisation-canvas]', (cs) => (cs as HTMLCanvasElement[]).map((c) => {
      const d = c.getContext('2d')!.getImageData(0, 0, c.width, c.height).data;
      let n = 0;
      for (let i = 3; i < d.length; i += 4) if (d[i] > 0) n++;
      return n / (c.width * c.height);
    }));
    expect(painted).toHaveLength(4);
    for (const share of painted) expect(share).toBeGreaterThan(0.3);
    const median = await page.locator('[data-testid=sim-area-median]').innerText();
    run.figures.push(`realisations' area above 200 mg/kg: ${median}`);
    expect(median).toMatch(/\d/);
    await page.click('[data-testid=show-simulation]');
    await page.waitForSelector('[data-testid=sim-on-map]');
    await page.waitForSelector('[data-testid=surface-layer][data-complete=yes][data-layer=pExceed]', { timeout: WAIT, state: 'attached' });
    await page.locator('[data-testid=realisations]').scrollIntoViewIfNeeded();
    run.figures.push(`screenshot ${await shot(page, 'covariates-realisations')}`);

    // Next samples with the raster: five sites, no error.
    await openStep(page, 'next');
    expect(await page.locator('[data-testid=next-raster-needed]').count()).toBe(0);
    await page.click('[data-testid=suggest-sites]');
    await page.waitForSelector('[data-testid=next-result][data-count="5"]', { timeout: WAIT });
    expect(await page.locator('[data-testid=next-samples] [role=alert]').count()).toBe(0);
    expect(await page.locator('.gapwise-next-site').count()).toBe(5);
    run.figures.push(`screenshot ${await shot(page, 'covariates-next-samples')}`);
    const lines = (await download(page, '[data-export=next-csv]')).trim().split('\n');
    expect(lines[1]).toBe('rank,x,y,lon,lat,benefit,mean,sd,p_exceed');
    const sites = lines.slice(2).map((l) => l.split(',').map(Number));
    expect(sites).toHaveLength(5);

    // Each site's mean against kriging with the raster's distance there (Node, from the saved model).
    await openStep(page, 'report');
    const project = JSON.parse(await download(page, '[data-export=project]')) as { model: unknown };
    const model = parseModel(project.model);
    const intake = readSamples(csv.toString('utf8'), { fileName: 'lead-topsoil-covariates.csv', value: 'Pb (mg/kg)' });
    const raster = await readCovariateRaster(new Uint8Array(tif), 'workshop_dist_m', 'workshop-distance.tif');
    const work = intake.report.crs.work;
    const at = createTransform(intake.report.crs.input, work).forwardMany(sites.map((s) => s[1]), sites.map((s) => s[2]));
    const distance = sampleRaster(raster, at.x, at.y, work, 'bilinear');
    const predictor = createPredictor(samplesForModel(intake, model), model);
    const want = predictor.predict(at.x, at.y, { covariates: distance });
    sites.forEach((s, k) => {
      expect(Number.isNaN(distance[k]), `site ${k + 1} inside the raster`).toBe(false);
      expect(Math.abs(s[6] - want.mean[k]), `mean of site ${k + 1}`).toBeLessThan(1e-6 * want.mean[k]);
      expect(Math.abs(s[7] - want.sd[k]), `sd of site ${k + 1}`).toBeLessThan(1e-6 * want.sd[k]);
    });
    run.figures.push(`sites' means ${sites.map((s) => s[6].toPrecision(4)).join(', ')} mg/kg at distances ${Array.from(distance, (d) => d.toFixed(0)).join(', ')} m`);
    expectClean(w);
    await w.context.close();
  }, LONG);
});
