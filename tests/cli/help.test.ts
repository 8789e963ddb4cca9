// Help texts of the options for many samples, block support and realisations: each listed by the
// commands that take it, with its default and unit.
import { describe, expect, it } from 'vitest';
import { commandHelp, toolHelp } from '../../src/cli/help.ts';
import { COMMANDS, PLANNED } from '../../src/cli/commands/index.ts';

const help = (name: string) => commandHelp(COMMANDS.find((c) => c.name === name)!).replace(/\s+/g, ' ');

describe('commandHelp', () => {
  it('commandHelp lists --neighbours, --exact, --local and --global-mean with defaults and units for predict, cv and grid', () => {
    for (const name of ['predict', 'cv', 'grid']) {
      const text = help(name);
      expect(text, name).toContain('--neighbours M local neighbourhoods: each target is predicted from its M nearest samples');
      expect(text, name).toContain('unit: samples; default: 64, grown up to 512 when the measured error misses --tolerance)');
      expect(text, name).toContain('--exact exact kriging from all samples whatever their number');
      expect(text, name).toContain('default: automatic: the cheaper of exact kriging and local neighbourhoods by estimated cost (samples, targets, threads); '
        + 'a local run is checked against exact kriging at up to 200 seeded random targets');
      expect(text, name).toContain('--local local neighbourhoods whatever the number of samples (their error is still measured and reported) (default: automatic, as for --exact)');
      expect(text, name).toContain('--tolerance mean=P,sd=P how close local neighbourhoods must come to exact kriging');
      expect(text, name).toContain('(default: mean=1,sd=2)');
      expect(text, name).toContain('--global-mean local neighbourhoods: use the mean (trend) estimated by GLS from all samples');
      expect(text, name).toContain('(default: on (--local-mean turns it off))');
    }
  });

  it('commandHelp for grid lists --workers and the support and realisation options with defaults and units', () => {
    const text = help('grid');
    expect(text).toContain('--workers N worker threads that share out the rows of the grid (1 to 256) (unit: threads; default: one per core of this machine)');
    expect(text).toContain('--support KIND point: the value at each cell centre; block: the average over each cell');
    expect(text).toContain('(one of: point, block; default: point)');
    expect(text).toContain('--block-points K block support: each cell is averaged over K × K points (default: 4)');
    expect(text).toContain('--realisations N conditional realisations');
    expect(text).toContain('--seed S seed of the random numbers');
    expect(text).toContain('--depth D depth of the layer: adds the volume above the threshold (area × depth) (unit: m; default: none)');
    expect(text).toContain('a run that lasts more than 2 s prints a progress line at every 10 %');
  });

  it('commandHelp for fit lists --method with auto as its default and --nnl-neighbours with its unit', () => {
    const text = help('fit');
    expect(text).toContain('(one of: auto, reml, ml, wls, nnl; default: auto)');
    expect(text).toContain('auto (reml below 3,000 samples, nnl from there on)');
    expect(text).toContain('--nnl-neighbours M nearest-neighbour likelihood: earlier neighbours each sample is conditioned on (1 to 1,000) (also --');
    expect(text).toContain('unit: samples; default: 30)');
  });
});

describe('toolHelp', () => {
  it('toolHelp says where many samples switch methods', () => {
    const text = toolHelp(COMMANDS, PLANNED).replace(/\s+/g, ' ');
    expect(text).toContain('Many samples: from 3,000 samples on, fit uses a nearest-neighbour likelihood (--method overrides)');
    expect(text).toContain('how the numbers were computed follows "note: "');
  });
});
