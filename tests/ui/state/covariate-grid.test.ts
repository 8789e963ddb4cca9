/**
 * The app's covariates at grid cells from loaded rasters (src/ui/state/covariate-grid.ts): the message
 * for a covariate without a raster, the covariates the grid's cells and lattice nodes get (against the
 * linear function the invented raster holds, which bilinear sampling reproduces exactly between cell
 * centres), the realisations drawn with them (their mean over many realisations against the kriging
 * mean with the same covariates), and the next-sample design on the invented demo (each suggested
 * site's mean against kriging with the raster's value there; cells without a value left out and
 * counted).
 */
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { readSamples } from '../../../src/io/intake.ts';
import { readCovariateRaster, sampleRaster, type CovariateRaster } from '../../../src/io/covariate-raster.ts';
import {
  checkRasters, covariatesOnGrid, designWithCovariates, missingRasterMessage, missingRasters,
} from '../../../src/ui/state/covariate-grid.ts';
import { simulateConditional } from '../../../src/core/simulation/conditional-simulation.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { cellCentres, type Grid } from '../../../src/core/geometry/grid.ts';
import { designGrid, type DesignResult } from '../../../src/core/design/design.ts';
import { runDesignRequest, type DesignRequestPayload } from '../../../src/worker/design-handler.ts';
import type { CovarianceModel } from '../../../src/core/covariance/model.ts';
import { GapwiseError } from '../../../src/core/shared/errors.ts';
import { expectClose } from '../../helpers/tolerance.ts';

// ---------------------------------------------------------------- a small invented problem in UTM 32N

const X0 = 500_000, Y0 = 5_000_000;
/** The invented covariate: linear in position, so bilinear sampling between cell centres gives it exactly. */
const dist = (x: number, y: number): number => 2 + 0.05 * (x - X0) - 0.02 * (y - Y0);
const SX = [13, 47, 71, 22, 60, 35, 76, 8, 55, 33].map((d) => X0 + d);
const SY = [68, 55, 14, 10, 36, 30, 50, 40, 72, 58].map((d) => Y0 + d);
const SV = [2.1, 3.6, 4.4, 3.2, 4.9, 2.8, 5.0, 2.0, 3.9, 4.1];
const CSV = ['x,y,value,dist', ...SX.map((x, i) => `${x},${SY[i]},${SV[i]},${dist(x, SY[i])}`)].join('\n');
const small = readSamples(CSV, { fileName: 'small.csv', value: 'value', crs: 'EPSG:32632' });

/** A raster of `dist` on 5 m cells over x 0–60 m, y 0–80 m (the grid's two east columns lie outside it). */
function distRaster(): CovariateRaster {
  const nx = 12, ny = 16, d = 5;
  const values = new Float64Array(nx * ny);
  for (let j = 0; j < ny; j++) for (let i = 0; i < nx; i++) values[j * nx + i] = dist(X0 + (i + 0.5) * d, Y0 + 80 - (j + 0.5) * d);
  return { name: 'dist', crs: 'EPSG:32632', x0: X0, y0: Y0 + 80, dx: d, dy: d, nx, ny, values };
}
const grid: Grid = { x0: X0, y0: Y0 + 80, cell: 10, nx: 8, ny: 8 };
const model: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.05 }, { type: 'matern', sill: 1, scale: 30, nu: 1.5 }],
  trend: { covariates: ['dist'] }, transform: 'none',
};

