/**
 * Contour lines of the mean on the map in headless Chromium (dist/ on 127.0.0.1, every outside request
 * aborted): on a site grid in local coordinates (planar map) and on the demo (geographic map, working-CRS
 * lines through the inverse projection), the switch in the Surface step draws SVG lines, the action
 * level's line among them, and that line lies where the drawn surface crosses the action level (cells read
 * back on either side of points along it). Screenshots at 1280 × 800: 8-contours-*.png.
 */
import { describe, expect, it } from 'vitest';
import type { Page } from 'playwright-core';
import { expectClean, openStep, WAIT, LONG, useHarness, openPage, openDemo, computeSurface, shot, takeLongestTask } from './harness.ts';
import { localBoundaryGeoJson, localGridCsv } from './files.ts';

const run = useHarness('Gapwise contour-line figures');
const figures = run.figures;

interface Crossing {
  /** Points read along the action line. */
  points: number;
  /** Points where the cells a cell's width either side of the line (across it) lie on both sides of the level. */
  across: number;
  /** Points where no cell within a cell's width reaches across the level (the line is not where the surface crosses it). */
  astray: number;
  cellPx: number;
  level: number;
}

/**
 * Walks the action level's SVG line(s) in steps and reads the drawn mean (the surface layer's probe)
 * one cell's width either side of each point, across the line, and in the cells around it.
 */
function readAcrossActionLine(page: Page): Promise<Crossing> {
  return page.evaluate(() => {
    type Probe = { value: number; centreX: number; centreY: number };
    const hook = (window as unknown as { __gapwiseTest: { surfaceProbe(x: number, y: number): Probe | null; contourLines(): Array<{ level: number; action: boolean }> | null } }).__gapwiseTest;
    const level = hook.contourLines()!.find((c) => c.action)!.level;
    const paths = [...document.querySelectorAll<SVGPathElement>('path.gapwise-contour-action')];
    // A cell's width in page px: walk right from a cell centre until the next cell's centre.
    let cellPx = NaN;
    for (const path of paths) {
      const r = path.getBoundingClientRect();
      const p = hook.surfaceProbe(r.left + r.width / 2, r.top + r.height / 2);
      if (!p) continue;
      for (let k = 1; k < 400; k++) {
        const q = hook.surfaceProbe(p.centreX + k, p.centreY);
        if (q && Math.abs(q.centreX - p.centreX) > 0.5) { cellPx = Math.abs(q.centreX - p.centreX); break; }
      }
      if (Number.isFinite(cellPx)) break;
    }
    let points = 0, across = 0, astray = 0;
    for (const path of paths) {
      const ctm = path.getScreenCTM()!;
      const page = (l: number) => {
        const q = path.getPointAtLength(l);
        return { x: ctm.a * q.x + ctm.c * q.y + ctm.e, y: ctm.b * q.x + ctm.d * q.y + ctm.f };
      };
      const total = path.getTotalLength();
      for (let l = 2; l < total - 2; l += Math.max(3, total / 60)) {
        const p = page(l), a = page(l - 1), b = page(l + 1);
        const tx = b.x - a.x, ty = b.y - a.y, n = Math.hypot(tx, ty);
        if (!(n > 0)) continue;
        const nx = -ty / n, ny = tx / n;
        const one = hook.surfaceProbe(p.x + nx * cellPx, p.y + ny * cellPx);
        const other = hook.surfaceProbe(p.x - nx * cellPx, p.y - ny * cellPx);
        if (!one || !other) continue; // at the edge of the drawn cells
        points++;
        if ((one.value - level) * (other.value - level) < 0) across++;
        let lo = Infinity, hi = -Infinity;
        for (const [dx, dy] of [[0, 0], [1, 0], [-1, 0], [0, 1], [0, -1], [1, 1], [1, -1], [-1, 1], [-1, -1]]) {
          const c = hook.surfaceProbe(p.x + dx * cellPx, p.y + dy * cellPx);
          if (!c) continue;
          lo = Math.min(lo, c.value);
          hi = Math.max(hi, c.value);
        }
        if (!(lo <= level && level <= hi)) astray++;
      }
    }
    return { points, across, astray, cellPx, level };
  });
}

/** Turns the contour lines on and waits for them; returns the SVG path counts and the longest main-thread task meanwhile. */
async function contoursOn(page: Page): Promise<{ all: number; action: number; longestMs: number }> {
  await openStep(page, 'surface');
  const toggle = page.locator('[data-testid=contours-toggle]');
  expect(await toggle.isChecked()).toBe(false);
  expect(await page.locator('path.gapwise-contour').count()).toBe(0);
  await page.waitForTimeout(500);
  await takeLongestTask(page);
  await toggle.check();
  await page.waitForSelector('path.gapwise-contour-action');
  await page.waitForTimeout(200);
  const longestMs = (await takeLongestTask(page)).longest;
  await page.mouse.move(5, 795);
  return {
    longestMs,
    all: await page.locator('path.gapwise-contour').count(),
    action: await page.locator('path.gapwise-contour-action').count(),
  };
}

type ContourLevel = { level: number; action: boolean; lines: number };

