/**
 * SVG figures for the report, as self-contained strings (no fonts, scripts or links from outside):
 * histogram, variogram with the model curve, cross-validation scatter, colour legends, and maps
 * (a palette PNG of the grid as a data URL, with the boundary, samples, suggested sites, a scale
 * bar and a north arrow), built with the `html` template (io/markup.ts), which escapes every value.
 * Units: map coordinates in working-CRS metres; values in data units.
 */
import type { Grid } from '../core/geometry/grid.ts';
import { colourAtT, hexColour, paletteFromLut, paletteIndices, type Lut } from './report-colours.ts';
import { palettePng, pngDataUrl } from './report-png.ts';
import { formatValue } from './format.ts';
import { niceTicks } from './ticks.ts';
import { html, joinMarkup, trusted, type Markup } from './markup.ts';

/** Smallest and largest finite value (a loop: spreading large arrays into Math.min overflows). */
export function finiteRange(...arrays: ArrayLike<number>[]): { min: number; max: number } {
  let min = Infinity, max = -Infinity;
  for (const a of arrays) {
    for (let i = 0; i < a.length; i++) {
      const v = a[i];
      if (!Number.isFinite(v)) continue;
      if (v < min) min = v;
      if (v > max) max = v;
    }
  }
  return { min, max };
}

const FONT = 'system-ui, -apple-system, Segoe UI, Roboto, sans-serif';

interface Frame {
  width: number;
  height: number;
  left: number;
  right: number;
  top: number;
  bottom: number;
}

function plotFrame(width: number, height: number): Frame {
  return { width, height, left: 64, right: 16, top: 28, bottom: 46 };
}

function linear(d0: number, d1: number, r0: number, r1: number): (v: number) => number {
  const span = d1 - d0 || 1;
  return (v) => r0 + ((v - d0) / span) * (r1 - r0);
}

function svgOpen(width: number, height: number, label: string): Markup {
  return joinMarkup([html`<svg xmlns="http://www.w3.org/2000/svg" width="${width}" height="${height}" viewBox="0 0 ${width} ${height}" role="img" aria-label="${label}" font-family="${FONT}" font-size="12">`,
    html`<title>${label}</title>`]);
}

/** Axes with ticks and titles; returns the SVG parts. */
function axes(f: Frame, xTicks: number[], yTicks: number[], sx: (v: number) => number, sy: (v: number) => number, xTitle: string, yTitle: string): Markup {
  const p: Markup[] = [];
  const x0 = f.left, x1 = f.width - f.right, y0 = f.height - f.bottom, y1 = f.top;
  for (const t of yTicks) {
    const y = sy(t).toFixed(1);
    p.push(html`<line x1="${x0}" x2="${x1}" y1="${y}" y2="${y}" stroke="#e3e3e3"/>`);
    p.push(html`<text x="${x0 - 6}" y="${y}" text-anchor="end" dominant-baseline="middle" fill="#333">${formatValue(t)}</text>`);
  }
  for (const t of xTicks) {
    const x = sx(t).toFixed(1);
    p.push(html`<line x1="${x}" x2="${x}" y1="${y0}" y2="${y0 + 4}" stroke="#333"/>`);
    p.push(html`<text x="${x}" y="${y0 + 16}" text-anchor="middle" fill="#333">${formatValue(t)}</text>`);
  }
  p.push(html`<line x1="${x0}" x2="${x1}" y1="${y0}" y2="${y0}" stroke="#333"/>`);
  p.push(html`<line x1="${x0}" x2="${x0}" y1="${y0}" y2="${y1}" stroke="#333"/>`);
  p.push(html`<text x="${(x0 + x1) / 2}" y="${f.height - 8}" text-anchor="middle" fill="#222">${xTitle}</text>`);
  p.push(html`<text transform="translate(14 ${(y0 + y1) / 2}) rotate(-90)" text-anchor="middle" fill="#222">${yTitle}</text>`);
  return joinMarkup(p);
}

export interface HistogramOptions {
  title: string;
  /** Axis title, e.g. "Pb (mg/kg)". */
  axis: string;
  threshold?: number | null;
  width?: number;
  height?: number;
}

