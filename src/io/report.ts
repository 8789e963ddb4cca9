/**
 * The screening report: ONE self-contained HTML file (inline CSS, inline SVG figures, map images as
 * data URLs; no script, no font, nothing fetched — a Content-Security-Policy in the page forbids it),
 * laid out for printing to PDF from the browser (A4 pages, page breaks between parts).
 *
 * Parts: the screening caution (top and on every printed page), job summary, the area (and volume)
 * above the action level from conditional realisations with its 90 % interval and method (or one line
 * saying none was made and how to make one), samples (data summary,
 * read report, histogram), structure (variogram with the model, model comparison), cross-validation
 * (figures and plot), surfaces (maps of mean, sd and P(exceed) with legends, scale bar and north
 * arrow), suggested next samples (when present), and every parameter needed to reproduce the result
 * with the software version and date. Every text that comes from a file or the user is escaped.
 *
 * `reportHtml` only formats (pure, no I/O) the data in a `ReportInput`: what the app already has, or
 * what `prepareReport` (src/worker/report-data.ts, the engine) computes from a project.
 */
import { CAUTION } from '../core/shared/caution.ts';
import type { Warning } from '../core/shared/errors.ts';
import type { CovarianceModel, CovariateTrend, Structure } from '../core/covariance/model.ts';
import { isCovariateTrend, nuggetOf } from '../core/covariance/model.ts';
import { fitWarnings } from '../core/covariance/fit-warnings.ts';
import { cellCount, type Grid } from '../core/geometry/grid.ts';
import type { LeaveOneOutResult } from '../core/validation/cross-validation.ts';
import type { EmpiricalVariogram } from '../core/fitting/variogram.ts';
import { surfaceCovariance, surfaceVariance } from '../core/covariance/covariance.ts';
import type { Polygon } from './boundary.ts';
import { createTransform, LOCAL_CRS } from './crs.ts';
import type { IntakeResult } from './types.ts';
import {
  gridGeometry, type ComparisonRow, type Project, type ProjectSimulation, type Suggestion,
} from './project.ts';
import { defaultLuts, type Lut, type ReportScale } from './report-colours.ts';
import {
  crossValidationSvg, finiteRange, histogramSvg, legendBarSvg, mapSvg, variogramSvg,
} from './report-svg.ts';
import { formatCoordinate, formatPercent, formatProbability, formatValue } from './format.ts';
import type { LocalAccuracy } from '../core/prediction/local-accuracy.ts';
import { html, joinMarkup, trusted, type Interpolation, type Markup } from './markup.ts';

/** Surfaces of the whole grid (nx·ny cells each). */
export interface ReportSurface {
  mean: ArrayLike<number>;
  sd: ArrayLike<number>;
  pExceed?: ArrayLike<number>;
  threshold?: number;
}

/**
 * One sentence on a local-neighbourhood surface and its measured error, e.g. "local neighbourhoods of
 * the 64 nearest samples; against exact kriging at 200 cells the mean is within 0.13 % and the sd
 * within 0.05 % of the prior sd (tolerance 1 % / 2 %: met)".
 */
export function localAccuracyText(a: LocalAccuracy): string {
  const against = a.reference === 'exact' ? 'exact kriging' : `kriging from the ${a.referenceNeighbours} nearest samples`;
  return `local neighbourhoods of the ${a.neighbours} nearest samples${a.globalMean ? ' around the mean of all samples' : ''}; `
    + `against ${against} at ${a.checked.toLocaleString('en')} cells the mean is within ${formatPercent(a.mean.max / 100, 2)} `
    + `(RMS ${formatPercent(a.mean.rms / 100, 2)}) and the sd within ${formatPercent(a.sd.max / 100, 2)} (RMS ${formatPercent(a.sd.rms / 100, 2)}) of the prior sd`
    + `${a.scale === 'log' ? ' on the log scale' : ''} (tolerance ${a.tolerance.mean} % / ${a.tolerance.sd} %: ${a.within ? 'met' : 'missed'})`;
}

/** Everything a report shows, computed; plain data. */
export interface ReportInput {
  project: Project;
  intake: IntakeResult;
  /** Boundary polygons in the working CRS. */
  boundary: { work: Polygon[] } | null;
  /** Empirical variogram on the modelling scale (ln values for a log model). */
  variogram: EmpiricalVariogram | null;
  comparison: ComparisonRow[];
  cv: LeaveOneOutResult | null;
  grid: Grid | null;
  surface: ReportSurface | null;
  /**
   * Realisations with the area above the action level (`summary`) shown in the report; absent =
   * the project's own (`project.simulation`), null = none.
   */
  simulation?: ProjectSimulation | null;
  software: { name: string; version: string };
  /** ISO 8601 time the report was made. */
  created: string;
  /** Colour tables for the maps (default: the app's scales). */
  luts?: Partial<Record<ReportScale, Lut>>;
  warnings?: Warning[];
  /** The surface came from local neighbourhoods: their measured error against exact kriging (core/prediction/local-accuracy.ts). */
  localAccuracy?: LocalAccuracy | null;
  /** True when the surface was computed for the report (exact kriging from all samples). */
  exactSurface?: boolean;
}

// ------------------------------------------------------------------------------------ formatting

const fmt = (v: number | null | undefined, digits = 4) => formatValue(v, digits);

