/**
 * Several analytes in the browser: a samples file with lead and an invented zinc column, both chosen;
 * a model fitted and a surface drawn for each with its own action level; switching back shows the
 * other's work again with no engine request; a reload brings both back; the report has one section per
 * analyte and the project file holds both, which opened in a fresh page brings both back.
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import type { Download, Page } from 'playwright-core';
import { expectClean, openStep, WAIT, LONG, CAUTION, ROOT, useHarness, openPage, shot, computeSurface, waitForSave } from './harness.ts';
import { leadZincCsv } from './files.ts';

const run = useHarness('Gapwise several analytes');

type Hook = { engineRequests(): Record<string, number>; sessionDigest(): Record<string, unknown> };

function digest(page: Page): Promise<Record<string, unknown>> {
  return page.evaluate(() => (window as unknown as { __gapwiseTest: Hook }).__gapwiseTest.sessionDigest());
}

function engineRequests(page: Page): Promise<Record<string, number>> {
  return page.evaluate(() => (window as unknown as { __gapwiseTest: Hook }).__gapwiseTest.engineRequests());
}

/** The parts of the digest that are one analyte's work. */
function work(d: Record<string, unknown>): Record<string, unknown> {
  return { readId: d.readId, samples: d.samples, candidates: d.candidates, chosen: d.chosen, model: d.model, cv: d.cv, surface: d.surface, choices: d.choices };
}

const PB = 'Pb (mg/kg)';
const ZN = 'Zn (mg/kg)';

async function switchTo(page: Page, name: string): Promise<void> {
  await page.click(`[data-testid=analyte-button][data-analyte="${name}"]`);
  await page.waitForSelector(`[data-testid=analyte-switch][data-current="${name}"]`, { timeout: WAIT });
}

/** Fits the candidates, waits for cross-validation, sets the action level and draws the surface. */
async function fitAndMap(page: Page, level: number): Promise<void> {
  await openStep(page, 'structure');
  await page.click('[data-testid=fit-button]');
  await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
  await page.waitForSelector('[data-testid=cv-figures]', { timeout: WAIT });
  await openStep(page, 'surface');
  await page.fill('#threshold', String(level));
  await page.press('#threshold', 'Enter');
  await computeSurface(page, 'mean');
}

