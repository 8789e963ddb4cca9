/**
 * One report for several analytes mapped from the same samples file: a short contents list, then one
 * section per analyte holding that analyte's whole report (reportHtml) as it would stand alone —
 * summary, samples, structure, cross-validation, maps, suggestions, how to reproduce. Element ids the
 * sections share (legend gradients, the area anchor) are given a prefix per section so each stays
 * unique in the document. The caution opens the document and every section.
 */
import { CAUTION } from '../core/shared/caution.ts';
import { html, joinMarkup, trusted, type Markup } from './markup.ts';
import { reportHtml, type ReportInput } from './report.ts';

export interface AnalyteReportSection {
  /** The analyte (value column) as the user chose it. */
  name: string;
  input: ReportInput;
}

/** The parts of one analyte's report document: head (up to `<main>`) and the body inside `<main>`. */
function splitDocument(text: string): { head: string; body: string } {
  const open = text.indexOf('<main>');
  const close = text.lastIndexOf('</main>');
  if (open < 0 || close < open) throw new Error('A report document without its <main> element.');
  return { head: text.slice(0, open), body: text.slice(open + '<main>'.length, close) };
}

/** Ids written by the report (quoted attribute values only, which no escaped file text can produce). */
function prefixIds(body: string, prefix: string): string {
  return body
    .replace(/ id="(legend-[\w-]+|area-above)"/g, ` id="${prefix}-$1"`)
    .replace(/="url\(#(legend-[\w-]+)\)"/g, `="url(#${prefix}-$1)"`)
    .replace(/ href="#area-above"/g, ` href="#${prefix}-area-above"`);
}

/** The report of several analytes as one self-contained HTML document (at least one section). */
export function analytesReportHtml(sections: readonly AnalyteReportSection[], title = ''): string {
  if (sections.length === 0) throw new Error('A report of several analytes needs at least one analyte.');
  const docs = sections.map((s) => splitDocument(reportHtml(s.input)));
  const heading = title || `Screening maps of ${sections.length} analytes`;
  // The first section's head (style, CSP, generator) serves the document, with its own title.
  const head = docs[0].head.replace(/<title>[\s\S]*?<\/title>/, html`<title>${heading} — Gapwise report</title>`.text);
  const page: Markup[] = [trusted(head), html`<main>`];
  page.push(html`<h1>${heading}</h1>`);
  page.push(html`<div class="caution" role="note">${CAUTION}</div>`);
  page.push(html`<p>One section per analyte, each with its own model, action level, maps and suggested samples, from the same samples file (${sections[0].input.project.samples.fileName}).</p>`);
  page.push(joinMarkup([
    html`<ol class="analytes">`,
    ...sections.map((s, k) => html`<li><a href="${trusted(`#analyte-${k + 1}`)}">${s.name}</a></li>`),
    html`</ol>`,
  ]));
  sections.forEach((s, k) => {
    page.push(html`<section class="analyte page" id="${trusted(`analyte-${k + 1}`)}" data-analyte="${s.name}">`);
    page.push(trusted(prefixIds(docs[k].body, `a${k + 1}`)));
    page.push(html`</section>`);
  });
  page.push(html`</main></body></html>\n`);
  return joinMarkup(page, '\n').text;
}
