// The shared CLI pieces: the exact-or-local choice of predict, cv and grid, its note, and progress lines.
import { describe, expect, it } from 'vitest';
import {
  activityLine, describePredictionPath, progressLine, readPredictionPath, readWorkers, type CliIo,
} from '../../src/cli/common.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';

describe('readPredictionPath', () => {
  it('readPredictionPath chooses by cost (core/prediction/path-choice.ts): exact for few targets, local for many, always local above 10,000 samples', () => {
    const common = { neighbours: 64, neighboursGiven: false, globalMean: true, automatic: true, tolerance: { mean: 1, sd: 2 }, warnings: [] };
    expect(readPredictionPath({}, 2000, { targets: 100 })).toMatchObject({ ...common, path: 'exact' });
    expect(readPredictionPath({}, 2000, { targets: 40_000 })).toMatchObject({ ...common, path: 'local' });
    expect(readPredictionPath({ neighbours: 32, 'local-mean': true }, 48211, { targets: 10 })).toMatchObject({
      ...common, path: 'local', neighbours: 32, neighboursGiven: true, globalMean: false, reason: 'more than 10,000 samples are too many to factorise together',
    });
    expect(readPredictionPath({ tolerance: 'mean=0.5' }, 2000, { targets: 40_000 }).tolerance).toEqual({ mean: 0.5, sd: 2 });
    expect(readPredictionPath({ tolerance: 'sd=0' }, 2000, { targets: 40_000 }).path).toBe('exact');
  });

  it('readPredictionPath for leave-one-out: exact up to 3,000 samples, local above', () => {
    expect(readPredictionPath({}, 3000, { targets: 3000, leaveOneOut: true }).path).toBe('exact');
    expect(readPredictionPath({}, 3001, { targets: 3001, leaveOneOut: true }).path).toBe('local');
  });

  it('readPredictionPath: --exact and --local override the choice; --neighbours unused on the exact path is a warning', () => {
    expect(readPredictionPath({ exact: true }, 9000, { targets: 1e6 })).toMatchObject({ path: 'exact', automatic: false });
    expect(readPredictionPath({ local: true, neighbours: 10 }, 40)).toMatchObject({ path: 'local', neighbours: 10, automatic: false, warnings: [] });
    expect(readPredictionPath({ neighbours: 10 }, 40).warnings).toEqual([
      '--neighbours 10 is not used: exact kriging from all 40 samples was chosen (40 targets are few enough to krige exactly (the error check would do it anyway)); add --local to predict from neighbourhoods.',
    ]);
  });

  it('readPredictionPath refuses contradictions, bad neighbour counts, bad tolerances and --exact above 10,000 samples (GapwiseError bad-option)', () => {
    expect(() => readPredictionPath({ exact: true, local: true }, 10)).toThrow(GapwiseError);
    expect(() => readPredictionPath({ 'global-mean': true, 'local-mean': true }, 10)).toThrow('Options "--global-mean" and "--local-mean" contradict each other');
    expect(() => readPredictionPath({ neighbours: 0 }, 10)).toThrow('Option "--neighbours" expects a whole number of samples from 1 to 2,000, got 0.');
    expect(() => readPredictionPath({ neighbours: 2.5 }, 10)).toThrow('got 2.5');
    expect(() => readPredictionPath({ exact: true, neighbours: 8 }, 10)).toThrow(/does not apply with "--exact"/);
    expect(() => readPredictionPath({ tolerance: 'median=1' }, 10)).toThrow('Expected each part of the tolerance to be mean=P or sd=P');
    expect(() => readPredictionPath({ exact: true }, 10_001)).toThrow(
      'Exact kriging is limited to 10,000 samples (its matrix takes 8·n² bytes, here 0.8 GB), got 10,001; leave out --exact to predict from local neighbourhoods.');
    expect(readPredictionPath({ exact: true }, 10_000).path).toBe('exact');
  });
});

describe('describePredictionPath', () => {
  it('describePredictionPath says which path, how many neighbours and samples, and why', () => {
    expect(describePredictionPath(readPredictionPath({}, 48211), 48211))
      .toBe('predicted from the 64 nearest samples at each target (local neighbourhoods, with the GLS mean of all samples); 48,211 samples; chosen automatically: more than 10,000 samples are too many to factorise together (--exact overrides)');
    expect(describePredictionPath(readPredictionPath({ local: true, 'local-mean': true, neighbours: 100 }, 40), 40))
      .toBe('predicted from the 40 nearest samples at each target (local neighbourhoods, the mean re-estimated in each); 40 samples (--local)');
    expect(describePredictionPath(readPredictionPath({}, 25), 25))
      .toBe('predicted by exact kriging from all 25 samples; chosen automatically: 25 targets are few enough to krige exactly (the error check would do it anyway) (--local overrides)');
    expect(describePredictionPath(readPredictionPath({ exact: true }, 5000), 5000)).toBe('predicted by exact kriging from all 5,000 samples (--exact)');
  });
});

