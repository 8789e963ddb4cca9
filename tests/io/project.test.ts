// saveProject / openProject: round trip, version 1 migration, clear errors; projectGrid and
// planSurfaceGrid give the grid the app plans (src/ui/state/grid-plan.ts).
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import {
  createProject, gridGeometry, openProject, planSurfaceGrid, projectBoundary, projectGrid, projectIntake, projectSimulation, saveProject,
  simulationMethodText, PROJECT_VERSION, type Project, type ProjectSimulation,
} from '../../src/io/project.ts';
import { summariseExceedanceCounts } from '../../src/core/prediction/exceedance-area.ts';
import { planGrid } from '../../src/ui/state/grid-plan.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';
import { CAUTION } from '../../src/core/shared/caution.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';
import { expectClose } from '../helpers/tolerance.ts';

const DEMO = resolve(__dirname, '..', '..', 'data-demo');
const csv = readFileSync(resolve(DEMO, 'lead-topsoil.csv'), 'utf8');
const boundary = readFileSync(resolve(DEMO, 'site-boundary.geojson'), 'utf8');
const model: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.02 }, { type: 'matern', sill: 1.3, scale: 79, nu: 1.5 }],
  trend: 'constant', transform: 'log', fit: { method: 'reml', converged: true, logLikelihood: -75.7, aic: 159.3 },
};

function demoProject(): Project {
  return createProject({
    samples: { fileName: 'lead-topsoil.csv', text: csv, invented: true, intake: { nonDetect: 'half' } },
    boundary: { fileName: 'site-boundary.geojson', text: boundary, invented: true },
    model, structure: { chosen: 'matern-1.5', variogram: { lagWidth: 15 } }, grid: { cellSize: 5 }, threshold: 200,
    suggestions: [{ rank: 1, x: 666100, y: 5374400, lon: 11.2489, lat: 48.4985, benefit: 0.12, mean: 180, sd: 60, pExceed: 0.4 }],
    software: { name: 'gapwise', version: '0.1.0' }, saved: '2026-01-01T00:00:00.000Z',
  });
}

describe('saveProject / openProject', () => {
  it('openProject reads back what saveProject wrote, unchanged', () => {
    const p = demoProject();
    const text = saveProject(p);
    const opened = openProject(text, 'site.gapwise.json');
    expect(opened.fileVersion).toBe(PROJECT_VERSION);
    expect(opened.warnings).toEqual([]);
    expect(opened.project).toEqual(p);
    expect(JSON.parse(text)).toMatchObject({ format: 'gapwise-project', version: 2, caution: CAUTION });
    expect(opened.project.samples.text).toBe(csv);
  });

  it('openProject brings a version 1 project up to version 2 with a warning', () => {
    const v1 = JSON.stringify({ format: 'gapwise-project', version: 1, samples: { fileName: 'a.csv', text: csv, value: 'Pb (mg/kg)', nonDetect: 'dl' }, model, cell: 4, threshold: 400 });
    const opened = openProject(v1, 'old.json');
    expect(opened.fileVersion).toBe(1);
    expect(opened.warnings.map((w) => w.code)).toEqual(['project-migrated']);
    expect(opened.project).toMatchObject({
      version: 2, samples: { fileName: 'a.csv', intake: { value: 'Pb (mg/kg)', nonDetect: 'dl' }, unit: '' }, boundary: null,
      structure: { transform: 'log', method: 'reml', chosen: '' }, grid: { area: 'extent', padding: 0.05, cellSize: 4 }, threshold: 400,
    });
    expect(projectIntake(opened.project).report.nonDetects.rule).toBe('dl');
  });

  it('openProject rejects other files, newer versions and bad fields with a sentence naming the file and field', () => {
    const bad = (text: string) => {
      try {
        openProject(text, 'p.json');
      } catch (e) {
        expect(e).toBeInstanceOf(GapwiseError);
        return (e as GapwiseError).describe();
      }
      throw new Error('expected an error');
    };
    expect(bad('{"format":"something-else"}')).toBe('p.json: The file\'s "format" is "something-else"; expected "gapwise-project" (a Gapwise project file).');
    expect(bad('{"format":"gapwise-project","version":3}')).toBe('p.json: The project has version 3, written by a newer Gapwise; this one reads versions 1 to 2.');
    expect(bad('{"format":"gapwise-project"')).toMatch(/^p\.json: The project is not valid JSON/);
    const p = JSON.parse(saveProject(demoProject()));
    p.grid.cellSize = -5;
    expect(bad(JSON.stringify(p))).toBe('p.json: The project field "grid.cellSize" is -5; expected a cell size of 0 (automatic) or more metres.');
    const q = JSON.parse(saveProject(demoProject()));
    q.model.structures[1].scale = 'far';
    expect(bad(JSON.stringify(q))).toMatch(/^p\.json: The project field "model": Expected structures\[1\]\.scale to be a positive number/);
    const r = JSON.parse(saveProject(demoProject()));
    r.structure.transform = 'none';
    expect(bad(JSON.stringify(r))).toBe('p.json: The project field "structure.transform" is "none"; expected "log", the model\'s transform.');
  });

  it('saveProject refuses a project that could not be opened again', () => {
    const p = demoProject();
    p.boundary = null; // grid.area is still 'boundary'
    expect(() => saveProject(p)).toThrow(/grid\.area/);
  });
});