/** Histogram of the values with round bin edges, and the threshold as a dashed line. */
export function histogramSvg(values: ArrayLike<number>, o: HistogramOptions): Markup {
  const f = plotFrame(o.width ?? 640, o.height ?? 260);
  const finite = Array.from(values).filter(Number.isFinite);
  let { min, max } = finiteRange(finite);
  if (!finite.length) { min = 0; max = 1; }
  if (max === min) { min -= 0.5; max += 0.5; }
  // Sturges' rule, or √n when that is more (skewed field data), between 6 and 30 bins.
  const bins = Math.min(30, Math.max(6, Math.ceil(Math.log2(Math.max(2, finite.length)) + 1), Math.ceil(Math.sqrt(finite.length))));
  const edges = niceTicks(min, max, bins);
  if (edges[0] > min) edges.unshift(edges[0] - (edges[1] - edges[0]));
  while (edges[edges.length - 1] < max) edges.push(edges[edges.length - 1] + (edges[1] - edges[0]));
  const counts = new Array(edges.length - 1).fill(0);
  const step = edges[1] - edges[0];
  for (const v of finite) counts[Math.min(counts.length - 1, Math.max(0, Math.floor((v - edges[0]) / step)))]++;
  const top = Math.max(1, finiteRange(counts).max);
  const lo = Math.min(edges[0], o.threshold ?? Infinity), hi = Math.max(edges[edges.length - 1], o.threshold ?? -Infinity);
  const sx = linear(lo, hi, f.left, f.width - f.right);
  const sy = linear(0, top, f.height - f.bottom, f.top);
  const p: Markup[] = [svgOpen(f.width, f.height, o.title)];
  p.push(axes(f, niceTicks(lo, hi, 8), niceTicks(0, top, 4).filter((t) => Number.isInteger(t)), sx, sy, o.axis, 'samples'));
  counts.forEach((c, i) => {
    if (!c) return;
    const x = sx(edges[i]), w = sx(edges[i + 1]) - x;
    p.push(html`<rect x="${x.toFixed(1)}" y="${sy(c).toFixed(1)}" width="${Math.max(0.5, w - 1).toFixed(1)}" height="${(sy(0) - sy(c)).toFixed(1)}" fill="#6b7f99"><title>${formatValue(edges[i])} to ${formatValue(edges[i + 1])}: ${c}</title></rect>`);
  });
  if (o.threshold !== undefined && o.threshold !== null && Number.isFinite(o.threshold)) {
    const x = sx(o.threshold).toFixed(1);
    p.push(html`<line x1="${x}" x2="${x}" y1="${f.top}" y2="${f.height - f.bottom}" stroke="#b3412c" stroke-width="2" stroke-dasharray="6 4"/>`);
    p.push(html`<text x="${(Number(x) + 5).toFixed(1)}" y="${f.top + 12}" fill="#b3412c">threshold ${formatValue(o.threshold)}</text>`);
  }
  p.push(html`<text x="${f.left}" y="16" font-weight="600" fill="#222">${o.title}</text>`);
  p.push(html`</svg>`);
  return joinMarkup(p);
}

export interface VariogramPlotOptions {
  title: string;
  /** Axis title for the semivariance, e.g. "semivariance (mg/kg)²". */
  axis: string;
  width?: number;
  height?: number;
}

