/**
 * Numbers as text, one function per meaning: what people read on screen and in the report
 * (`formatValue`, `formatCount`, `formatProbability`, `formatPercent`, `formatCoordinate`,
 * `formatDistance`, `formatDuration`, `formatTick`) and what machines read back from a CSV
 * (`formatFullPrecision`). Pure functions, no DOM, no locale of the machine: thousands are grouped with
 * commas and negative numbers carry the minus sign (U+2212) in text for people; the CSV form keeps a
 * plain ASCII hyphen and 12 significant digits.
 */

const MINUS = '−';
const DASH = '–';

function withMinus(text: string): string {
  return text.replace('-', MINUS);
}

/** Digits below the point that show `digits` significant digits of `v` (0 when v is large). */
function decimalsFor(v: number, digits: number): number {
  const a = Math.abs(v);
  if (a === 0) return 0;
  return Math.max(0, digits - 1 - Math.floor(Math.log10(a)));
}

/** Writes `a × 10ⁿ` with superscript digits, for the very small or very large. */
function powerOfTen(v: number, digits: number): string {
  const [mant, exp] = v.toExponential(Math.max(0, digits - 1)).split('e');
  const sup: Record<string, string> = { '-': '⁻', '+': '', 0: '⁰', 1: '¹', 2: '²', 3: '³', 4: '⁴', 5: '⁵', 6: '⁶', 7: '⁷', 8: '⁸', 9: '⁹' };
  const m = String(Number(mant));
  return `${withMinus(m)} × 10${[...exp].map((c) => sup[c] ?? c).join('')}`;
}

/**
 * Number formats by fraction digits, made once: `toLocaleString` with options builds a new formatter
 * on every call, a good part of a table's drawing time. Same text as `toLocaleString('en-US', ...)`.
 */
const grouped = new Map<number, Intl.NumberFormat>();
function groupedFormat(maximumFractionDigits: number): Intl.NumberFormat {
  let f = grouped.get(maximumFractionDigits);
  if (!f) {
    f = new Intl.NumberFormat('en-US', { maximumFractionDigits, useGrouping: true });
    grouped.set(maximumFractionDigits, f);
  }
  return f;
}
const countFormat = new Intl.NumberFormat('en-US');

/**
 * A measured or fitted quantity for people: `digits` significant digits (3 unless given), thousands
 * grouped ("12,400", "0.0184", "−84.16"), no exponent from 0.001 up to 10¹⁵; smaller or larger
 * magnitudes as "3.2 × 10⁻⁵". A missing or not-a-number value is a dash.
 */
export function formatValue(v: number | null | undefined, digits = 3): string {
  if (v === null || v === undefined || Number.isNaN(v)) return DASH;
  if (!Number.isFinite(v)) return v > 0 ? '∞' : `${MINUS}∞`;
  if (v === 0) return '0';
  const a = Math.abs(v);
  if (a < 1e-3 || a >= 1e15) return powerOfTen(v, digits);
  const rounded = Number(v.toPrecision(digits));
  const text = groupedFormat(decimalsFor(rounded, digits)).format(rounded);
  return withMinus(text);
}

/** A count of things: "149", "30,079". */
export function formatCount(n: number | null | undefined): string {
  if (n === null || n === undefined || !Number.isFinite(n)) return DASH;
  return withMinus(countFormat.format(Math.round(n)));
}

/**
 * A probability (0–1) as a percentage for people: "< 0.1 %" and "> 99.9 %" at the ends, otherwise one
 * decimal below 10 % and above 90 %, whole percents between ("0.4 %", "38 %", "97.2 %").
 */
export function formatProbability(p: number | null | undefined): string {
  if (p === null || p === undefined || !Number.isFinite(p)) return DASH;
  const pct = p * 100;
  if (pct < 0.1) return pct <= 0 ? '0 %' : '< 0.1 %';
  if (pct > 99.9) return pct >= 100 ? '100 %' : '> 99.9 %';
  const text = pct < 10 || pct > 90 ? String(Math.round(pct * 10) / 10) : String(Math.round(pct));
  return `${text} %`;
}

/** A share (0–1) as a percentage with `digits` significant digits: "94.6 %", "3.1 %". */
export function formatPercent(fraction: number | null | undefined, digits = 3): string {
  if (fraction === null || fraction === undefined || !Number.isFinite(fraction)) return DASH;
  return `${formatValue(fraction * 100, digits)} %`;
}

/**
 * A coordinate for people, never with an exponent or thousands separators (it may be typed into a
 * GPS or a survey instrument): longitude / latitude with 6 decimals (about 0.1 m), projected or local
 * coordinates with `decimals` (1 unless given).
 */
export function formatCoordinate(v: number | null | undefined, kind: 'degrees' | 'planar', decimals?: number): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return DASH;
  return withMinus(v.toFixed(decimals ?? (kind === 'degrees' ? 6 : 1)));
}

/** A distance in metres as "850 m" or "1.25 km" (3 significant digits). */
export function formatDistance(m: number | null | undefined, unit = 'm'): string {
  if (m === null || m === undefined || !Number.isFinite(m)) return DASH;
  // Lengths not known to be metres (local coordinates) keep their own unit, never "km".
  if (unit !== 'm') return `${formatValue(m)} ${unit}`;
  return Math.abs(m) >= 1000 ? `${formatValue(m / 1000)} km` : `${formatValue(m)} m`;
}

/** A duration in seconds as "under 0.1 s", "0.4 s", "12 s" or "3 min". */
export function formatDuration(s: number | null | undefined): string {
  if (s === null || s === undefined || !Number.isFinite(s)) return DASH;
  if (s < 0.1) return 'under 0.1 s';
  if (s < 1) return `${formatValue(s, 1)} s`;
  if (s < 90) return `${Math.round(s)} s`;
  return `${Math.round(s / 60)} min`;
}

/** A short axis label: "100k", "1.5M", "0.25", "−3". */
export function formatTick(v: number): string {
  const a = Math.abs(v);
  if (a >= 1e6) return `${formatValue(v / 1e6)}M`;
  if (a >= 1e4) return `${formatValue(v / 1e3)}k`;
  return formatValue(v);
}

/**
 * A number for a CSV or another file read by programs: up to 12 significant digits (enough to read back
 * a float64 to about 1e-12 of its value) with the float noise of the last digits removed, plain ASCII,
 * no grouping; an empty cell for a missing value, `inf` / `-inf` for an infinite one.
 */
export function formatFullPrecision(v: number | null | undefined): string {
  if (v === null || v === undefined || Number.isNaN(v)) return '';
  if (!Number.isFinite(v)) return v > 0 ? 'inf' : '-inf';
  return String(Number(v.toPrecision(12)));
}