/** The choices a design was made with, in words ("Chosen to settle the action level 200 mg/kg: 6 sites, at least 10 m apart."). */
export function designOptionsText(o: Record<string, unknown>, unit: string): string {
  const modes: Record<string, string> = {
    variance: 'Chosen to sharpen the map (least average uncertainty)',
    decision: 'Chosen to settle the action level (least area on the wrong side)',
    coverage: 'Chosen to cover the area evenly',
  };
  const parts: string[] = [];
  if (typeof o.count === 'number') parts.push(`${o.count} site${o.count === 1 ? '' : 's'}`);
  if (typeof o.threshold === 'number') parts.push(`action level ${fmt(o.threshold)}${unit ? ` ${unit}` : ''}`);
  if (typeof o.minSpacing === 'number' && o.minSpacing > 0) parts.push(`at least ${fmt(o.minSpacing)} m apart`);
  if (typeof o.cell === 'number') parts.push(`candidates on ${fmt(o.cell)} m cells`);
  if (typeof o.exclusionPolygons === 'number' && o.exclusionPolygons > 0) parts.push(`${o.exclusionPolygons} exclusion polygon${o.exclusionPolygons === 1 ? '' : 's'} avoided`);
  const mode = typeof o.mode === 'string' ? modes[o.mode] ?? `Chosen by the ${o.mode} criterion` : 'Chosen';
  return `${mode}${parts.length ? `: ${parts.join(', ')}` : ''}.`;
}

function table(head: Interpolation[], rows: Interpolation[][], cls = ''): Markup {
  return joinMarkup([
    html`<table${cls ? html` class="${cls}"` : ''}><thead><tr>${head.map((h) => html`<th>${h}</th>`)}</tr></thead>`,
    html`<tbody>${rows.map((r) => html`<tr>${r.map((c) => html`<td>${c}</td>`)}</tr>`)}</tbody></table>`,
  ]);
}

function keyValues(rows: Array<[Interpolation, Interpolation]>): Markup {
  return html`<table class="kv"><tbody>${rows.map(([k, v]) => html`<tr><th scope="row">${k}</th><td>${v}</td></tr>`)}</tbody></table>`;
}

/** A figure in m², m³ or ha to 4 significant digits with thousands separators ("11,300"). */
export function formatQuantity(v: number, digits = 4): string {
  if (!Number.isFinite(v)) return '–';
  if (v === 0) return '0';
  return Number(v.toPrecision(digits)).toLocaleString('en-US', { maximumFractionDigits: 12 });
}

const hectares = (m2: number) => formatQuantity(m2 / 10_000, 3);

/** The report's short plain statement of the area figure, with its interval and units. */
export function areaFigureText(sim: ProjectSimulation, unit: string): string {
  const m = sim.summary!;
  const a = m.area;
  return `${formatQuantity(a.median)} m² (${hectares(a.median)} ha) above ${fmt(m.threshold)}${unit ? ` ${unit}` : ''}, `
    + `90 % interval ${formatQuantity(a.p05)} – ${formatQuantity(a.p95)} m² (${hectares(a.p05)} – ${hectares(a.p95)} ha), `
    + `from ${sim.count} realisations`;
}

/** The caution beside the area figure: what the interval leaves out, then the screening caution. */
export const AREA_CAUTION = 'A screening estimate: the interval is the spread over realisations of one fitted model; '
  + 'it leaves out the uncertainty of the model itself, of where the samples were taken and of the laboratory. ';

function supportText(sim: ProjectSimulation, cell: number): string {
  return sim.support === 'block'
    ? `cell averages (block support, ${sim.blockPoints} × ${sim.blockPoints} points per ${fmt(cell)} m cell)`
    : `point values at the centres of ${fmt(cell)} m cells`;
}

/** The "Area above the action level" section (HTML) for realisations that counted it. */
export function areaSection(sim: ProjectSimulation, o: { unit: string; threshold: number | null; cell: number | null; idPrefix?: string }): Markup {
  const m = sim.summary!;
  const { unit } = o;
  const u = unit ? ` ${unit}` : '';
  const a = m.area;
  const data = (name: string, v: number) => html`data-figure="${name}" data-value="${String(v)}"`;
  const out: Markup[] = [];
  out.push(html`<h2 id="${trusted(`${o.idPrefix ?? ''}area-above`)}">Area above the action level</h2>`);
  out.push(joinMarkup([html`<p class="figure"><strong ${data('area-median', a.median)}>${formatQuantity(a.median)} m²</strong> (${hectares(a.median)} ha) above ${fmt(m.threshold)}${u}; `,
    html`90 % interval <span ${data('area-p05', a.p05)}>${formatQuantity(a.p05)}</span> – <span ${data('area-p95', a.p95)}>${formatQuantity(a.p95)}</span> m² `,
    html`(${hectares(a.p05)} – ${hectares(a.p95)} ha).</p>`]));
  const rows: Array<[Interpolation, Interpolation]> = [
    [`Area above ${fmt(m.threshold)}${u} (median)`, `${formatQuantity(a.median)} m² = ${hectares(a.median)} ha`],
    ['90 % interval (5 % – 95 %)', `${formatQuantity(a.p05)} – ${formatQuantity(a.p95)} m² = ${hectares(a.p05)} – ${hectares(a.p95)} ha`],
    ['Share of the mapped area', `${fmt(100 * m.fraction.median, 3)} % (${fmt(100 * m.fraction.p05, 3)} – ${fmt(100 * m.fraction.p95, 3)} %) of ${formatQuantity(m.activeCells * m.cell * m.cell)} m²`],
  ];
  if (m.volume) {
    const v = m.volume;
    rows.push([`Volume to ${fmt(v.depth)} m depth (median)`, html`<span ${data('volume-median', v.median)}>${formatQuantity(v.median)} m³</span>`]);
    rows.push(['Volume, 90 % interval (5 % – 95 %)', `${formatQuantity(v.p05)} – ${formatQuantity(v.p95)} m³`]);
  }
  rows.push(['Realisations', html`<span ${data('realisations', sim.count)}>${sim.count}</span>`]);
  rows.push(['Seed', html`<span ${data('seed', sim.seed)}>${sim.seed}</span>`]);
  rows.push(['Support', supportText(sim, m.cell)]);
  if (m.method) rows.push(['Method', m.method]);
  if (m.made) rows.push(['Drawn', m.made]);
  out.push(keyValues(rows));
  if (o.threshold !== null && o.threshold !== m.threshold) {
    out.push(html`<p class="warn">${`These realisations counted the area above ${fmt(m.threshold)}${unit ? ` ${unit}` : ''}; the action level in this report is ${fmt(o.threshold)}. Draw them again for the current level.`}</p>`);
  }
  if (o.cell !== null && o.cell !== m.cell) {
    out.push(html`<p class="warn">These realisations were drawn on ${fmt(m.cell)} m cells; the maps in this report use ${fmt(o.cell)} m cells.</p>`);
  }
  out.push(html`<div class="caution" role="note" data-area-caution>${AREA_CAUTION}${CAUTION}</div>`);
  return joinMarkup(out, '\n');
}