describe('progressLine', () => {
  function capture(): { io: CliIo; lines: string[] } {
    const lines: string[] = [];
    return { io: { stdout: () => undefined, stderr: (t) => { lines.push(t); }, cwd: '.' }, lines };
  }

  it('progressLine stays quiet for a run shorter than 2 s', () => {
    const { io, lines } = capture();
    let t = 0;
    const p = progressLine(io, 'cells', { now: () => t });
    for (let done = 0; done <= 1000; done += 50) {
      t += 50; // 1.05 s in all
      p(done, 1000);
    }
    expect(lines).toEqual([]);
  });

  it('progressLine prints at each further tenth once the run has lasted 2 s, with the total and the seconds', () => {
    const { io, lines } = capture();
    let t = 0;
    const p = progressLine(io, 'cells', { now: () => t });
    for (let done = 0; done <= 250_000; done += 5000) {
      t += 100; // 0.1 s per 5,000 cells: 5 s in all
      p(done, 250_000);
    }
    // At 2 s, 95,000 of 250,000 cells (38 %) are done: the first line reports the tenth reached, 30 %.
    expect(lines[0]).toBe('progress: 30 % of 250,000 cells (2 s)\n');
    expect(lines.map((l) => Number(/(\d+) %/.exec(l)![1]))).toEqual([30, 40, 50, 60, 70, 80, 90, 100]);
    expect(lines.at(-1)).toBe('progress: 100 % of 250,000 cells (5 s)\n');
  });

  it('progressLine on a terminal rewrites one line at most four times a second and ends it with a newline', () => {
    const { io, lines } = capture();
    io.stderrIsTerminal = true;
    let t = 0;
    const p = progressLine(io, 'realisations', { now: () => t });
    for (let done = 1; done <= 100; done++) {
      t += 50; // 5 s in all
      p(done, 100);
    }
    expect(lines[0]).toBe('\rprogress: 40 % of 100 realisations (2 s)');
    expect(lines.slice(0, -1).every((l) => l.startsWith('\rprogress: ') && !l.includes('\n'))).toBe(true);
    // From 2 s to 5 s at most one line each 250 ms, and the last one at 100 % with a newline.
    expect(lines.length).toBeLessThanOrEqual(14);
    expect(lines.length).toBeGreaterThanOrEqual(10);
    expect(lines.at(-1)).toBe('\rprogress: 100 % of 100 realisations (5 s)\n');
  });

  it('progressLine prints nothing with --quiet (io.quiet), on a terminal or not', () => {
    for (const terminal of [false, true]) {
      const { io, lines } = capture();
      io.quiet = true;
      io.stderrIsTerminal = terminal;
      let t = 0;
      const p = progressLine(io, 'cells', { now: () => t });
      for (let done = 0; done <= 100; done++) {
        t += 100;
        p(done, 100);
      }
      expect(lines).toEqual([]);
    }
  });
});

describe('readWorkers', () => {
  it('readWorkers caps --workers above the cores at the cores, with a warning that gives both numbers', () => {
    const lines: string[] = [];
    const io: CliIo = { stdout: () => undefined, stderr: (t) => { lines.push(t); }, cwd: '.', maxWorkers: 2 };
    expect(readWorkers({ workers: 256 }, io)).toBe(2);
    expect(lines).toEqual(['warning: --workers 256 is more than the 2 cores of this machine; 2 worker threads are used (more threads only take more memory).\n']);
    expect(readWorkers({ workers: 2 }, io)).toBe(2);
    expect(readWorkers({ workers: 1 }, io)).toBe(1);
    expect(lines).toHaveLength(1);
    expect(() => readWorkers({ workers: 257 }, io)).toThrow(/from 1 to 256, got 257/);
  });
});

describe('activityLine', () => {
  it('activityLine counts steps of work of unknown length: silent for 2 s, then a plain line every 5 s; nothing with --quiet', () => {
    const lines: string[] = [];
    const io: CliIo = { stdout: () => undefined, stderr: (t) => { lines.push(t); }, cwd: '.' };
    let t = 0;
    const a = activityLine(io, 'likelihood passes', { now: () => t });
    for (let i = 0; i < 120; i++) {
      t += 100; // 12 s in all
      a.step();
    }
    a.done();
    expect(lines).toEqual(['progress: 20 likelihood passes (2 s)\n', 'progress: 70 likelihood passes (7 s)\n', 'progress: 120 likelihood passes (12 s)\n']);
    const quiet: string[] = [];
    const q = activityLine({ ...io, quiet: true, stderr: (x) => { quiet.push(x); } }, 'passes', { now: () => t });
    for (let i = 0; i < 100; i++) { t += 1000; q.step(); }
    expect(quiet).toEqual([]);
  });
});

