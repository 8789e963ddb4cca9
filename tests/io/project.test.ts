// saveProject / openProject: round trip, version 1 migration, clear errors; projectGrid and
// planSurfaceGrid give the grid the app plans (src/ui/state/grid-plan.ts).
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import {
  createProject, gridGeometry, openProject, planSurfaceGrid, projectBoundary, projectGrid, projectIntake, saveProject,
  PROJECT_VERSION, type Project,
} from '../../src/io/project.ts';
import { planGrid } from '../../src/ui/state/grid-plan.ts';
import { GapwiseError } from '../../src/core/errors.ts';
import { CAUTION } from '../../src/core/caution.ts';
import type { CovarianceModel } from '../../src/core/model.ts';

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