/** Empirical semivariances (dot area by pair count, count printed above) and the model curve. */
export function variogramSvg(
  lags: ReadonlyArray<{ distance: number; semivariance: number; pairs: number }>,
  curve: ReadonlyArray<{ h: number; gamma: number }>,
  o: VariogramPlotOptions,
): Markup {
  const f = plotFrame(o.width ?? 640, o.height ?? 300);
  const hmax = Math.max(1e-9, ...lags.map((l) => l.distance), ...curve.map((c) => c.h));
  const gmax = Math.max(1e-12, ...lags.map((l) => l.semivariance), ...curve.map((c) => c.gamma)) * 1.1;
  const sx = linear(0, hmax, f.left, f.width - f.right);
  const sy = linear(0, gmax, f.height - f.bottom, f.top);
  const p: Markup[] = [svgOpen(f.width, f.height, o.title)];
  p.push(axes(f, niceTicks(0, hmax, 6), niceTicks(0, gmax, 4), sx, sy, 'distance (m)', o.axis));
  if (curve.length > 1) {
    p.push(html`<polyline fill="none" stroke="#b3412c" stroke-width="2" points="${curve.map((c) => `${sx(c.h).toFixed(1)},${sy(c.gamma).toFixed(1)}`).join(' ')}"/>`);
  }
  const most = Math.max(1, finiteRange(lags.map((l) => l.pairs)).max);
  for (const l of lags) {
    const r = 2.5 + 4 * Math.sqrt(l.pairs / most);
    const x = sx(l.distance).toFixed(1), y = sy(l.semivariance).toFixed(1);
    p.push(html`<circle cx="${x}" cy="${y}" r="${r.toFixed(1)}" fill="#2f4a6d"><title>${formatValue(l.distance)} m: ${formatValue(l.semivariance)} (${l.pairs} pairs)</title></circle>`);
    p.push(html`<text x="${x}" y="${(Number(y) - r - 3).toFixed(1)}" text-anchor="middle" font-size="9" fill="#555">${l.pairs}</text>`);
  }
  p.push(html`<text x="${f.left}" y="16" font-weight="600" fill="#222">${o.title}</text>`);
  p.push(html`<g font-size="11"><circle cx="${f.width - 210}" cy="12" r="4" fill="#2f4a6d"/><text x="${f.width - 202}" y="16">empirical (pairs)</text>`,
    html`<line x1="${f.width - 100}" x2="${f.width - 80}" y1="12" y2="12" stroke="#b3412c" stroke-width="2"/><text x="${f.width - 76}" y="16">model</text></g>`);
  p.push(html`</svg>`);
  return joinMarkup(p);
}

export interface ScatterOptions {
  title: string;
  axisX: string;
  axisY: string;
  width?: number;
  height?: number;
}

/** Cross-validation scatter: predicted against observed, with the 1:1 line. */
export function crossValidationSvg(observed: ArrayLike<number>, predicted: ArrayLike<number>, o: ScatterOptions): Markup {
  const size = o.width ?? 420;
  const f = { ...plotFrame(size, o.height ?? size), right: 20 };
  let { min: lo, max: hi } = finiteRange(observed, predicted);
  if (!Number.isFinite(lo)) { lo = 0; hi = 1; }
  if (hi === lo) { lo -= 0.5; hi += 0.5; }
  const pad = (hi - lo) * 0.04;
  lo -= pad; hi += pad;
  const sx = linear(lo, hi, f.left, f.width - f.right);
  const sy = linear(lo, hi, f.height - f.bottom, f.top);
  const ticks = niceTicks(lo, hi, 5).filter((t) => t >= lo && t <= hi);
  const p: Markup[] = [svgOpen(f.width, f.height, o.title)];
  p.push(axes(f, ticks, ticks, sx, sy, o.axisX, o.axisY));
  p.push(html`<line x1="${sx(lo).toFixed(1)}" y1="${sy(lo).toFixed(1)}" x2="${sx(hi).toFixed(1)}" y2="${sy(hi).toFixed(1)}" stroke="#b3412c" stroke-dasharray="5 4"/>`);
  for (let i = 0; i < observed.length; i++) {
    if (!Number.isFinite(observed[i]) || !Number.isFinite(predicted[i])) continue;
    p.push(html`<circle cx="${sx(observed[i]).toFixed(1)}" cy="${sy(predicted[i]).toFixed(1)}" r="2.6" fill="#2f4a6d" fill-opacity="0.75"/>`);
  }
  p.push(html`<text x="${f.left}" y="16" font-weight="600" fill="#222">${o.title}</text>`);
  p.push(html`</svg>`);
  return joinMarkup(p);
}

export interface LegendOptions {
  title: string;
  domain: [number, number];
  lut: Lut;
  /** Tick values; default round values over the domain. */
  ticks?: number[];
  width?: number;
  idPrefix: string;
  /** Colours run along ln(value) (domain and ticks stay in data units, domain above 0). */
  log?: boolean;
}

/** Ticks 1, 2, 5 × 10^k inside [min, max] (min > 0), at most about 8. */
export function logTicks(min: number, max: number): number[] {
  if (!(min > 0) || !(max > min)) return [];
  const out: number[] = [];
  for (let e = Math.floor(Math.log10(min)); e <= Math.ceil(Math.log10(max)); e++) {
    for (const m of [1, 2, 5]) {
      const v = Number((m * 10 ** e).toPrecision(12));
      if (v >= min && v <= max) out.push(v);
    }
  }
  return out.length > 8 ? out.filter((v) => Number(v.toPrecision(1)) === 10 ** Math.round(Math.log10(v))) : out;
}

