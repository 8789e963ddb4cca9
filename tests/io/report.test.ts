// reportHtml / prepareReport and the report's building blocks: self-contained HTML (no outside
// reference, hostile text escaped), the numbers from the engine, the app's colour scales, and a PNG
// encoder checked against Node's zlib.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { inflateSync } from 'node:zlib';
import { prepareReport, reportHtml, northAngle, candidateLabel } from '../../src/io/report.ts';
import { createProject, type ComparisonRow } from '../../src/io/project.ts';
import { DEFAULT_LUT_HEX, defaultLuts, colourAtT, paletteIndices, lutFromRgba } from '../../src/io/report-colours.ts';
import { adler32, base64, crc32, palettePng } from '../../src/io/report-png.ts';
import { escapeXml, logTicks, niceTicks, scaleBarLength } from '../../src/io/report-svg.ts';
import { buildLut } from '../../src/ui/map/colour-scales.ts';
import { leaveOneOut } from '../../src/core/cross-validation.ts';
import { computeSurface } from '../../src/core/surface.ts';
import { CAUTION } from '../../src/core/caution.ts';
import type { CovarianceModel } from '../../src/core/model.ts';
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

  it('niceTicks, logTicks, scaleBarLength, escapeXml and candidateLabel give round, readable values', () => {
    expect(niceTicks(0, 1, 4)).toEqual([0, 0.2, 0.4, 0.6, 0.8, 1]);
    expect(logTicks(3, 1500)).toEqual([5, 10, 20, 50, 100, 200, 500, 1000]);
    expect(scaleBarLength(430)).toBe(200);
    expect(scaleBarLength(90)).toBe(50);
    expect(escapeXml('<a href="x">&\'')).toBe('&lt;a href=&quot;x&quot;&gt;&amp;&#39;');
    expect(candidateLabel('matern', 1.5)).toBe('Matérn ν = 3/2');
    expect(candidateLabel('matern', 'free')).toBe('Matérn, ν estimated');
  });
});
