/**
 * Covariates of the mean: from columns (numbers, or text / integer codes read as categories) to the
 * encoded covariate columns the trend uses (./trend.ts).
 *
 * A numeric covariate is one column, its values as given. A categorical covariate with levels
 * l₁ … l_k becomes k − 1 indicator columns (1 where the level is l_j, j ≥ 2, else 0): the first level is
 * the reference, absorbed by the constant (treatment coding, common practice). Levels are recorded in
 * the trend the first time the samples are encoded (sorted: numerically when every level is a number,
 * else by code point) and reused for targets, so a target's level the samples never had is an error.
 * Units: each numeric covariate in its own unit. Cost O(n·q).
 */
import type { CovariateTrend } from './model.ts';
import { GapwiseError } from '../shared/errors.ts';
import { covariateColumnCount } from './trend.ts';

/** One column of values: numbers, or text codes into a list of levels. */
export type CovariateColumn =
  | { kind: 'numeric'; values: Float64Array }
  | { kind: 'text'; codes: Uint32Array; levels: string[] };

/** Where the rows come from, for messages: a file name and the line of each row (header = line 1). */
export interface CovariateSource {
  file?: string;
  /** Line of row i; default i + 2 (one header line). */
  line?: (i: number) => number;
  /** What a row is called in messages; default "row". */
  what?: string;
}

/** The text of a numeric value used as a category level (integer codes: "1", "2", ...). */
function levelOfNumber(v: number): string {
  return String(v);
}

function sortLevels(levels: string[]): string[] {
  const numeric = levels.every((l) => l.trim() !== '' && Number.isFinite(Number(l)));
  return [...levels].sort(numeric ? (a, b) => Number(a) - Number(b) : (a, b) => (a < b ? -1 : a > b ? 1 : 0));
}

function columnOf(columns: Readonly<Record<string, CovariateColumn | undefined>>, name: string, source: CovariateSource): CovariateColumn {
  const c = columns[name];
  if (!c) {
    throw new GapwiseError('missing-column', `The covariate column "${name}" is missing; expected a column of that name.`, { file: source.file, column: name });
  }
  return c;
}

/**
 * The trend with the levels of every categorical covariate recorded from the sample columns: text
 * columns and those listed in `categorical` are categorical; levels already recorded are kept.
 * Throws 'bad-value' for a categorical covariate with more than MAX_LEVELS levels.
 */
export function resolveCovariateTrend(
  trend: CovariateTrend, columns: Readonly<Record<string, CovariateColumn | undefined>>, source: CovariateSource = {},
): CovariateTrend {
  const levels: Record<string, string[]> = { ...(trend.levels ?? {}) };
  for (const name of trend.covariates) {
    if (levels[name]) continue;
    const c = columnOf(columns, name, source);
    let seen: string[] | null = null;
    if (c.kind === 'text') {
      const used = new Set<number>();
      for (let i = 0; i < c.codes.length; i++) used.add(c.codes[i]);
      seen = [...used].map((code) => c.levels[code]);
    } else if (trend.categorical?.includes(name)) {
      const used = new Set<string>();
      for (let i = 0; i < c.values.length; i++) if (Number.isFinite(c.values[i])) used.add(levelOfNumber(c.values[i]));
      seen = [...used];
    }
    if (seen) {
      const empty = seen.indexOf('');
      if (empty >= 0) seen.splice(empty, 1);
      if (seen.length > 50) {
        throw new GapwiseError('bad-value', `The categorical covariate "${name}" has ${seen.length} levels; expected at most 50.`, { file: source.file, column: name });
      }
      if (seen.length === 0) {
        throw new GapwiseError('bad-value', `The categorical covariate "${name}" has no levels; expected at least one non-empty value.`, { file: source.file, column: name });
      }
      levels[name] = sortLevels(seen);
    }
  }
  const out: CovariateTrend = { covariates: [...trend.covariates] };
  if (trend.coordinates) out.coordinates = true;
  if (Object.keys(levels).length > 0) out.levels = levels;
  return out;
}

/**
 * Encoded covariate columns (m×q row-major) of m rows under a trend whose levels are recorded.
 * Throws GapwiseError 'missing-column' for an absent column and 'bad-value' naming the column and line
 * for an empty or non-numeric cell, or a level the samples did not have.
 */
export function encodeCovariates(
  trend: CovariateTrend, columns: Readonly<Record<string, CovariateColumn | undefined>>, m: number, source: CovariateSource = {},
): Float64Array {
  const q = covariateColumnCount(trend);
  const out = new Float64Array(m * q);
  const line = source.line ?? ((i: number) => i + 2);
  const what = source.what ?? 'row';
  let k = 0;
  for (const name of trend.covariates) {
    const c = columnOf(columns, name, source);
    const length = c.kind === 'numeric' ? c.values.length : c.codes.length;
    if (length !== m) {
      throw new GapwiseError('bad-value', `The covariate column "${name}" has ${length} values; expected ${m}, one per ${what}.`, { file: source.file, column: name });
    }
    const levels = trend.levels?.[name];
    if (!levels) {
      if (c.kind !== 'numeric') {
        throw new GapwiseError('bad-value', `The covariate "${name}" holds text; expected numbers, or the column treated as categorical.`, { file: source.file, column: name });
      }
      for (let i = 0; i < m; i++) {
        const v = c.values[i];
        if (!Number.isFinite(v)) {
          throw new GapwiseError('bad-value', `The covariate "${name}" is empty or not a number in this ${what}; expected a number.`, { file: source.file, row: line(i), column: name });
        }
        out[i * q + k] = v;
      }
      k += 1;
      continue;
    }
    const index = new Map<string, number>(levels.map((l, j) => [l, j]));
    for (let i = 0; i < m; i++) {
      let level: string;
      if (c.kind === 'text') level = c.levels[c.codes[i]] ?? '';
      else level = Number.isFinite(c.values[i]) ? levelOfNumber(c.values[i]) : '';
      if (level === '') {
        throw new GapwiseError('bad-value', `The categorical covariate "${name}" is empty in this ${what}; expected one of its levels.`, { file: source.file, row: line(i), column: name });
      }
      const j = index.get(level);
      if (j === undefined) {
        const shown = levels.length > 12 ? `${levels.slice(0, 12).join(', ')}, ...` : levels.join(', ');
        throw new GapwiseError('bad-value', `The level "${level.length > 80 ? `${level.slice(0, 80)}...` : level}" of the covariate "${name}" is not among the levels of the samples (${shown}); expected one of those.`, { file: source.file, row: line(i), column: name });
      }
      if (j > 0) out[i * q + k + j - 1] = 1;
    }
    k += levels.length - 1;
  }
  return out;
}
