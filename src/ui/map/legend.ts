/**
 * Legends for the surface layers, in data units: the data (colour stops and labelled ticks, or
 * classes) for a component to draw, and a self-contained SVG string of it for reports and exports.
 * Every text that comes from the user (unit, title) is escaped before it enters the SVG.
 */
import { SCALES, colourAt, hex, type ScaleName } from './colour-scales.ts';
import { html, type Markup } from '../../io/markup.ts';
import { niceTicks } from '../../io/ticks.ts';
import { logTicks } from '../../io/report-svg.ts';

export type LegendKind = 'mean' | 'sd' | 'pExceed';

export interface LegendOptions {
  kind: LegendKind;
  /** Values at the scale's ends; default [0, 1] for pExceed (required for mean and sd). */
  domain?: [number, number];
  /** Default: 'loam' for mean, 'haze' for sd, 'tide' for pExceed. */
  scale?: ScaleName;
  /** Data unit, e.g. 'mg/kg' ('' when none). */
  unit?: string;
  /** The action level, for the pExceed title. */
  threshold?: number;
  /** Replaces the default title. */
  title?: string;
  /** About how many labelled ticks (default 5). */
  ticks?: number;
  /** Draw this many equal classes instead of a continuous bar. */
  classes?: number;
  /** Colours spaced by ln(value) (skewed data; needs a domain above 0). */
  log?: boolean;
  /** Mark the action level (`threshold`) on a mean legend's bar; pExceed legends name it in a line. */
  markThreshold?: boolean;
}

export interface LegendTick {
  /** Position along the bar, 0..1. */
  t: number;
  value: number;
  label: string;
}

export interface LegendClass {
  from: number;
  to: number;
  label: string;
  colour: string;
}

export interface LegendData {
  kind: LegendKind;
  title: string;
  unit: string;
  scale: ScaleName;
  domain: [number, number];
  /** Colour stops for a continuous bar (t 0..1, '#rrggbb'). */
  gradient: { t: number; colour: string }[];
  ticks: LegendTick[];
  classes?: LegendClass[];
  /** True when colours are spaced by ln(value). */
  log: boolean;
  /** The action level on the bar (mean legend), when it lies inside the domain. */
  mark?: { t: number; value: number; label: string };
  /** A line naming the action level (pExceed legend, or a mean legend whose domain leaves it out). */
  note?: string;
}

const DEFAULT_SCALE: Record<LegendKind, ScaleName> = { mean: 'loam', sd: 'haze', pExceed: 'tide' };

/** Decimals needed to show numbers spaced `step` apart. */
function decimalsFor(step: number): number {
  if (!(step > 0) || !Number.isFinite(step)) return 2;
  return Math.max(0, Math.min(10, -Math.floor(Math.log10(step) + 1e-9)));
}

/** A value as text with the decimals its spacing needs ('−' for negatives, thin-space thousands kept out). */
export function formatAtStep(value: number, step: number): string {
  if (!Number.isFinite(value)) return '–';
  const text = value.toFixed(decimalsFor(step));
  const clean = /^-0(\.0*)?$/.test(text) ? text.slice(1) : text;
  return clean.replace('-', '−');
}

function percent(p: number, step: number): string {
  return `${formatAtStep(p * 100, step * 100)} %`;
}

function titleFor(o: LegendOptions, unit: string): string {
  const u = unit ? ` (${unit})` : '';
  if (o.kind === 'mean') return `Estimated value${u}`;
  if (o.kind === 'sd') return `Uncertainty, standard deviation${u}`;
  if (o.threshold !== undefined && Number.isFinite(o.threshold)) {
    return `Chance of exceeding ${String(Number(o.threshold.toPrecision(6))).replace('-', '−')}${unit ? ' ' + unit : ''}`;
  }
  return 'Chance of exceeding the threshold';
}