/** The one line a report carries when no area estimate was made, saying how to make one. */
export function noAreaText(hasThreshold: boolean): string {
  return hasThreshold
    ? 'No area estimate with an interval was made: draw realisations in the app\'s Surface step, or run '
      + '"gapwise report --project FILE --realisations 100" (add "--depth D" for a volume).'
    : 'No area estimate with an interval was made: set an action level, then draw realisations in the app\'s Surface step, or run '
      + '"gapwise report --project FILE --threshold T --realisations 100".';
}

function structureText(s: Structure): string {
  if (s.type === 'nugget') return `nugget ${fmt(s.sill)}`;
  const family = s.type === 'matern' ? `Matérn (ν = ${fmt(s.nu ?? NaN, 3)})` : s.type;
  return `${family}: partial sill ${fmt(s.sill)}, scale ${fmt(s.scale)} m`;
}

/** A covariate trend in words: the covariates, categorical ones with their levels (reference first). */
function covariateTrendText(t: CovariateTrend): string {
  const names = t.covariates.map((name) => {
    const levels = t.levels?.[name];
    return levels ? `${name} (categorical: ${levels.join(', ')}; ${levels[0]} the reference)` : name;
  });
  return `unknown constant plus covariates ${names.join(', ')}${t.coordinates ? ' and a linear drift in x, y' : ''} (kriging with external drift)`;
}

/**
 * The fitted trend coefficients of a covariate model with their standard errors (GLS) and the share of
 * the values' variance the trend explains, as the fit recorded them; null for other models.
 */
export function trendCoefficientsTable(m: CovarianceModel): Markup | null {
  const list = m.fit?.coefficients;
  if (!isCovariateTrend(m.trend) || !Array.isArray(list) || list.length === 0) return null;
  const rows = (list as Array<{ name?: unknown; estimate?: unknown; standardError?: unknown }>)
    .filter((c) => typeof c.name === 'string' && typeof c.estimate === 'number' && typeof c.standardError === 'number')
    .map((c) => [c.name as string, html`<span data-figure="coefficient ${c.name as string}" data-value="${String(c.estimate)}">${fmt(c.estimate as number)}</span>`,
      html`<span data-figure="standard error ${c.name as string}" data-value="${String(c.standardError)}">${fmt(c.standardError as number)}</span>`]);
  const share = typeof m.fit?.trendVarianceExplained === 'number' ? m.fit.trendVarianceExplained : null;
  const scale = m.transform === 'log' ? ' They act on ln(value).' : '';
  return joinMarkup([
    html`<h3>Trend coefficients</h3>`,
    table(['Column', 'Estimate', 'Standard error'], rows),
    html`<p class="hint">The constant is the mean where every covariate is 0 (and, with an x, y drift, at the samples' centroid); a category level's coefficient is its difference from the first level; x and y are per metre.${scale}${share !== null ? html` The trend explains <span data-figure="variance explained" data-value="${String(share)}">${formatPercent(share)}</span> of the values' variance.` : ''}</p>`,
  ]);
}

/** The model in one line: structures, trend, transform, anisotropy. */
export function modelText(m: CovarianceModel): string {
  const parts = m.structures.map(structureText);
  const trend = m.trend === 'constant' ? 'unknown constant mean (ordinary kriging)'
    : m.trend === 'linear' ? 'linear drift in x, y (universal kriging)'
      : isCovariateTrend(m.trend) ? covariateTrendText(m.trend)
        : `known mean ${fmt(m.trend.known)} (simple kriging)`;
  parts.push(trend);
  if (m.transform === 'log') parts.push('fitted to ln(value), results back-transformed with the lognormal correction');
  if (m.anisotropy) parts.push(`anisotropy: long axis ${fmt(m.anisotropy.azimuth, 3)}° from north, ratio ${fmt(m.anisotropy.ratio, 3)}`);
  return parts.join('; ');
}

function modelCurve(m: CovarianceModel, maxLag: number, count = 100): Array<{ h: number; gamma: number }> {
  const c0 = surfaceVariance(m);
  const nugget = nuggetOf(m);
  const out = [{ h: 0, gamma: 0 }];
  for (let k = 1; k <= count; k++) {
    const h = (maxLag * k) / count;
    out.push({ h, gamma: nugget + c0 - surfaceCovariance(m, h) });
  }
  return out;
}

/** Direction of true north at the grid's centre, degrees clockwise from grid north; null without a CRS. */
export function northAngle(grid: Grid, workCrs: string): number | null {
  if (workCrs === LOCAL_CRS) return null;
  try {
    const t = createTransform(workCrs, 'EPSG:4326');
    const xc = grid.x0 + (grid.nx * grid.cell) / 2, yc = grid.y0 - (grid.ny * grid.cell) / 2;
    const [lon, lat] = t.forward(xc, yc);
    const [x1, y1] = t.inverse(lon, lat + 0.001);
    const a = (Math.atan2(x1 - xc, y1 - yc) * 180) / Math.PI;
    return Number.isFinite(a) ? a : null;
  } catch {
    return null;
  }
}

