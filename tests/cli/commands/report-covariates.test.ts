// gapwise report with a covariate model, on the invented demo (data-demo/README.md): the covariate on
// the report's grid from --covariate-raster or from the raster the project names beside it; the
// report lists the trend coefficients with standard errors and the share of variance explained.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { copyFileSync, readFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { workspace, type Workspace } from '../run-cli.ts';
import { createProject, saveProject } from '../../../src/io/project.ts';
import { readCovariateRaster } from '../../../src/io/covariate-raster.ts';
import { prepareReport } from '../../../src/worker/report-data.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';

const DEMO = resolve(__dirname, '..', '..', '..', 'data-demo');
const VALUE = 'Pb (mg/kg)';

/** The numbers a report tags with data-figure="name" data-value="v". */
function figures(html: string): Record<string, number> {
  return Object.fromEntries([...html.matchAll(/data-figure="([^"]+)" data-value="([^"]+)"/g)].map((m) => [m[1], Number(m[2])]));
}

describe('gapwise report with covariates', () => {
  let ws: Workspace;
  let model: CovarianceModel & { crs?: unknown };
  const project = (extra: Partial<Parameters<typeof createProject>[0]> = {}) => saveProject(createProject({
    samples: { fileName: 'lead-topsoil-covariates.csv', text: readFileSync(join(DEMO, 'lead-topsoil-covariates.csv'), 'utf8'), intake: { value: VALUE }, unit: 'mg/kg' },
    model, structure: { transform: 'log' }, grid: { cellSize: 10 }, threshold: 200, saved: '2026-03-01T09:00:00.000Z', ...extra,
  }));

  beforeAll(async () => {
    ws = workspace({ maxWorkers: 2 });
    copyFileSync(join(DEMO, 'lead-topsoil-covariates.csv'), join(ws.dir, 'lead.csv'));
    const fit = await ws.run('fit', '--samples', 'lead.csv', '--value', VALUE, '--transform', 'log', '--covariates', 'workshop_dist_m', '--out', 'model.json');
    expect(fit.code, fit.stderr).toBe(0);
    const { crs: _crs, ...fitted } = JSON.parse(ws.read('model.json')) as CovarianceModel & { crs?: unknown };
    model = fitted;
    ws.write('named.json', project({ covariateRasters: [{ covariate: 'workshop_dist_m', fileName: 'workshop-distance.tif' }] }));
    ws.write('unnamed.json', project());
    copyFileSync(join(DEMO, 'workshop-distance.tif'), join(ws.dir, 'workshop-distance.tif'));
  }, 120_000);
  afterAll(() => ws.remove());

  it('report --project --realisations takes the raster the project names beside it and lists the coefficients, standard errors and variance explained', async () => {
    const r = await ws.run('report', '--project', 'named.json', '--realisations', '12', '--seed', '1', '--no-compare', '--out', 'r.html');
    expect(r.code, r.stderr).toBe(0);
    const html = ws.read('r.html');
    const f = figures(html);
    const coefficients = model.fit!.coefficients as Array<{ name: string; estimate: number; standardError: number }>;
    expect(coefficients.map((c) => c.name)).toEqual(['constant', 'workshop_dist_m']);
    for (const c of coefficients) {
      expect(f[`coefficient ${c.name}`]).toBe(c.estimate);
      expect(f[`standard error ${c.name}`]).toBe(c.standardError);
    }
    // Lead falls with the distance from the invented workshop (data-demo/README.md).
    expect(f['coefficient workshop_dist_m']).toBeLessThan(0);
    expect(f['variance explained']).toBe(model.fit!.trendVarianceExplained);
    expect(f['variance explained']).toBeGreaterThan(0);
    expect(f['variance explained']).toBeLessThan(1);
    expect(f.realisations).toBe(12);
    expect(f['area-p05']).toBeLessThanOrEqual(f['area-median']);
    expect(f['area-median']).toBeLessThanOrEqual(f['area-p95']);
    expect(r.stderr).toMatch(/area: .* from 12 realisations/);
    // The same with the raster given on the command line, to a project that names none.
    const given = await ws.run('report', '--project', 'unnamed.json', '--covariate-raster', 'workshop_dist_m=workshop-distance.tif',
      '--realisations', '12', '--seed', '1', '--no-compare', '--out', 'given.html');
    expect(given.code, given.stderr).toBe(0);
    const g = figures(ws.read('given.html'));
    for (const k of ['area-median', 'area-p05', 'area-p95', 'expected-area', 'coefficient workshop_dist_m']) expect(g[k], k).toBe(f[k]);
  }, 120_000);

  it('prepareReport with the raster gives the surface "gapwise grid --project --covariate-raster" writes, cell for cell', async () => {
    const grid = await ws.run('grid', '--project', 'unnamed.json', '--covariate-raster', 'workshop_dist_m=workshop-distance.tif', '--out', 'g.csv');
    expect(grid.code, grid.stderr).toBe(0);
    const rows = ws.read('g.csv').split('\n').filter((l) => l !== '' && !l.startsWith('#')).slice(1).map((l) => l.split(',').map(Number));
    const raster = await readCovariateRaster(readFileSync(join(DEMO, 'workshop-distance.tif')), 'workshop_dist_m', 'workshop-distance.tif');
    const p = JSON.parse(ws.read('unnamed.json'));
    const input = prepareReport(p, { software: { name: 'gapwise', version: 'test' }, compare: false, rasters: [raster] });
    const g = input.grid!;
    const inside: number[] = [];
    for (let c = 0; c < g.nx * g.ny; c++) if (!g.mask || g.mask[c] === 1) inside.push(c);
    expect(inside.length).toBe(rows.length);
    inside.forEach((c, k) => {
      expect(rows[k][0]).toBeCloseTo(g.x0 + ((c % g.nx) + 0.5) * g.cell, 6);
      // The report keeps its maps in single precision; the CSV writes double precision.
      expect(Math.fround(rows[k][4])).toBe(input.surface!.mean[c]);
      expect(Math.fround(rows[k][5])).toBe(input.surface!.sd[c]);
    });
  }, 120_000);

  it('report refuses a covariate model without its raster, naming the covariate (exit 2)', async () => {
    const none = await ws.run('report', '--project', 'unnamed.json', '--no-compare', '--out', 'x.html');
    expect(none.code).toBe(2);
    expect(none.stderr).toContain('"workshop_dist_m"');
    expect(none.stderr).toContain('--covariate-raster');
    ws.write('elsewhere.json', project({ covariateRasters: [{ covariate: 'workshop_dist_m', fileName: 'moved-away.tif' }] }));
    const moved = await ws.run('report', '--project', 'elsewhere.json', '--realisations', '5', '--no-compare', '--out', 'x.html');
    expect(moved.code).toBe(2);
    expect(moved.stderr).toContain('"moved-away.tif" for the covariate "workshop_dist_m"');
    // A raster for a model without covariates is refused too.
    ws.write('plain.json', project({ model: { structures: [{ type: 'nugget', sill: 0.02 }, { type: 'exponential', sill: 1, scale: 70 }], trend: 'constant', transform: 'log' } }));
    const stray = await ws.run('report', '--project', 'plain.json', '--covariate-raster', 'workshop_dist_m=workshop-distance.tif', '--no-compare', '--out', 'x.html');
    expect(stray.code).toBe(2);
    expect(stray.stderr).toContain('applies to a model with covariates');
  }, 120_000);
});