/** A continuous colour bar with labelled ticks. */
export function legendBarSvg(o: LegendOptions): Markup {
  const width = o.width ?? 300;
  const pad = 10, bar = 14, height = 62;
  const [a, b] = o.domain;
  const id = `${o.idPrefix.replace(/[^A-Za-z0-9_-]/g, '')}-grad`;
  const stops: Markup[] = [];
  for (let k = 0; k <= 16; k++) stops.push(html`<stop offset="${(k / 16 * 100).toFixed(2)}%" stop-color="${hexColour(colourAtT(o.lut, k / 16))}"/>`);
  const log = o.log === true && a > 0 && b > a;
  const ticks = (o.ticks ?? (log ? logTicks(a, b) : niceTicks(a, b, 5))).filter((t) => t >= Math.min(a, b) - 1e-12 && t <= Math.max(a, b) + 1e-12);
  const lin = log ? linear(Math.log(a), Math.log(b), pad, width - pad) : linear(a, b, pad, width - pad);
  const sx = (v: number) => lin(log ? Math.log(v) : v);
  const p: Markup[] = [svgOpen(width, height, o.title)];
  p.push(html`<text x="${pad}" y="14" font-weight="600">${o.title}</text>`);
  p.push(html`<defs><linearGradient id="${id}" x1="0" x2="1" y1="0" y2="0">${stops}</linearGradient></defs>`);
  p.push(html`<rect x="${pad}" y="22" width="${width - 2 * pad}" height="${bar}" fill="url(#${id})" stroke="#0004"/>`);
  for (const t of ticks) {
    const x = (a === b ? width / 2 : sx(t)).toFixed(1);
    p.push(html`<line x1="${x}" x2="${x}" y1="${22 + bar}" y2="${26 + bar}" stroke="#333"/>`);
    p.push(html`<text x="${x}" y="${40 + bar}" text-anchor="middle">${formatValue(t)}</text>`);
  }
  p.push(html`</svg>`);
  return joinMarkup(p);
}

/** A length of 1, 2 or 5 × 10^k metres close to (at most) `target`. */
export function scaleBarLength(target: number): number {
  if (!(target > 0)) return 1;
  const p = 10 ** Math.floor(Math.log10(target));
  const f = target / p;
  return (f >= 5 ? 5 : f >= 2 ? 2 : 1) * p;
}

export interface MapOptions {
  title: string;
  grid: Grid;
  /** nx·ny values (NaN / masked = no value). */
  values: ArrayLike<number>;
  domain: [number, number];
  lut: Lut;
  /** Sample positions (working CRS), drawn as small rings. */
  samples?: { x: ArrayLike<number>; y: ArrayLike<number> };
  /** Boundary rings (working CRS). */
  rings?: ReadonlyArray<ReadonlyArray<readonly [number, number]>>;
  /** Suggested sites (working CRS), drawn as numbered squares. */
  suggestions?: ReadonlyArray<{ rank: number; x: number; y: number }>;
  /** Direction of true north, degrees clockwise from the top of the map; null = grid north only. */
  northAngle: number | null;
  /** Largest side of the drawing in px (default 620). */
  maxSide?: number;
  /** Largest side of the embedded image in pixels; larger grids are sampled (default 700). */
  maxPixels?: number;
}

/**
 * A map of one surface: the grid as a palette PNG (one pixel per cell, or per sampled cell for very
 * large grids) under the boundary, samples and suggested sites, with a scale bar and a north arrow.
 */
