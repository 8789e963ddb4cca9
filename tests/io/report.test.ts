// reportHtml / prepareReport and the report's building blocks: self-contained HTML (no outside
// reference, hostile text escaped), the numbers from the engine, the app's colour scales, and a PNG
// encoder checked against Node's zlib.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { inflateSync } from 'node:zlib';
import {
  localAccuracyText,
  reportHtml, northAngle, areaSection, formatQuantity, noAreaText, AREA_CAUTION, designOptionsText,
} from '../../src/io/report.ts';
import { candidateLabel, prepareReport, reportSimulationJob } from '../../src/worker/report-data.ts';
import { createProject, simulationMethodText, type ComparisonRow, type ProjectSimulation } from '../../src/io/project.ts';
import { mergeSimulationParts, simulateConditional } from '../../src/core/simulation/conditional-simulation.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';
import { exceedanceArea } from '../../src/core/prediction/exceedance-area.ts';
import { expectClose } from '../helpers/tolerance.ts';
import { DEFAULT_LUT_HEX, defaultLuts, colourAtT, paletteIndices, lutFromRgba } from '../../src/io/report-colours.ts';
import { adler32, base64, crc32, palettePng } from '../../src/io/report-png.ts';
import { logTicks, scaleBarLength } from '../../src/io/report-svg.ts';
import { escapeText } from '../../src/io/markup.ts';
import { buildLut } from '../../src/ui/map/colour-scales.ts';
import { leaveOneOut } from '../../src/core/validation/cross-validation.ts';
import { computeSurface } from '../../src/core/prediction/surface.ts';
import { CAUTION } from '../../src/core/shared/caution.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';
import { planarSamplesCsv } from '../cli/run-cli.ts';

const SOFTWARE = { name: 'gapwise', version: '9.9.9' };
const model: CovarianceModel = { structures: [{ type: 'nugget', sill: 0.5 }, { type: 'exponential', sill: 12, scale: 80 }], trend: 'constant', transform: 'none' };
const comparison: ComparisonRow[] = [
  { key: 'exponential', label: 'Exponential', model, logLikelihood: -50, aic: 106, rmse: 2.1, msse: 1.02 },
  { key: 'gaussian', label: 'Gaussian', model: null, logLikelihood: null, aic: null, rmse: null, msse: null, error: 'did not converge <b>' },
];

function project(extra: Parameters<typeof createProject>[0] extends infer P ? Partial<P> : never = {}) {
  return createProject({
    samples: { fileName: 'wells.csv', text: planarSamplesCsv(), intake: { crs: 'EPSG:32633' } },
    model, structure: { chosen: 'exponential', comparison }, grid: { cellSize: 10 }, threshold: 25, ...extra,
  });
}