const STYLE = `
:root { color-scheme: light; }
* { box-sizing: border-box; }
body { font-family: system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; color: #1d1d1f; margin: 0; background: #fafaf7; line-height: 1.45; font-size: 14px; }
main { max-width: 900px; margin: 0 auto; padding: 24px 28px 60px; background: #fff; }
h1 { font-size: 26px; margin: 0 0 4px; }
h2 { font-size: 19px; margin: 28px 0 10px; padding-bottom: 4px; border-bottom: 2px solid #2f4a6d; }
h3 { font-size: 15px; margin: 18px 0 6px; }
.meta { color: #555; margin: 0 0 14px; }
.caution { border: 2px solid #b3412c; background: #fbeee9; color: #5a1d10; padding: 10px 14px; font-weight: 600; border-radius: 4px; margin: 12px 0; }
.invented { border: 2px dashed #7a5b00; background: #fff7d6; padding: 8px 12px; margin: 10px 0; font-weight: 600; }
.warn { background: #fff7d6; padding: 6px 10px; border-left: 4px solid #c79a00; margin: 6px 0; }
table { border-collapse: collapse; width: 100%; margin: 8px 0 12px; font-size: 13px; }
th, td { border-bottom: 1px solid #ddd; padding: 4px 6px; text-align: left; vertical-align: top; }
thead th { background: #eef1f5; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; }
table.kv th { width: 34%; font-weight: 600; color: #333; background: none; }
tr.chosen td { background: #e8f1e4; font-weight: 600; }
figure { margin: 12px 0 18px; }
figure svg { max-width: 100%; height: auto; }
figcaption { color: #444; font-size: 12.5px; margin-top: 4px; }
.maps figure { display: inline-block; vertical-align: top; }
pre { background: #f4f4f2; padding: 10px; overflow-x: auto; font-size: 11.5px; white-space: pre-wrap; word-break: break-word; }
.footer-caution { display: none; }
table.entries td:first-child, table.entries td:nth-child(2) { white-space: nowrap; }
.hint { color: #666; font-size: 12px; }
p.figure { font-size: 16px; margin: 8px 0; }
@page { size: A4; margin: 14mm 12mm 18mm; }
@media print {
  body { background: #fff; font-size: 10.5pt; }
  main { max-width: none; padding: 0; }
  .page { break-before: page; }
  figure, table, .caution, .kv, pre { break-inside: avoid; }
  h2, h3 { break-after: avoid; }
  .hint { display: none; }
  .footer-caution { display: block; position: fixed; bottom: 0; left: 0; right: 0; font-size: 8pt; color: #5a1d10; text-align: center; border-top: 1px solid #b3412c; padding-top: 2px; background: #fff; }
}
`;

/** The document's start, up to and with the caution fixed at the foot of printed pages. */
function documentStart(title: string, software: { name: string; version: string }): Markup[] {
  return [
    html`<!DOCTYPE html><html lang="en"><head><meta charset="utf-8">`,
    html`<meta http-equiv="Content-Security-Policy" content="default-src 'none'; img-src data:; style-src 'unsafe-inline'">`,
    html`<meta name="viewport" content="width=device-width, initial-scale=1">`,
    html`<meta name="generator" content="${software.name} ${software.version}">`,
    html`<title>${title} — Gapwise report</title><style>${trusted(STYLE)}</style></head><body><main>`,
    html`<div class="footer-caution">${CAUTION}</div>`,
  ];
}

/** The report's title: the project's, else "<value> screening map". */
function reportTitle(input: ReportInput): string {
  const valueName = input.intake.report.valueColumn.replace(/\s*\([^)]*\)\s*$/, '') || 'value';
  return input.project.title || `${valueName} screening map`;
}

/** The report as one self-contained HTML document. */
export function reportHtml(input: ReportInput): string {
  const page = [...documentStart(reportTitle(input), input.software), ...reportMain(input)];
  page.push(html`</main></body></html>\n`);
  return joinMarkup(page, '\n').text;
}

/**
 * Several analytes' reports as one document (`gapwise report --value a,b`, the app with several
 * analytes): a contents list, then each analyte's report as a section of its own (everything
 * `reportHtml` shows for it, caution included), its element ids prefixed so that they stay unique.
 * `title` defaults to "Screening maps of N analytes".
 */
export function analyteReportHtml(sections: ReadonlyArray<{ name: string; input: ReportInput }>, title = ''): string {
  if (sections.length === 0) throw new Error('A report of several analytes needs at least one analyte.');
  const first = sections[0].input;
  const heading = title || `Screening maps of ${sections.length} analytes`;
  const page = documentStart(heading, first.software);
  page.push(html`<h1>${heading}</h1>`);
  page.push(html`<p class="meta">Gapwise screening report of ${sections.length} analytes · ${first.created.slice(0, 10)} · ${first.software.name} ${first.software.version}</p>`);
  page.push(html`<div class="caution" role="note">${CAUTION}</div>`);
  page.push(html`<p>One section per analyte, each with its own model, action level, maps and suggested samples, from the same samples file (${first.project.samples.fileName}).</p>`);
  page.push(html`<ol class="analytes">${joinMarkup(sections.map((s, k) => html`<li><a href="#analyte-${String(k + 1)}">${s.name}</a></li>`))}</ol>`);
  sections.forEach((s, k) => {
    page.push(html`<section class="analyte page" id="analyte-${String(k + 1)}" data-analyte="${s.name}">`);
    page.push(...reportMain(s.input, `a${k + 1}-`));
    page.push(html`</section>`);
  });
  page.push(html`</main></body></html>\n`);
  return joinMarkup(page, '\n').text;
}