/** Realisation settings with the summary of invented counts of cells above 200 (5 m cells). */
function simulationRecord(): ProjectSimulation {
  const area = summariseExceedanceCounts([410, 380, 455, 431, 398, 420], { threshold: 200, cell: 5, activeCells: 1200, depth: 0.3 });
  return projectSimulation({ count: 6, support: 'block', points: 4, area }, { seed: 42, depth: 0.3, log: true, made: '2026-02-01T08:00:00.000Z' });
}

describe('saveProject / openProject: realisations and the area above the action level', () => {
  it('projectSimulation keeps the settings and the area and volume summary with their units and the method', () => {
    const s = simulationRecord();
    expect(s).toMatchObject({ count: 6, seed: 42, support: 'block', blockPoints: 4, depth: 0.3 });
    // Counts sorted: 380 398 410 420 431 455; median (410 + 420)/2 = 415 cells of 25 m² (Hyndman & Fan def. 7).
    expect(s.summary!.area).toMatchObject({ median: 415 * 25, unit: 'm²' });
    expect(s.summary!.volume).toMatchObject({ median: 415 * 25 * 0.3, unit: 'm³', depth: 0.3 });
    expect(s.summary!.cell).toBe(5);
    expect(s.summary!.threshold).toBe(200);
    expect(s.summary!.method).toBe(simulationMethodText({ support: 'block', blockPoints: 4, log: true, count: 6 }));
    expect(s.summary!.area.p05).toBeLessThanOrEqual(s.summary!.area.median);
    expect(s.summary!.area.median).toBeLessThanOrEqual(s.summary!.area.p95);
  });

  it('openProject reads back a project with realisations unchanged, and one without them (an older version 2 file) without any', () => {
    const p = { ...demoProject(), simulation: simulationRecord() };
    const opened = openProject(saveProject(p), 'sim.json');
    expect(opened.project).toEqual(p);
    expect(opened.fileVersion).toBe(2);
    expect(opened.warnings).toEqual([]);
    const older = JSON.parse(saveProject(demoProject()));
    expect(older.simulation).toBeUndefined();
    expect(openProject(JSON.stringify(older), 'older.json').project.simulation).toBeUndefined();
    // Settings alone (no realisations drawn yet) are kept too.
    const settings = { ...demoProject(), simulation: { count: 300, seed: -5, support: 'point' as const, blockPoints: 1, depth: null } };
    expect(openProject(saveProject(settings), 's.json').project.simulation).toEqual(settings.simulation);
  });

  it('openProject migrates a version 1 project to one with no realisations', () => {
    const v1 = JSON.stringify({ format: 'gapwise-project', version: 1, samples: { fileName: 'a.csv', text: csv }, model, cell: 4, threshold: 400 });
    const opened = openProject(v1, 'old.json');
    expect(opened.project.version).toBe(PROJECT_VERSION);
    expect(opened.project.simulation).toBeUndefined();
    expect(openProject(saveProject(opened.project), 'again.json').project).toEqual(opened.project);
  });

  it('openProject fills the share of the area from the area when a hand-written file leaves it out, and fills the defaults', () => {
    const p = JSON.parse(saveProject({ ...demoProject(), simulation: simulationRecord() }));
    delete p.simulation.summary.fraction;
    delete p.simulation.seed;
    const s = openProject(JSON.stringify(p), 'hand.json').project.simulation!;
    expect(s.seed).toBe(1);
    expectClose(s.summary!.fraction.median, (415 * 25) / (1200 * 25), { rel: 1e-12 });
  });

  it('openProject rejects realisation fields out of range or an interval out of order, naming the field', () => {
    const bad = (change: (s: Record<string, any>) => void) => {
      const p = JSON.parse(saveProject({ ...demoProject(), simulation: simulationRecord() }));
      change(p.simulation);
      try {
        openProject(JSON.stringify(p), 'p.json');
      } catch (e) {
        return (e as GapwiseError).describe();
      }
      throw new Error('expected an error');
    };
    expect(bad((s) => { s.count = 2.5; })).toBe('p.json: The project field "simulation.count" is 2.5; expected a whole number of realisations from 1 to 10000.');
    expect(bad((s) => { s.support = 'area'; })).toBe('p.json: The project field "simulation.support" is "area"; expected one of "point", "block".');
    expect(bad((s) => { s.depth = 0; })).toBe('p.json: The project field "simulation.depth" is 0; expected a depth above 0 m.');
    expect(bad((s) => { s.summary.area.p05 = 1e9; })).toBe(`p.json: The project field "simulation.summary.area.p05" is 1000000000; expected at most the median ${415 * 25}.`);
    expect(bad((s) => { s.summary.area.median = -1; })).toBe('p.json: The project field "simulation.summary.area.median" is -1; expected a number of 0 or more.');
  });
});

