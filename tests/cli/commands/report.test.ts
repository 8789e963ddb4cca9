// gapwise report: one self-contained HTML file from a project, with the caution and the version.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { planarSamplesCsv, workspace, type Workspace } from '../run-cli.ts';
import { createProject, openProject, projectBoundary, projectGrid, projectIntake, saveProject, type ProjectSimulation } from '../../../src/io/project.ts';
import { formatQuantity } from '../../../src/io/report.ts';
import { CAUTION } from '../../../src/core/shared/caution.ts';
import { simulateConditional } from '../../../src/core/simulation/conditional-simulation.ts';
import { exceedanceArea } from '../../../src/core/prediction/exceedance-area.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import { expectClose } from '../../helpers/tolerance.ts';

const version = (JSON.parse(readFileSync(resolve(__dirname, '..', '..', '..', 'package.json'), 'utf8')) as { version: string }).version;

describe('gapwise report', () => {
  let ws: Workspace;
  beforeAll(() => {
    ws = workspace();
    const project = createProject({
      samples: { fileName: 'wells.csv', text: planarSamplesCsv(), intake: { crs: 'EPSG:32633' } },
      model: { structures: [{ type: 'nugget', sill: 0.5 }, { type: 'exponential', sill: 12, scale: 80 }], trend: 'constant', transform: 'none' },
      grid: { cellSize: 10 }, threshold: 25, title: 'Wells <north>',
    });
    ws.write('p.json', saveProject(project));
  });
  afterAll(() => ws.remove());

  it('report --project writes the HTML report with the caution, the package version and the escaped title', async () => {
    const r = await ws.run('report', '--project', 'p.json', '--out', 'r.html', '--no-compare');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain(`caution: ${CAUTION}`);
    const html = ws.read('r.html');
    expect(html.startsWith('<!DOCTYPE html>')).toBe(true);
    expect(html).toContain(`Gapwise ${version}`);
    expect(html).toContain('Wells &lt;north&gt;');
    expect(html).not.toContain('Wells <north>');
    expect(html.split(CAUTION).length - 1).toBeGreaterThanOrEqual(3);
    expect(html).toContain('<h3>Model comparison</h3>');
    expect(html).toContain('No comparison was made.');
  });

  it('report --title replaces the title; report without --project is refused (exit 2)', async () => {
    const r = await ws.run('report', '--project', 'p.json', '--title', 'Spring round', '--no-compare');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toContain('<h1>Spring round</h1>');
    const none = await ws.run('report', '--out', 'r.html');
    expect(none.code).toBe(2);
    expect(none.stderr).toContain('"--project FILE" is required');
  });
});

const DEMO = resolve(__dirname, '..', '..', '..', 'data-demo');
/** The model "gapwise fit --transform log" gives on the invented demo data (REML, Matérn ν = 3/2). */
const demoModel: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.020592850874447052 }, { type: 'matern', sill: 1.303450145528023, scale: 78.59976287563967, nu: 1.5 }],
  trend: 'constant', transform: 'log',
};

/** The numbers a report tags with data-figure="name" data-value="v". */
function figures(html: string): Record<string, number> {
  const out: Record<string, number> = {};
  for (const m of html.matchAll(/data-figure="([\w-]+)" data-value="([^"]+)"/g)) out[m[1]] = Number(m[2]);
  return out;
}

