/**
 * What the command line prints is made safe for a terminal here, once, for every message: text from
 * a data file (column names, ids, units, file names) can hold control characters that clear the
 * screen, set the window title or move the cursor, and can be long enough to flood it.
 *
 * - Control characters are shown as escapes: C0 (U+0000–U+001F) except newline and tab, DEL (U+007F)
 *   and C1 (U+0080–U+009F) as `\x1b`, `\x07`, `\x9b`; the bidirectional overrides and isolates
 *   (U+202A–U+202E, U+2066–U+2069), which reorder what is shown, as `\u202e`. A carriage return at the
 *   very start of a piece is kept: the progress line on a terminal rewrites itself with it.
 * - A message line longer than MESSAGE_LINE_LIMIT characters is cut, with the number of characters left
 *   out; a message longer than MESSAGE_LIMIT characters is cut the same way.
 */
import type { CliIo } from './common.ts';

/** Longest line of a message on stderr, in characters. */
export const MESSAGE_LINE_LIMIT = 2000;
/** Longest message (one write on stderr), in characters. */
export const MESSAGE_LIMIT = 20_000;

// eslint-disable-next-line no-control-regex
const UNSAFE = /[\u0000-\u0008\u000b-\u001f\u007f-\u009f\u202a-\u202e\u2066-\u2069]/g;

function escapeOne(c: string): string {
  const code = c.charCodeAt(0);
  return code < 0x100 ? `\\x${code.toString(16).padStart(2, '0')}` : `\\u${code.toString(16).padStart(4, '0')}`;
}

/** `text` with every control character (but newline and tab) shown as an escape such as \x1b. */
export function escapeControls(text: string): string {
  if (text.startsWith('\r')) return `\r${text.slice(1).replace(UNSAFE, escapeOne)}`;
  return text.replace(UNSAFE, escapeOne);
}

function cut(text: string, limit: number): string {
  if (text.length <= limit) return text;
  return `${text.slice(0, limit)} … (${(text.length - limit).toLocaleString('en-US')} more characters left out)`;
}

/** A message as it may be printed: control characters escaped, each line and the whole capped. */
export function terminalMessage(text: string): string {
  const escaped = escapeControls(text);
  const capped = escaped.length > MESSAGE_LINE_LIMIT ? escaped.split('\n').map((line) => cut(line, MESSAGE_LINE_LIMIT)).join('\n') : escaped;
  if (capped.length <= MESSAGE_LIMIT) return capped;
  const ending = capped.endsWith('\n') ? '\n' : '';
  return `${cut(capped, MESSAGE_LIMIT)}${ending}`;
}

/**
 * The same I/O with every message on stderr passed through `terminalMessage`, and stdout's text
 * escaped when stdout is a terminal (data written to a file or a pipe is left as it is, and never cut).
 * A message after a progress line still being rewritten ("\r…" without a newline) starts on a new line.
 */
export function terminalSafeIo(io: CliIo): CliIo {
  let lineOpen = false;
  return {
    ...io,
    stderr: (text) => {
      const rewrite = text.startsWith('\r');
      const prefix = lineOpen && !rewrite ? '\n' : '';
      lineOpen = rewrite && !text.endsWith('\n');
      io.stderr(prefix + terminalMessage(text));
    },
    stdout: io.stdoutIsTerminal ? (text) => io.stdout(escapeControls(text)) : io.stdout,
  };
}