describe('several analytes in the app', () => {
  it('keeps each analyte\'s model, surface and action level through switches and a reload, and reports both', async () => {
    const w = await openPage(run.h);
    const { page } = w;
    const csv = leadZincCsv(readFileSync(resolve(ROOT, 'data-demo/lead-topsoil.csv'), 'utf8'));
    await openStep(page, 'samples');
    await page.setInputFiles('#samples-file', { name: 'lead-zinc-invented.csv', mimeType: 'text/csv', buffer: Buffer.from(csv) });
    await page.waitForSelector('[data-testid=source-name]');
    await page.waitForSelector('[data-testid=analyte-picker]');
    // The first numeric column is mapped; zinc is ticked as a second analyte.
    expect(await page.locator(`[data-testid="analyte-${PB}"]`).isChecked()).toBe(true);
    expect(await page.locator(`[data-testid="analyte-${PB}"]`).isDisabled()).toBe(true);
    await page.locator(`[data-testid="analyte-${ZN}"]`).check();
    await page.waitForSelector(`[data-testid=analyte-switch][data-current="${PB}"]`);
    expect(await page.locator('[data-testid=analyte-button]').allInnerTexts()).toEqual([PB, ZN]);
    await page.locator('[data-testid=analyte-picker]').scrollIntoViewIfNeeded();
    await shot(page, 'analytes-samples');

    await fitAndMap(page, 400);
    const pb = await digest(page);
    expect((pb.choices as { threshold: number }).threshold).toBe(400);
    expect((pb.surface as { done: boolean }).done).toBe(true);

    await switchTo(page, ZN);
    // Zinc starts afresh: no model, no surface, no action level of its own yet.
    expect((await digest(page)).surface).toBeNull();
    expect(((await digest(page)).choices as { threshold: number | null }).threshold).toBeNull();
    await fitAndMap(page, 800);
    const zn = await digest(page);
    expect((zn.samples as { value: number }).value).not.toBe((pb.samples as { value: number }).value);
    expect((zn.surface as { mean: number }).mean).not.toBe((pb.surface as { mean: number }).mean);

    // Back and forth: each analyte's work comes back as it was, with no engine request.
    const before = await engineRequests(page);
    await switchTo(page, PB);
    await page.waitForSelector('[data-testid=surface-layer][data-complete=yes]', { state: 'attached', timeout: WAIT });
    await page.waitForTimeout(600);
    expect(work(await digest(page))).toEqual(work(pb));
    expect(await page.locator('[data-testid=analyte-button][data-analyte="Pb (mg/kg)"] .sub').innerText()).toMatch(/400/);
    await switchTo(page, ZN);
    await page.waitForSelector('[data-testid=surface-layer][data-complete=yes]', { state: 'attached', timeout: WAIT });
    await page.waitForTimeout(600);
    expect(work(await digest(page))).toEqual(work(zn));
    expect(await engineRequests(page)).toEqual(before);

    for (const [size, name] of [[{ width: 1280, height: 800 }, 'analytes-1280'], [{ width: 1920, height: 1080 }, 'analytes-1920']] as const) {
      await page.setViewportSize(size);
      await page.waitForTimeout(400);
      await shot(page, name);
    }
    await page.setViewportSize({ width: 1360, height: 860 });

    // A reload brings back both analytes' work, computing nothing.
    await waitForSave(page);
    const t0 = Date.now();
    await page.reload();
    await page.waitForSelector('.app[data-ready="yes"]');
    await page.waitForSelector(`[data-testid=analyte-switch][data-current="${ZN}"]`);
    await page.waitForSelector('[data-testid=surface-layer][data-complete=yes]', { state: 'attached', timeout: WAIT });
    run.figures.push(`reload to the surface drawn (two analytes, 150 samples each): ${Date.now() - t0} ms`);
    await page.waitForTimeout(600);
    expect(work(await digest(page))).toEqual(work(zn));
    await switchTo(page, PB);
    await page.waitForSelector('[data-testid=surface-layer][data-complete=yes]', { state: 'attached', timeout: WAIT });
    await page.waitForTimeout(600);
    expect(work(await digest(page))).toEqual(work(pb));
    expect(await engineRequests(page)).toEqual({});

    // The report: one section per analyte, each with its own maps and action level.
    await openStep(page, 'report');
    expect(await page.locator('[data-testid=report-analytes-note]').innerText()).toContain(ZN);
    await shot(page, 'analytes-report');
    const [d] = await Promise.all([page.waitForEvent('download') as Promise<Download>, page.click('[data-export=report]')]);
    const report = readFileSync((await d.path())!, 'utf8');
    // Prepared by the engine workers, one request per analyte, not on the page's thread.
    expect((await engineRequests(page)).prepareReport).toBe(2);
    const sections = [...report.matchAll(/<section class="analyte page" id="analyte-(\d)" data-analyte="([^"]+)">/g)].map((m) => m[2]);
    expect(sections).toEqual([PB, ZN]);
    const parts = report.split('<section class="analyte page"').slice(1);
    for (const [k, level] of [[0, '400'], [1, '800']] as const) {
      expect(parts[k]).toContain('<h2 class="page">Maps</h2>');
      expect(parts[k]).toMatch(new RegExp(`Threshold \\(action level\\)</th><td>${level}`));
      expect(parts[k]).toContain(CAUTION);
    }
    expect(new Set([...report.matchAll(/ id="([^"]+)"/g)].map((m) => m[1])).size).toBe([...report.matchAll(/ id="([^"]+)"/g)].length);

    // The project holds both: the analyte in use at the top, the other in `analytes`.
    const [pd] = await Promise.all([page.waitForEvent('download') as Promise<Download>, page.click('[data-export=project]')]);
    const project = JSON.parse(readFileSync((await pd.path())!, 'utf8')) as {
      samples: { intake: { value: string } }; threshold: number; analytes: Array<{ value: string; threshold: number; model: unknown }>;
    };
    expect(project.samples.intake.value).toBe(PB);
    expect(project.threshold).toBe(400);
    expect(project.analytes.map((a) => [a.value, a.threshold])).toEqual([[ZN, 800]]);
    expect(project.analytes[0].model).not.toBeNull();

    // The project opened in a fresh page: both analytes come back, each with its model and action level
    // (the other analyte's samples are read when it is switched to).
    const fresh = await openPage(run.h);
    await openStep(fresh.page, 'report');
    await fresh.page.locator('.report-panel input[type=file]').setInputFiles((await pd.path())!);
    await fresh.page.waitForSelector(`[data-testid=analyte-switch][data-current="${PB}"]`, { timeout: WAIT });
    expect(((await digest(fresh.page)).choices as { threshold: number }).threshold).toBe(400);
    await switchTo(fresh.page, ZN);
    const opened = await digest(fresh.page);
    expect((opened.choices as { threshold: number }).threshold).toBe(800);
    expect(opened.model).toEqual(zn.model);
    expect((opened.samples as { value: number }).value).toBe((zn.samples as { value: number }).value);
    expectClean(fresh);
    await fresh.context.close();
    expectClean(w);
    await w.context.close();
  }, LONG);
});