/** Every reference to something outside the page: src/href that are not data: or #, CSS url(), @import, script. */
function outsideReferences(html: string): string[] {
  const out: string[] = [];
  // Attributes inside tags only (escaped text such as "&lt;img src=x" is text, not a tag).
  for (const tag of html.matchAll(/<[a-zA-Z][^>]*>/g)) {
    for (const m of tag[0].matchAll(/\s(?:src|href|xlink:href)\s*=\s*["']?([^"'\s>]+)/gi)) if (!/^(data:|#)/.test(m[1])) out.push(m[0]);
  }
  for (const m of html.matchAll(/url\(\s*['"]?([^)'"]+)/gi)) if (!/^(data:|#)/.test(m[1])) out.push(m[0]);
  if (/@import/i.test(html)) out.push('@import');
  if (/<script/i.test(html)) out.push('<script');
  return out;
}

describe('prepareReport', () => {
  it('prepareReport computes cross-validation and surfaces as the engine does, and keeps the stored comparison', () => {
    const p = project();
    const input = prepareReport(p, { software: SOFTWARE, created: '2026-03-01T10:00:00.000Z' });
    const cv = leaveOneOut(input.intake.samples, model);
    expect(input.cv!.summary).toEqual(cv.summary);
    const surface = computeSurface(input.intake.samples, model, input.grid!, { threshold: 25 });
    expect(Array.from(input.surface!.mean)).toEqual(Array.from(surface.mean));
    expect(Array.from(input.surface!.pExceed!)).toEqual(Array.from(surface.pExceed!));
    expect(input.comparison).toBe(p.structure.comparison);
    expect(input.grid!.cell).toBe(10);
    // The expected area above the threshold is Σ P(exceed) × cell area over the mapped cells.
    let expected = 0;
    for (const q of surface.pExceed!) if (Number.isFinite(q)) expected += q * 100;
    const html = reportHtml(input);
    const got = /data-figure="expected-area" data-value="([^"]+)"/.exec(html);
    expect(got).not.toBeNull();
    expectClose(Number(got![1]), expected, { rel: 1e-12 }, 'expected area (m²)');
    expect(html).toContain(`${Number((expected / 10000).toPrecision(3))} ha</span>`);
  });
});

describe('localAccuracyText', () => {
  it('prepareReport shows how a surface was computed: exact when it computed it, the measured error of local neighbourhoods when given', () => {
    const p = project();
    const exact = reportHtml(prepareReport(p, { software: SOFTWARE, compare: false }));
    expect(exact).toContain('exact kriging from all samples');
    const own = prepareReport(p, { software: SOFTWARE, compare: false });
    const accuracy = {
      checked: 200, targets: 4000, seed: 1, reference: 'exact' as const, scale: 'data' as const, priorSd: Math.sqrt(12),
      mean: { max: 0.134, rms: 0.021 }, sd: { max: 0.052, rms: 0.011 }, tolerance: { mean: 1, sd: 2 }, within: true, neighbours: 64, globalMean: true,
    };
    const html = reportHtml(prepareReport(p, { software: SOFTWARE, compare: false, surface: own.surface, localAccuracy: accuracy }));
    expect(html).toContain(escapeText(localAccuracyText(accuracy)));
    expect(localAccuracyText(accuracy)).toBe('local neighbourhoods of the 64 nearest samples around the mean of all samples; against exact kriging at 200 cells '
      + 'the mean is within 0.13 % (RMS 0.021 %) and the sd within 0.052 % (RMS 0.011 %) of the prior sd (tolerance 1 % / 2 %: met)');
    expect(html).not.toContain('exact kriging from all samples');
  });
});

describe('reportHtml', () => {
  const p = project({ suggestions: [{ rank: 1, x: 500100, y: 5400070, lon: 15.0013, lat: 48.7526, benefit: 0.4, mean: 24, sd: 1.5, pExceed: 0.3 }] });
  const html = reportHtml(prepareReport(p, { software: SOFTWARE, created: '2026-03-01T10:00:00.000Z' }));

  it('reportHtml is one self-contained page: no outside reference, no script, a policy that forbids fetching', () => {
    expect(outsideReferences(html)).toEqual([]);
    expect(html).toContain('content="default-src \'none\'; img-src data:; style-src \'unsafe-inline\'"');
    expect(html.match(/<img\b/g)).toBeNull();
  });

  it('reportHtml carries the caution at the top, on every printed page and at the end, and the version and date', () => {
    expect(html.split(CAUTION).length - 1).toBe(3);
    expect(html.indexOf(CAUTION)).toBeLessThan(html.indexOf('<h2>'));
    expect(html).toContain('gapwise 9.9.9');
    expect(html).toContain('2026-03-01');
    expect(html).toMatch(/@media print[\s\S]*break-before: page/);
  });

  it('reportHtml has every part: summary, samples, histogram, variogram, comparison, cross-validation, three maps with legends, suggestions, reproduction', () => {
    for (const h of ['Summary', 'Samples', 'Spatial structure', 'Cross-validation', 'Maps', 'Suggested next samples', 'How to reproduce']) expect(html).toContain(`>${h}</h2>`);
    for (const t of ['Histogram of nitrate', 'Variogram of nitrate with the chosen model', 'Leave-one-out: predicted against observed', 'Mean nitrate (mg/L)', 'Uncertainty (sd) of nitrate (mg/L)', 'P(nitrate &gt; 25 mg/L)']) {
      expect(html).toContain(`aria-label="${t}"`);
    }
    expect(html.match(/<image /g)).toHaveLength(3);
    expect(html.match(/linearGradient id="legend-/g)).toHaveLength(3);
    expect(html).toContain('true north');
    expect(html).toContain('<tr class="chosen"><td>Exponential (chosen)');
    expect(html).toContain('did not converge &lt;b&gt;');
    expect(html).toContain('&quot;crs&quot;:&quot;EPSG:32633&quot;');
  });

  it('reportHtml writes the sites table for people: coordinates without exponents, the chance as a percentage, the design choices in words', () => {
    const sites = html.slice(html.indexOf('>Suggested next samples</h2>'), html.indexOf('>How to reproduce</h2>'));
    expect(sites).toContain('<td>15.001300</td><td>48.752600</td><td>500100.0</td><td>5400070.0</td>');
    expect(sites).toContain('<td>30 %</td>');
    expect(sites).not.toMatch(/\de[+-]\d/);
    expect(designOptionsText({ mode: 'decision', count: 6, threshold: 200, minSpacing: 10, exclusionPolygons: 1 }, 'mg/kg'))
      .toBe('Chosen to settle the action level (least area on the wrong side): 6 sites, action level 200 mg/kg, at least 10 m apart, 1 exclusion polygon avoided.');
    expect(designOptionsText({ mode: 'coverage', count: 1 }, '')).toBe('Chosen to cover the area evenly: 1 site.');
  });

  it('reportHtml leaves out suggestions and the exceedance map when there are none', () => {
    const plain = reportHtml(prepareReport(project({ threshold: null }), { software: SOFTWARE }));
    expect(plain).not.toContain('Suggested next samples</h2>');
    expect(plain.match(/<image /g)).toHaveLength(2);
  });

  it('reportHtml escapes hostile text from the samples file (names, values, notes)', () => {
    const text = readFileSync(resolve(__dirname, '..', 'fixtures', 'intake', 'hostile-html.csv'), 'utf8');
    const hostile = createProject({ samples: { fileName: '<img src=x onerror=alert(1)>.csv', text, intake: {} }, title: '<script>alert(1)</script>' });
    const out = reportHtml(prepareReport(hostile, { software: SOFTWARE, compare: false }));
    expect(outsideReferences(out)).toEqual([]);
    expect(out).not.toMatch(/<(script|iframe|img|b|a)\b/i);
    expect(out).toContain('&lt;script&gt;alert(1)&lt;/script&gt;');
    expect(out).toContain('no model yet');
  });
});

/** The numbers a report tags with data-figure="name" data-value="v". */
function figures(html: string): Record<string, number> {
  const out: Record<string, number> = {};
  for (const m of html.matchAll(/data-figure="([\w-]+)" data-value="([^"]+)"/g)) out[m[1]] = Number(m[2]);
  return out;
}

/** A saved simulation record, as the app writes it (invented figures). */
function savedSimulation(o: Partial<ProjectSimulation> = {}): ProjectSimulation {
  return {
    count: 200, seed: 7, support: 'block', blockPoints: 3, depth: 0.5,
    summary: {
      threshold: 25, cell: 10, activeCells: 400,
      area: { median: 12_300, p05: 9_800, p95: 15_100, mean: 12_410, unit: 'm²' },
      volume: { median: 6_150, p05: 4_900, p95: 7_550, mean: 6_205, unit: 'm³', depth: 0.5 },
      fraction: { median: 0.3075, p05: 0.245, p95: 0.3775, mean: 0.31025 },
      method: simulationMethodText({ support: 'block', blockPoints: 3, log: false, count: 200 }),
      made: '2026-03-01T09:00:00.000Z',
    },
    ...o,
  };
}

describe('reportHtml: area above the action level', () => {
  it('prepareReport with simulate reports the area and volume that exceedanceArea gives for the same seeded realisations', () => {
    const p = project();
    const settings = { count: 24, seed: 11, support: 'point' as const, blockPoints: 1, depth: 0.4 };
    const input = prepareReport(p, { software: SOFTWARE, compare: false, simulate: settings, created: '2026-03-01T10:00:00.000Z' });
    // The same realisations kept, then summarised by core/prediction/exceedance-area.ts on their own.
    const sim = simulateConditional(input.intake.samples, model, input.grid!, { count: 24, seed: 11, keepRealisations: true });
    const expected = exceedanceArea(sim.realisations!, { threshold: 25, cell: input.grid!.cell, depth: 0.4 });
    const got = input.simulation!.summary!;
    for (const k of ['median', 'p05', 'p95', 'mean'] as const) {
      expectClose(got.area[k], expected.area[k], { rel: 1e-12 }, `area.${k}`);
      expectClose(got.volume![k], expected.volume![k], { rel: 1e-12 }, `volume.${k}`);
    }
    expect(got.area.p05).toBeLessThanOrEqual(got.area.median);
    expect(got.area.median).toBeLessThanOrEqual(got.area.p95);
    expect(got.area.p95).toBeGreaterThan(got.area.p05);
    expect(input.simulation).toMatchObject({ count: 24, seed: 11, support: 'point', blockPoints: 1, depth: 0.4 });
    expect(got.method).toContain('FFT circulant embedding');

    const html = reportHtml(input);
    const f = figures(html);
    expect(f['area-median']).toBe(got.area.median);
    expect(f['area-p05']).toBe(got.area.p05);
    expect(f['area-p95']).toBe(got.area.p95);
    expect(f['volume-median']).toBe(got.volume!.median);
    expect(f.realisations).toBe(24);
    expect(f.seed).toBe(11);
    expect(html).toContain(`${formatQuantity(got.area.median)} m² (${formatQuantity(got.area.median / 10_000, 3)} ha) above 25 mg/L`);
    expect(html).not.toContain('data-no-area');
  });

  it('prepareReport with drawn takes realisations drawn elsewhere from reportSimulationJob, and refuses ones from another grid', () => {
    const p = project();
    const settings = { count: 10, seed: 6, support: 'point' as const, blockPoints: 1, depth: 0.2 };
    const job = reportSimulationJob(p, { simulate: settings })!;
    expect(job.options).toMatchObject({ count: 10, seed: 6, threshold: 25, depth: 0.2, keepRealisations: false });
    // Drawn elsewhere in two parts and merged (as over threads): the same area as drawing here.
    const parts = [0, 4].map((first) => simulateConditional(job.samples, job.model, job.grid, { ...job.options, first, count: first === 0 ? 4 : 6, keepTotals: true }));
    const drawn = mergeSimulationParts(parts, { depth: 0.2 });
    const here = prepareReport(p, { software: SOFTWARE, compare: false, simulate: settings, created: '2026-03-01T10:00:00.000Z' });
    const taken = prepareReport(p, { software: SOFTWARE, compare: false, simulate: settings, drawn, created: '2026-03-01T10:00:00.000Z' });
    expect(taken.simulation).toEqual(here.simulation);
    expect(taken.grid).toEqual(job.grid);
    expect(taken.simulation!.summary!.volume!.depth).toBe(0.2);

    const coarse = reportSimulationJob(p, { simulate: settings, cellSize: 20 })!;
    const other = simulateConditional(coarse.samples, coarse.model, coarse.grid, coarse.options);
    expect(() => prepareReport(p, { software: SOFTWARE, compare: false, simulate: settings, drawn: other }))
      .toThrow(/Expected realisations drawn on the report's grid/);
    expect(reportSimulationJob(project({ model: null }), { simulate: settings })).toBeNull();
    expect(() => reportSimulationJob(project({ threshold: null }), { simulate: settings }))
      .toThrow(GapwiseError);
  });

  it('areaSection shows the median with its 90 % interval in m², ha and m³, the settings, the method and the caution beside it', () => {
    const html = String(areaSection(savedSimulation(), { unit: 'mg/L', threshold: 25, cell: 10 }));
    expect(html).toContain('<h2 id="area-above">Area above the action level</h2>');
    expect(html).toContain('<strong data-figure="area-median" data-value="12300">12,300 m²</strong> (1.23 ha) above 25 mg/L');
    expect(html).toContain('90 % interval (5 % – 95 %)</th><td>9,800 – 15,100 m² = 0.98 – 1.51 ha');
    expect(html).toContain('6,150 m³');
    expect(html).toContain('4,900 – 7,550 m³');
    expect(html).toContain('30.8 % (24.5 – 37.8 %) of 40,000 m²');
    expect(html).toContain('cell averages (block support, 3 × 3 points per 10 m cell)');
    expect(html).toContain('Seed</th><td><span data-figure="seed" data-value="7">7</span>');
    expect(html).toContain('conditioned on the samples by kriging the residuals');
    expect(html).toContain('not the uncertainty of the covariance parameters');
    // The caution closes the section, right after the figures.
    expect(html.trimEnd().endsWith(`<div class="caution" role="note" data-area-caution>${AREA_CAUTION}${CAUTION}</div>`)).toBe(true);
    expect(html).not.toContain('class="warn"');
  });

  it('simulationMethodText states the back-transform for log models and the support', () => {
    const log = simulationMethodText({ support: 'point', blockPoints: 1, log: true, count: 50 });
    expect(log).toContain('back-transformed cell by cell');
    expect(log).toContain('point support');
    expect(log).toContain('each of the 50 realisations');
    expect(simulationMethodText({ support: 'block', blockPoints: 4, log: false, count: 5 })).not.toContain('back-transformed');
  });

  it('reportHtml shows the area the project saved, with a note when the action level or the cell changed since', () => {
    const p = project({ simulation: savedSimulation(), threshold: 30 });
    const html = reportHtml(prepareReport(p, { software: SOFTWARE, compare: false }));
    expect(figures(html)['area-median']).toBe(12_300);
    expect(html).toContain('Area above the action level (realisations)</th><td>12,300 m² (1.23 ha) above 25 mg/L, 90 % interval 9,800 – 15,100 m² (0.98 – 1.51 ha), from 200 realisations');
    expect(html).toContain('the action level in this report is 30');
    expect(html).not.toContain('the maps in this report use');
    expect(html).toContain('--realisations 200 --seed 7 --support block --block-points 3 --depth 0.5');
    expect(html.split(CAUTION).length - 1).toBe(4);
  });

  it('reportHtml says in one line that no area estimate was made, and how to make one', () => {
    const html = reportHtml(prepareReport(project(), { software: SOFTWARE, compare: false }));
    expect(html).toContain(`<span data-no-area>${noAreaText(true).replace(/"/g, '&quot;').replace(/'/g, '&#39;')}</span>`);
    expect(html).toContain('--realisations 100');
    expect(html).not.toContain('id="area-above"');
    expect(noAreaText(false)).toMatch(/set an action level/);
    // A saved record without a summary (settings only) is not a figure.
    const settingsOnly = reportHtml(prepareReport(project({ simulation: { count: 50, seed: 2, support: 'point', blockPoints: 1, depth: null } }), { software: SOFTWARE, compare: false }));
    expect(settingsOnly).toContain('data-no-area');
  });

  it('reportHtml escapes the unit and the method text of a saved area figure', () => {
    const hostile = savedSimulation();
    hostile.summary!.method = '<script>alert(1)</script> & co';
    const p = project({ simulation: hostile, samples: { fileName: 'wells.csv', text: planarSamplesCsv(), intake: { crs: 'EPSG:32633' }, unit: '<b>mg</b>' } });
    const html = reportHtml(prepareReport(p, { software: SOFTWARE, compare: false }));
    expect(html).toContain('&lt;script&gt;alert(1)&lt;/script&gt; &amp; co');
    expect(html).toContain('above 25 &lt;b&gt;mg&lt;/b&gt;');
    expect(outsideReferences(html)).toEqual([]);
    expect(html).not.toMatch(/<b>mg/);
  });

  it('prepareReport with simulate refuses a project without an action level', () => {
    expect(() => prepareReport(project({ threshold: null }), { software: SOFTWARE, compare: false, simulate: { count: 2, seed: 1, support: 'point', blockPoints: 1, depth: null } }))
      .toThrow(/needs an action level/);
  });
});

describe('report colours and drawing helpers', () => {
  it('DEFAULT_LUT_HEX holds the app\'s scales loam, haze and tide exactly (buildLut(scale, 64))', () => {
    for (const [kind, scale] of [['mean', 'loam'], ['sd', 'haze'], ['pExceed', 'tide']] as const) {
      const lut = buildLut(scale, 64);
      const rgb: number[] = [];
      for (let k = 0; k < 64; k++) rgb.push(lut[4 * k], lut[4 * k + 1], lut[4 * k + 2]);
      expect(Array.from(defaultLuts()[kind].data), kind).toEqual(rgb);
      expect(DEFAULT_LUT_HEX[kind]).toHaveLength(64 * 6);
    }
  });

  it('colourAtT interpolates between LUT entries; paletteIndices keeps 0 for no value', () => {
    const lut = lutFromRgba([0, 0, 0, 255, 200, 100, 50, 255]);
    expect(colourAtT(lut, 0)).toEqual([0, 0, 0]);
    expect(colourAtT(lut, 0.5)).toEqual([100, 50, 25]);
    expect(colourAtT(lut, 2)).toEqual([200, 100, 50]);
    expect(Array.from(paletteIndices([NaN, 0, 5, 10, 20], [0, 10], 255))).toEqual([0, 1, 128, 255, 255]);
  });

  it('crc32 and adler32 give the published check values; base64 matches Node', () => {
    const enc = new TextEncoder();
    // CRC-32 check value of "123456789" (from memory: 0xCBF43926); Adler-32 of "Wikipedia" (from memory: 0x11E60398).
    expect(crc32(enc.encode('123456789'))).toBe(0xcbf43926);
    expect(adler32(enc.encode('Wikipedia'))).toBe(0x11e60398);
    for (const s of ['', 'a', 'ab', 'abc', 'Gapwise ✓ maps']) expect(base64(enc.encode(s))).toBe(Buffer.from(s, 'utf8').toString('base64'));
  });

  it('palettePng writes a PNG whose image data Node\'s zlib inflates to the filtered rows', () => {
    const indices = Uint8Array.from({ length: 70000 * 2 }, (_, k) => k % 7);
    const png = palettePng(indices, 70000, 2, new Uint8Array([0, 0, 0, 255, 255, 255]));
    expect(Array.from(png.slice(0, 8))).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
    const view = new DataView(png.buffer);
    let at = 8;
    const chunks: Record<string, Uint8Array> = {};
    while (at < png.length) {
      const len = view.getUint32(at);
      const type = String.fromCharCode(...png.slice(at + 4, at + 8));
      chunks[type] = png.slice(at + 8, at + 8 + len);
      expect(view.getUint32(at + 8 + len), type).toBe(crc32(png, at + 4, at + 8 + len));
      at += 12 + len;
    }
    expect(Object.keys(chunks)).toEqual(['IHDR', 'PLTE', 'tRNS', 'IDAT', 'IEND']);
    const raw = inflateSync(chunks.IDAT);
    expect(raw.length).toBe(2 * 70001);
    expect(raw[0]).toBe(0);
    expect(Array.from(raw.subarray(1, 8))).toEqual([0, 1, 2, 3, 4, 5, 6]);
  });

  it('northAngle is the meridian convergence: about −(λ − λ0)·sin φ east of the central meridian (from memory)', () => {
    const grid = { x0: 570000, y0: 5400000, cell: 10, nx: 10, ny: 10 };
    // Centre near 15.96° E, 48.74° N in UTM 33N (central meridian 15° E).
    const a = northAngle(grid, 'EPSG:32633')!;
    expect(a).toBeLessThan(0);
    expect(Math.abs(a + 0.955 * Math.sin((48.74 * Math.PI) / 180))).toBeLessThan(0.05);
    expect(northAngle(grid, 'local')).toBeNull();
  });

  it('logTicks, scaleBarLength, escapeText and candidateLabel give round, readable values', () => {
    expect(logTicks(3, 1500)).toEqual([5, 10, 20, 50, 100, 200, 500, 1000]);
    expect(scaleBarLength(430)).toBe(200);
    expect(scaleBarLength(90)).toBe(50);
    expect(escapeText('<a href="x">&\'')).toBe('&lt;a href=&quot;x&quot;&gt;&amp;&#39;');
    expect(candidateLabel('matern', 1.5)).toBe('Matérn ν = 3/2');
    expect(candidateLabel('matern', 'free')).toBe('Matérn, ν estimated');
  });
});