export function mapSvg(o: MapOptions): Markup {
  const { grid } = o;
  const maxSide = o.maxSide ?? 620;
  const step = Math.max(1, Math.ceil(Math.max(grid.nx, grid.ny) / (o.maxPixels ?? 700)));
  const w = Math.ceil(grid.nx / step), h = Math.ceil(grid.ny / step);
  const sampled = new Float64Array(w * h);
  for (let J = 0; J < h; J++) {
    const j = Math.min(grid.ny - 1, J * step + (step >> 1));
    for (let I = 0; I < w; I++) {
      const i = Math.min(grid.nx - 1, I * step + (step >> 1));
      const k = j * grid.nx + i;
      sampled[J * w + I] = !grid.mask || grid.mask[k] === 1 ? o.values[k] : NaN;
    }
  }
  const palette = new Uint8Array(256 * 3);
  palette.set(paletteFromLut(o.lut, 255), 3);
  const png = palettePng(paletteIndices(sampled, o.domain, 255), w, h, palette);

  const scale = maxSide / Math.max(grid.nx, grid.ny); // px per cell
  const mapW = grid.nx * scale, mapH = grid.ny * scale;
  const margin = 8, footer = 66;
  const width = Math.ceil(mapW + 2 * margin), height = Math.ceil(mapH + 2 * margin + footer + 20);
  const px = (x: number) => margin + ((x - grid.x0) / grid.cell) * scale;
  const py = (y: number) => 20 + margin + ((grid.y0 - y) / grid.cell) * scale;
  const p: Markup[] = [svgOpen(width, height, o.title)];
  p.push(html`<text x="${margin}" y="15" font-weight="600">${o.title}</text>`);
  p.push(html`<rect x="${margin}" y="${20 + margin}" width="${mapW.toFixed(1)}" height="${mapH.toFixed(1)}" fill="#f4f4f2" stroke="#999"/>`);
  p.push(html`<image x="${margin}" y="${20 + margin}" width="${mapW.toFixed(1)}" height="${mapH.toFixed(1)}" preserveAspectRatio="none" style="image-rendering:pixelated;image-rendering:crisp-edges" href="${trusted(pngDataUrl(png))}"/>`);
  if (o.rings) {
    for (const ring of o.rings) {
      p.push(html`<polygon fill="none" stroke="#111" stroke-width="1.5" points="${ring.map((v) => `${px(v[0]).toFixed(1)},${py(v[1]).toFixed(1)}`).join(' ')}"/>`);
    }
  }
  if (o.samples) {
    const dots: Markup[] = [];
    for (let i = 0; i < o.samples.x.length; i++) dots.push(html`<circle cx="${px(o.samples.x[i]).toFixed(1)}" cy="${py(o.samples.y[i]).toFixed(1)}" r="2.2"/>`);
    p.push(html`<g fill="#fff" fill-opacity="0.85" stroke="#111" stroke-width="0.8">${dots}</g>`);
  }
  if (o.suggestions) {
    for (const s of o.suggestions) {
      const x = px(s.x), y = py(s.y);
      p.push(html`<rect x="${(x - 7).toFixed(1)}" y="${(y - 7).toFixed(1)}" width="14" height="14" fill="#fff" stroke="#b3412c" stroke-width="2"/>`);
      p.push(html`<text x="${x.toFixed(1)}" y="${(y + 4).toFixed(1)}" text-anchor="middle" font-size="10" font-weight="700" fill="#b3412c">${s.rank}</text>`);
    }
  }
  // Scale bar: a round length of about a quarter of the map width.
  const metres = scaleBarLength((grid.nx * grid.cell) / 4);
  const barPx = (metres / grid.cell) * scale;
  const by = 20 + margin + mapH + 22;
  p.push(html`<g><rect x="${margin}" y="${by - 6}" width="${(barPx / 2).toFixed(1)}" height="6" fill="#222"/>`,
    html`<rect x="${(margin + barPx / 2).toFixed(1)}" y="${by - 6}" width="${(barPx / 2).toFixed(1)}" height="6" fill="#fff" stroke="#222"/>`,
    html`<text x="${margin}" y="${by + 12}">0</text><text x="${(margin + barPx).toFixed(1)}" y="${by + 12}" text-anchor="middle">${metres >= 1000 ? `${formatValue(metres / 1000)} km` : `${formatValue(metres)} m`}</text></g>`);
  // North arrow: true north when the CRS is known, else grid north.
  const ax = width - margin - 22, ay = by + 20;
  const angle = o.northAngle ?? 0;
  p.push(html`<g transform="translate(${ax} ${ay}) rotate(${angle.toFixed(2)})"><path d="M0,-22 L7,0 L0,-5 L-7,0 Z" fill="#222"/><text x="0" y="12" text-anchor="middle" font-weight="700" transform="rotate(${(-angle).toFixed(2)} 0 8)">N</text></g>`);
  p.push(html`<text x="${ax - 30}" y="${ay + 26}" text-anchor="end" font-size="10" fill="#555">${o.northAngle === null ? 'grid north' : `true north (${formatValue(angle, 2)}° from grid north)`}</text>`);
  p.push(html`</svg>`);
  return joinMarkup(p);
}
