/**
 * Markup (HTML, inline SVG, XML) that text cannot break out of. `html` is a tagged template that
 * escapes EVERY interpolated value; markup passes through only as the result of another `html`
 * template (so fragments nest) or through `trusted(...)`, the one explicit marker for constant markup
 * the program itself wrote. `escapeText` is the one escape behind it, also used for XML files (GPX,
 * GeoTIFF metadata) and exported SVG.
 *
 * The template also refuses, at its first use, the places where escaping alone would not make a value
 * safe: an unquoted attribute value (`a=${v}`), a tag name (`<${v}`), a URL attribute
 * (`href="${v}"`, src, xlink:href, action, formaction) and the inside of
 * a <script> or <style> element (escaping does not apply there) unless the value is `trusted`.
 */

/** The five characters that end text or an attribute value, and their references (valid in HTML and XML). */
const REFERENCES: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };

/**
 * Escapes text for HTML or XML content and for quoted attribute values: & < > " ' become references,
 * and the characters XML 1.0 forbids (C0 controls other than tab, LF, CR; U+FFFE, U+FFFF) are dropped.
 */
export function escapeText(text: string): string {
  return String(text)
    // eslint-disable-next-line no-control-regex
    .replace(/[\u0000-\u0008\u000b\u000c\u000e-\u001f\ufffe\uffff]/g, '')
    .replace(/[&<>"']/g, (c) => REFERENCES[c]);
}

const MINT = Symbol('markup');

/** Markup whose every piece was either written by the program or escaped. Make it with `html` or `trusted`. */
export class Markup {
  readonly text: string;
  constructor(text: string, mint: symbol) {
    if (mint !== MINT) throw new TypeError('Markup is made by html`…` or trusted(…), not by its constructor.');
    this.text = text;
  }
  toString(): string {
    return this.text;
  }
}

/** What a template may interpolate: text and numbers are escaped, markup kept, arrays joined, null/undefined/false left out. */
export type Interpolation = Markup | string | number | null | undefined | false | readonly Interpolation[];

/**
 * Marks a string the program itself wrote (a style sheet, a data URL it encoded) as markup, to be
 * written as it is. Never give it text from a file or a user.
 */
export function trusted(text: string): Markup {
  return new Markup(text, MINT);
}

function append(out: string[], value: Interpolation): void {
  if (value === null || value === undefined || value === false) return;
  if (value instanceof Markup) out.push(value.text);
  else if (Array.isArray(value)) for (const v of value as readonly Interpolation[]) append(out, v);
  else out.push(escapeText(String(value)));
}

/** Interpolations after which a value must be trusted markup: URL attributes. */
const URL_ATTRIBUTE = /\s(?:href|src|xlink:href|action|formaction)\s*=\s*["']$/i;
/** Per interpolation: true where only trusted markup may go (a URL attribute, a script or style element). */
function check(strings: TemplateStringsArray): boolean[] {
  const trustedOnly: boolean[] = [];
  let sofar = '';
  for (let i = 0; i < strings.length - 1; i++) {
    sofar += strings[i];
    const before = strings[i];
    const where = `after "${before.slice(-40)}"`;
    const insideTag = sofar.lastIndexOf('<') > sofar.lastIndexOf('>');
    if (insideTag && /=\s*$/.test(before)) throw new TypeError(`An interpolation in an unquoted attribute value (${where}); quote the value.`);
    if (/<\/?\s*$/.test(before)) throw new TypeError(`An interpolation in a tag name (${where}).`);
    const lower = sofar.toLowerCase();
    const rawText = ['script', 'style'].some((element) => lower.lastIndexOf(`<${element}`) > lower.lastIndexOf(`</${element}`));
    trustedOnly.push(rawText || (insideTag && URL_ATTRIBUTE.test(before)));
    sofar += '\u0000';
  }
  return trustedOnly;
}

/** Checked templates (the strings array is the same object on every call from one place in the code). */
const trustedOnlyOf = new WeakMap<TemplateStringsArray, boolean[]>();

/**
 * Markup from a template: every interpolated string or number is escaped with `escapeText`; `Markup`
 * (from `html` or `trusted`) is kept; arrays are joined without a separator; null, undefined and false
 * write nothing. Throws TypeError for an interpolation where escaping cannot make it safe.
 */
export function html(strings: TemplateStringsArray, ...values: Interpolation[]): Markup {
  let trustedOnly = trustedOnlyOf.get(strings);
  if (!trustedOnly) {
    trustedOnly = check(strings);
    trustedOnlyOf.set(strings, trustedOnly);
  }
  const out: string[] = [strings[0]];
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (trustedOnly[i] && !(v instanceof Markup)) {
      throw new TypeError(`A URL attribute or a script or style element takes only trusted(…) markup, got ${JSON.stringify(String(v)).slice(0, 60)}.`);
    }
    append(out, v);
    out.push(strings[i + 1]);
  }
  return new Markup(out.join(''), MINT);
}

/** The same template for XML files (GPX, GeoTIFF metadata): one function, named for where it is used. */
export const xml = html;

/** Pieces joined by `separator` (escaped like any text unless it is markup). */
export function joinMarkup(pieces: readonly Interpolation[], separator: Markup | string = ''): Markup {
  const sep = separator instanceof Markup ? separator.text : escapeText(separator);
  const out: string[] = [];
  for (const p of pieces) {
    const one: string[] = [];
    append(one, p);
    out.push(one.join(''));
  }
  return new Markup(out.join(sep), MINT);
}