describe('projectGrid / planSurfaceGrid', () => {
  it('planSurfaceGrid plans the grid the app plans (grid-plan.ts), over the extent and over a boundary, automatic and given cells', () => {
    const p = demoProject();
    const intake = projectIntake(p);
    const b = projectBoundary(p, intake.report.crs.work)!;
    const polygons = b.work.map((x) => x.rings);
    for (const [cellSize, withBoundary] of [[0, false], [0, true], [3, false], [2.5, true]] as const) {
      const app = planGrid({ x: intake.samples.x, y: intake.samples.y, padding: 0.05, cellSize, polygons: withBoundary ? polygons : null, workers: 1 }).grid;
      const ours = planSurfaceGrid({ x: intake.samples.x, y: intake.samples.y, padding: 0.05, cellSize, polygons: withBoundary ? polygons : null });
      expect(ours).toEqual(app);
    }
  });

  it('projectGrid uses the stored geometry with the boundary mask, replans for a new cell size, and rejects a geometry its boundary does not give', () => {
    const p = demoProject();
    const intake = projectIntake(p);
    const b = projectBoundary(p, intake.report.crs.work);
    const planned = projectGrid(p, intake, b);
    expect(planned.cell).toBe(5);
    expect(planned.mask).toBeDefined();
    p.grid.geometry = gridGeometry(planned);
    expect(projectGrid(p, intake, b)).toEqual(planned);
    expect(projectGrid(p, intake, b, { cellSize: 10 }).cell).toBe(10);
    p.grid.geometry = { ...p.grid.geometry, nx: p.grid.geometry.nx + 1 };
    expect(() => projectGrid(p, intake, b)).toThrow(/does not match its boundary/);
    const e = { ...demoProject(), grid: { area: 'extent' as const, padding: 0.05, cellSize: 5, geometry: { x0: 1, y0: 2, cell: 3, nx: 4, ny: 5 } } };
    expect(projectGrid(e, intake, null)).toEqual({ x0: 1, y0: 2, cell: 3, nx: 4, ny: 5 });
  });
});
