// analyteReportHtml: one document, one section per analyte holding that analyte's whole report, ids unique.
import { describe, expect, it } from 'vitest';
import { analyteReportHtml, reportHtml } from '../../src/io/report.ts';
import { prepareReport } from '../../src/worker/report-data.ts';
import { createProject } from '../../src/io/project.ts';
import { computeSurface } from '../../src/core/prediction/surface.ts';
import { readSamples } from '../../src/io/intake.ts';
import { CAUTION } from '../../src/core/shared/caution.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';

const CSV = 'id,easting,northing,lead,"<b>zinc</b>"\nA,500010,4980010,120,300\nB,500050,4980020,180,410\nC,500030,4980070,95,260\nD,500070,4980060,60,150\nE,500020,4980045,140,330\n';
const model: CovarianceModel = { structures: [{ type: 'nugget', sill: 10 }, { type: 'exponential', sill: 900, scale: 40 }], trend: 'constant', transform: 'none' };
const software = { name: 'gapwise', version: '0.1.0' };

function input(value: string, threshold: number) {
  const project = createProject({
    samples: { fileName: 'yard.csv', text: CSV, intake: { value, crs: 'EPSG:32633' }, unit: 'mg/kg' }, model, grid: { cellSize: 10 }, threshold, software,
  });
  const intake = readSamples(CSV, { fileName: 'yard.csv', value, crs: 'EPSG:32633' });
  const grid = { x0: 500000, y0: 4980080, cell: 10, nx: 8, ny: 8 };
  const surface = computeSurface(intake.samples, model, grid, { threshold });
  return prepareReport(project, { software, compare: false, surface, created: '2026-01-02T00:00:00.000Z' });
}

describe('analyteReportHtml', () => {
  it('analyteReportHtml holds each analyte\'s report in a section of its own, names escaped, ids unique', () => {
    const a = input('lead', 150);
    const b = input('<b>zinc</b>', 300);
    const text = analyteReportHtml([{ name: 'lead', input: a }, { name: '<b>zinc</b>', input: b }]);
    expect(text.startsWith('<!DOCTYPE html>')).toBe(true);
    expect(text).toContain('<title>Screening maps of 2 analytes — Gapwise report</title>');
    const sections = [...text.matchAll(/<section class="analyte page" id="analyte-(\d)" data-analyte="([^"]*)">/g)].map((m) => [m[1], m[2]]);
    expect(sections).toEqual([['1', 'lead'], ['2', '&lt;b&gt;zinc&lt;/b&gt;']]);
    expect(text).not.toContain('<b>zinc</b>');
    // Each section is the analyte's own report: its maps with its own action level.
    const parts = text.split('<section class="analyte page"').slice(1);
    expect(parts[0]).toMatch(/Threshold \(action level\)<\/th><td>150 mg\/kg/);
    expect(parts[1]).toMatch(/Threshold \(action level\)<\/th><td>300 mg\/kg/);
    const alone = reportHtml(b);
    expect(parts[1]).toContain(alone.slice(alone.indexOf('<h2>Summary</h2>'), alone.indexOf('<h2>Summary</h2>') + 200));
    // Legend gradients and anchors given a prefix per section, so every id is unique and every url(#…) resolves.
    const ids = [...text.matchAll(/ id="([^"]+)"/g)].map((m) => m[1]);
    expect(new Set(ids).size).toBe(ids.length);
    const refs = [...text.matchAll(/url\(#([^)]+)\)/g)].map((m) => m[1]);
    expect(refs.filter((r) => r.startsWith('a1-')).length).toBeGreaterThan(0);
    expect(refs.filter((r) => r.startsWith('a2-')).length).toBeGreaterThan(0);
    for (const r of refs) expect(ids).toContain(r);
    expect(text.split(CAUTION).length - 1).toBeGreaterThanOrEqual(3);
    expect(analyteReportHtml([{ name: 'lead', input: a }], 'Yard <survey>')).toContain('<title>Yard &lt;survey&gt; — Gapwise report</title>');
  });

  it('analyteReportHtml prefixes the area anchor of each section that has realisations, and its link follows', () => {
    const simulation = {
      count: 20, seed: 4, support: 'point' as const, blockPoints: 1, depth: null,
      summary: {
        threshold: 150, cell: 10, activeCells: 64, area: { median: 900, p05: 500, p95: 1400, mean: 930, unit: 'm²' as const },
        fraction: { median: 0.14, p05: 0.08, p95: 0.22, mean: 0.145 }, method: 'test', made: '2026-01-02T00:00:00.000Z',
      },
    };
    const a = { ...input('lead', 150), simulation };
    const b = { ...input('<b>zinc</b>', 300), simulation };
    const text = analyteReportHtml([{ name: 'lead', input: a }, { name: 'zinc', input: b }]);
    expect(text).toContain('<h2 id="a1-area-above">');
    expect(text).toContain('<h2 id="a2-area-above">');
    expect(text).toContain('href="#a1-area-above"');
    expect(text).toContain('href="#a2-area-above"');
    expect(text).not.toContain('id="area-above"');
  });

  it('analyteReportHtml refuses an empty list', () => {
    expect(() => analyteReportHtml([])).toThrow(/at least one analyte/);
  });
});
