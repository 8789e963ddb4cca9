/**
 * The command-line entry: `gapwise <command> [options]`. Dispatches to src/cli/commands/, prints
 * help, and turns errors into exit codes: 0 done; 2 bad input (GapwiseError of kind 'input': the
 * message names the file, line and column, no stack trace); 3 the numbers failed (kind 'numeric':
 * why, and what to try); 1 a bug (anything else, with its stack).
 */
import { GapwiseError } from '../core/shared/errors.ts';
import { parseArgs } from './args.ts';
import type { CliIo, CommandSpec, OptionValues } from './common.ts';
import { checkOutputTarget, installSignalCleanup, type RunInput } from './safe-write.ts';
import { terminalSafeIo } from './terminal-text.ts';
import { COMMANDS, PLANNED } from './commands/index.ts';
import { commandHelp, toolHelp } from './help.ts';
import { SOFTWARE } from '../core/shared/version.ts';

/**
 * The process's own streams and working directory. Installs the signal handlers that remove a
 * half-written temporary output on SIGINT, SIGTERM and SIGHUP (./safe-write.ts).
 */
function processIo(): CliIo {
  installSignalCleanup();
  return {
    stdout: (t) => void process.stdout.write(t),
    stderr: (t) => void process.stderr.write(t),
    cwd: process.cwd(),
    stdoutIsTerminal: process.stdout.isTTY === true,
    stderrIsTerminal: process.stderr.isTTY === true,
  };
}

/** The files a run reads: every FILE option but --out, as given on the command line. */
export function runInputs(command: CommandSpec, values: OptionValues): RunInput[] {
  const inputs: RunInput[] = [];
  for (const o of command.options) {
    const file = values[o.name];
    if (o.name !== 'out' && o.kind === 'string' && o.placeholder === 'FILE' && typeof file === 'string') inputs.push({ option: o.name, file });
  }
  return inputs;
}

/** What to try when the numbers fail, by error code. */
const NUMERIC_HINTS: Record<string, string> = {
  'not-positive-definite':
    'try a model with a nugget (fit without --no-nugget), merging samples at the same place (--duplicates merge), or a larger nugget or shorter scale in the model file.',
  'fit-failed':
    'try another --family (exponential is the most forgiving), a fixed --nu such as 0.5 or 1.5, --method wls, or --transform log for positive, right-skewed values; check the values with "gapwise inspect".',
};

/**
 * Runs one command line (without the node and script words) and returns the exit code.
 * `io` defaults to the process's streams; tests pass their own to capture the output.
 */
export async function main(argv: readonly string[], given: CliIo = processIo()): Promise<number> {
  // Every message goes out through here: control characters escaped, length capped.
  const io = terminalSafeIo(given);
  try {
    const [name, ...rest] = argv;
    if (name === undefined) {
      io.stderr(toolHelp(COMMANDS, PLANNED));
      return 2;
    }
    if (name === '--version' || name === '-v') {
      io.stdout(`${SOFTWARE}\n`);
      return 0;
    }
    if (name === '--help' || name === '-h' || name === 'help') {
      const target = name === 'help' ? rest[0] : undefined;
      const command = target === undefined ? undefined : COMMANDS.find((c) => c.name === target);
      io.stdout(command ? commandHelp(command) : toolHelp(COMMANDS, PLANNED));
      return 0;
    }
    const command = COMMANDS.find((c) => c.name === name);
    if (!command) {
      const known = COMMANDS.map((c) => c.name).join(', ');
      if (PLANNED.includes(name)) {
        throw new GapwiseError('bad-option', `The command "${name}" is not available yet; expected one of ${known}.`);
      }
      throw new GapwiseError('bad-option', `Unknown command "${name}"; expected one of ${known} (see "gapwise --help").`);
    }
    const args = parseArgs(rest, command.options, command.name);
    if (args.help) {
      io.stdout(commandHelp(command));
      return 0;
    }
    // Before any work: the output's folder can be written and the output is none of the inputs.
    const out = args.values.out;
    if (typeof out === 'string') checkOutputTarget(io.cwd, out, runInputs(command, args.values));
    return await command.run(args.values, io);
  } catch (e) {
    if (e instanceof GapwiseError) {
      if (e.kind === 'numeric') {
        io.stderr(`error: ${e.describe()}\n`);
        // Engine messages often say what to try already; add the general advice only when not.
        const hint = NUMERIC_HINTS[e.code];
        if (hint && !/\b(try|use)\b/i.test(e.message)) io.stderr(`what to try: ${hint}\n`);
        return 3;
      }
      if (e.kind === 'input') {
        io.stderr(`error: ${e.describe()}\n`);
        return 2;
      }
    }
    const err = e instanceof Error ? e : new Error(String(e));
    io.stderr(`error: this is a bug in gapwise, please report it with the lines below.\n${err.stack ?? err.message}\n`);
    return 1;
  }
}
