// A report input with every part filled (model, comparison with a failed candidate, cross-validation,
// surfaces with P(exceed), realisations, suggestions, read-report entries and warnings), and a way to
// put hostile text into every string field of it. Used by the hostile-report unit test (property-based)
// and by the browser test that opens such a report.
import { createProject, simulationMethodText, type ComparisonRow, type ProjectSimulation } from '../../src/io/project.ts';
import type { ReportInput } from '../../src/io/report.ts';
import { prepareReport } from '../../src/worker/report-data.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';
import { planarSamplesCsv } from '../cli/run-cli.ts';

/**
 * Text that acts when written into HTML unescaped (common practice: the usual injection probes):
 * elements, event handlers, a refresh, quotes that end an attribute, CDATA and comment ends.
 */
export const HOSTILE_TEXT: readonly string[] = [
  '<meta http-equiv="refresh" content="0;url=https://example.invalid/">',
  'Pb (mg/kg<meta http-equiv=refresh content="0;url=https://example.invalid/"><img src=x onerror=window.__gapwisePwned=1>)',
  '<img src=x onerror="window.__gapwisePwned=1">',
  '</script><script>window.__gapwisePwned=1</script>',
  '"><svg onload=window.__gapwisePwned=1>',
  "' onmouseover='window.__gapwisePwned=1' x='",
  ']]><!-- --><iframe src="javascript:window.__gapwisePwned=1"></iframe>',
  '</title></style></textarea><b>bold</b>',
  '<a href="javascript:window.__gapwisePwned=1">x</a> & &amp; &lt;',
  '<base href="https://example.invalid/"><link rel=stylesheet href=https://example.invalid/x.css>',
  '<form action=https://example.invalid/><button>go</button></form>',
  '\u0000\u0007\u001b[2J<object data=x></object>',
];

/** Keys whose strings drive the numerics (structure type, trend, transform): left as they are. */
const ENUM_KEYS = new Set(['type', 'trend', 'transform']);

/**
 * Replaces every string in `value` (recursively, in place; typed arrays skipped; keys in ENUM_KEYS
 * kept) by `pick(k)` for the k-th string met. Returns the number of strings replaced.
 */
export function fillStrings(value: unknown, pick: (k: number) => string): number {
  let k = 0;
  const seen = new Set<object>();
  const walk = (node: unknown): void => {
    if (node === null || typeof node !== 'object' || ArrayBuffer.isView(node) || seen.has(node)) return;
    seen.add(node);
    const o = node as Record<string, unknown>;
    for (const key of Object.keys(o)) {
      if (ENUM_KEYS.has(key)) continue;
      const v = o[key];
      if (typeof v === 'string') o[key] = pick(k++);
      else if (Array.isArray(v) && v.every((x) => typeof x === 'string')) o[key] = v.map(() => pick(k++));
      else walk(v);
    }
  };
  walk(value);
  return k;
}

const model: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.5 }, { type: 'exponential', sill: 12, scale: 80 }],
  trend: 'constant', transform: 'none',
  fit: { method: 'reml', converged: true, logLikelihood: -50, aic: 106, warnings: [{ code: 'optimiser-stopped', message: 'the optimiser stopped at its bound' }] },
};
const comparison: ComparisonRow[] = [
  { key: 'exponential', label: 'Exponential', model, logLikelihood: -50, aic: 106, rmse: 2.1, msse: 1.02 },
  { key: 'gaussian', label: 'Gaussian', model: null, logLikelihood: null, aic: null, rmse: null, msse: null, error: 'did not converge' },
];
const simulation: ProjectSimulation = {
  count: 20, seed: 7, support: 'block', blockPoints: 3, depth: 0.5,
  summary: {
    threshold: 20, cell: 12, activeCells: 400,
    area: { median: 12_300, p05: 9_800, p95: 15_100, mean: 12_410, unit: 'm²' },
    volume: { median: 6_150, p05: 4_900, p95: 7_550, mean: 6_205, unit: 'm³', depth: 0.5 },
    fraction: { median: 0.3075, p05: 0.245, p95: 0.3775, mean: 0.31025 },
    method: simulationMethodText({ support: 'block', blockPoints: 3, log: false, count: 20 }),
    made: '2026-03-01T09:00:00.000Z',
  },
};

/** A report input with every optional part present; a fresh deep copy on each call. */
export function fullReportInput(): ReportInput {
  const project = createProject({
    samples: { fileName: 'wells.csv', text: planarSamplesCsv(), intake: { crs: 'EPSG:32633' }, unit: 'mg/L' },
    model, structure: { chosen: 'exponential', comparison }, grid: { cellSize: 20 }, threshold: 25,
    title: 'Invented wells', simulation,
    suggestions: [{ rank: 1, x: 500100, y: 5400070, lon: 15.0013, lat: 48.7526, benefit: 0.4, mean: 24, sd: 1.5, pExceed: 0.3 }],
  });
  project.suggestOptions = { mode: 'variance', count: 1 } as typeof project.suggestOptions;
  const input = prepareReport(project, { software: { name: 'gapwise', version: '9.9.9' }, created: '2026-03-01T10:00:00.000Z', compare: false });
  const r = input.intake.report;
  r.entries.push({ line: 4, field: 'nitrate', raw: 'n/a', action: 'rejected', reason: 'not a number' });
  r.warnings.push({ code: 'note', message: 'a warning from reading' } as (typeof r.warnings)[number]);
  r.transformAdvice ||= 'no transform needed';
  r.idColumn ||= 'station';
  r.delimiter ||= ',';
  input.variogram?.notes.push('a note on the variogram');
  input.warnings = [...(input.warnings ?? []), { code: 'note', message: 'a warning on the report' } as NonNullable<ReportInput['warnings']>[number]];
  return input;
}

/**
 * Every start tag, comment or declaration in document order: a tag as its name with its attribute
 * names (quoted values skipped); anything that starts like markup but does not parse as a well-formed
 * start tag is kept whole (up to 40 characters) so that it never matches a clean outline.
 */
export function elementOutline(html: string): string[] {
  const out: string[] = [];
  const tag = /<([a-zA-Z][\w:-]*)((?:\s+[^\s=>/"']+(?:="[^"]*")?)*)\s*\/?>/y;
  for (const m of html.matchAll(/<(?=[a-zA-Z!?])/g)) {
    tag.lastIndex = m.index;
    const t = tag.exec(html);
    if (!t) {
      out.push(html.slice(m.index, m.index + 40));
      continue;
    }
    const attributes = [...t[2].matchAll(/\s+([^\s=>/"']+)(?:="[^"]*")?/g)].map((a) => a[1]);
    out.push(`${t[1].toLowerCase()}[${attributes.join(' ')}]`);
  }
  return out;
}