/** What every part of one report reads: the input and the names, units and choices derived from it. */
interface ReportContext {
  input: ReportInput;
  project: Project;
  intake: IntakeResult;
  /** The read report of the samples. */
  r: IntakeResult['report'];
  model: CovarianceModel | null;
  log: boolean;
  unit: string;
  /** The value column without its unit ("Pb" of "Pb (mg/kg)"). */
  valueName: string;
  /** A label with the unit: "Mean Pb (mg/kg)". */
  u: (s: string) => string;
  /** The threshold of the exceedance map (null without one). */
  threshold: number | null | undefined;
  work: string;
  /** The realisations shown with their area, or null. */
  sim: ProjectSimulation | null;
  /** Prefix of element ids (unique per section in a report of several analytes). */
  idPrefix: string;
}

function reportContext(input: ReportInput, idPrefix: string): ReportContext {
  const { project, intake, surface } = input;
  const r = intake.report;
  const unit = project.samples.unit || r.unit;
  return {
    input, project, intake, r, model: project.model, log: project.structure.transform === 'log', unit,
    valueName: r.valueColumn.replace(/\s*\([^)]*\)\s*$/, '') || 'value',
    u: (s: string) => (unit ? `${s} (${unit})` : s),
    threshold: surface?.pExceed ? surface.threshold ?? project.threshold : null,
    work: r.crs.work,
    sim: input.simulation === undefined ? (project.simulation?.summary ? project.simulation : null) : input.simulation,
    idPrefix,
  };
}

/** One report's content inside <main>: title, caution, summary, samples, structure, maps, reproduction. */
function reportMain(input: ReportInput, idPrefix = ''): Markup[] {
  const c = reportContext(input, idPrefix);
  return [
    ...headerPart(c), ...summaryPart(c), ...samplesPart(c), ...structurePart(c), ...crossValidationPart(c),
    ...mapsPart(c), ...suggestionsPart(c), ...reproducePart(c),
  ];
}

/** Title, date and version, the caution, the invented-data banner and the warnings. */
function headerPart(c: ReportContext): Markup[] {
  const { input, project } = c;
  const page: Markup[] = [];
  page.push(html`<h1>${reportTitle(input)}</h1>`);
  page.push(html`<p class="meta">Gapwise screening report · ${input.created.slice(0, 10)} · ${input.software.name} ${input.software.version}</p>`);
  page.push(html`<div class="caution" role="note">${CAUTION}</div>`);
  if (project.samples.invented) page.push(html`<div class="invented">The samples in this report are INVENTED demo data: they describe no real site.</div>`);
  page.push(html`<p class="hint">To keep a PDF, use the browser's Print command and choose "Save as PDF".</p>`);
  for (const w of input.warnings ?? []) page.push(html`<p class="warn">${w.message}</p>`);
  return page;
}

/** The summary rows of the surfaces: their ranges, how they were computed, and the areas above the threshold. */
function surfaceSummaryRows(c: ReportContext, surface: ReportSurface, grid: Grid): Array<[Interpolation, Interpolation]> {
  const { input, unit } = c;
  const summary: Array<[Interpolation, Interpolation]> = [];
  const mr = finiteRange(surface.mean), sr = finiteRange(surface.sd);
  summary.push(['Mean surface', `${fmt(mr.min)} to ${fmt(mr.max)}${unit ? ` ${unit}` : ''}`]);
  summary.push(['Uncertainty (sd)', `${fmt(sr.min)} to ${fmt(sr.max)}${unit ? ` ${unit}` : ''}`]);
  const a = input.localAccuracy;
  if (a) summary.push(['Computed by', localAccuracyText(a)]);
  else if (input.exactSurface) summary.push(['Computed by', 'exact kriging from all samples']);
  if (!surface.pExceed) return summary;
  let over = 0, likely = 0, active = 0, expected = 0;
  for (let k = 0; k < surface.pExceed.length; k++) {
    const p = surface.pExceed[k];
    if (!Number.isFinite(p)) continue;
    active++;
    expected += p;
    if (p >= 0.5) over++;
    if (p >= 0.9) likely++;
  }
  const ha = (n: number) => fmt((n * grid.cell * grid.cell) / 10000, 3);
  summary.push(['Area more likely than not above the threshold', `${ha(over)} ha (${fmt((100 * over) / Math.max(1, active), 3)} % of the mapped area; P ≥ 0.5)`]);
  summary.push(['Area very likely above the threshold', `${ha(likely)} ha (P ≥ 0.9)`]);
  // E[area above T] = Σ P(exceed)·cell area (linearity of expectation): cells with a moderate
  // chance count in part, so it can well exceed the P ≥ 0.5 area; realisations give its spread.
  summary.push(['Expected area above the threshold', html`<span data-figure="expected-area" data-value="${expected * grid.cell * grid.cell}">${ha(expected)} ha</span> (Σ P(exceed) × cell area: cells with a moderate chance count in part)`]);
  return summary;
}

