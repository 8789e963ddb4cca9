// --project FILE on every command: the numbers through the CLI equal those of the engine calls the
// app makes (readSamples with the stored options, the app's grid plan, the worker pool's row bands
// through computeSurfaceWith), and explicit options win.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { fromArrayBuffer } from 'geotiff';
import { workspace, type Workspace } from '../run-cli.ts';
import { createProject, gridGeometry, saveProject, type Project } from '../../../src/io/project.ts';
import { readSamples } from '../../../src/io/intake.ts';
import { planGrid } from '../../../src/ui/state/grid-plan.ts';
import { splitBands, bandGrid } from '../../../src/worker/pool.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { computeSurfaceWith } from '../../../src/core/prediction/surface.ts';
import { leaveOneOut } from '../../../src/core/validation/cross-validation.ts';
import { readPolygons, projectPolygons } from '../../../src/io/boundary.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import type { Grid } from '../../../src/core/geometry/grid.ts';

const DEMO = resolve(__dirname, '..', '..', '..', 'data-demo');
const csv = readFileSync(resolve(DEMO, 'lead-topsoil.csv'), 'utf8');
const boundaryText = readFileSync(resolve(DEMO, 'site-boundary.geojson'), 'utf8');
const model: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.02 }, { type: 'matern', sill: 1.3, scale: 79, nu: 1.5 }],
  trend: 'constant', transform: 'log', fit: { method: 'reml', converged: true },
};

/** What the app computes: the same reading call, grid plan and banded worker computation. */
function appSurface(): { grid: Grid; mean: Float32Array; sd: Float32Array; pExceed: Float32Array } {
  const intake = readSamples(csv, { fileName: 'lead-topsoil.csv', value: undefined, crs: undefined, nonDetect: 'half' });
  const work = projectPolygons(readPolygons(boundaryText, 'site-boundary.geojson'), intake.report.crs.work);
  const grid = planGrid({ x: intake.samples.x, y: intake.samples.y, padding: 0.05, cellSize: 4, polygons: work.map((p) => p.rings), workers: 2 }).grid;
  const n = grid.nx * grid.ny;
  const out = { grid, mean: new Float32Array(n).fill(NaN), sd: new Float32Array(n).fill(NaN), pExceed: new Float32Array(n).fill(NaN) };
  const predictor = createPredictor(intake.samples, model);
  for (const [r0, r1] of splitBands(grid, 8)) {
    const band = computeSurfaceWith(predictor, bandGrid(grid, r0, r1), { threshold: 200 });
    out.mean.set(band.mean, r0 * grid.nx);
    out.sd.set(band.sd, r0 * grid.nx);
    out.pExceed.set(band.pExceed!, r0 * grid.nx);
  }
  return out;
}

describe('--project', () => {
  let ws: Workspace;
  let project: Project;
  let app: ReturnType<typeof appSurface>;
  beforeAll(() => {
    ws = workspace();
    app = appSurface();
    project = createProject({
      samples: { fileName: 'lead-topsoil.csv', text: csv, invented: true, intake: { nonDetect: 'half' } },
      boundary: { fileName: 'site-boundary.geojson', text: boundaryText, invented: true },
      model, structure: { chosen: 'matern-1.5' }, grid: { cellSize: 4, geometry: gridGeometry(app.grid) }, threshold: 200,
      software: { name: 'gapwise', version: 'test' },
    });
    ws.write('site.json', saveProject(project));
  });
  afterAll(() => ws.remove());

  it('grid --project writes the app\'s surfaces bit for bit (Float32 GeoTIFF: mean, sd, P(exceed))', async () => {
    const r = await ws.run('grid', '--project', 'site.json', '--out', 'site.tif');
    expect(r.code, r.stderr).toBe(0);
    expect(JSON.parse(r.stdout).grid).toMatchObject(gridGeometry(app.grid));
    const image = await (await fromArrayBuffer(new Uint8Array(readFileSync(join(ws.dir, 'site.tif'))).buffer)).getImage();
    const [mean, sd, p] = (await image.readRasters()) as unknown as Float32Array[];
    const nodata = (a: Float32Array) => Float32Array.from(a, (v) => (Number.isNaN(v) ? -9999 : v));
    expect(Array.from(mean)).toEqual(Array.from(nodata(app.mean)));
    expect(Array.from(sd)).toEqual(Array.from(nodata(app.sd)));
    expect(Array.from(p)).toEqual(Array.from(nodata(app.pExceed)));
  });

  it('cv --project gives leaveOneOut of the stored model on the samples read from the stored text', async () => {
    const r = await ws.run('cv', '--project', 'site.json');
    expect(r.code, r.stderr).toBe(0);
    const intake = readSamples(csv, { fileName: 'lead-topsoil.csv', nonDetect: 'half' });
    const expected = leaveOneOut(intake.samples, model).summary;
    expect(JSON.parse(r.stdout)).toMatchObject({ me: expected.me, rmse: expected.rmse, msse: expected.msse, n: expected.n, scale: 'log' });
  });

  it('predict --project takes the samples, model and threshold from the project; an explicit --threshold wins', async () => {
    ws.write('targets.csv', 'name,Longitude,Latitude\nA,11.249,48.4985\n');
    const a = await ws.run('predict', '--project', 'site.json', '--targets', 'targets.csv');
    expect(a.code, a.stderr).toBe(0);
    expect(a.stdout.split('\n')[0]).toBe('name,Longitude,Latitude,mean,sd,sd_obs,p_exceed');
    const b = await ws.run('predict', '--project', 'site.json', '--targets', 'targets.csv', '--threshold', '1000');
    const pa = Number(a.stdout.split('\n')[1].split(',').pop());
    const pb = Number(b.stdout.split('\n')[1].split(',').pop());
    expect(pb).toBeLessThan(pa);
  });

  it('fit --project refits with the project\'s family, smoothness, method and transform', async () => {
    const r = await ws.run('fit', '--project', 'site.json');
    expect(r.code, r.stderr).toBe(0);
    const m = JSON.parse(r.stdout);
    expect(m.transform).toBe('log');
    expect(m.structures.find((s: { type: string }) => s.type !== 'nugget')).toMatchObject({ type: 'matern', nu: 1.5 });
    expect(m.fit.method).toBe('reml');
  });

  it('a command without --samples and without --project says that either is needed (exit 2)', async () => {
    const r = await ws.run('cv', '--model', 'm.json');
    expect(r.code).toBe(2);
    expect(r.stderr).toBe('error: Option "--samples FILE" is required for "gapwise cv" (or --project FILE); "gapwise cv --help" lists the options.\n');
  });

  it('--project with a file that is not a project names the file (exit 2)', async () => {
    ws.write('not-a-project.json', '{"structures": []}');
    const r = await ws.run('inspect', '--project', 'not-a-project.json');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('error: not-a-project.json: The file\'s "format" is null; expected "gapwise-project"');
  });

  it('every command lists --project in its help', async () => {
    for (const name of ['inspect', 'fit', 'predict', 'cv', 'grid', 'report']) {
      const r = await ws.run(name, '--help');
      expect(r.stdout, name).toContain('--project FILE');
    }
  });
});
