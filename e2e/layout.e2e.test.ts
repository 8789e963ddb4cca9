/**
 * Layout and number formats in headless Chromium, on the invented demo with every outside request
 * aborted: walks every step at 1280 × 800, checks that no table cell splits a word over two lines,
 * that readouts and tables show probabilities and coordinates for people, that the caution appears once
 * per step, the side column resizes, and the Structure figures open large over the map; then takes a
 * screenshot of every step at 1280 × 800 and 1920 × 1080 (layout-<width>-<step>.png).
 */
import { describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { expectClean, openStep, WAIT, LONG, CAUTION, useHarness, openPage, shot, type Watched } from './harness.ts';

const run = useHarness('Gapwise layout figures');

/**
 * Table cells whose text puts part of a word on one line and the rest on the next: for each word of
 * each text node, a range over the word that gives more than one line box is a broken word.
 */
async function brokenWords(page: Page, scope: string): Promise<string[]> {
  return page.evaluate((sel) => {
    const out: string[] = [];
    for (const cell of document.querySelectorAll<HTMLElement>(`${sel} td, ${sel} th`)) {
      if (cell.offsetParent === null) continue;
      const walker = document.createTreeWalker(cell, NodeFilter.SHOW_TEXT);
      for (let node = walker.nextNode(); node; node = walker.nextNode()) {
        const text = node.textContent ?? '';
        const re = /\S+/g;
        for (let m = re.exec(text); m; m = re.exec(text)) {
          const range = document.createRange();
          range.setStart(node, m.index);
          range.setEnd(node, m.index + m[0].length);
          const tops = new Set([...range.getClientRects()].filter((r) => r.width > 0).map((r) => Math.round(r.top)));
          if (tops.size > 1) out.push(`"${m[0]}" in "${cell.innerText.replace(/\s+/g, ' ').trim()}"`);
        }
      }
    }
    return out;
  }, scope);
}

/** Every cell text of the tables in scope. */
async function cellTexts(page: Page, selector: string): Promise<string[]> {
  return page.locator(selector).allInnerTexts();
}

/** Samples whose marker lies outside the map's box (after the map settled), by id. */
async function samplesOutsideMap(page: Page): Promise<string[]> {
  await page.waitForTimeout(300);
  const box = (await page.locator('[data-testid=map]').boundingBox())!;
  const points = await page.evaluate(() => (window as unknown as { __gapwiseTest: { samplePoints(): Array<{ id: string; pageX: number; pageY: number }> } }).__gapwiseTest.samplePoints());
  expect(points.length).toBeGreaterThan(100);
  return points.filter((p) => p.pageX < box.x || p.pageX > box.x + box.width || p.pageY < box.y || p.pageY > box.y + box.height).map((p) => p.id);
}

async function cautionCount(page: Page, stepId: string): Promise<number> {
  return page.locator(`#${stepId}-body [data-caution]`).count();
}

describe('Layout and numbers for people', () => {
  let demo: Watched;

  it('walks the demo at 1280 × 800 with no word broken in a table, one caution per step and numbers for people', async () => {
    demo = await openPage(run.h);
    const { page } = demo;
    await page.setViewportSize({ width: 1280, height: 800 });
    // The probe itself: a word squeezed into a narrow cell that may break anywhere is found.
    await page.evaluate(() => {
      // Styles through the CSSOM: the app's Content-Security-Policy refuses inline style attributes.
      const t = document.createElement('table');
      t.id = 'probe-check';
      const td = t.insertRow().insertCell();
      Object.assign(td.style, { width: '30px', maxWidth: '30px', overflowWrap: 'anywhere', fontSize: '14px' });
      td.textContent = 'Matérn rejected';
      document.body.appendChild(t);
    });
    expect((await brokenWords(page, '#probe-check')).length).toBeGreaterThan(0);
    await page.evaluate(() => document.getElementById('probe-check')?.remove());
    await page.click('[data-testid=load-demo]');
    await page.waitForSelector('[data-testid=read-report]');
    await page.locator('input[name=transform][value=log]').check();
    expect(await brokenWords(page, '#samples-body')).toEqual([]);
    expect(await cautionCount(page, 'samples')).toBeLessThanOrEqual(1);
    await shot(page, 'layout-1280-1-samples');
    // The duplicate pair is merged: the statistics and the step's summary count the same samples (149).
    const statsCount = await page.locator('[data-testid=summary-stats] td').first().innerText();
    expect(statsCount).toBe('149');

    await openStep(page, 'structure');
    expect(await page.locator('#samples-heading .summary').innerText()).toMatch(new RegExp(`^${statsCount} samples`));
    await page.click('[data-testid=fit-button]');
    await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
    await page.waitForSelector('[data-testid=cv-figures]', { timeout: WAIT });
    expect(await brokenWords(page, '#structure-body')).toEqual([]);
    expect(await cautionCount(page, 'structure')).toBe(1);
    // Matérn ν = ½ is the exponential model: one row, not two.
    const labels = await cellTexts(page, '[data-testid=candidate-table] tbody th');
    expect(labels.filter((l) => /Exponential|ν = 0\.5|ν = ½/.test(l)).length).toBe(1);
    // No exponent in the table.
    for (const t of await cellTexts(page, '[data-testid=candidate-table] td')) expect(t).not.toMatch(/e[+−-]\d/);
    // Every column header takes two lines at most (a name, then its unit).
    const headerLines = await page.locator('[data-testid=candidate-table] thead th').evaluateAll((ths) => ths.map((th) => {
      const lineHeight = parseFloat(getComputedStyle(th).lineHeight) || 15;
      const r = document.createRange();
      r.selectNodeContents(th);
      const tops = [...r.getClientRects()].filter((b) => b.width > 0).map((b) => b.top).sort((a, b) => a - b);
      let lines = tops.length ? 1 : 0;
      for (let k = 1; k < tops.length; k++) if (tops[k] - tops[k - 1] > lineHeight / 2) lines++;
      return { text: (th as HTMLElement).innerText.replace(/\s+/g, ' '), lines };
    }));
    for (const h of headerLines) expect(h.lines, `header "${h.text}" lines`).toBeLessThanOrEqual(2);
    await shot(page, 'layout-1280-2-structure');
    // The scale bar stands clear of the attribution line under it and of the background button above it.
    const gaps = await page.evaluate(() => {
      const scale = document.querySelector('.leaflet-control-scale-line')!.getBoundingClientRect();
      const attribution = document.querySelector('.leaflet-control-attribution')!.getBoundingClientRect();
      const background = document.querySelector('[data-testid=map-background]')!.getBoundingClientRect();
      return { below: attribution.top - scale.bottom, above: scale.top - background.bottom };
    });
    expect(gaps.below, 'px between the scale bar and the attribution').toBeGreaterThanOrEqual(6);
    expect(gaps.above, 'px between the background button and the scale bar').toBeGreaterThanOrEqual(4);

    // The variogram opens large over the map, and closes again.
    await page.click('[data-testid=enlarge-variogram]');
    await page.waitForSelector('[data-testid=figure-overlay] [data-testid=variogram-chart]');
    const box = await page.locator('[data-testid=figure-overlay]').boundingBox();
    expect(box!.width).toBeGreaterThan(600);
    expect(await brokenWords(page, '[data-testid=figure-overlay]')).toEqual([]);
    await shot(page, 'layout-1280-2-structure-large');
    await page.click('[data-testid=figure-overlay-close]');
    await page.waitForSelector('[data-testid=figure-overlay]', { state: 'detached' });

    // Least-squares fits: the likelihood shown is the REML one at the fitted parameters, never an
    // exponent; the table stays readable.
    await page.selectOption('#fit-method', 'wls');
    await page.click('[data-testid=fit-button]');
    await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
    for (const t of await cellTexts(page, '[data-testid=candidate-table] td')) expect(t).not.toMatch(/e[+−-]\d/);
    expect(await page.locator('[data-testid=candidate-table] thead').innerText()).toMatch(/REML/);
    await page.selectOption('#fit-method', 'reml');
    await page.click('[data-testid=fit-button]');
    await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });

    await openStep(page, 'surface');
    const computeTimed = async (): Promise<{ estimate: number; seconds: number }> => {
      const estimate = Number(await page.locator('[data-testid=surface-estimate]').getAttribute('data-seconds'));
      const t0 = Date.now();
      await page.click('[data-testid=compute-surface]');
      await page.waitForSelector('[data-testid=surface-done]', { timeout: WAIT });
      const seconds = (Date.now() - t0) / 1000;
      await page.waitForSelector('[data-testid=surface-layer][data-complete=yes]', { timeout: WAIT, state: 'attached' });
      return { estimate, seconds };
    };
    const first = await computeTimed();
    // Half the cell: four times the cells, estimated from the first surface's measured speed.
    const cell = Number((await page.locator('#cell-size').getAttribute('placeholder'))!.replace(/[^\d.]/g, ''));
    const cellsBefore = await page.locator('[data-testid=cell-count]').innerText();
    await page.fill('#cell-size', String(cell / 2));
    await page.locator('#cell-size').press('Enter');
    await page.waitForFunction((c) => document.querySelector('[data-testid=cell-count]')?.textContent !== c, cellsBefore);
    const second = await computeTimed();
    run.figures.push(`surface time estimates (printed, not asserted; load ${(await import('node:os')).loadavg()[0].toFixed(2)}): first ${first.estimate.toFixed(1)} s estimated, ${first.seconds.toFixed(1)} s taken; `
      + `half the cell after it ${second.estimate.toFixed(1)} s estimated, ${second.seconds.toFixed(1)} s taken (ratio ${(second.estimate / second.seconds).toFixed(2)})`);
    await page.fill('#cell-size', '');
    await page.locator('#cell-size').press('Enter');
    await computeTimed();
    expect(await cautionCount(page, 'surface')).toBe(1);
    await page.locator('input[name=layer][value=exceed]').check();
    await page.waitForSelector('[data-testid=surface-legend][data-kind=pExceed]');
    // Hover readouts: a probability as a percentage for people, never with an exponent.
    const readouts: string[] = [];
    for (const [x, y] of [[700, 300], [900, 500], [1100, 650], [760, 420]]) {
      await page.mouse.move(x, y);
      const r = page.locator('[data-testid=readout]');
      if (await r.count()) readouts.push(await r.innerText());
    }
    expect(readouts.length).toBeGreaterThan(0);
    for (const r of readouts) {
      expect(r).not.toMatch(/e[+−-]\d/);
      expect(r).toMatch(/chance above [\d,.]+: (< 0\.1|> 99\.9|\d{1,2}(\.\d)?|100|0) %/);
    }
    expect(await brokenWords(page, '#surface-body')).toEqual([]);
    await shot(page, 'layout-1280-3-surface');
    await page.locator('input[name=layer][value=mean]').check();

    await openStep(page, 'next');
    await page.fill('#ns-count', '6');
    await page.selectOption('#ns-mode', 'decision');
    await page.click('[data-testid=suggest-sites]');
    await page.waitForSelector('[data-testid=next-result][data-count="6"]', { timeout: WAIT });
    expect(await brokenWords(page, '#next-body')).toEqual([]);
    expect(await cautionCount(page, 'next')).toBe(1);
    const head = await page.locator('[data-testid=next-table] thead').innerText();
    expect(head).toMatch(/%/);
    for (const t of await cellTexts(page, '[data-testid=next-table] td')) expect(t).not.toMatch(/e[+−-]\d/);
    await page.locator('[data-testid=next-table]').scrollIntoViewIfNeeded();
    await shot(page, 'layout-1280-4-next-samples');

    await openStep(page, 'report');
    expect(await brokenWords(page, '#report-body')).toEqual([]);
    expect(await cautionCount(page, 'report')).toBe(1);
    await shot(page, 'layout-1280-5-report');
    expectClean(demo);
  }, LONG);

  it('the side column can be dragged wider and keeps its width; the open step number is light on dark', async () => {
    const { page } = demo;
    const column = page.locator('aside.column');
    const before = (await column.boundingBox())!.width;
    const handle = page.locator('[data-testid=column-resize]');
    const hb = (await handle.boundingBox())!;
    await page.mouse.move(hb.x + hb.width / 2, hb.y + 200);
    await page.mouse.down();
    await page.mouse.move(hb.x + hb.width / 2 + 120, hb.y + 200, { steps: 5 });
    await page.mouse.up();
    const after = (await column.boundingBox())!.width;
    expect(after).toBeGreaterThan(before + 100);
    // The map, 120 px narrower, fitted the samples again: every one is still inside it.
    expect(await samplesOutsideMap(page)).toEqual([]);
    await page.reload();
    await page.waitForSelector('.app[data-ready="yes"]');
    expect(Math.abs((await column.boundingBox())!.width - after)).toBeLessThan(2);
    // Keyboard: the handle is a separator that arrow keys move.
    await handle.focus();
    await page.keyboard.press('ArrowLeft');
    expect((await column.boundingBox())!.width).toBeLessThan(after);
    await handle.dblclick();
    // Open and done: the number reads light on the accent.
    await openStep(page, 'samples');
    const colours = await page.locator('#samples-heading .num').evaluate((el) => {
      const s = getComputedStyle(el);
      return { color: s.color, background: s.backgroundColor };
    });
    expect(colours.color).toBe('rgb(255, 255, 255)');
    expect(colours.background).not.toBe('rgb(255, 255, 255)');
    expectClean(demo);
  }, LONG);

  it('takes a screenshot of every step at 1920 × 1080', async () => {
    const { page } = demo;
    await page.setViewportSize({ width: 1920, height: 1080 });
    const width1920 = (await page.locator('aside.column').boundingBox())!.width;
    expect(width1920).toBeGreaterThan(420);
    for (const [id, name] of [['samples', '1-samples'], ['structure', '2-structure'], ['surface', '3-surface'], ['next', '4-next-samples'], ['report', '5-report']] as const) {
      await openStep(page, id);
      if (id === 'structure') await page.waitForSelector('[data-testid=cv-figures]', { timeout: WAIT });
      if (id === 'surface') await page.waitForSelector('[data-testid=surface-layer][data-complete=yes]', { timeout: WAIT, state: 'attached' });
      if (id === 'next') {
        await page.fill('#ns-count', '6');
        await page.click('[data-testid=suggest-sites]');
        await page.waitForSelector('[data-testid=next-result][data-count="6"]', { timeout: WAIT });
        // The run just started may replace the table shown: wait until it has finished.
        await page.waitForSelector('[data-testid=suggest-sites]:enabled', { timeout: WAIT });
        await page.locator('[data-testid=next-table]').scrollIntoViewIfNeeded();
      }
      expect(await brokenWords(page, `#${id}-body`)).toEqual([]);
      await shot(page, `layout-1920-${name}`);
    }
    await openStep(page, 'structure');
    await page.waitForSelector('[data-testid=cv-figures]', { timeout: WAIT });
    await page.click('[data-testid=enlarge-candidates]');
    await page.waitForSelector('[data-testid=figure-overlay] [data-testid=candidate-table-large]');
    await shot(page, 'layout-1920-2-structure-candidates-large');
    await page.click('[data-testid=figure-overlay-close]');
    await page.click('[data-testid=enlarge-cv]');
    await page.waitForSelector('[data-testid=figure-overlay] [data-testid=cv-figures]');
    await shot(page, 'layout-1920-2-structure-cv-large');
    expect(CAUTION.length).toBeGreaterThan(0);
    expectClean(demo);
  }, LONG);
});
