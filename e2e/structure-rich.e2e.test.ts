/**
 * The Structure step's richer fits in headless Chromium on the invented demo, every outside request
 * aborted: the range by direction fitted in a worker, the comparison of the isotropic and the
 * anisotropic fit (log-likelihood, AIC), the fitted model drawn along the four directions, its long
 * axis and ratio in words, and a surface computed with it; then two ranges, with either the two
 * ranges or the guard's note in plain words; then both boxes ticked: two ranges sharing one direction,
 * compared with the three simpler fits. Screenshots 8-structure-rich*.png.
 */
import { describe, expect, it } from 'vitest';
import { expectClean, openStep, WAIT, LONG, useHarness, openDemo, computeSurface, shot, type Watched } from './harness.ts';

const run = useHarness('Gapwise richer-fit figures');

describe('Richer fits in the Structure step', () => {
  let w: Watched;

  it('fits a range by direction, compares it with the isotropic fit, draws it along each direction and maps with it', { timeout: LONG }, async () => {
    w = await openDemo(run.h, { fit: 'reml' });
    const { page } = w;
    await openStep(page, 'structure');
    await page.getByLabel('Four directions').check();
    await page.locator('[data-testid=rich-anisotropy]').check();
    const t0 = Date.now();
    await page.click('[data-testid=rich-fit-button]');
    await page.waitForSelector('[data-testid=rich-comparison]', { timeout: WAIT });
    run.figures.push(`anisotropic fit of the demo in the browser: ${((Date.now() - t0) / 1000).toFixed(1)} s`);

    const rows = await page.locator('[data-testid=rich-comparison] tbody tr').evaluateAll((trs) => trs.map((tr) => ({
      label: tr.getAttribute('data-label'),
      name: tr.querySelector('th')?.textContent ?? '',
      loglik: Number((tr.querySelector('[data-testid=rich-loglik]')?.textContent ?? '').replace(/[−–]/g, '-').replace(/,/g, '')),
      aic: Number((tr.querySelector('[data-testid=rich-aic]')?.textContent ?? '').replace(/[−–]/g, '-').replace(/,/g, '')),
    })));
    expect(rows.map((r) => r.label)).toEqual(['isotropic', 'anisotropic']);
    expect(rows[0].name).toContain('Same range in every direction');
    expect(rows[1].name).toContain('Range depends on direction');
    expect(rows[1].name).toContain('in use');
    for (const r of rows) {
      expect(Number.isFinite(r.aic), `AIC of ${r.label}`).toBe(true);
      expect(Number.isFinite(r.loglik), `log-likelihood of ${r.label}`).toBe(true);
    }
    // The anisotropic model nests the isotropic one: its likelihood is never lower (4 significant digits shown).
    expect(rows[1].loglik).toBeGreaterThanOrEqual(rows[0].loglik - Math.abs(rows[0].loglik) * 1e-3);
    // AIC = 2k − 2 log L with two more parameters.
    expect(rows[1].aic - rows[0].aic).toBeCloseTo(4 - 2 * (rows[1].loglik - rows[0].loglik), 0);

    // The model along each of the four directions, in the chart.
    const curves = page.locator('[data-testid=variogram-chart] [data-testid=direction-curve]');
    await expect.poll(() => curves.count()).toBe(4);
    expect(await curves.evaluateAll((ps) => ps.map((p) => p.getAttribute('data-direction')))).toEqual(['0', '45', '90', '135']);
    expect(await page.locator('[data-testid=chosen-curve]').count()).toBe(0);
    const inUse = await page.locator('[data-testid=model-in-use]').textContent();
    expect(inUse).toContain('range by direction');
    const words = await page.locator('[data-testid=model-anisotropy]').textContent();
    expect(words).toMatch(/^Longest range toward \d+(\.\d)?° \(clockwise from north; [\d.,]+ k?m\), shortest toward \d+(\.\d)?° \([\d.,]+ k?m\); ratio short\/long 0\.\d\d\.$/);
    run.figures.push(`demo: ${words}`);
    await page.locator('[data-testid=variogram-chart]').scrollIntoViewIfNeeded();
    await shot(page, '8-structure-rich');
    await page.locator('[data-testid=model-anisotropy]').scrollIntoViewIfNeeded();
    await shot(page, '8-structure-rich-table');

    // The isotropic row can be put back in use, and the richer one again.
    await page.getByLabel('Use Same range in every direction').check();
    await expect.poll(() => page.locator('[data-testid=model-in-use]').textContent()).not.toContain('range by direction');
    await page.getByLabel('Use Range depends on direction').check();
    await expect.poll(() => page.locator('[data-testid=model-in-use]').textContent()).toContain('range by direction');

    // The surface is computed with the model in use: the anisotropic one, then the isotropic one gives another surface.
    const digest = () => page.evaluate(() => (window as unknown as { __gapwiseTest: { sessionDigest(): Record<string, unknown> } }).__gapwiseTest.sessionDigest()) as
      Promise<{ model: { anisotropy: { azimuth: number; ratio: number } | null } | null; surface: { done: boolean; mean: number } | null }>;
    await computeSurface(page);
    const withAnisotropy = await digest();
    expect(withAnisotropy.model?.anisotropy?.ratio).toBeLessThan(1);
    expect(withAnisotropy.surface?.done).toBe(true);
    await shot(page, '8-structure-rich-surface');
    await openStep(page, 'structure');
    await page.getByLabel('Use Same range in every direction').check();
    await computeSurface(page);
    const isotropic = await digest();
    expect(isotropic.model?.anisotropy ?? null).toBeNull();
    expect(isotropic.surface?.mean).not.toBe(withAnisotropy.surface?.mean);
    expectClean(w);
  });

  it('fits two ranges and shows them, or the guard\'s note that one range is kept', { timeout: LONG }, async () => {
    const { page } = w;
    await openStep(page, 'structure');
    await page.locator('[data-testid=rich-anisotropy]').uncheck();
    await page.locator('[data-testid=rich-nested]').check();
    expect(await page.locator('[data-testid=rich-anisotropy]').isChecked()).toBe(false);
    expect(await page.locator('[data-testid=rich-fit-button]').textContent()).toContain('Fit with two ranges');
    await page.click('[data-testid=rich-fit-button]');
    await page.waitForSelector('[data-testid=rich-comparison] tr[data-label="two structures"]', { timeout: WAIT });
    const labels = await page.locator('[data-testid=rich-comparison] tbody tr').evaluateAll((trs) => trs.map((tr) => tr.getAttribute('data-label')));
    expect(labels).toEqual(['one structure', 'two structures']);
    const guard = page.locator('[data-testid=rich-guard]');
    if (await guard.count()) {
      expect(await guard.textContent()).toMatch(/one-range model is kept/);
      run.figures.push(`demo, two ranges: ${await guard.textContent()}`);
    } else {
      const text = await page.locator('[data-testid=model-nested]').textContent();
      expect(text).toMatch(/^Short scale .* long scale .*/);
      expect(await page.locator('[data-testid=model-in-use]').textContent()).toContain('two ranges');
      run.figures.push(`demo, two ranges: ${text}`);
    }
    await page.locator('[data-testid=rich-comparison]').scrollIntoViewIfNeeded();
    await shot(page, '8-structure-rich-nested');
    expectClean(w);
  });

  it('with both boxes ticked fits two ranges sharing one direction, compares four fits and puts the kept model in use', { timeout: LONG }, async () => {
    const { page } = w;
    await openStep(page, 'structure');
    await page.locator('[data-testid=rich-anisotropy]').check();
    expect(await page.locator('[data-testid=rich-nested]').isChecked()).toBe(true);
    expect(await page.locator('[data-testid=rich-fit-button]').textContent()).toContain('Fit with a range by direction and two ranges');
    const t0 = Date.now();
    await page.click('[data-testid=rich-fit-button]');
    await page.waitForSelector('[data-testid=rich-comparison] tr[data-label="anisotropic, two structures"]', { timeout: WAIT });
    run.figures.push(`range by direction with two ranges, demo in the browser: ${((Date.now() - t0) / 1000).toFixed(1)} s`);
    const rows = await page.locator('[data-testid=rich-comparison] tbody tr').evaluateAll((trs) => trs.map((tr) => ({
      label: tr.getAttribute('data-label'),
      name: tr.querySelector('th')?.textContent ?? '',
      loglik: Number((tr.querySelector('[data-testid=rich-loglik]')?.textContent ?? '').replace(/[−–]/g, '-').replace(/,/g, '')),
    })));
    expect(rows.map((r) => r.label)).toEqual(['isotropic', 'anisotropic', 'two structures', 'anisotropic, two structures']);
    expect(rows[3].name).toContain('Two ranges, both by direction');
    // The combined model nests both simpler ones: its likelihood is never lower (4 significant digits shown).
    for (const r of rows.slice(1, 3)) expect(rows[3].loglik).toBeGreaterThanOrEqual(r.loglik - Math.abs(r.loglik) * 1e-3);
    // The model the fit keeps is in use: two ranges by direction, or (the guard) one range by direction.
    const kept = rows.find((r) => r.name.includes('kept'))!;
    expect(['anisotropic', 'anisotropic, two structures']).toContain(kept.label);
    expect(kept.name).toContain('in use');
    const inUse = await page.locator('[data-testid=model-in-use]').textContent();
    const digest = await page.evaluate(() => (window as unknown as { __gapwiseTest: { sessionDigest(): Record<string, unknown> } }).__gapwiseTest.sessionDigest()) as
      { model: { anisotropy: { azimuth: number; ratio: number } | null } | null };
    expect(digest.model?.anisotropy).not.toBeNull();
    if (kept.label === 'anisotropic, two structures') {
      expect(inUse).toContain('two ranges, range by direction');
      expect(await page.locator('[data-testid=rich-guard]').count()).toBe(0);
    } else {
      expect(inUse).toContain('range by direction');
      expect(await page.locator('[data-testid=rich-guard]').textContent()).toMatch(/one-range model with a range by direction is kept/);
    }
    run.figures.push(`demo, both boxes: ${kept.label} kept; model in use: ${inUse}`);
    await page.locator('[data-testid=rich-comparison]').scrollIntoViewIfNeeded();
    await shot(page, '8-structure-rich-both');
    expectClean(w);
  });
});
