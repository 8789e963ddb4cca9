import { afterAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { MESSAGE_LIMIT, MESSAGE_LINE_LIMIT, escapeControls, terminalMessage, terminalSafeIo } from '../../src/cli/terminal-text.ts';
import { main } from '../../src/cli/main.ts';
import { workspace } from './run-cli.ts';

const ws = workspace();
afterAll(() => ws.remove());

// C0 but newline and tab, DEL, C1, and the bidirectional overrides and isolates.
const UNSAFE = /[\u0000-\u0008\u000b-\u001f\u007f-\u009f\u202a-\u202e\u2066-\u2069]/;

describe('terminal text', () => {
  it('escapeControls shows ESC, BEL, CR, DEL, C1 and bidi overrides as escapes and keeps newline, tab and other text', () => {
    expect(escapeControls('a\u001b]0;title\u0007b')).toBe('a\\x1b]0;title\\x07b');
    expect(escapeControls('x\ry\u007fz\u009b2J\u202eevil')).toBe('x\\x0dy\\x7fz\\x9b2J\\u202eevil');
    expect(escapeControls('line 1\n\tline 2 — µg/L é')).toBe('line 1\n\tline 2 — µg/L é');
    // A leading carriage return rewrites the progress line and is kept; later ones are not.
    expect(escapeControls('\rprogress: 10 %\r')).toBe('\rprogress: 10 %\\x0d');
  });

  it('escapeControls leaves no control character in any text (property)', () => {
    fc.assert(fc.property(fc.string({ unit: 'binary' }), (s) => {
      const out = escapeControls(s);
      expect(UNSAFE.test(out.startsWith('\r') ? out.slice(1) : out)).toBe(false);
    }));
  });

  it('terminalMessage caps a long line and a long message, saying how much was left out', () => {
    const long = `error: columns ${'"c",'.repeat(1_000_000)}\n`;
    const out = terminalMessage(long);
    expect(out.length).toBeLessThan(MESSAGE_LINE_LIMIT + 100);
    expect(out).toMatch(/ … \([\d,]+ more characters left out\)\n$/);
    const many = 'a short line\n'.repeat(10_000);
    const capped = terminalMessage(many);
    expect(capped.length).toBeLessThan(MESSAGE_LIMIT + 100);
    expect(capped.endsWith('left out)\n')).toBe(true);
    expect(terminalMessage('error: short\n')).toBe('error: short\n');
  });

  it('terminalSafeIo escapes stderr always and stdout only on a terminal, and starts a message after an open progress line on a new line', () => {
    let err = '';
    let out = '';
    const raw = { stdout: (t: string) => { out += t; }, stderr: (t: string) => { err += t; }, cwd: '.' };
    const piped = terminalSafeIo(raw);
    piped.stdout('id\u001b[2J\n');
    piped.stderr('warning: \u001b[2J\n');
    expect(out).toBe('id\u001b[2J\n');
    expect(err).toBe('warning: \\x1b[2J\n');
    out = '';
    terminalSafeIo({ ...raw, stdoutIsTerminal: true }).stdout('id\u001b[2J\n');
    expect(out).toBe('id\\x1b[2J\n');
    err = '';
    const t = terminalSafeIo(raw);
    t.stderr('\rprogress: 10 % of 5 cells (2 s)');
    t.stderr('warning: w\n');
    t.stderr('\rprogress: 100 % of 5 cells (3 s)\n');
    t.stderr('note: n\n');
    expect(err).toBe('\rprogress: 10 % of 5 cells (2 s)\nwarning: w\n\rprogress: 100 % of 5 cells (3 s)\nnote: n\n');
  });

  it('main escapes control characters from a data file in its messages and caps a message from a 200,000-column header', async () => {
    ws.write('esc.csv', 'x,y,\u001b]0;owned\u0007lead\u001b[2J,zinc\n1,2,3,4\n3,4,5,6\n5,1,2,3\n');
    const r = await ws.run('inspect', '--samples', 'esc.csv');
    expect(r.code).toBe(2);
    // The intake quotes file text with its control characters as \u codes; nothing raw reaches the terminal.
    expect(r.stderr).toContain('\\u001b]0;owned\\u0007lead\\u001b[2J');
    expect(UNSAFE.test(r.stderr)).toBe(false);

    const header = ['x', 'y', ...Array.from({ length: 200_000 }, (_, i) => `c${i}\u0007`)].join(',');
    ws.write('wide.csv', `${header}\n${Array.from({ length: 200_002 }, () => '1').join(',')}\n`);
    const w = await ws.run('inspect', '--samples', 'wide.csv');
    expect(w.code).toBe(2);
    expect(w.stderr.length).toBeLessThan(MESSAGE_LINE_LIMIT + 200);
    // The intake names at most a few columns itself; terminalMessage's own cap is tested above.
    expect(w.stderr).toMatch(/"c0\\u0007", "c1\\u0007", .* and [\d,]+ more/);
    expect(UNSAFE.test(w.stderr)).toBe(false);
  });

  it('main escapes control characters in an option name it did not know (exit 2)', async () => {
    let err = '';
    const code = await main(['fit', '--samples', 'x.csv', '--\u001bbad'], { stdout: () => undefined, stderr: (t) => { err += t; }, cwd: ws.dir });
    expect(code).toBe(2);
    expect(err).toContain('--\\x1bbad');
  });
});