/** Builds the legend for a surface layer: title, gradient stops, ticks in data units, optional classes. */
export function legendData(options: LegendOptions): LegendData {
  const kind = options.kind;
  const scale = options.scale ?? DEFAULT_SCALE[kind];
  if (!SCALES[scale]) throw new RangeError(`Expected a scale named ${Object.keys(SCALES).join(', ')}; got ${String(scale)}.`);
  const domain: [number, number] = options.domain ?? (kind === 'pExceed' ? [0, 1] : [NaN, NaN]);
  if (!Number.isFinite(domain[0]) || !Number.isFinite(domain[1]) || domain[1] < domain[0]) {
    throw new RangeError(`Expected a legend domain [min, max] of finite numbers with min ≤ max, got [${domain[0]}, ${domain[1]}].`);
  }
  const unit = options.unit ?? '';
  const [lo, hi] = domain;
  const span = hi - lo;
  const log = options.log === true && kind !== 'pExceed' && lo > 0 && hi > lo;
  const position = log
    ? (v: number) => (Math.log(v) - Math.log(lo)) / (Math.log(hi) - Math.log(lo))
    : (v: number) => (span > 0 ? (v - lo) / span : 0.5);
  const gradient = Array.from({ length: 11 }, (_, k) => ({ t: k / 10, colour: hex(colourAt(scale, k / 10)) }));

  const logValues = log ? logTicks(lo, hi) : [];
  const values = kind === 'pExceed' && lo === 0 && hi === 1 ? [0, 0.25, 0.5, 0.75, 1]
    : logValues.length >= 2 ? logValues : niceTicks(lo, hi, options.ticks ?? 5);
  const step = values.length > 1 ? values[1] - values[0] : Math.abs(lo) / 100 || 1;
  // Log ticks (1, 2, 5 × 10^k) are not evenly spaced: each takes the decimals its own size needs.
  const ticks = values.map((value) => ({
    t: position(value),
    value,
    label: kind === 'pExceed' ? percent(value, step) : formatAtStep(value, logValues.length >= 2 ? value : step),
  }));

  const data: LegendData = { kind, title: options.title ?? titleFor(options, unit), unit, scale, domain: [lo, hi], gradient, ticks, log };
  const level = options.threshold;
  if (options.markThreshold && level !== undefined && Number.isFinite(level)) {
    const levelText = `${String(Number(level.toPrecision(6))).replace('-', '−')}${unit ? ` ${unit}` : ''}`;
    if (kind === 'pExceed') {
      data.note = `Action level ${levelText}: colours give the chance that the value there is above it.`;
    } else if (kind === 'mean' && level >= lo && level <= hi && (!log || level > 0)) {
      data.mark = { t: position(level), value: level, label: `action level ${levelText}` };
    } else if (kind === 'mean') {
      data.note = `Action level ${levelText}: ${level < lo ? 'below' : 'above'} every value shown.`;
    }
  }
  if (options.classes !== undefined) {
    const n = options.classes;
    if (!Number.isInteger(n) || n < 1) throw new RangeError(`Expected at least 1 legend class, got ${n}.`);
    const width = span / n;
    // Label with the decimals that tell neighbouring class limits apart.
    const labelStep = width > 0 ? width : 1;
    data.classes = Array.from({ length: n }, (_, k) => {
      const from = lo + k * width, to = k === n - 1 ? hi : lo + (k + 1) * width;
      const fmt = (v: number) => (kind === 'pExceed' ? percent(v, labelStep) : formatAtStep(v, labelStep));
      return { from, to, label: `${fmt(from)} – ${fmt(to)}`, colour: hex(colourAt(scale, (k + 0.5) / n)) };
    });
  }
  return data;
}

export interface LegendSvgOptions {
  /** Total width in px (default 260). */
  width?: number;
  /** Font size in px (default 12). */
  fontSize?: number;
  /** Id prefix for the gradient (several legends on one page need different ones). */
  idPrefix?: string;
  /** Extra line under the legend, e.g. the screening caution in an export. */
  footnote?: string;
}

/** A self-contained SVG of the legend (continuous bar with ticks, or one swatch row per class). */
export function legendSvg(data: LegendData, options: LegendSvgOptions = {}): string {
  const width = options.width ?? 260;
  const font = options.fontSize ?? 12;
  const pad = 8;
  const barWidth = width - 2 * pad;
  const id = `${(options.idPrefix ?? 'gapwise-legend').replace(/[^A-Za-z0-9_-]/g, '')}-${data.kind}`;
  const parts: Markup[] = [];
  let y = pad + font;
  parts.push(html`<text x="${pad}" y="${y}" font-weight="600">${data.title}</text>`);
  y += 6;
  if (data.classes) {
    const row = font + 6;
    for (const c of data.classes) {
      parts.push(html`<rect x="${pad}" y="${y}" width="${font + 4}" height="${font + 2}" fill="${c.colour}" stroke="#0003"/>`);
      parts.push(html`<text x="${pad + font + 10}" y="${y + font}">${c.label}</text>`);
      y += row;
    }
  } else {
    const barHeight = 14;
    parts.push(html`<defs><linearGradient id="${id}" x1="0" x2="1" y1="0" y2="0">${data.gradient
      .map((s) => html`<stop offset="${(s.t * 100).toFixed(1)}%" stop-color="${s.colour}"/>`)}</linearGradient></defs>`);
    parts.push(html`<rect x="${pad}" y="${y}" width="${barWidth}" height="${barHeight}" fill="url(#${id})" stroke="#0003"/>`);
    y += barHeight;
    for (const t of data.ticks) {
      const x = (pad + t.t * barWidth).toFixed(1);
      const anchor = t.t < 0.05 ? 'start' : t.t > 0.95 ? 'end' : 'middle';
      parts.push(html`<line x1="${x}" x2="${x}" y1="${y}" y2="${y + 4}" stroke="#333"/>`);
      parts.push(html`<text x="${x}" y="${y + 4 + font}" text-anchor="${anchor}">${t.label}</text>`);
    }
    y += 4 + font;
  }
  if (options.footnote) {
    y += font + 4;
    parts.push(html`<text x="${pad}" y="${y}" font-size="${Math.round(font * 0.85)}" fill="#444">${options.footnote}</text>`);
  }
  const height = Math.ceil(y + pad);
  return html`<svg xmlns="http://www.w3.org/2000/svg" width="${width}" height="${height}" viewBox="0 0 ${width} ${height}" role="img" aria-label="${data.title}" font-family="system-ui, sans-serif" font-size="${font}"><title>${data.title}</title>${parts}</svg>`.text;
}