describe('gapwise report: area above the action level', () => {
  let ws: Workspace;
  beforeAll(() => {
    ws = workspace();
    const demo = createProject({
      samples: { fileName: 'lead-topsoil.csv', text: readFileSync(resolve(DEMO, 'lead-topsoil.csv'), 'utf8'), invented: true },
      boundary: { fileName: 'site-boundary.geojson', text: readFileSync(resolve(DEMO, 'site-boundary.geojson'), 'utf8'), invented: true },
      model: demoModel, grid: { cellSize: 10 }, threshold: 200, structure: { chosen: 'matern-1.5' },
    });
    ws.write('demo.json', saveProject(demo));
    const saved: ProjectSimulation = {
      count: 80, seed: 4, support: 'point', blockPoints: 1, depth: null,
      summary: {
        threshold: 200, cell: 10, activeCells: 1200, area: { median: 11_000, p05: 9_500, p95: 12_600, mean: 11_050, unit: 'm²' },
        fraction: { median: 0.0917, p05: 0.0792, p95: 0.105, mean: 0.0921 }, method: 'Conditional Gaussian simulation (saved).', made: '',
      },
    };
    ws.write('saved.json', saveProject({ ...demo, simulation: saved }));
  });
  afterAll(() => ws.remove());

  it('report --realisations --depth --seed on the demo prints and writes the median and interval exceedanceArea gives for the same realisations', async () => {
    const r = await ws.run('report', '--project', 'demo.json', '--realisations', '30', '--depth', '0.3', '--seed', '3', '--workers', '3', '--no-compare', '--out', 'r.html');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toMatch(/; drawn in \d+\.\d s on 3 worker threads\n/);
    // The same realisations drawn here, kept, and summarised by core/prediction/exceedance-area.ts.
    const { project } = openProject(ws.read('demo.json'), 'demo.json');
    const intake = projectIntake(project);
    const grid = projectGrid(project, intake, projectBoundary(project, intake.report.crs.work));
    const sim = simulateConditional(intake.samples, demoModel, grid, { count: 30, seed: 3, keepRealisations: true });
    const expected = exceedanceArea(sim.realisations!, { threshold: 200, cell: 10, depth: 0.3 });
    const html = ws.read('r.html');
    const f = figures(html);
    expectClose(f['area-median'], expected.area.median, { rel: 1e-12 }, 'area median');
    expectClose(f['area-p05'], expected.area.p05, { rel: 1e-12 }, 'area p05');
    expectClose(f['area-p95'], expected.area.p95, { rel: 1e-12 }, 'area p95');
    expectClose(f['volume-median'], expected.volume!.median, { rel: 1e-12 }, 'volume median');
    expect(f['area-p05']).toBeLessThanOrEqual(f['area-median']);
    expect(f['area-median']).toBeLessThanOrEqual(f['area-p95']);
    expect(f.realisations).toBe(30);
    expect(f.seed).toBe(3);
    expect(expected.area.median).toBeGreaterThan(0);
    const a = expected.area;
    expect(r.stderr).toContain(`area: ${formatQuantity(a.median)} m² (${formatQuantity(a.median / 10_000, 3)} ha) above 200 mg/kg, 90 % interval ${formatQuantity(a.p05)} – ${formatQuantity(a.p95)} m²`);
    expect(r.stderr).toContain('from 30 realisations (seed 3, point support); volume to 0.3 m:');
    expect(html).toContain('back-transformed cell by cell');
    expect(html).toContain('data-area-caution');
    expect(html).toContain('--realisations 30 --seed 3 --depth 0.3');
  });

  it('report shows the area the project saved, and says in one line that none was made when there is none', async () => {
    const saved = await ws.run('report', '--project', 'saved.json', '--no-compare', '--out', 's.html');
    expect(saved.code, saved.stderr).toBe(0);
    expect(figures(ws.read('s.html'))['area-median']).toBe(11_000);
    expect(saved.stderr).toContain('area: 11,000 m² (1.1 ha) above 200 mg/kg, 90 % interval 9,500 – 12,600 m² (0.95 – 1.26 ha), from 80 realisations (seed 4, point support); as saved in the project');
    const none = await ws.run('report', '--project', 'demo.json', '--no-compare', '--out', 'n.html');
    expect(none.code, none.stderr).toBe(0);
    expect(ws.read('n.html')).toContain('data-no-area');
    expect(none.stderr).toMatch(/area: No area estimate with an interval was made: .*--realisations 100/);
  });

  it('report --realisations takes the seed the project saved unless --seed is given', async () => {
    const r = await ws.run('report', '--project', 'saved.json', '--realisations', '3', '--no-compare', '--out', 'x.html');
    expect(r.code, r.stderr).toBe(0);
    expect(figures(ws.read('x.html')).seed).toBe(4);
    expect(r.stderr).toContain('from 3 realisations (seed 4, point support)');
    expect(r.stderr).toMatch(/; drawn in \d+\.\d s on 1 worker thread\n/); // fewer than 4 realisations: this thread
  });

  it('report refuses realisation options without --realisations, and --realisations without an action level (exit 2)', async () => {
    const seed = await ws.run('report', '--project', 'demo.json', '--seed', '5', '--no-compare');
    expect(seed.code).toBe(2);
    expect(seed.stderr).toContain('Option "--seed" applies to the realisations; expected "--realisations N" with it.');
    ws.write('no-threshold.json', saveProject({ ...openProject(ws.read('demo.json'), 'demo.json').project, threshold: null }));
    const none = await ws.run('report', '--project', 'no-threshold.json', '--realisations', '5', '--no-compare');
    expect(none.code).toBe(2);
    expect(none.stderr).toMatch(/needs an action level.*"--threshold T"/);
    const workers = await ws.run('report', '--project', 'demo.json', '--workers', '2', '--no-compare');
    expect(workers.code).toBe(2);
    expect(workers.stderr).toContain('Option "--workers" applies to the realisations; expected "--realisations N" with it.');
    const zero = await ws.run('report', '--project', 'demo.json', '--realisations', '5', '--workers', '0', '--no-compare');
    expect(zero.code).toBe(2);
    expect(zero.stderr).toBe('error: Option "--workers" expects a whole number of threads from 1 to 256, got 0.\n');
    const count = await ws.run('report', '--project', 'demo.json', '--realisations', '0', '--no-compare');
    expect(count.code).toBe(2);
    expect(count.stderr).toContain('Option "--realisations" expects a whole number from 1 to 10,000, got 0.');
  });
});