/** The job summary, and the area above the action level from realisations when there are any. */
function summaryPart(c: ReportContext): Markup[] {
  const { input, project, intake, r, unit, model, threshold, sim } = c;
  const { surface, grid, cv } = input;
  const page: Markup[] = [];
  page.push(html`<h2>Summary</h2>`);
  const summary: Array<[Interpolation, Interpolation]> = [
    ['Samples file', project.samples.fileName],
    ['Value', `${r.valueColumn}${unit ? ` (unit ${unit})` : ''}`],
    ['Samples used', `${r.rowsUsed} of ${r.rowsRead} rows read${intake.samples.value.length !== r.rowsUsed ? `; ${intake.samples.value.length} locations after merging duplicates` : ''}`],
    ['Coordinates', `${r.crs.input} → working CRS ${c.work}`],
    ['Model', model ? modelText(model) : 'none chosen'],
  ];
  if (grid) summary.push(['Grid', `${fmt(grid.cell)} m cells, ${grid.nx} × ${grid.ny} (${cellCount(grid).toLocaleString('en')} cells ${grid.mask ? 'inside the boundary' : 'over the padded extent'})`]);
  if (threshold !== null && threshold !== undefined) summary.push(['Threshold (action level)', `${fmt(threshold)}${unit ? ` ${unit}` : ''}`]);
  if (surface && grid) summary.push(...surfaceSummaryRows(c, surface, grid));
  if (cv) summary.push(['Cross-validation', `RMSE ${fmt(cv.summary.rmse)}${cv.scale === 'log' ? ' (ln units)' : unit ? ` ${unit}` : ''}, MSSE ${fmt(cv.summary.msse, 3)}, 95 % coverage ${fmt(100 * cv.summary.coverage95, 3)} %`]);
  if (project.suggestions?.length) summary.push(['Suggested next samples', String(project.suggestions.length)]);
  if (sim?.summary) {
    summary.push(['Area above the action level (realisations)', html`${areaFigureText(sim, unit)}; <a href="#${trusted(`${c.idPrefix}area-above`)}">method and caution below</a>`]);
  } else if (model) {
    summary.push(['Area above the action level (with interval)', html`<span data-no-area>${noAreaText(project.threshold !== null)}</span>`]);
  }
  page.push(keyValues(summary));
  if (sim?.summary) page.push(areaSection(sim, { unit, threshold: project.threshold, cell: grid?.cell ?? null, idPrefix: c.idPrefix }));
  return page;
}

/** The samples: data summary, histograms, and what was read (with the read report's entries). */
function samplesPart(c: ReportContext): Markup[] {
  const { project, intake, r, log, valueName, u, threshold } = c;
  const s = r.summary;
  const page: Markup[] = [];
  page.push(html`<h2 class="page">Samples</h2>`);
  page.push(html`<h3>Data summary</h3>`);
  page.push(table(['n', 'min', 'median', 'mean', 'max', 'sd', 'skewness'],
    [[String(s.n), fmt(s.min), fmt(s.median), fmt(s.mean), fmt(s.max), fmt(s.sd), fmt(s.skewness, 3)]]));
  page.push(html`<figure>${histogramSvg(intake.samples.value, { title: `Histogram of ${valueName}`, axis: u(valueName), threshold })}<figcaption>Values as used (non-detects substituted, duplicates ${r.duplicates.rule === 'merge' ? 'merged' : 'kept'}).${threshold !== null && threshold !== undefined ? ' Dashed: the threshold.' : ''}</figcaption></figure>`);
  if (log) {
    const lnValues = Float64Array.from(intake.samples.value, Math.log);
    page.push(html`<figure>${histogramSvg(lnValues, { title: `Histogram of ln(${valueName})`, axis: `ln(${valueName})`, threshold: threshold !== null && threshold !== undefined && threshold > 0 ? Math.log(threshold) : null })}<figcaption>The values on the log scale the model was fitted on.</figcaption></figure>`);
  }
  page.push(html`<h3>What was read</h3>`);
  const read: Array<[Interpolation, Interpolation]> = [
    ['File', `${r.fileName} (${r.format.toUpperCase()}${r.delimiter ? `, delimiter ${r.delimiter === '\t' ? 'tab' : `"${r.delimiter}"`}` : ''})`],
    ['Rows', `${r.rowsRead} read, ${r.rowsUsed} used`],
    ['Columns', `x ${r.xColumn}, y ${r.yColumn}, value ${r.valueColumn}${r.idColumn ? `, id ${r.idColumn}` : ''}`],
    ['CRS', `${r.crs.input} (${r.crs.detection}); working CRS ${r.crs.work}`],
    ['Non-detects', `${r.nonDetects.count} (rule: ${r.nonDetects.rule === 'half' ? 'half the detection limit' : r.nonDetects.rule === 'dl' ? 'the detection limit' : 'the limit divided by √2'}). ${r.nonDetects.note}`],
    ['Duplicate locations', `${r.duplicates.groups} group(s), ${r.duplicates.rule === 'merge' ? 'merged into their mean' : 'kept'} (tolerance ${fmt(r.duplicates.tolerance)} m)`],
    ['Outliers flagged', `${r.outliers.length} (beyond 3 IQR from the quartiles; kept)`],
  ];
  if (r.transformAdvice) read.push(['Transform advice', r.transformAdvice]);
  page.push(keyValues(read));
  for (const w of r.warnings) page.push(html`<p class="warn">${w.message}</p>`);
  if (r.entries.length) {
    const shown = r.entries.slice(0, 40);
    page.push(table(['where', 'field', 'raw', 'action', 'reason'], shown.map((e) => [
      e.line !== undefined ? `line ${e.line}` : e.feature !== undefined ? `feature ${e.feature}` : '',
      e.field ?? '', (e.raw ?? '').slice(0, 60), e.action, e.reason,
    ]), 'entries'));
    if (r.entries.length > shown.length) page.push(html`<p>… and ${r.entries.length - shown.length} more entries.</p>`);
  }
  return page;
}

