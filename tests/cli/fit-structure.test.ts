// gapwise fit --anisotropy and --structures 2 (src/cli/fit-structure.ts): the model written, the
// comparison table on stderr and in the model, and the refused combinations.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { simulateSamples } from '../../src/core/simulation/simulate.ts';
import { parseModel, type CovarianceModel } from '../../src/core/covariance/model.ts';
import { comparisonLines } from '../../src/cli/fit-structure.ts';
import { workspace, type Workspace } from './run-cli.ts';

/** Invented anisotropic field (simulate.ts, seed 4): 120 planar samples, axis at 60°, ratio 0.3. */
function anisotropicCsv(): string {
  const truth: CovarianceModel = {
    structures: [{ type: 'nugget', sill: 0.05 }, { type: 'exponential', sill: 4, scale: 300 }], trend: 'constant', transform: 'none',
    anisotropy: { azimuth: 60, ratio: 0.3 },
  };
  const s = simulateSamples(truth, { count: 120, extent: { xmin: 0, ymin: 0, xmax: 1000, ymax: 1000 }, seed: 4 });
  const lines = ['id,easting,northing,value'];
  for (let i = 0; i < s.x.length; i++) lines.push(`P${i + 1},${(500000 + s.x[i]).toFixed(2)},${(5400000 + s.y[i]).toFixed(2)},${(20 + s.value[i]).toFixed(4)}`);
  return `${lines.join('\n')}\n`;
}

describe('gapwise fit --anisotropy / --structures 2', () => {
  let ws: Workspace;
  const base = ['--samples', 'field.csv', '--crs', 'EPSG:32633', '--family', 'exponential'];
  beforeAll(() => {
    ws = workspace();
    ws.write('field.csv', anisotropicCsv());
  });
  afterAll(() => ws.remove());

  it('fit --anisotropy writes the anisotropic model with both fits compared (stderr and fit.comparison)', async () => {
    const r = await ws.run('fit', ...base, '--anisotropy', '--out', 'an.json');
    expect(r.code, r.stderr).toBe(0);
    const json = JSON.parse(ws.read('an.json'));
    const model = parseModel(json);
    expect(model.anisotropy!.azimuth).toBeGreaterThanOrEqual(0);
    expect(model.anisotropy!.azimuth).toBeLessThan(180);
    expect(Math.abs(model.anisotropy!.azimuth - 60)).toBeLessThan(15);
    expect(model.anisotropy!.ratio).toBeLessThan(0.6);
    const rows = json.fit.comparison as { label: string; aic: number; logLikelihood: number; chosen: boolean }[];
    expect(rows.map((x) => [x.label, x.chosen])).toEqual([['isotropic', false], ['anisotropic', true]]);
    expect(rows[1].aic).toBeLessThan(rows[0].aic);
    expect(r.stderr).toMatch(/note: comparison of fits on the same samples:\nnote: {3}model {8}parameters {2}log-likelihood {2}AIC\nnote: {3}isotropic /);
    expect(r.stderr).toContain(`${rows[1].aic.toFixed(3)}  kept`);
    expect(json.caution).toBeTypeOf('string');
  }, 300_000);

  it('fit --structures 2 on a one-structure field keeps one structure with the guard\'s warning', async () => {
    const r = await ws.run('fit', ...base, '--structures', '2', '--out', 'nested.json');
    expect(r.code, r.stderr).toBe(0);
    const json = JSON.parse(ws.read('nested.json'));
    expect(json.structures.filter((s: { type: string }) => s.type !== 'nugget').length).toBe(1);
    expect(r.stderr).toMatch(/warning: Two structures are not identifiable from these samples: .*; the one-structure model is kept\./);
    expect(json.fit.comparison.map((x: { label: string }) => x.label)).toEqual(['one structure', 'two structures']);
  }, 300_000);

  it('fit --anisotropy --structures 2 compares the four fits and, on a one-structure field, keeps one anisotropic structure', async () => {
    const r = await ws.run('fit', ...base, '--anisotropy', '--structures', '2', '--out', 'both.json');
    expect(r.code, r.stderr).toBe(0);
    const json = JSON.parse(ws.read('both.json'));
    const rows = json.fit.comparison as { label: string; logLikelihood: number; chosen: boolean }[];
    expect(rows.map((x) => x.label)).toEqual(['isotropic', 'anisotropic', 'two structures', 'anisotropic, two structures']);
    expect(rows[3].logLikelihood).toBeGreaterThanOrEqual(Math.max(rows[1].logLikelihood, rows[2].logLikelihood) - 1e-9 * Math.abs(rows[3].logLikelihood));
    expect(json.structures.filter((s: { type: string }) => s.type !== 'nugget').length).toBe(1);
    expect(Math.abs(json.anisotropy.azimuth - 60)).toBeLessThan(15);
    expect(r.stderr).toMatch(/warning: Two structures are not identifiable from these samples: .*; the one-structure anisotropic model is kept\./);
    expect(r.stderr).toContain('anisotropic, two structures');
  }, 300_000);

  it('fit refuses --anisotropy with wls or nnl, and --structures 3', async () => {
    const wls = await ws.run('fit', ...base, '--anisotropy', '--method', 'wls');
    expect(wls.code).toBe(2);
    expect(wls.stderr).toMatch(/"--anisotropy" is fitted by the exact REML or ML likelihood/);
    const three = await ws.run('fit', ...base, '--structures', '3');
    expect(three.code).toBe(2);
    expect(three.stderr).toMatch(/expects 1 or 2, got 3/);
  });

  it('comparisonLines aligns the columns and marks the model kept', () => {
    expect(comparisonLines([
      { label: 'isotropic', logLikelihood: -10.5, aic: 27, parameters: 3, chosen: false },
      { label: 'anisotropic', logLikelihood: -5.25, aic: 20.5, parameters: 5, chosen: true },
    ])).toEqual([
      'model        parameters  log-likelihood  AIC',
      'isotropic    3           -10.500         27.000',
      'anisotropic  5           -5.250          20.500  kept',
    ]);
  });
});
