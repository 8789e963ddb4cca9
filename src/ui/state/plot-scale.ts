/**
 * Small helpers for the SVG charts: linear scales, rounded tick values, histogram bins and number
 * formatting. Pure functions, no DOM.
 */

export interface LinearScale {
  (v: number): number;
  domain: [number, number];
  range: [number, number];
}

/** Maps [d0, d1] linearly onto [r0, r1]; a zero-width domain maps everything to the middle. */
export function linearScale(domain: [number, number], range: [number, number]): LinearScale {
  const [d0, d1] = domain;
  const [r0, r1] = range;
  const span = d1 - d0;
  const f = ((v: number) => (span === 0 ? (r0 + r1) / 2 : r0 + ((v - d0) / span) * (r1 - r0))) as LinearScale;
  f.domain = [d0, d1];
  f.range = [r0, r1];
  return f;
}

/** Step between ticks: 1, 2 or 5 times a power of ten, giving about `count` ticks over [min, max]. */
export function tickStep(min: number, max: number, count: number): number {
  const span = Math.abs(max - min);
  if (!(span > 0) || !Number.isFinite(span)) return 1;
  const raw = span / Math.max(1, count);
  const power = 10 ** Math.floor(Math.log10(raw));
  const f = raw / power;
  const nice = f >= 7.5 ? 10 : f >= 3.5 ? 5 : f >= 1.5 ? 2 : 1;
  return nice * power;
}

/** Rounded tick values covering [min, max] (inside it), about `count` of them. */
export function niceTicks(min: number, max: number, count = 5): number[] {
  if (!Number.isFinite(min) || !Number.isFinite(max)) return [];
  if (min === max) return [min];
  const step = tickStep(min, max, count);
  const start = Math.ceil(min / step - 1e-9) * step;
  const out: number[] = [];
  for (let v = start; v <= max + step * 1e-9; v += step) out.push(Math.abs(v) < step * 1e-9 ? 0 : +v.toPrecision(12));
  return out;
}

/** The smallest rounded interval [a, b] containing [min, max], for axis domains. */
export function niceDomain(min: number, max: number, count = 5): [number, number] {
  if (!Number.isFinite(min) || !Number.isFinite(max)) return [0, 1];
  if (min === max) return min === 0 ? [0, 1] : [Math.min(0, min), Math.max(0, max) || 1];
  const step = tickStep(min, max, count);
  return [Math.floor(min / step) * step, Math.ceil(max / step) * step];
}

export interface HistogramBin {
  from: number;
  to: number;
  count: number;
}

/**
 * Equal-width histogram of the finite values. Bin count by Sturges' rule (⌈log₂ n⌉ + 1), at most 40,
 * unless given. The last bin is closed on the right so the maximum is counted.
 */
export function histogram(values: ArrayLike<number>, binCount?: number): HistogramBin[] {
  const v: number[] = [];
  for (let i = 0; i < values.length; i++) if (Number.isFinite(values[i])) v.push(values[i]);
  if (v.length === 0) return [];
  let min = Infinity;
  let max = -Infinity;
  for (const x of v) {
    if (x < min) min = x;
    if (x > max) max = x;
  }
  const k = Math.max(1, Math.min(40, binCount ?? Math.ceil(Math.log2(v.length)) + 1));
  if (min === max) return [{ from: min, to: max, count: v.length }];
  const width = (max - min) / k;
  const bins: HistogramBin[] = Array.from({ length: k }, (_, i) => ({
    from: min + i * width,
    to: i === k - 1 ? max : min + (i + 1) * width,
    count: 0,
  }));
  for (const x of v) bins[Math.min(k - 1, Math.floor((x - min) / width))].count++;
  return bins;
}

/** A number for people: about 3–4 significant figures, no exponent for ordinary sizes. */
export function formatNumber(v: number | null | undefined, digits = 3): string {
  if (v === null || v === undefined || Number.isNaN(v)) return '–';
  if (!Number.isFinite(v)) return v > 0 ? '∞' : '−∞';
  if (v === 0) return '0';
  const a = Math.abs(v);
  let text: string;
  if (a >= 1e6 || a < 1e-3) text = v.toExponential(Math.max(0, digits - 1));
  else if (a >= 10 ** digits) text = Math.round(v).toLocaleString('en-US');
  else text = String(+v.toPrecision(digits));
  return text.replace('-', '−');
}

/** A distance in metres as "850 m" or "1.25 km". */
export function formatDistance(m: number, unit = 'm'): string {
  if (!Number.isFinite(m)) return '–';
  // Lengths not known to be metres (local coordinates) keep their own unit, never "km".
  if (unit !== 'm') return `${formatNumber(m)} ${unit}`;
  return Math.abs(m) >= 1000 ? `${formatNumber(m / 1000)} km` : `${formatNumber(m)} m`;
}

/** A duration in seconds as "0.4 s", "12 s" or "3 min". */
export function formatDuration(s: number): string {
  if (!Number.isFinite(s)) return '–';
  if (s < 0.1) return 'under 0.1 s';
  if (s < 1) return `${formatNumber(s, 1)} s`;
  if (s < 90) return `${Math.round(s)} s`;
  return `${Math.round(s / 60)} min`;
}

/** A short axis label: 100k, 1.5M, 0.25, −3. */
export function formatTick(v: number): string {
  const a = Math.abs(v);
  if (a >= 1e6) return `${formatNumber(v / 1e6)}M`;
  if (a >= 1e4) return `${formatNumber(v / 1e3)}k`;
  return formatNumber(v);
}