describe('covariate rasters for the app\'s grids', () => {
  it('missingRasters names the model covariates without a raster, and checkRasters refuses with the message', () => {
    expect(missingRasters(model, [])).toEqual(['dist']);
    expect(missingRasters(model, [{ name: 'dist' }])).toEqual([]);
    expect(missingRasters({ ...model, trend: 'constant' }, [])).toEqual([]);
    expect(missingRasters(null, [])).toEqual([]);
    expect(missingRasterMessage(['dist'])).toBe('The model\'s covariate dist needs a raster on the map area; expected "Load covariate raster…" for it first.');
    expect(missingRasterMessage(['a', 'b'])).toBe('The model\'s covariates a, b need a raster on the map area; expected "Load covariate raster…" for each first.');
    expect(() => checkRasters(model, [])).toThrow(GapwiseError);
    expect(() => checkRasters(model, [])).toThrow(/covariate dist needs a raster/);
  });

  it('covariatesOnGrid leaves a model without covariates as read', async () => {
    const plain = { ...model, trend: 'constant' as const };
    const g = await covariatesOnGrid(small, plain, [], grid, { nodes: 1 });
    expect(g.samples).toBe(small.samples);
    expect(g.grid).toBe(grid);
    expect(g.covariates).toBeUndefined();
    expect(g.warnings).toEqual([]);
  });

  it('covariatesOnGrid gives the samples\' column, the raster\'s value at each cell and node, and masks and counts the cells outside it', async () => {
    await expect(covariatesOnGrid(small, model, [], grid)).rejects.toThrow(/covariate dist needs a raster/);
    const g = await covariatesOnGrid(small, model, [distRaster()], grid, { nodes: 2 });
    expectClose(g.samples.covariates!, SX.map((x, i) => dist(x, SY[i])), { rel: 1e-12 }, 'sample covariates');
    // Cell centres at x = 5, 15, … 75 m: the two east columns (65, 75 m) are outside the raster.
    for (let j = 0; j < 8; j++) {
      for (let i = 0; i < 8; i++) {
        const c = j * 8 + i;
        expect(g.grid.mask![c], `mask ${i},${j}`).toBe(i < 6 ? 1 : 0);
        if (i >= 6) continue;
        expectClose(g.covariates![c], dist(X0 + 5 + 10 * i, Y0 + 75 - 10 * j), { rel: 1e-12 }, `cell ${i},${j}`);
        // Block points at (a + ½)/2 of the cell, row by row from the north-west.
        for (let s = 0; s < 4; s++) {
          const x = X0 + 10 * i + ((s % 2) + 0.5) * 5, y = Y0 + 80 - 10 * j - (Math.floor(s / 2) + 0.5) * 5;
          expectClose(g.nodeCovariates![c * 4 + s], dist(x, y), { rel: 1e-12 }, `node ${s} of cell ${i},${j}`);
        }
      }
    }
    expect(g.warnings.map((w) => w.code)).toEqual(['covariate-no-data']);
    expect(g.warnings[0].message).toMatch(/^16 of 64 grid cells have no value in a covariate raster/);
  });

  it('covariatesOnGrid feeds realisations whose mean over 2,000 of them is the kriging mean with the raster\'s covariates (4 standard errors)', async () => {
    // Source: the kriging mean with covariates (core/prediction/kriging.ts, itself checked against
    // numpy in tests/reference/make_covariates.py); Monte Carlo standard error sd/√N (Gaussian).
    const g = await covariatesOnGrid(small, model, [distRaster()], grid, { nodes: 1 });
    const N = 2000;
    const sim = simulateConditional(g.samples, model, g.grid, { count: N, seed: 11, covariates: g.nodeCovariates, keepRealisations: false });
    const c = cellCentres(g.grid);
    const rows = Float64Array.from(c.index, (k) => g.covariates![k]);
    const p = createPredictor(g.samples, model).predict(c.x, c.y, { covariates: rows });
    // The same places with the covariate read as 0: what a model without the raster would give.
    const without = createPredictor(g.samples, model).predict(c.x, c.y, { covariates: new Float64Array(rows.length) });
    let apart = 0;
    for (let k = 0; k < c.x.length; k++) {
      const cell = c.index[k];
      const tolerance = 4 * p.sd[k] / Math.sqrt(N);
      expect(Math.abs(sim.mean[cell] - p.mean[k]), `mean cell ${cell}`).toBeLessThan(tolerance);
      apart = Math.max(apart, Math.abs(without.mean[k] - p.mean[k]) / tolerance);
    }
    // The check can tell the raster's covariates from none: the means differ far beyond the tolerance.
    expect(apart).toBeGreaterThan(10);
    // Cells outside the raster stay empty.
    for (let cell = 0; cell < 64; cell++) if (g.grid.mask![cell] === 0) expect(sim.mean[cell]).toBeNaN();
  });
});

// ---------------------------------------------------------------- next samples on the invented demo

const DEMO = readFileSync(new URL('../../../data-demo/lead-topsoil-covariates.csv', import.meta.url), 'utf8');
const demo = readSamples(DEMO, { fileName: 'lead-topsoil-covariates.csv', value: 'Pb (mg/kg)' });
const demoModel: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.05 }, { type: 'matern', sill: 0.8, scale: 45, nu: 1.5 }],
  trend: { covariates: ['workshop_dist_m'] }, transform: 'log',
};
const engine = (p: DesignRequestPayload): Promise<DesignResult> => Promise.resolve(runDesignRequest(p));

