/**
 * The Surface step in headless Chromium (dist/ on 127.0.0.1, every outside request aborted): the
 * exceedance layer's on-screen colours against the computed values cell by cell, and the longest
 * main-thread task while a surface is computed and drawn (printed, never asserted).
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import type { Page } from 'playwright-core';
import { expectClean, openStep, WAIT, LONG, CAUTION, useHarness, openPage, shot, takeLongestTask, type Watched } from './harness.ts';
import { buildLut, type ScaleName } from '../src/ui/map/colour-scales.ts';

const run = useHarness('Gapwise surface figures');
const figures = run.figures;

interface Probe {
  value: number; sd: number | null; centreX: number; centreY: number;
  domain: [number, number]; scale: ScaleName; opacity: number;
}

/** The page's pixels (RGBA, CSS px at device scale 1) from a screenshot, decoded in the page. */
async function screenPixels(page: Page): Promise<{ width: number; height: number; data: number[] }> {
  const png = await page.screenshot({ fullPage: false });
  return page.evaluate(async (b64) => {
    const img = new Image();
    img.src = `data:image/png;base64,${b64}`;
    await img.decode();
    const c = document.createElement('canvas');
    c.width = img.width;
    c.height = img.height;
    const ctx = c.getContext('2d')!;
    ctx.drawImage(img, 0, 0);
    return { width: c.width, height: c.height, data: Array.from(ctx.getImageData(0, 0, c.width, c.height).data) };
  }, png.toString('base64'));
}

/**
 * Reads the screen at cell centres over the drawn surface (skipping sample markers and the boundary
 * line) and compares each pixel with the colour the computed value must have: the scale's entry for
 * the value (one entry either side allowed for Float32 rounding), at the layer's opacity over the map
 * ground. Returns the probes checked and the mismatches.
 */