/** The contour levels the map draws (the test hook), with the action level marked. */
async function contourLevels(page: Page): Promise<ContourLevel[] | null> {
  return page.evaluate(() => (window as unknown as { __gapwiseTest: { contourLines(): ContourLevel[] | null } }).__gapwiseTest.contourLines());
}

/** Reads across the drawn action line: it must lie where the surface crosses the level; the figures are printed. */
async function checkActionLine(page: Page, tag: string, counts: { all: number; longestMs: number }, levels: ContourLevel[]): Promise<void> {
  const x = await readAcrossActionLine(page);
  figures.push(`${tag}: longest main-thread task while the lines were computed and drawn ${counts.longestMs.toFixed(0)} ms (0 = none over 50 ms)`);
  figures.push(`${tag}: ${counts.all} contour paths, levels ${levels.map((c) => c.level).join(', ')}; action line: ${x.across} of ${x.points} points with the cells a cell (${x.cellPx.toFixed(1)} px) either side across ${x.level}, ${x.astray} astray`);
  expect(x.points).toBeGreaterThanOrEqual(10);
  expect(x.astray).toBe(0);
  expect(x.across / x.points).toBeGreaterThan(0.8);
}

describe('Contour lines on the map', () => {
  it('draws the mean\'s contour lines on a planar map of local coordinates, the action level where the surface crosses it', async () => {
    const w = await openPage(run.h);
    const { page } = w;
    await page.setViewportSize({ width: 1280, height: 800 });
    await openStep(page, 'samples');
    await page.setInputFiles('#samples-file', { name: 'site-grid.csv', mimeType: 'text/csv', buffer: Buffer.from(localGridCsv().text, 'utf8') });
    await page.waitForSelector('path[data-sample-id]');
    expect(await page.locator('[data-testid=map]').getAttribute('data-planar')).toBe('yes');
    // Local coordinates are in coordinate units, not metres, until the user says so.
    const samplesText = await page.locator('#samples-body').innerText();
    expect(samplesText).toMatch(/taken as local planar coordinates \(in coordinate units\)/);
    expect(samplesText).toMatch(/Worked in local \(coordinate units\)/);
    // Metres are named only where the user can say so.
    expect(samplesText).toMatch(/coordinate units \(metres only once you say so\)/);
    expect(samplesText.replace('These coordinates are metres', '').replace('metres only once you say so', '')).not.toMatch(/metre/);
    figures.push(`screenshot ${await shot(page, '8-contours-local-samples-1280x800')}`);
    await openStep(page, 'structure');
    await page.selectOption('#fit-method', 'wls');
    await page.click('[data-testid=fit-button]');
    await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
    await openStep(page, 'surface');
    await page.setInputFiles('#boundary-file', { name: 'fence.geojson', mimeType: 'application/geo+json', buffer: Buffer.from(localBoundaryGeoJson(), 'utf8') });
    await page.waitForSelector('.leaflet-boundary-pane path');
    await page.fill('#threshold', '80');
    await page.locator('#threshold').press('Enter');
    await computeSurface(page, 'mean');

    const counts = await contoursOn(page);
    const levels = await contourLevels(page);
    expect(levels!.filter((c) => c.action).map((c) => c.level)).toEqual([80]);
    expect(levels!.length).toBeGreaterThanOrEqual(4);
    // One SVG path per level drawn (a polyline of several parts is one path).
    expect(counts.all).toBe(levels!.filter((c) => c.lines > 0).length);
    expect(counts.action).toBe(1);
    await checkActionLine(page, 'local', counts, levels!);
    figures.push(`screenshot ${await shot(page, '8-contours-local-1280x800')}`);

    // Off again: the lines go.
    await page.locator('[data-testid=contours-toggle]').uncheck();
    await page.waitForFunction(() => document.querySelectorAll('path.gapwise-contour').length === 0);
    expectClean(w);
    await w.context.close();
  }, LONG);

  it('draws the demo\'s contour lines on the geographic map through the inverse projection, the action level where the surface crosses it, and redraws them for a new action level', async () => {
    const w = await openDemo(run.h, { viewport: { width: 1280, height: 800 }, log: true, fit: 'wls', surface: true });
    const { page } = w;
    expect(await page.locator('[data-testid=map]').getAttribute('data-planar')).toBe('no');
    const counts = await contoursOn(page);
    const levels = await contourLevels(page);
    expect(levels!.filter((c) => c.action).map((c) => c.level)).toEqual([200]);
    expect(counts.action).toBe(1);
    expect(counts.all).toBeGreaterThanOrEqual(3);
    await checkActionLine(page, 'demo', counts, levels!);
    figures.push(`screenshot ${await shot(page, '8-contours-demo-1280x800')}`);

    // A new action level and a new surface: the bold line follows.
    await page.fill('#threshold', '100');
    await page.locator('#threshold').press('Enter');
    await computeSurface(page, 'mean');
    await page.waitForFunction(() => (window as unknown as { __gapwiseTest: { contourLines(): Array<{ level: number; action: boolean }> | null } }).__gapwiseTest.contourLines()?.find((c) => c.action)?.level === 100, undefined, { timeout: WAIT });
    const y = await readAcrossActionLine(page);
    expect(y.level).toBe(100);
    expect(y.points).toBeGreaterThanOrEqual(10);
    expect(y.astray).toBe(0);
    expectClean(w);
    await w.context.close();
  }, LONG);
});
