/**
 * Files as practitioners bring them, beyond the demo: a published-style survey in a national grid
 * (British National Grid, EPSG:27700, invented values) with a few bad rows — a missing coordinate, a
 * value that is text, a non-detect, and one easting typed with an extra digit. The bad rows are each
 * named with their line; the mistyped one is rejected once the coordinate system is chosen, so it
 * does not stretch the map, the grid and the working coordinate system over hundreds of kilometres.
 */
import { describe, expect, it } from 'vitest';
import { expectClean, openStep, WAIT, LONG, useHarness, openPage, shot, chooseCrs } from './harness.ts';
import { createRandom } from '../src/core/shared/random.ts';

const run = useHarness('Practitioner files');
const figures = run.figures;

/** 160 invented boreholes over 800 m × 600 m of British National Grid, and four bad rows; the typo's line. */
function nationalGridSurvey(): { text: string; typoLine: number; blankLine: number; textValueLine: number } {
  const r = createRandom(27700);
  const lines = ['site_id,easting,northing,arsenic_mg_kg,notes'];
  for (let i = 0; i < 160; i++) {
    const e = 451200 + 800 * r.uniform(), n = 206300 + 600 * r.uniform();
    const v = Math.exp(2.5 + 0.6 * Math.sin(e / 150) + 0.4 * Math.cos(n / 110) + 0.3 * r.normal());
    lines.push(`BH${String(i + 1).padStart(3, '0')},${e.toFixed(1)},${n.toFixed(1)},${v.toFixed(2)},${i % 17 === 0 ? '"made ground, ash"' : ''}`);
  }
  lines.splice(20, 0, 'BH900,451500.0,,12.1,missing northing');
  lines.splice(40, 0, 'BH901,451700.0,206500.0,n/a,not analysed');
  lines.splice(60, 0, 'BH902,451800.0,206400.0,<2,below detection');
  lines.splice(80, 0, 'BH903,4517000.0,206400.0,15,extra digit in the easting');
  const line = (id: string) => lines.findIndex((l) => l.startsWith(`${id},`)) + 1;
  return { text: lines.join('\n') + '\n', typoLine: line('BH903'), blankLine: line('BH900'), textValueLine: line('BH901') };
}

describe('A national-grid survey with a few bad rows', () => {
  it('names each bad row with its line and rejects the mistyped easting once EPSG:27700 is chosen; the rest is worked in EPSG:27700', async () => {
    const w = await openPage(run.h);
    const { page } = w;
    const file = nationalGridSurvey();
    await openStep(page, 'samples');
    await page.setInputFiles('#samples-file', { name: 'survey-bng.csv', mimeType: 'text/csv', buffer: Buffer.from(file.text, 'utf8') });
    await page.waitForSelector('[data-testid=read-report]', { timeout: WAIT });
    expect(await page.locator('[data-testid=rows-used]').innerText()).toBe('162');
    const report = () => page.locator('[data-testid=read-report]').innerText();
    expect(await report()).toMatch(new RegExp(`lines ${file.blankLine}, ${file.textValueLine}`));
    await chooseCrs(page, 'EPSG:27700');
    await page.waitForFunction(() => document.querySelector('[data-testid=rows-used]')?.textContent === '161', null, { timeout: WAIT });
    const text = await report();
    figures.push(`national grid survey read: ${text.replace(/\s+/g, ' ').slice(0, 400)}`);
    const typoRow = page.locator('[data-testid=read-report] tbody tr', { hasText: 'outside the area of use of EPSG:27700' });
    expect(await typoRow.count()).toBe(1);
    expect(await typoRow.locator('td').first().innerText()).toBe(String(file.typoLine));
    expect(await typoRow.innerText()).toMatch(/Rejected|rejected/);
    // The other samples keep their own grid: no stretched extent, no distortion warning, no other working CRS.
    expect(text).not.toMatch(/distorts lengths|lies? outside the area of use/);
    expect(text).not.toMatch(/are worked in/);
    await openStep(page, 'structure');
    await page.selectOption('#fit-method', 'wls');
    await page.click('[data-testid=fit-button]');
    await page.waitForSelector('[data-testid=candidate-table][data-fit-status=done]', { timeout: WAIT });
    await openStep(page, 'surface');
    const summary = await page.locator('[data-testid=grid-summary]').innerText();
    figures.push(`national grid survey grid: ${summary.replace(/\s+/g, ' ')}`);
    const cell = Number(/cells of ([\d,.]+) m/.exec(summary)?.[1].replace(/,/g, ''));
    expect(cell, 'automatic cell size (m) for an 800 m × 600 m site').toBeLessThan(50);
    figures.push(`screenshot ${await shot(page, 'practice-national-grid-surface-step')}`);
    expectClean(w);
    await w.context.close();
  }, LONG);
});