async function readBack(page: Page, region: { x0: number; x1: number; y0: number; y1: number }, stepPx = 12) {
  // The screen first, as it is the moment the layer has loaded (a fading tile shows then).
  const screen = await screenPixels(page);
  const pts: Array<[number, number]> = [];
  for (let y = region.y0; y <= region.y1; y += stepPx) for (let x = region.x0; x <= region.x1; x += stepPx) pts.push([x, y]);
  const found = await page.evaluate((points) => {
    const hook = (window as unknown as { __gapwiseTest: { surfaceProbe(x: number, y: number): Probe | null; samplePoints(): Array<{ pageX: number; pageY: number }> } }).__gapwiseTest;
    const samples = hook.samplePoints();
    const ground = getComputedStyle(document.querySelector('.leaflet-container')!).backgroundColor;
    const out: Array<{ probe: Probe; x: number; y: number; near: number[] }> = [];
    for (const [x, y] of points) {
      const p = hook.surfaceProbe(x, y);
      if (!p) continue;
      const cx = Math.round(p.centreX - 0.5), cy = Math.round(p.centreY - 0.5);
      // Clear of markers (radius 5, stroke, selection ring) and of the boundary line and the edge.
      if (samples.some((s) => Math.hypot(s.pageX - cx, s.pageY - cy) < 11)) continue;
      if ([[-7, 0], [7, 0], [0, -7], [0, 7]].some(([dx, dy]) => !hook.surfaceProbe(cx + dx, cy + dy))) continue;
      // Values of the cells a pixel's edge may fall in (steep gradients: a neighbour differs a lot).
      const near = [[-2, 0], [2, 0], [0, -2], [0, 2]].map(([dx, dy]) => hook.surfaceProbe(cx + 0.5 + dx, cy + 0.5 + dy)?.value ?? p.value);
      out.push({ probe: p, x: cx, y: cy, near });
    }
    return { out, ground };
  }, pts) as { out: Array<{ probe: Probe; x: number; y: number; near: number[] }>; ground: string };
  const ground = (/rgba?\((\d+),\s*(\d+),\s*(\d+)/.exec(found.ground) ?? []).slice(1, 4).map(Number);
  const mismatches: string[] = [];
  for (const { probe, x, y, near } of found.out) {
    const lut = buildLut(probe.scale);
    const entries = lut.length / 4;
    const span = probe.domain[1] - probe.domain[0];
    const entry = (v: number) => Math.min(entries - 1, Math.max(0, Math.round((v - probe.domain[0]) * (entries - 1) / span)));
    const o = 4 * (y * screen.width + x);
    const got = [screen.data[o], screen.data[o + 1], screen.data[o + 2]];
    // The browser smooths a canvas scaled at fractional zoom, so a pixel may blend the cell's colour
    // with a neighbour's: accept any colour between the two (a faded or unpainted tile shows the
    // ground colour, which lies between no two colours of the scale).
    const colour = (k: number) => [0, 1, 2].map((c) => probe.opacity * lut[4 * k + c] + (1 - probe.opacity) * ground[c]);
    let ok = false;
    const e0 = entry(probe.value);
    for (const v of [probe.value, ...near]) {
      for (const d of [-1, 0, 1]) {
        const a = colour(Math.min(entries - 1, Math.max(0, e0 + d)));
        const b = colour(Math.min(entries - 1, Math.max(0, entry(v) + d)));
        if ([0, 1, 2].every((c) => got[c] >= Math.min(a[c], b[c]) - 4 && got[c] <= Math.max(a[c], b[c]) + 4)) ok = true;
      }
    }
    if (!ok) mismatches.push(`(${x}, ${y}) value ${probe.value.toFixed(4)} screen rgb(${got.join(',')})`);
  }
  return { checked: found.out.length, mismatches };
}

describe('Surface step in the browser', () => {
  let demo: Watched;

  it('draws the exceedance layer with the computed colours everywhere, right part included, right after it loads', async () => {
    demo = await openPage(run.h);
    const { page } = demo;
    await page.click('[data-testid=load-demo]');
    await page.waitForSelector('[data-testid=read-report]');
    await openStep(page, 'structure');
    await page.selectOption('#fit-method', 'wls');
    await page.click('[data-testid=fit-button]');
    await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
    await openStep(page, 'surface');
    expect(await page.locator('#threshold').inputValue()).toBe('200');
    await takeLongestTask(page);
    const t0 = Date.now();
    await page.click('[data-testid=compute-surface]');
    await page.waitForSelector('[data-testid=surface-done]', { timeout: WAIT });
    await page.waitForSelector('[data-testid=surface-layer][data-complete=yes]', { timeout: WAIT, state: 'attached' });
    const seconds = (Date.now() - t0) / 1000;
    await page.mouse.move(100, 800);
    await page.locator('input[name=layer][value=exceed]').check();
    await page.waitForSelector('[data-testid=surface-layer][data-layer=pExceed]', { timeout: WAIT, state: 'attached' });
    // Read at once: the swap to the new layer happens on its 'load'.
    const box = (await page.locator('[data-testid=map]').boundingBox())!;
    const right = { x0: Math.round(box.x + box.width * 0.55), x1: Math.round(box.x + box.width - 20), y0: Math.round(box.y + 60), y1: Math.round(box.y + box.height - 60) };
    const all = { x0: Math.round(box.x + 260), x1: right.x1, y0: right.y0, y1: right.y1 };
    const task = await takeLongestTask(page);
    const rightPart = await readBack(page, right, 10);
    const whole = await readBack(page, all, 14);
    figures.push(`demo surface, compute + draw + exceedance layer: ${seconds.toFixed(1)} s; longest main-thread task ${task.longest.toFixed(0)} ms (${task.count} over 50 ms)`);
    figures.push(`exceedance read-back: ${rightPart.checked} cell centres in the right part, ${whole.checked} over the site; mismatches ${rightPart.mismatches.length} and ${whole.mismatches.length}`);
    figures.push(`screenshot ${await shot(page, '3-surface-exceed')}`);
    expect(rightPart.checked, 'cell centres read in the right part').toBeGreaterThan(150);
    expect(rightPart.mismatches, 'pixels whose colour is not the computed value').toEqual([]);
    expect(whole.mismatches).toEqual([]);
    expect(await page.locator('#surface-body [data-caution]').allInnerTexts()).toContain(CAUTION);
    expectClean(demo);
  }, LONG);

  it('computes cell averages (block support, 4 × 4 points): smaller sd than point values, same colours read back', async () => {
    const { page } = demo;
    const sdText = async () => (await page.locator('#surface-body').innerText()).match(/sd ranges ([\d.,]+) – ([\d.,]+)/)!.slice(1).map((t) => Number(t.replace(/,/g, '')));
    const [pointMin, pointMax] = await sdText();
    await page.locator('input[name=support][value=block]').check();
    expect(await page.locator('#block-points').inputValue()).toBe('4');
    await page.waitForSelector('[data-testid=surface-stale]');
    await takeLongestTask(page);
    await page.click('[data-testid=compute-surface]');
    await page.waitForSelector('[data-testid=surface-done][data-support=block]', { timeout: WAIT });
    await page.waitForSelector('[data-testid=surface-layer][data-complete=yes][data-layer=pExceed]', { timeout: WAIT, state: 'attached' });
    const task = await takeLongestTask(page);
    expect(await page.locator('[data-testid=surface-done]').innerText()).toMatch(/as cell averages \(4 × 4 points per cell\)/);
    const [blockMin, blockMax] = await sdText();
    // A cell average varies no more than a point value (the handler test checks it cell by cell);
    // the range shown is the new one.
    expect(blockMax).toBeLessThanOrEqual(pointMax);
    expect([blockMin, blockMax]).not.toEqual([pointMin, pointMax]);
    await page.mouse.move(100, 800);
    const box = (await page.locator('[data-testid=map]').boundingBox())!;
    const back = await readBack(page, { x0: Math.round(box.x + 260), x1: Math.round(box.x + box.width - 20), y0: Math.round(box.y + 60), y1: Math.round(box.y + box.height - 60) }, 16);
    expect(back.checked).toBeGreaterThan(150);
    expect(back.mismatches).toEqual([]);
    figures.push(`block surface: sd ${blockMin}–${blockMax} (point ${pointMin}–${pointMax}); longest main-thread task ${task.longest.toFixed(0)} ms; read-back ${back.checked} cells`);
    figures.push(`screenshot ${await shot(page, '3-surface-block')}`);
    expectClean(demo);
  }, LONG);

  it('draws conditional realisations with progress: area above the action level (median, 5 %–95 %, m² and ha), volume, four small maps', async () => {
    const { page } = demo;
    await page.fill('#sim-count', '40');
    await page.locator('#sim-count').press('Enter');
    await page.fill('#sim-depth', '0.3');
    await page.locator('#sim-depth').press('Enter');
    await page.fill('#sim-seed', '3');
    await page.locator('#sim-seed').press('Enter');
    await takeLongestTask(page);
    await page.click('[data-testid=simulate]');
    await page.waitForSelector('[data-testid=sim-done]', { timeout: WAIT });
    const task = await takeLongestTask(page);
    const ms = Number(await page.locator('[data-testid=sim-done]').getAttribute('data-ms'));
    const text = await page.locator('[data-testid=sim-area]').innerText();
    const m = /Area above 200 mg\/kg: ([\d,.]+) m² \(([\d,.]+) ha\), 5 %–95 %: ([\d,.]+) – ([\d,.]+) m²/.exec(text);
    expect(m, text).not.toBeNull();
    const [median, ha, p05, p95] = m!.slice(1).map((t) => Number(t.replace(/,/g, '')));
    expect(p05).toBeLessThanOrEqual(median);
    expect(median).toBeLessThanOrEqual(p95);
    expect(median).toBeGreaterThan(0);
    expect(Math.abs(ha - median / 10_000)).toBeLessThanOrEqual(median / 10_000 * 0.01);
    expect(text).toMatch(/A screening estimate/);
    const vol = await page.locator('[data-testid=sim-volume]').innerText();
    const v = Number(/([\d,.]+) m³/.exec(vol)![1].replace(/,/g, ''));
    // Volume = area × depth, to the 3 significant figures shown.
    expect(Math.abs(v - median * 0.3)).toBeLessThanOrEqual(median * 0.3 * 0.01);
    expect(await page.locator('[data-testid=realisation-canvas]').count()).toBe(4);
    // The small maps differ from one another (they are draws, not copies).
    const sums = await page.$$eval('[data-testid=realisation-canvas]', (cs) => cs.map((c) => {
      const d = (c as HTMLCanvasElement).getContext('2d')!.getImageData(0, 0, (c as HTMLCanvasElement).width, (c as HTMLCanvasElement).height).data;
      let s = 0;
      for (let k = 0; k < d.length; k += 4) s += d[k] * 3 + d[k + 1] * 5 + d[k + 2] * 7;
      return s;
    }));
    expect(new Set(sums).size).toBe(4);
    figures.push(`realisations: 40 on ${await page.locator('[data-testid=cell-count]').innerText()} cells in ${(ms / 1000).toFixed(1)} s; longest main-thread task ${task.longest.toFixed(0)} ms; area ${median} m² (${p05}–${p95})`);
    // P(exceed) from the realisations on the map, read back like the kriged one.
    await page.click('[data-testid=show-simulation]');
    await page.waitForSelector('[data-testid=sim-on-map]');
    // The map starts a new layer on the next task; then wait for it to replace the old one.
    await page.waitForTimeout(300);
    await page.waitForSelector('[data-testid=surface-layer][data-complete=yes][data-layer=pExceed]', { timeout: WAIT, state: 'attached' });
    await page.waitForFunction(() => document.querySelectorAll('.gapwise-surface').length === 1);
    await page.mouse.move(100, 800);
    const box = (await page.locator('[data-testid=map]').boundingBox())!;
    const back = await readBack(page, { x0: Math.round(box.x + 260), x1: Math.round(box.x + box.width - 20), y0: Math.round(box.y + 60), y1: Math.round(box.y + box.height - 60) }, 16);
    expect(back.checked).toBeGreaterThan(150);
    expect(back.mismatches).toEqual([]);
    await page.locator('[data-testid=realisations]').scrollIntoViewIfNeeded();
    figures.push(`screenshot ${await shot(page, '3-surface-realisations')}`);
    expect(await page.locator('#surface-body [data-caution]').allInnerTexts()).toContain(CAUTION);
    expect(await page.locator('[data-testid=sim-seed-used]').innerText()).toBe('3');

    // The report built in the Report step now carries the area with its interval, seed and method.
    await openStep(page, 'report');
    expect(await page.locator('[data-testid=report-area-note]').innerText()).toMatch(/area above 200 mg\/kg from 40 realisations \(seed 3\)/);
    const [download] = await Promise.all([page.waitForEvent('download'), page.click('[data-export=report]')]);
    const html = readFileSync((await download.path())!, 'utf8');
    const tagged = (name: string) => Number(new RegExp(`data-figure="${name}" data-value="([^"]+)"`).exec(html)?.[1]);
    const [rMedian, rP05, rP95] = [tagged('area-median'), tagged('area-p05'), tagged('area-p95')];
    expect(rP05).toBeLessThanOrEqual(rMedian);
    expect(rMedian).toBeLessThanOrEqual(rP95);
    // The panel shows 3 significant figures of the same numbers.
    for (const [shown, full] of [[median, rMedian], [p05, rP05], [p95, rP95]]) expect(Math.abs(shown - full)).toBeLessThanOrEqual(full * 0.006);
    expect(tagged('realisations')).toBe(40);
    expect(tagged('seed')).toBe(3);
    expect(Math.abs(tagged('volume-median') - rMedian * 0.3)).toBeLessThanOrEqual(rMedian * 1e-9);
    // The area section alone (the whole report is large to print when a check fails).
    const section = html.slice(html.indexOf('id="area-above"'), html.indexOf('</div>', html.indexOf('data-area-caution')));
    expect(section).toMatch(/m²<\/strong> \([\d.]+ ha\) above 200 mg\/kg; 90 % interval/);
    expect(section).toContain('conditioned on the samples by kriging the residuals');
    expect(section).toContain('cell averages (block support, 4 × 4 points per');
    expect(section).toContain('data-area-caution>A screening estimate');
    expect(section).toContain(CAUTION);
    // Seen as a user sees it: the downloaded report in the browser, at its area section.
    const view = await demo.context.newPage();
    await view.setViewportSize({ width: 1000, height: 1100 });
    await view.setContent(html, { waitUntil: 'load' });
    await view.locator('#area-above').evaluate((e) => e.scrollIntoView());
    expect(await view.locator('[data-area-caution]').isVisible()).toBe(true);
    figures.push(`report area: ${rMedian} m² (${rP05}–${rP95}), screenshot ${await shot(view, '5-report-area')}`);
    await view.close();
    await shot(page, '5-report-step');

    // A saved project keeps the figure; opened again, the app redraws the same realisations (same seed).
    const [savedDownload] = await Promise.all([page.waitForEvent('download'), page.click('[data-export=project]')]);
    const savedText = readFileSync((await savedDownload.path())!, 'utf8');
    const saved = JSON.parse(savedText) as { simulation: { count: number; seed: number; summary: { area: { median: number } } } };
    expect(saved.simulation).toMatchObject({ count: 40, seed: 3, summary: { area: { median: rMedian } } });
    await page.setInputFiles('#report-body input[type=file]', { name: 'again.gapwise.json', mimeType: 'application/json', buffer: Buffer.from(savedText) });
    await page.waitForSelector('#report-body [role=status]:has-text("Opened again.gapwise.json")');
    await page.waitForSelector('[data-testid=report-sim-running], [data-testid=sim-done]', { timeout: WAIT, state: 'attached' });
    await page.waitForFunction(() => /from 40 realisations \(seed 3\)/.test(document.querySelector('[data-testid=report-area-note]')?.textContent ?? ''), null, { timeout: WAIT });
    const [again] = await Promise.all([page.waitForEvent('download'), page.click('[data-export=report]')]);
    const againHtml = readFileSync((await again.path())!, 'utf8');
    expect(Number(/data-figure="area-median" data-value="([^"]+)"/.exec(againHtml)?.[1])).toBe(rMedian);
    expectClean(demo);
    await demo.context.close();
  }, LONG);
});