/** The spatial structure: the variogram with the model, the chosen model, and the model comparison. */
function structurePart(c: ReportContext): Markup[] {
  const { input, project, log, valueName, unit, model } = c;
  const page: Markup[] = [];
  page.push(html`<h2 class="page">Spatial structure</h2>`);
  const vgr = input.variogram;
  if (vgr) {
    const scaleNote = log ? `ln(${valueName})` : valueName;
    const maxLag = vgr.options.maxLag;
    page.push(html`<figure>${variogramSvg(vgr.lags, model ? modelCurve(model, maxLag) : [], {
      title: `Variogram of ${scaleNote}${model ? ' with the chosen model' : ''}`,
      axis: log ? 'semivariance (ln units²)' : unit ? `semivariance (${unit})²` : 'semivariance',
    })}<figcaption>${vgr.options.estimator === 'matheron' ? 'Matheron' : 'Cressie–Hawkins'} estimator, lag width ${fmt(vgr.options.lagWidth)} m, up to ${fmt(maxLag)} m; numbers are pair counts.</figcaption></figure>`);
    for (const n of vgr.notes) page.push(html`<p class="hint">${n}</p>`);
    for (const w of vgr.warnings) page.push(html`<p class="warn">${w.message}</p>`);
  }
  if (model) {
    page.push(html`<h3>Chosen model</h3>`);
    const rows: Array<[Interpolation, Interpolation]> = [['Model', modelText(model)]];
    if (model.practicalRange) rows.push(['Practical range', `${fmt(model.practicalRange)} m (correlation falls to 5 %)`]);
    if (model.fit) {
      rows.push(['Fit', `${model.fit.method}${model.fit.logLikelihood !== undefined ? `, ${model.fit.method === 'wls' ? 'REML log-likelihood at the least-squares parameters' : 'log-likelihood'} ${fmt(model.fit.logLikelihood)}` : ''}${model.fit.aic !== undefined ? `, AIC ${fmt(model.fit.aic)}` : ''}, ${model.fit.converged ? 'converged' : 'NOT converged'}`]);
      for (const w of fitWarnings(model.fit)) rows.push(['Fit note', w.message]);
    }
    page.push(keyValues(rows));
    const coefficients = trendCoefficientsTable(model);
    if (coefficients) page.push(coefficients);
  }
  page.push(html`<h3>Model comparison</h3>`);
  if (input.comparison.length) {
    const ll = input.comparison.map((c) => c.aic).filter((a): a is number => a !== null && Number.isFinite(a));
    const best = ll.length ? Math.min(...ll) : NaN;
    page.push(joinMarkup([
      html`<table><thead><tr><th>model</th><th class="num">log-likelihood</th><th class="num">AIC</th><th class="num">ΔAIC</th><th class="num">RMSE${log ? ' (ln)' : ''}</th><th class="num">MSSE</th></tr></thead><tbody>`,
      ...input.comparison.map((c) => joinMarkup([
        html`<tr${c.key === project.structure.chosen ? html` class="chosen"` : ''}><td>${c.label}${c.key === project.structure.chosen ? ' (chosen)' : ''}${c.error ? html`<br><small>${c.error}</small>` : ''}</td>`,
        html`<td class="num">${fmt(c.logLikelihood)}</td><td class="num">${fmt(c.aic)}</td><td class="num">${c.aic !== null && Number.isFinite(best) ? fmt(c.aic - best, 3) : '–'}</td>`,
        html`<td class="num">${fmt(c.rmse)}</td><td class="num">${fmt(c.msse, 3)}</td></tr>`,
      ])),
      html`</tbody></table>`,
    ]));
    page.push(html`<p class="hint">AIC compares models fitted to the same data with the same trend; lower is better. RMSE and MSSE from leave-one-out cross-validation (MSSE near 1: the uncertainty is honest).</p>`);
  } else {
    page.push(html`<p>No comparison was made.</p>`);
  }
  return page;
}

/** Leave-one-out cross-validation: figures and the predicted-against-observed plot. */
function crossValidationPart(c: ReportContext): Markup[] {
  const { cv } = c.input;
  const { valueName, u, unit } = c;
  const page: Markup[] = [];
  if (cv) {
    page.push(html`<h2>Cross-validation</h2>`);
    const cvUnit = cv.scale === 'log' ? `ln(${valueName})` : u(valueName);
    page.push(keyValues([
      ['Samples', String(cv.summary.n)],
      ['Mean error (about 0 when unbiased)', fmt(cv.summary.me)],
      ['RMSE', `${fmt(cv.summary.rmse)} ${cv.scale === 'log' ? 'ln units' : unit}`],
      ['MSSE (about 1 when the sd is honest)', fmt(cv.summary.msse, 3)],
      ['Inside their 95 % interval (about 95 %)', `${fmt(100 * cv.summary.coverage95, 3)} %`],
    ]));
    const observed = new Float64Array(cv.prediction.length);
    for (let i = 0; i < observed.length; i++) observed[i] = cv.prediction[i] - cv.error[i];
    page.push(html`<figure>${crossValidationSvg(observed, cv.prediction, { title: 'Leave-one-out: predicted against observed', axisX: `observed ${cvUnit}`, axisY: `predicted ${cvUnit}` })}<figcaption>Each sample predicted from all the others with the chosen model; dashed: 1:1.</figcaption></figure>`);
  }
  return page;
}