describe('designWithCovariates', () => {
  it('designWithCovariates: each suggested site\'s mean is the kriging mean with the raster\'s value at the site', async () => {
    const bytes = new Uint8Array(readFileSync(new URL('../../../data-demo/workshop-distance.tif', import.meta.url)));
    const raster = await readCovariateRaster(bytes, 'workshop_dist_m', 'workshop-distance.tif');
    const payload: DesignRequestPayload = { samples: demo.samples, model: demoModel, options: { count: 5, mode: 'variance' } };
    let given: DesignRequestPayload | null = null;
    const result = await designWithCovariates(demo, [raster], payload, (p) => { given = p; return engine(p); });
    expect(result.suggestions).toHaveLength(5);
    // The design got the samples' covariate column and every cell's raster value.
    const sent = given! as DesignRequestPayload;
    expect(sent.samples.covariates!.length).toBe(demo.samples.x.length);
    const area = sent.options.grid!;
    const all = cellCentres({ ...area, mask: undefined });
    const atCells = sampleRaster(raster, all.x, all.y, demo.report.crs.work, 'bilinear');
    for (let k = 0; k < all.x.length; k++) if (area.mask![k]) expectClose(sent.options.covariates![k], atCells[k], { rel: 1e-12 }, `cell ${k}`);
    const xs = result.suggestions.map((s) => s.x), ys = result.suggestions.map((s) => s.y);
    const at = sampleRaster(raster, xs, ys, demo.report.crs.work, 'bilinear');
    const predictor = createPredictor(sent.samples, demoModel);
    const want = predictor.predict(xs, ys, { covariates: at });
    const farther = predictor.predict(xs, ys, { covariates: Float64Array.from(at, (d) => d + 40) });
    result.suggestions.forEach((s, k) => {
      expect(at[k]).toBeGreaterThanOrEqual(0);
      expectClose(s.mean!, want.mean[k], { rel: 1e-9 }, `mean of site ${s.rank}`);
      expectClose(s.sd!, want.sd[k], { rel: 1e-9 }, `sd of site ${s.rank}`);
      // The covariate moves the mean: 40 m farther from the workshop gives another value.
      expect(Math.abs(farther.mean[k] - s.mean!)).toBeGreaterThan(1e-3 * s.mean!);
    });
  });

  it('designWithCovariates leaves out the cells without a raster value and counts them in a warning', async () => {
    const bytes = new Uint8Array(readFileSync(new URL('../../../data-demo/workshop-distance.tif', import.meta.url)));
    const full = await readCovariateRaster(bytes, 'workshop_dist_m', 'workshop-distance.tif');
    // The west third of the raster is no-data.
    const values = full.values.slice();
    for (let j = 0; j < full.ny; j++) for (let i = 0; i < 31; i++) values[j * full.nx + i] = NaN;
    const raster: CovariateRaster = { ...full, values };
    const payload: DesignRequestPayload = { samples: demo.samples, model: demoModel, options: { count: 4, mode: 'variance', cell: 5 } };
    const result = await designWithCovariates(demo, [raster], payload, engine);
    // Expected count: the planned area's cells whose centre has no raster value (sampled independently of the mask).
    const planned = designGrid(demo.samples, payload.options).grid;
    const c = cellCentres(planned);
    const v = sampleRaster(raster, c.x, c.y, demo.report.crs.work, 'bilinear');
    const lost = Array.from(v).filter((d) => Number.isNaN(d)).length;
    expect(lost).toBeGreaterThan(100);
    const w = result.warnings.find((x) => x.code === 'covariate-no-data');
    expect(w?.message).toBe(`${lost} of ${c.x.length} cells of the area have no value in a covariate raster (outside it, or no-data there) and are left out of the candidates and of the area's average.`);
    expect(result.candidatePoints).toBeLessThanOrEqual(c.x.length - lost);
    const at = sampleRaster(raster, result.suggestions.map((s) => s.x), result.suggestions.map((s) => s.y), demo.report.crs.work, 'bilinear');
    for (const d of at) expect(Number.isNaN(d)).toBe(false);
  });

  it('designWithCovariates refuses a covariate model without its raster, and passes other designs through as given', async () => {
    const payload: DesignRequestPayload = { samples: demo.samples, model: demoModel, options: { count: 3 } };
    let called = 0;
    await expect(designWithCovariates(demo, [], payload, (p) => { called++; return engine(p); })).rejects.toThrow(/covariate workshop_dist_m needs a raster/);
    expect(called).toBe(0);
    const plain: DesignRequestPayload = { samples: demo.samples, model: { ...demoModel, trend: 'constant' }, options: { count: 3 } };
    let seen: DesignRequestPayload | null = null;
    const r = await designWithCovariates(demo, [], plain, (p) => { seen = p; return engine(p); });
    expect(seen).toBe(plain);
    expect(r.suggestions).toHaveLength(3);
  });
});
