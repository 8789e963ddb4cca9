// The committed, INVENTED demo scenario in data-demo/ goes through the command line as promised in
// data-demo/README.md, and scripts/make-demo-data.ts regenerates it byte for byte.
import { afterAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { workspace } from './run-cli.ts';

const ROOT = resolve(__dirname, '..', '..');
const DEMO = join(ROOT, 'data-demo');
const CSV = join(DEMO, 'lead-topsoil.csv');
const BOUNDARY = join(DEMO, 'site-boundary.geojson');
const scenario = JSON.parse(readFileSync(join(DEMO, 'scenario.json'), 'utf8'));
const ws = workspace();
afterAll(() => ws.remove());

describe('demo data', () => {
  it('demo data is labelled invented in every file', () => {
    expect(scenario.invented).toBe(true);
    expect(scenario.name).toMatch(/\(invented\)$/);
    expect(scenario.actionLevel).toBe(200);
    expect(scenario.unit).toBe('mg/kg');
    const lines = readFileSync(CSV, 'utf8').trimEnd().split('\n');
    expect(lines[0].split(',')).toContain('Site');
    for (const l of lines.slice(1)) expect(l.endsWith(`,${scenario.name}`), l).toBe(true);
    const boundary = JSON.parse(readFileSync(BOUNDARY, 'utf8'));
    expect(boundary.features[0].properties.invented).toBe(true);
    expect(readFileSync(join(DEMO, 'README.md'), 'utf8')).toMatch(/INVENTED/);
  });

  it('demo data goes through inspect with exit 0, its non-detects, the duplicate, and every sample inside the boundary', async () => {
    const r = await ws.run('inspect', '--samples', CSV, '--boundary', BOUNDARY);
    expect(r.code, r.stderr).toBe(0);
    const report = JSON.parse(r.stdout);
    expect(report.rowsRead).toBe(150);
    expect(report.rowsUsed).toBe(150);
    expect(report.valueColumn).toBe(scenario.valueColumn);
    expect(report.unit).toBe('mg/kg');
    expect(report.idColumn).toBe('Sample ID');
    expect(report.crs.input).toBe('EPSG:4326');
    expect(report.crs.work).toBe('EPSG:32632');
    expect(report.nonDetects.count).toBe(4);
    expect(report.duplicates.groups).toBe(1);
    const merged = report.entries.filter((e: { action: string }) => e.action === 'merged').map((e: { line: number }) => e.line);
    expect(merged).toEqual([84, 85]);
    expect(report.summary.n).toBe(149);
    expect(report.summary.max).toBe(1569);
    expect(report.summary.min).toBe(2.5); // "<5" at DL/2
    expect(report.transformAdvice).toContain('log');
    expect(report.boundary.samplesOutside).toBe(0);
    // About 400 m × 300 m.
    expect(report.boundary.areaHectares).toBeGreaterThan(10);
    expect(report.boundary.areaHectares).toBeLessThan(14);
    expect(r.stderr).toContain('warning: 4 non-detects replaced by DL/2.');
  });

  it('demo data: fit with a log transform converges, and cv of that model is calibrated', async () => {
    const r = await ws.run('fit', '--samples', CSV, '--transform', 'log', '--out', 'lead-model.json');
    expect(r.code, r.stderr).toBe(0);
    const model = JSON.parse(ws.read('lead-model.json'));
    expect(model.fit.converged).toBe(true);
    expect(model.transform).toBe('log');
    expect(model.crs.work).toBe('EPSG:32632');
    // The simulated field has a Matérn scale of 45 m plus two hotspots tens of metres wide.
    expect(model.practicalRange).toBeGreaterThan(50);
    expect(model.practicalRange).toBeLessThan(500);
    const cv = await ws.run('cv', '--samples', CSV, '--model', 'lead-model.json');
    expect(cv.code, cv.stderr).toBe(0);
    const s = JSON.parse(cv.stdout);
    expect(s.n).toBe(149);
    // Common practice: msse about 1 and about 95 % inside the 95 % interval for a sound model.
    expect(s.msse).toBeGreaterThan(0.7);
    expect(s.msse).toBeLessThan(1.4);
    expect(s.coverage95).toBeGreaterThan(0.9);
  }, 60000);

  it('scripts/make-demo-data.ts regenerates the committed files byte for byte', () => {
    const r = spawnSync(process.execPath, [join(ROOT, 'node_modules', 'tsx', 'dist', 'cli.mjs'), join(ROOT, 'scripts', 'make-demo-data.ts'), ws.dir],
      { encoding: 'utf8', timeout: 60000 });
    expect(r.status, r.stderr).toBe(0);
    for (const f of ['lead-topsoil.csv', 'lead-topsoil-covariates.csv', 'site-boundary.geojson', 'scenario.json']) {
      expect(ws.read(f), f).toBe(readFileSync(join(DEMO, f), 'utf8'));
    }
    expect(readFileSync(join(ws.dir, 'workshop-distance.tif')).equals(readFileSync(join(DEMO, 'workshop-distance.tif'))), 'workshop-distance.tif').toBe(true);
  }, 60000);

  it('demo covariate (README worked example): fit --covariates, then grid on the raster\'s lattice clipped by the boundary', async () => {
    const COV = join(DEMO, 'lead-topsoil-covariates.csv');
    const common = ['--samples', COV, '--value', scenario.valueColumn];
    const f = await ws.run('fit', ...common, '--transform', 'log', '--covariates', 'workshop_dist_m', '--out', 'cov-model.json');
    expect(f.code, f.stderr).toBe(0);
    const model = JSON.parse(ws.read('cov-model.json'));
    expect(model.trend).toEqual({ covariates: ['workshop_dist_m'] });
    const slope = model.fit.coefficients.find((c: { name: string }) => c.name === 'workshop_dist_m');
    // ln(lead) falls away from the invented workshop: a negative slope, more than 2 standard errors from 0.
    expect(slope.estimate).toBeLessThan(-2 * slope.standardError);
    const g = await ws.run('grid', ...common, '--model', 'cov-model.json', '--covariate-raster', `workshop_dist_m=${join(DEMO, 'workshop-distance.tif')}`,
      '--boundary', BOUNDARY, '--out', 'cov.tif', '--workers', '1');
    expect(g.code, g.stderr).toBe(0);
    const summary = JSON.parse(g.stdout);
    expect(summary.grid.cell).toBe(5);
    expect(summary.grid.cells).toBeGreaterThan(4000);
  }, 120000);
});