/** The maps of the mean, the sd and P(exceed), with legends, samples, suggestions and north arrow. */
function mapsPart(c: ReportContext): Markup[] {
  const { input, project, intake, log, valueName, u, unit, threshold, work, idPrefix } = c;
  const { surface, grid } = input;
  const luts = { ...defaultLuts(), ...(input.luts ?? {}) };
  const page: Markup[] = [];
  if (surface && grid) {
    page.push(html`<h2 class="page">Maps</h2>`);
    const rings = input.boundary?.work.flatMap((p) => p.rings);
    const north = northAngle(grid, work);
    const suggestions = project.suggestions?.map((x) => ({ rank: x.rank, x: x.x, y: x.y }));
    const map = (kind: ReportScale, values: ArrayLike<number>, name: string, domain: [number, number], caption: string, ticks?: number[], logColours = false) => {
      const shown = logColours ? Float64Array.from(values, (v) => (v > 0 ? Math.log(v) : NaN)) : values;
      const shownDomain: [number, number] = logColours ? [Math.log(domain[0]), Math.log(domain[1])] : domain;
      const svg = mapSvg({ title: name, grid, values: shown, domain: shownDomain, lut: luts[kind], samples: intake.samples, rings, suggestions, northAngle: north });
      const legend = legendBarSvg({ title: name, domain, lut: luts[kind], idPrefix: `${idPrefix}legend-${kind}`, ticks, log: logColours });
      page.push(html`<figure class="map">${svg}<div>${legend}</div><figcaption>${caption}</figcaption></figure>`);
    };
    const mr = finiteRange(surface.mean), sr = finiteRange(surface.sd);
    // A log model's surfaces span orders of magnitude: colours then follow ln(value).
    const logColours = log && mr.min > 0 && mr.max > mr.min;
    const logSd = log && sr.min > 0 && sr.max > sr.min;
    map('mean', surface.mean, u(`Mean ${valueName}`), [mr.min, mr.max],
      `The most likely value in each ${fmt(grid.cell)} m cell${log ? ' (lognormal mean)' : ''}${logColours ? '; colours on a logarithmic scale' : ''}. Dots: samples${suggestions?.length ? '; numbered squares: suggested next samples' : ''}.`,
      undefined, logColours);
    map('sd', surface.sd, u(`Uncertainty (sd) of ${valueName}`), [sr.min, sr.max],
      `Standard deviation of the estimate: small near samples, large far from them${logSd ? '; colours on a logarithmic scale' : ''}.`, undefined, logSd);
    if (surface.pExceed && threshold !== null && threshold !== undefined) {
      map('pExceed', surface.pExceed, `P(${valueName} > ${fmt(threshold)}${unit ? ` ${unit}` : ''})`, [0, 1],
        'Chance that the true value exceeds the threshold: 0.5 means as likely as not.', [0, 0.25, 0.5, 0.75, 1]);
    }
    page.push(html`<p class="hint">Maps are drawn north-up in ${work}; the arrow shows true north.</p>`);
  }
  return page;
}

/** The suggested next samples with the choices they were made with. */
function suggestionsPart(c: ReportContext): Markup[] {
  const { project, u, unit, work } = c;
  const page: Markup[] = [];
  const sug: Suggestion[] = project.suggestions ?? [];
  if (sug.length) {
    page.push(html`<h2 class="page">Suggested next samples</h2>`);
    page.push(table(['rank', 'longitude (°)', 'latitude (°)', `x (${work})`, 'y', 'expected benefit', u('mean'), u('sd'), 'P(exceed)'],
      sug.map((x) => [String(x.rank), formatCoordinate(x.lon, 'degrees'), formatCoordinate(x.lat, 'degrees'), formatCoordinate(x.x, 'planar'), formatCoordinate(x.y, 'planar'),
        fmt(x.benefit), fmt(x.mean), fmt(x.sd), x.pExceed === undefined || x.pExceed === null ? '–' : formatProbability(x.pExceed)]
        )));
    if (project.suggestOptions) page.push(html`<p class="hint">${designOptionsText(project.suggestOptions, unit)}</p>`);
  }
  return page;
}

/** Every parameter needed to reproduce the report, the model as JSON, the commands, and the caution. */
function reproducePart(c: ReportContext): Markup[] {
  const { input, project, r, model, work, sim } = c;
  const { grid } = input;
  const created = input.created;
  const page: Markup[] = [];
  page.push(html`<h2 class="page">How to reproduce</h2>`);
  const intakeOptions = { fileName: project.samples.fileName, ...project.samples.intake };
  const params: Array<[Interpolation, Interpolation]> = [
    ['Software', `${input.software.name} ${input.software.version}`],
    ['Report made', created],
    ['Project saved', project.saved || '–'],
    ['Samples file', `${project.samples.fileName} (${project.samples.text.length.toLocaleString('en')} characters, kept inside the project)`],
    ['Reading options', html`<code>${JSON.stringify(intakeOptions)}</code>`],
    ['Coordinate systems', `input ${r.crs.input}, working ${work}`],
    ['Boundary', project.boundary ? `${project.boundary.fileName} (${project.grid.area === 'boundary' ? 'used as the grid area' : 'not used for the grid'})` : 'none'],
    ['Variogram settings', JSON.stringify(input.variogram?.options ?? project.structure.variogram)],
    ['Fitting', `method ${project.structure.method}, transform ${project.structure.transform}, chosen candidate ${project.structure.chosen || '–'}`],
    ['Grid', grid ? JSON.stringify({ ...gridGeometry(grid), area: project.grid.area, padding: project.grid.padding, cellSizeAsked: project.grid.cellSize }) : '–'],
    ['Threshold', project.threshold === null ? 'none' : String(project.threshold)],
  ];
  if (sim) params.push(['Realisations', JSON.stringify({ count: sim.count, seed: sim.seed, support: sim.support, blockPoints: sim.blockPoints, depth: sim.depth })]);
  page.push(keyValues(params));
  if (model) page.push(html`<h3>Model (JSON)</h3><pre>${JSON.stringify(model, null, 2)}</pre>`);
  page.push(html`<p>The project file holds the samples text and all of the above. With it, the command line gives the same numbers:</p>`);
  const simArgs = sim
    ? ` --realisations ${sim.count} --seed ${sim.seed}${sim.support === 'block' ? ` --support block --block-points ${sim.blockPoints}` : ''}${sim.depth !== null ? ` --depth ${sim.depth}` : ''}`
    : '';
  page.push(html`<pre>npx gapwise grid --project PROJECT.json --out surface.tif\nnpx gapwise report --project PROJECT.json${simArgs} --out report.html</pre>`);
  page.push(html`<div class="caution" role="note">${CAUTION}</div>`);
  return page;
}
