import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { parseArgs, type OptionSpec } from '../../src/cli/args.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';

const SPECS: OptionSpec[] = [
  { name: 'samples', kind: 'string', placeholder: 'FILE', help: 'samples', required: true },
  { name: 'threshold', kind: 'number', placeholder: 'T', help: 'threshold' },
  { name: 'method', kind: 'string', placeholder: 'M', help: 'method', choices: ['reml', 'ml', 'wls'] },
  { name: 'no-nugget', kind: 'boolean', help: 'no nugget' },
];

function parseError(argv: string[]): GapwiseError {
  try {
    parseArgs(argv, SPECS, 'fit');
  } catch (e) {
    expect(e).toBeInstanceOf(GapwiseError);
    return e as GapwiseError;
  }
  throw new Error(`parseArgs accepted ${JSON.stringify(argv)}`);
}

describe('parseArgs', () => {
  it('parseArgs reads --flag value, --flag=value and switches', () => {
    const r = parseArgs(['--samples', 'a.csv', '--threshold=200', '--no-nugget', '--method', 'ml'], SPECS, 'fit');
    expect(r).toEqual({ values: { samples: 'a.csv', threshold: 200, 'no-nugget': true, method: 'ml' }, help: false });
  });

  it('parseArgs takes a negative number as a value, and --switch=false', () => {
    const r = parseArgs(['--threshold', '-3.5', '--samples=x=1.csv', '--no-nugget=false'], SPECS, 'fit');
    expect(r.values).toEqual({ threshold: -3.5, samples: 'x=1.csv', 'no-nugget': false });
  });

  it('parseArgs rejects an unknown option and names it', () => {
    const e = parseError(['--samples', 'a.csv', '--famly', 'matern']);
    expect(e.code).toBe('bad-option');
    expect(e.kind).toBe('input');
    expect(e.message).toContain('"--famly"');
    expect(e.message).toContain('gapwise fit --help');
  });

  it('parseArgs rejects a missing value, a bad number, a value outside the choices and a stray word', () => {
    expect(parseError(['--samples']).message).toContain('needs a value');
    expect(parseError(['--samples', '--no-nugget']).message).toContain('needs a value');
    expect(parseError(['--samples', 'a', '--threshold', '2OO']).message).toContain('expects a number, got "2OO"');
    expect(parseError(['--samples', 'a', '--method', 'ols']).message).toContain('one of reml, ml, wls; got "ols"');
    expect(parseError(['--samples', 'a', 'extra']).message).toContain('Unexpected argument "extra"');
    expect(parseError(['--samples', 'a', '--samples', 'b']).message).toContain('given twice');
    expect(parseError(['--samples', 'a', '--no-nugget=yes']).message).toContain('is a switch');
  });

  it('parseArgs reports a missing required option', () => {
    expect(parseError(['--threshold', '1']).message).toContain('"--samples FILE" is required');
  });

  it('parseArgs returns help: true for --help or -h whatever else is given', () => {
    expect(parseArgs(['--bogus', '--help'], SPECS, 'fit').help).toBe(true);
    expect(parseArgs(['-h'], SPECS, 'fit').help).toBe(true);
  });

  it('parseArgs gives back any string value verbatim (property)', () => {
    fc.assert(fc.property(fc.string({ minLength: 1 }).filter((s) => !s.startsWith('--') && s !== '-h'), (s) => {
      expect(parseArgs(['--samples', s], SPECS, 'fit').values.samples).toBe(s);
      expect(parseArgs([`--samples=${s}`], SPECS, 'fit').values.samples).toBe(s);
    }));
  });
});
