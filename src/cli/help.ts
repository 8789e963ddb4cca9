/**
 * Help texts: the tool's overview and each command's usage, options (with default and unit),
 * examples and the screening caution.
 */
import { optionAlias, type OptionSpec } from './args.ts';
import { AUTOMATIC_PATH_TEXT, CAUTION, count, type CommandSpec } from './common.ts';
import { MAX_EXACT_SAMPLES } from '../core/shared/sizes.ts';


const WIDTH = 100;

/** Wraps `text` to WIDTH columns, indenting continuation lines by `indent` spaces. */
function wrap(text: string, indent: number, first = 0): string {
  const words = text.split(/\s+/).filter(Boolean);
  const lines: string[] = [];
  let line = '';
  let room = WIDTH - first;
  for (const w of words) {
    if (line && line.length + 1 + w.length > room) {
      lines.push(line);
      line = w;
      room = WIDTH - indent;
    } else {
      line = line ? `${line} ${w}` : w;
    }
  }
  if (line) lines.push(line);
  return lines.join(`\n${' '.repeat(indent)}`);
}

function optionLine(o: OptionSpec): string {
  const left = `  --${o.name}${o.kind === 'boolean' ? '' : ` ${o.placeholder ?? 'VALUE'}`}`;
  const parts = [o.help];
  const alias = optionAlias(o.name);
  if (alias !== undefined) parts.push(`also --${alias}`);
  if (o.choices) parts.push(`one of: ${o.choices.join(', ')}`);
  if (o.unit) parts.push(`unit: ${o.unit}`);
  if (o.required) parts.push('required');
  else if (o.defaultText !== undefined) parts.push(`default: ${o.defaultText}`);
  else if (o.kind === 'boolean') parts.push('default: off');
  const text = `${parts[0]} (${parts.slice(1).join('; ')})`.replace(/ \(\)$/, '');
  const pad = 26;
  if (left.length >= pad) return `${left}\n${' '.repeat(pad)}${wrap(text, pad, pad)}`;
  return `${left.padEnd(pad)}${wrap(text, pad, pad)}`;
}

/** `gapwise <command> --help`. */
export function commandHelp(c: CommandSpec): string {
  const out = [`gapwise ${c.name} — ${c.summary}`, '', `Usage: ${c.usage}`, ''];
  for (const p of c.description) out.push(wrap(p, 0), '');
  out.push('Options:');
  for (const o of c.options) out.push(optionLine(o));
  out.push(`${'  --help'.padEnd(26)}print this help and exit`);
  out.push('', c.examples.length > 1 ? 'Examples:' : 'Example:');
  for (const e of c.examples) out.push(`  ${e}`);
  out.push('', 'Exit codes: 0 done; 2 bad input (the message names the file, line and column); 3 the numbers failed (the message says what to try); 1 a bug.');
  out.push('', CAUTION, '');
  return out.join('\n');
}

/** `gapwise --help`. */
export function toolHelp(commands: readonly CommandSpec[], planned: readonly string[]): string {
  const out = [
    'gapwise — screening maps from point samples: kriging surfaces, uncertainty and exceedance',
    '',
    'Usage: gapwise <command> [options]',
    '       gapwise <command> --help',
    '       gapwise --version',
    '',
    'Commands:',
  ];
  const w = Math.max(...commands.map((c) => c.name.length)) + 4;
  for (const c of commands) out.push(`  ${c.name.padEnd(w)}${c.summary}`);
  if (planned.length) out.push('', `Not available yet: ${planned.join(', ')}.`);
  out.push(
    '',
    'Every command that reads samples takes the same options (--samples FILE --value COL --x COL --y COL',
    '--crs CRS --work-crs CRS --non-detect half|dl|sqrt2 --duplicates merge|keep) and reads them the same',
    'way as "gapwise inspect" does. Warnings go to stderr, each line starting with "warning: "; how the',
    'numbers were computed follows "note: ".',
    '',
    wrap(`Many samples: from ${count(MAX_EXACT_SAMPLES)} samples on, fit uses a nearest-neighbour likelihood `
      + `(--method overrides). predict, cv and grid choose exact kriging or local neighbourhoods: ${AUTOMATIC_PATH_TEXT} `
      + '(--exact and --local override; the choice, the reason and the measured error are said on stderr); '
      + 'grid shares its rows out among worker threads, one per core.', 0),
    '',
    wrap('Files: --out is written to a temporary file in the same folder and renamed onto the name when complete, '
      + 'so a stopped run leaves the previous file in place; an --out that names one of the run\'s input files, '
      + 'or a folder that is missing or not writable, is refused before any work. A run that lasts more than 2 s '
      + 'shows its progress on stderr; --quiet (every command) leaves out progress and notes. --workers above the '
      + 'number of cores is lowered to it, with a warning.', 0),
    '',
    'Example:',
    '  gapwise inspect --samples data-demo/lead-topsoil.csv',
    '',
    'Exit codes: 0 done; 2 bad input (the message names the file, line and column); 3 the numbers failed (the message says what to try); 1 a bug.',
    '',
    CAUTION,
    '',
  );
  return out.join('\n');
}
