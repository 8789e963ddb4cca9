/**
 * The command-line argument parser: `--name value`, `--name=value` and boolean switches, checked
 * against a command's option list. Anything it does not know is an error naming the option
 * (`GapwiseError('bad-option')`, exit code 2), never silently ignored.
 */
import { GapwiseError } from '../core/shared/errors.ts';

export type OptionKind = 'string' | 'number' | 'boolean';

/** One option of a command, as parsed and as shown by `--help`. */
export interface OptionSpec {
  /** Without the leading dashes: 'samples', 'no-nugget'. */
  name: string;
  kind: OptionKind;
  /** Placeholder shown in the help: FILE, COL, N. */
  placeholder?: string;
  help: string;
  /** The default as shown in the help ('detected', '1.5'); absent when there is none. */
  defaultText?: string;
  unit?: string;
  /** Allowed values for a string option. */
  choices?: readonly string[];
  required?: boolean;
  /** A string option that may be given more than once; its values are joined by a line feed (see `repeatedOption`). */
  repeatable?: boolean;
}

export type OptionValue = string | number | boolean;

export interface ParsedArgs {
  /** Values by option name; options not given are absent. */
  values: Record<string, OptionValue>;
  /** True when --help or -h was given (other problems are then not reported). */
  help: boolean;
}

/**
 * One spelling per word: option names are British (`--neighbours`, `--realisations`); the earlier,
 * documented American names stay accepted as aliases and parse to the same option. Each pair is
 * [canonical, alias]; a command whose spec carries either spelling takes both.
 */
export const OPTION_ALIASES: readonly (readonly [string, string])[] = [
  ['neighbours', 'neighbors'], // rename-words: keep
  ['realisations', 'realizations'], // rename-words: keep
  ['nnl-neighbours', 'nnl-neighbors'], // rename-words: keep
];

/** The other spelling of an option name (either side of a pair), or undefined; the help shows it as "also". */
export function optionAlias(name: string): string | undefined {
  for (const [canonical, alias] of OPTION_ALIASES) {
    if (name === alias) return canonical;
    if (name === canonical) return alias;
  }
  return undefined;
}

// The option is named in the message itself; `place` is for files.
function optionError(message: string, _option: string): GapwiseError {
  return new GapwiseError('bad-option', message);
}

/**
 * Parses `argv` (without the command word) against `specs`.
 * Throws GapwiseError('bad-option') for an unknown option, a missing or malformed value, a value
 * outside `choices`, a stray positional argument, or a missing required option.
 */
export function parseArgs(argv: readonly string[], specs: readonly OptionSpec[], command: string): ParsedArgs {
  const byName = new Map(specs.map((s) => [s.name, s]));
  const values: Record<string, OptionValue> = {};
  const helpHint = `"gapwise ${command} --help" lists the options`;
  if (argv.includes('--help') || argv.includes('-h')) return { values, help: true };

  for (let i = 0; i < argv.length; i++) {
    const token = argv[i];
    if (!token.startsWith('--') || token === '--') {
      throw optionError(`Unexpected argument "${token}": expected an option starting with "--"; ${helpHint}.`, token);
    }
    const eq = token.indexOf('=');
    const given = eq === -1 ? token.slice(2) : token.slice(2, eq);
    const partner = optionAlias(given);
    const spec = byName.get(given) ?? (partner === undefined ? undefined : byName.get(partner));
    if (!spec) throw optionError(`Unknown option "--${given}" for "gapwise ${command}"; ${helpHint}.`, `--${given}`);
    // Values are kept under the spec's own name, whichever spelling was typed; messages name the typed one.
    const name = spec.name;
    if (name in values && !spec.repeatable) throw optionError(`Option "--${given}" is given twice; expected it once.`, `--${given}`);

    let raw: string;
    if (spec.kind === 'boolean') {
      if (eq === -1) {
        values[name] = true;
        continue;
      }
      raw = token.slice(eq + 1);
      if (raw !== 'true' && raw !== 'false') {
        throw optionError(`Option "--${given}" is a switch: expected no value, "true" or "false", got "${raw}".`, `--${given}`);
      }
      values[name] = raw === 'true';
      continue;
    }
    if (eq !== -1) {
      raw = token.slice(eq + 1);
    } else {
      const next = argv[i + 1];
      if (next === undefined || next.startsWith('--')) {
        throw optionError(`Option "--${given}" needs a value (${spec.placeholder ?? 'VALUE'}), got none.`, `--${given}`);
      }
      raw = next;
      i++;
    }
    if (raw === '') throw optionError(`Option "--${given}" needs a value (${spec.placeholder ?? 'VALUE'}), got an empty one.`, `--${given}`);
    if (spec.kind === 'number') {
      const v = Number(raw.trim());
      if (raw.trim() === '' || !Number.isFinite(v)) {
        throw optionError(`Option "--${given}" expects a number, got "${raw}".`, `--${given}`);
      }
      values[name] = v;
      continue;
    }
    if (spec.choices && !spec.choices.includes(raw)) {
      throw optionError(`Option "--${given}" expects one of ${spec.choices.join(', ')}; got "${raw}".`, `--${given}`);
    }
    values[name] = spec.repeatable && name in values ? `${String(values[name])}\n${raw}` : raw;
  }
  for (const s of specs) {
    if (s.required && !(s.name in values)) {
      throw optionError(`Option "--${s.name} ${s.placeholder ?? 'VALUE'}" is required for "gapwise ${command}"; ${helpHint}.`, `--${s.name}`);
    }
  }
  return { values, help: false };
}

/** Typed accessors over parsed values (the parser already checked the kinds). */
export function stringOption(values: Record<string, OptionValue>, name: string): string | undefined {
  const v = values[name];
  return typeof v === 'string' ? v : undefined;
}

export function numberOption(values: Record<string, OptionValue>, name: string): number | undefined {
  const v = values[name];
  return typeof v === 'number' ? v : undefined;
}

export function booleanOption(values: Record<string, OptionValue>, name: string): boolean {
  return values[name] === true;
}

/** The values of a repeatable string option, in the order given (empty when it was not given). */
export function repeatedOption(values: Record<string, OptionValue>, name: string): string[] {
  const v = values[name];
  return typeof v === 'string' ? v.split('\n') : [];
}
