/**
 * File text inside messages: quoted, cut short and with control characters shown as codes, so that a
 * cell or a column name can never act on a terminal or run on for pages.
 */

/** Longest piece of file text quoted in a message; longer text is cut with "…". */
const QUOTE_CHARS = 80;
/** Most names listed in a message. */
export const LIST_NAMES = 12;

/** File text in double quotes for a message: control characters shown as \u codes, cut at QUOTE_CHARS. */
export function quoted(text: string): string {
  const cut = text.length > QUOTE_CHARS ? `${text.slice(0, QUOTE_CHARS)}…` : text;
  return `"${cut.replace(/[\u0000-\u001f\u007f-\u009f]/g, (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`)}"`;
}

/** '"a", "b", "c"', at most LIST_NAMES names, then "and N more". */
export function quotedList(names: readonly string[]): string {
  const shown = names.slice(0, LIST_NAMES).map(quoted).join(', ');
  return names.length > LIST_NAMES ? `${shown} and ${(names.length - LIST_NAMES).toLocaleString('en-US')} more` : shown;
}

