// Progress lines of fit, cv and report on stderr, forced on from the start of the run
// (io.progressAfterSeconds = 0), and none with --quiet; the outputs are the same either way.
import { afterAll, describe, expect, it } from 'vitest';
import { planarSamplesCsv, workspace } from './run-cli.ts';
import { createProject, saveProject } from '../../src/io/project.ts';

const shown = workspace({ progressAfterSeconds: 0 });
const plain = workspace();
afterAll(() => {
  shown.remove();
  plain.remove();
});
for (const ws of [shown, plain]) {
  ws.write('wells.csv', planarSamplesCsv());
  ws.write('model.json', JSON.stringify({
    structures: [{ type: 'nugget', sill: 0.5 }, { type: 'exponential', sill: 12, scale: 80 }], trend: 'constant', transform: 'none',
    crs: { work: 'EPSG:32633' },
  }));
  ws.write('p.json', saveProject(createProject({
    samples: { fileName: 'wells.csv', text: planarSamplesCsv(), intake: { crs: 'EPSG:32633' } },
    model: { structures: [{ type: 'nugget', sill: 0.5 }, { type: 'exponential', sill: 12, scale: 80 }], trend: 'constant', transform: 'none' },
    grid: { cellSize: 20 }, threshold: 25, title: 'Wells',
  })));
}
const COMMON = ['--samples', 'wells.csv', '--crs', 'EPSG:32633'];

/** The progress lines of a run's stderr. */
const progressLines = (stderr: string) => stderr.split('\n').filter((l) => l.startsWith('progress: '));

describe('progress lines of fit, cv and report', () => {
  it('fit (exact REML, one thread) prints evaluation progress ending at 100 %, none with --quiet, the same model', async () => {
    const r = await shown.run('fit', ...COMMON);
    expect(r.code, r.stderr).toBe(0);
    const lines = progressLines(r.stderr);
    expect(lines.length).toBeGreaterThan(1);
    expect(lines.every((l) => /^progress: \d+ % of [\d,]+ likelihood evaluations planned \(\d+ s\)$/.test(l))).toBe(true);
    expect(lines.at(-1)).toMatch(/^progress: 100 % of /);
    const quiet = await shown.run('fit', ...COMMON, '--quiet');
    expect(quiet.code).toBe(0);
    expect(progressLines(quiet.stderr)).toEqual([]);
    expect(quiet.stderr).not.toContain('progress');
    expect(quiet.stdout).toBe(r.stdout);
    // A short run with the usual delay prints none either, and the model is the same.
    const usual = await plain.run('fit', ...COMMON);
    expect(progressLines(usual.stderr)).toEqual([]);
    expect(usual.stdout).toBe(r.stdout);
  });

  it('fit --method wls prints its three stages; --method nnl --workers 1 prints likelihood passes', async () => {
    const wls = await shown.run('fit', ...COMMON, '--method', 'wls');
    expect(wls.code, wls.stderr).toBe(0);
    expect(progressLines(wls.stderr)).toEqual(expect.arrayContaining([expect.stringMatching(/^progress: 100 % of 3 fitting stages \(\d+ s\)$/)]));
    const nnl = await shown.run('fit', ...COMMON, '--method', 'nnl', '--nnl-neighbours', '5', '--workers', '1');
    expect(nnl.code, nnl.stderr).toBe(0);
    expect(progressLines(nnl.stderr)[0]).toMatch(/^progress: \d+ likelihood passes over the samples \(\d+ s\)$/);
    expect(progressLines((await shown.run('fit', ...COMMON, '--method', 'nnl', '--nnl-neighbours', '5', '--workers', '1', '--quiet')).stderr)).toEqual([]);
  });

  it('cv on the exact path prints its three leave-one-out stages, none with --quiet, the same figures', async () => {
    const r = await shown.run('cv', ...COMMON, '--model', 'model.json', '--exact');
    expect(r.code, r.stderr).toBe(0);
    expect(progressLines(r.stderr)).toEqual([
      expect.stringMatching(/^progress: 30 % of 3 leave-one-out stages \(\d+ s\)$/),
      expect.stringMatching(/^progress: 60 % of 3 leave-one-out stages \(\d+ s\)$/),
      expect.stringMatching(/^progress: 100 % of 3 leave-one-out stages \(\d+ s\)$/),
    ]);
    const quiet = await shown.run('cv', ...COMMON, '--model', 'model.json', '--exact', '--quiet');
    expect(progressLines(quiet.stderr)).toEqual([]);
    expect(quiet.stdout).toBe(r.stdout);
  });

  it('report prints the progress of its model comparison, none with --quiet or --no-compare', async () => {
    const r = await shown.run('report', '--project', 'p.json', '--out', 'r.html');
    expect(r.code, r.stderr).toBe(0);
    const lines = progressLines(r.stderr);
    expect(lines.length).toBeGreaterThan(1);
    expect(lines.every((l) => /^progress: \d+ % of 6 candidate models \(\d+ s\)$/.test(l))).toBe(true);
    expect(lines.at(-1)).toMatch(/^progress: 100 % of 6 candidate models/);
    const quiet = await shown.run('report', '--project', 'p.json', '--out', 'q.html', '--quiet');
    expect(quiet.code).toBe(0);
    expect(progressLines(quiet.stderr)).toEqual([]);
    const none = await shown.run('report', '--project', 'p.json', '--out', 'n.html', '--no-compare');
    expect(progressLines(none.stderr)).toEqual([]);
  });
});
