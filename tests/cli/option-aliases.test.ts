// rename-words: keep-file (this file spells the old option names on purpose)
import { describe, expect, it } from 'vitest';
import { OPTION_ALIASES, optionAlias, parseArgs } from '../../src/cli/args.ts';
import { commandHelp } from '../../src/cli/help.ts';
import { COMMANDS } from '../../src/cli/commands/index.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';

/** Every (command, option) whose name is one side of a spelling pair. */
const PAIRED = COMMANDS.flatMap((c) => c.options
  .filter((o) => optionAlias(o.name) !== undefined)
  .map((o) => ({ command: c, option: o, other: optionAlias(o.name) as string })));

describe('option aliases', () => {
  it('OPTION_ALIASES pairs a British canonical name with the earlier documented American one', () => {
    expect(OPTION_ALIASES.map(([c, a]) => `${c}=${a}`)).toEqual([
      'neighbours=neighbors',
      'realisations=realizations',
      'nnl-neighbours=nnl-neighbors',
    ]);
    expect(optionAlias('neighbors')).toBe('neighbours');
    expect(optionAlias('neighbours')).toBe('neighbors');
    expect(optionAlias('samples')).toBeUndefined();
  });

  it('the documented --neighbors, --realizations and --nnl-neighbors are options of the commands that took them', () => {
    const names = (command: string) => {
      const c = COMMANDS.find((x) => x.name === command);
      return (c?.options ?? []).flatMap((o) => [o.name, optionAlias(o.name)]);
    };
    for (const command of ['predict', 'cv', 'grid']) expect(names(command)).toContain('neighbors');
    for (const command of ['grid', 'report']) expect(names(command)).toContain('realizations');
    expect(names('fit')).toContain('nnl-neighbors');
  });

  it('parseArgs gives the same values for either spelling of an option, in both forms (--name value, --name=value)', () => {
    expect(PAIRED.length).toBeGreaterThanOrEqual(5);
    for (const { command, option, other } of PAIRED) {
      const value = option.kind === 'number' ? '40' : 'x';
      const expected = option.kind === 'number' ? 40 : 'x';
      for (const spelling of [option.name, other]) {
        const spaced = parseArgs([`--${spelling}`, value], command.options.filter((o) => !o.required), command.name);
        const joined = parseArgs([`--${spelling}=${value}`], command.options.filter((o) => !o.required), command.name);
        expect(spaced.values, `${command.name} --${spelling}`).toEqual({ [option.name]: expected });
        expect(joined.values).toEqual({ [option.name]: expected });
      }
    }
  });

  it('parseArgs refuses both spellings of one option together as the option given twice, naming the spelling typed', () => {
    const grid = COMMANDS.find((c) => c.name === 'grid')!;
    const specs = grid.options.filter((o) => !o.required);
    try {
      parseArgs(['--neighbours', '32', '--neighbors', '64'], specs, 'grid');
      throw new Error('accepted both spellings');
    } catch (e) {
      expect(e).toBeInstanceOf(GapwiseError);
      expect((e as GapwiseError).message).toBe('Option "--neighbors" is given twice; expected it once.');
    }
    try {
      parseArgs(['--realizations', 'ten'], specs, 'grid');
      throw new Error('accepted a word');
    } catch (e) {
      expect((e as GapwiseError).message).toBe('Option "--realizations" expects a number, got "ten".');
    }
  });

  it('commandHelp names the other spelling beside a paired option', () => {
    for (const { command, option, other } of PAIRED) {
      const help = commandHelp(command);
      expect(help).toContain(`--${option.name} `);
      expect(help.replace(/\s+/g, ' ')).toContain(`also --${other}`);
    }
  });
});
