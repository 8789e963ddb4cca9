/**
 * Columns of the samples as read, beside coordinates and value: a column of numbers (missing cells
 * NaN) or of text (codes into its levels, in order of first appearance; a missing cell is the level
 * ""). Covariates of the mean come from here: `covariateColumns` reads the columns a covariate trend
 * names, with messages that name the column and line of a bad cell.
 */
import type { CovariateColumn, CovariateSource } from '../core/covariance/covariates.ts';
import type { CovariateTrend } from '../core/covariance/model.ts';
import { GapwiseError } from '../core/shared/errors.ts';
import { chooseMark, isMissing, parseColumnNumber } from './numbers.ts';
import type { IntakeResult } from './types.ts';
import { cellText } from './sample-table.ts';

/** One source column: numbers, or text codes into levels. */
export type SourceColumn = CovariateColumn;

/**
 * The column `name` of the accepted samples (one entry per sample, in sample order). A column whose
 * every non-missing cell is a number is numeric; any other is text. Throws GapwiseError
 * 'missing-column' when no sample has the column.
 */
export function sourceColumn(intake: IntakeResult, name: string): SourceColumn {
  const { table } = intake;
  const c = table.columns.indexOf(name);
  if (c < 0) {
    const known = table.columns;
    const shown = known.length > 12 ? `${known.slice(0, 12).join(', ')}, ...` : known.join(', ');
    throw new GapwiseError('missing-column', `The samples have no column "${name}"; expected one of ${shown || 'their columns'}.`, { file: intake.report.fileName, column: name });
  }
  // One cell per sample: a merged sample's first source row.
  const cells = Array.from(table.record, (r) => cellText(table.cells[c], r));
  const marks = chooseMark(cells.filter((c) => !isMissing(c)), intake.report.delimiter ?? ',');
  const values = new Float64Array(cells.length);
  let numeric = true;
  for (let i = 0; i < cells.length && numeric; i++) {
    if (isMissing(cells[i])) {
      values[i] = NaN;
      continue;
    }
    const p = parseColumnNumber(cells[i], marks);
    if (p.ok) values[i] = p.value;
    else numeric = false;
  }
  if (numeric) return { kind: 'numeric', values };
  const levels: string[] = [];
  const index = new Map<string, number>();
  const codes = new Uint32Array(cells.length);
  for (let i = 0; i < cells.length; i++) {
    const level = isMissing(cells[i]) ? '' : cells[i].trim();
    let code = index.get(level);
    if (code === undefined) {
      code = levels.length;
      index.set(level, code);
      levels.push(level);
    }
    codes[i] = code;
  }
  return { kind: 'text', codes, levels };
}

/** The source line (CSV, header = 1) or feature number of sample i. */
export function sampleLine(intake: IntakeResult, i: number): number {
  return intake.table.line[i] ?? i + 2;
}

/**
 * The columns a covariate trend names, read from the samples (or targets) with `sourceColumn`: a
 * covariate that is not categorical (neither listed in `categorical` nor with recorded levels) must be
 * numeric: a text cell in it is GapwiseError 'bad-value' naming the column, the line and the cell. A
 * column of words only is read as categorical, unless `fitted` (the trend of a fitted model, whose
 * categorical covariates all have their levels recorded).
 */
export function covariateColumns(
  intake: IntakeResult, trend: CovariateTrend, what = 'sample', fitted = false,
): { columns: Record<string, CovariateColumn>; source: CovariateSource } {
  const columns: Record<string, CovariateColumn> = {};
  const file = intake.report.fileName;
  const source: CovariateSource = { file, line: (i) => sampleLine(intake, i), what };
  for (const name of trend.covariates) {
    const c = sourceColumn(intake, name);
    const categorical = trend.levels?.[name] !== undefined || trend.categorical?.includes(name);
    if (c.kind === 'text' && !categorical) {
      const numbersToo = c.levels.filter((l) => l !== '' && Number.isFinite(Number(l))).length;
      // A column of words is a category by nature (unless a fitted model recorded it as numeric); one of
      // numbers with a stray word is a bad cell.
      if (numbersToo === 0 && !fitted) {
        columns[name] = c;
        continue;
      }
      for (let i = 0; i < c.codes.length; i++) {
        const level = c.levels[c.codes[i]];
        if (level !== '' && !(numbersToo > 0 && Number.isFinite(Number(level)))) {
          throw new GapwiseError('bad-value', `The covariate "${name}" holds "${level.length > 40 ? `${level.slice(0, 40)}...` : level}" in this ${what}; expected a number.`, { file, row: sampleLine(intake, i), column: name });
        }
      }
    }
    columns[name] = c;
  }
  return { columns, source };
}
