import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { createEngineHandler, predictorKey, type EngineOperations } from '../../src/worker/handler.ts';
import { ENGINE_OPERATIONS } from '../../src/worker/operations.ts';
import type { EngineResponse, StructureFitResult } from '../../src/worker/protocol.ts';
import type { IntakeResult } from '../../src/io/types.ts';
import { rowAt } from '../../src/io/sample-table.ts';
import { readSamples } from '../../src/io/intake.ts';
import { computeSurface } from '../../src/core/prediction/surface.ts';
import { empiricalVariogram, variogramSet } from '../../src/core/fitting/variogram.ts';
import { localLeaveOneOut } from '../../src/core/validation/local-cross-validation.ts';
import { leaveOneOut } from '../../src/core/validation/cross-validation.ts';
import { makeSamples } from '../../src/core/shared/samples.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';
import type { Grid } from '../../src/core/geometry/grid.ts';
import { loadFixture } from '../helpers/fixtures.ts';
import { suggestSites } from '../../src/core/design/design.ts';
import { computeBlockSurface } from '../../src/core/prediction/block-kriging.ts';
import { simulateConditional } from '../../src/core/simulation/conditional-simulation.ts';
import { vecchiaFit } from '../../src/core/fitting/vecchia.ts';
import { fitAnisotropic } from '../../src/core/fitting/fit-anisotropy.ts';
import { fitNested } from '../../src/core/fitting/fit-nested.ts';
import { fitAnisotropicNested } from '../../src/core/fitting/fit-anisotropic-nested.ts';
import { createLocalPredictor } from '../../src/core/prediction/local-kriging.ts';
import { computeSurfaceWith } from '../../src/core/prediction/surface.ts';
import { chooseCheckTargets, measureLocalGrid, type LocalGridCheck } from '../../src/core/prediction/local-accuracy.ts';
import { createRandom } from '../../src/core/shared/random.ts';
import { cellCentres } from '../../src/core/geometry/grid.ts';

// Samples and a masked grid from the surface fixture (values from scikit-learn's reference case).
const fx = loadFixture<{ values: number[]; model: CovarianceModel; threshold: number }>('surface.json');
const samples = makeSamples(fx.x as number[], fx.y as number[], fx.cases[1].values);
const model = fx.cases[1].model;
const grid: Grid = { ...(fx.grid as Omit<Grid, 'mask'>), mask: Uint8Array.from(fx.mask as number[]) };

function collect(ops: EngineOperations = ENGINE_OPERATIONS) {
  const handle = createEngineHandler(ops);
  const sent: { message: EngineResponse; transfer: ArrayBuffer[] }[] = [];
  return { sent, run: (m: unknown) => handle(m, (message, transfer) => sent.push({ message, transfer })) };
}

describe('createEngineHandler', () => {
  it('createEngineHandler answers surfaceRows with the same numbers as computeSurface, progress first, buffers transferred', () => {
    const { sent, run } = collect();
    run({ id: 7, type: 'surfaceRows', payload: { samples, model, grid, options: { threshold: 38, rows: [2, 9], blockCells: 10 } } });
    const last = sent.at(-1)!;
    expect(last.message.type).toBe('result');
    expect(last.message.id).toBe(7);
    const result = (last.message as Extract<EngineResponse, { type: 'result' }>).result as ReturnType<typeof computeSurface>;
    const direct = computeSurface(samples, model, grid, { threshold: 38, rows: [2, 9] });
    expect(Array.from(result.mean)).toEqual(Array.from(direct.mean));
    expect(Array.from(result.sd)).toEqual(Array.from(direct.sd));
    expect(Array.from(result.pExceed!)).toEqual(Array.from(direct.pExceed!));
    expect(last.transfer).toHaveLength(3);
    expect(last.transfer).toContain(result.mean.buffer);
    const progress = sent.slice(0, -1).map((s) => s.message);
    expect(progress.length).toBeGreaterThan(3);
    for (const p of progress) expect(p).toMatchObject({ id: 7, type: 'progress' });
    const fractions = progress.map((p) => (p as Extract<EngineResponse, { type: 'progress' }>).fraction);
    for (let k = 1; k < fractions.length; k++) expect(fractions[k]).toBeGreaterThan(fractions[k - 1]);
    expect(fractions.at(-1)).toBe(1);
  });

  it('createEngineHandler factorises once for bands of the same samples and model, again when either changes', () => {
    let built = 0;
    const ops: EngineOperations = { ...ENGINE_OPERATIONS, createPredictor: (s, m, o) => { built++; return ENGINE_OPERATIONS.createPredictor(s, m, o); } };
    const { sent, run } = collect(ops);
    run({ id: 1, type: 'surfaceRows', payload: { samples, model, grid, options: { rows: [0, 3] } } });
    run({ id: 2, type: 'surfaceRows', payload: { samples: structuredClone(samples), model: structuredClone(model), grid, options: { rows: [3, 6] } } });
    expect(built).toBe(1);
    run({ id: 3, type: 'surfaceRows', payload: { samples, model: { ...model, structures: [{ type: 'exponential', sill: 3, scale: 80 }] }, grid, options: { rows: [0, 1] } } });
    expect(built).toBe(2);
    const changed = makeSamples(samples.x, samples.y, samples.value.map((v, i) => (i === 4 ? v + 1e-9 : v)));
    run({ id: 4, type: 'surfaceRows', payload: { samples: changed, model, grid, options: { rows: [0, 1] } } });
    expect(built).toBe(3);
    expect(sent.filter((s) => s.message.type === 'result').map((s) => s.message.id)).toEqual([1, 2, 3, 4]);
  });

  it('createEngineHandler dispatches variogram and crossValidate to the core functions with their payloads', () => {
    const { sent, run } = collect();
    run({ id: 11, type: 'variogram', payload: { samples, options: { lagCount: 6 } } });
    run({ id: 12, type: 'crossValidate', payload: { samples, model } });
    const [v, cv] = sent.map((s) => s.message as Extract<EngineResponse, { type: 'result' }>);
    expect(v).toMatchObject({ id: 11, type: 'result', request: 'variogram' });
    expect(v.result).toEqual(empiricalVariogram(samples, { lagCount: 6 }));
    expect(cv).toMatchObject({ id: 12, type: 'result', request: 'crossValidate' });
    expect((cv.result as ReturnType<typeof leaveOneOut>).summary).toEqual(leaveOneOut(samples, model).summary);
  });

  it('createEngineHandler answers crossValidate with local neighbours by localLeaveOneOut', () => {
    const { sent, run } = collect();
    run({ id: 14, type: 'crossValidate', payload: { samples, model, local: { neighbours: 5 } } });
    const r = sent.find((s) => s.message.type === 'result')!.message as Extract<EngineResponse, { type: 'result' }>;
    const expected = localLeaveOneOut(samples, model, { neighbours: 5 });
    expect((r.result as ReturnType<typeof leaveOneOut>).summary).toEqual(expected.summary);
    expect((r.result as ReturnType<typeof leaveOneOut>).summary).not.toEqual(leaveOneOut(samples, model).summary);
  });

  it('createEngineHandler dispatches variogramSet with its directions and cloud', () => {
    const { sent, run } = collect();
    run({ id: 13, type: 'variogramSet', payload: { samples, options: { lagCount: 5 }, directional: true, cloudPairs: 50 } });
    const r = sent[0].message as Extract<EngineResponse, { type: 'result' }>;
    expect(r).toMatchObject({ id: 13, type: 'result', request: 'variogramSet' });
    expect(r.result).toEqual(variogramSet(samples, { lagCount: 5 }, { directional: true, cloudPairs: 50 }));
  });

  it('createEngineHandler passes fit, fitCandidates and readSamples payloads through unchanged', () => {
    const calls: [string, unknown[]][] = [];
    const spy = (name: string, value: unknown) => (...args: unknown[]) => { calls.push([name, args]); return value; };
    const ops = {
      ...ENGINE_OPERATIONS,
      fitModel: spy('fitModel', { structures: [], trend: 'constant', transform: 'none' }),
      fitCandidates: spy('fitCandidates', []),
      readSamples: spy('readSamples', { rows: [] }),
    } as unknown as EngineOperations;
    const { sent, run } = collect(ops);
    run({ id: 1, type: 'fit', payload: { samples, options: { family: 'matern', nu: 1.5, method: 'reml' } } });
    run({ id: 2, type: 'fitCandidates', payload: { samples } });
    run({ id: 3, type: 'readSamples', payload: { text: 'x,y,v\n1,2,3\n', options: { fileName: 'a.csv' } } });
    expect(calls.map((c) => c[0])).toEqual(['fitModel', 'fitCandidates', 'readSamples']);
    expect(calls[0][1][1]).toEqual({ family: 'matern', nu: 1.5, method: 'reml' });
    expect(calls[1][1][1]).toEqual({});
    expect(calls[2][1]).toEqual(['x,y,v\n1,2,3\n', { fileName: 'a.csv' }]);
    expect(sent.map((s) => [s.message.id, s.message.type])).toEqual([[1, 'result'], [2, 'result'], [3, 'result']]);
  });

  it('createEngineHandler reads a real CSV through io/intake and transfers the sample arrays', () => {
    const { sent, run } = collect();
    const text = 'easting,northing,lead\n500010,4980010,120\n500050,4980020,180\n500030,4980070,95\n';
    run({ id: 5, type: 'readSamples', payload: { text, options: { fileName: 'yard.csv', crs: 'EPSG:32633' } } });
    const last = sent.at(-1)!;
    expect(last.message.type, JSON.stringify(last.message)).toBe('result');
    const r = (last.message as Extract<EngineResponse, { type: 'result' }>).result as { samples: { value: Float64Array } };
    expect(Array.from(r.samples.value)).toEqual([120, 180, 95]);
    expect(last.transfer).toContain(r.samples.value.buffer);
  });

  it('createEngineHandler answers readSamples with the sample table of readSamples and every array of it transferred', () => {
    const { sent, run } = collect();
    const text = 'id,easting,northing,lead\nA,500010,4980010,120\nB,500050,4980020,<5\nC,500030,4980070,95\n';
    const options = { fileName: 'yard.csv', crs: 'EPSG:32633' };
    run({ id: 6, type: 'readSamples', payload: { text, options } });
    const last = sent.at(-1)!;
    expect(last.message.type, JSON.stringify(last.message)).toBe('result');
    const r = (last.message as Extract<EngineResponse, { type: 'result' }>).result as IntakeResult;
    const direct = readSamples(text, options);
    expect(r.table).toEqual(direct.table);
    expect([0, 1, 2].map((i) => rowAt(r.table, i))).toEqual([0, 1, 2].map((i) => rowAt(direct.table, i)));
    expect(rowAt(r.table, 1)).toMatchObject({ id: 'B', flags: ['nd'], lines: [3], raw: { lead: '<5' } });
    for (const a of [r.table.inputX, r.table.value, r.table.flags, r.table.line, r.table.record]) expect(last.transfer).toContain(a.buffer);
    expect(r.report).toEqual(direct.report);
    expect(Array.from(r.samples.value)).toEqual(Array.from(direct.samples.value));
    expect(last.transfer).toContain(r.samples.x.buffer);
  });

  it('createEngineHandler returns GapwiseErrors as data with their code and place', () => {
    const { sent, run } = collect();
    run({ id: 21, type: 'crossValidate', payload: { samples: makeSamples([0, 1], [0, 1], [1, 2]), model } });
    run({ id: 22, type: 'readSamples', payload: { text: '', options: { fileName: 'empty.csv' } } });
    run({ id: 23, type: 'surfaceRows', payload: { samples, model, grid, options: { rows: [4, 2] } } });
    const errs = sent.map((s) => s.message as Extract<EngineResponse, { type: 'error' }>);
    expect(errs.map((e) => [e.id, e.type, e.error.code])).toEqual([[21, 'error', 'too-few-samples'], [22, 'error', 'bad-file'], [23, 'error', 'bad-option']]);
    expect(errs[0].error.message).toMatch(/got 2/);
    expect(errs[1].error.place.file).toBe('empty.csv');
  });

  it('createEngineHandler answers malformed messages and unexpected exceptions with error data', () => {
    const ops = { ...ENGINE_OPERATIONS, empiricalVariogram: () => { throw new TypeError('boom'); } } as unknown as EngineOperations;
    const { sent, run } = collect(ops);
    run({ id: 31, type: 'explode', payload: {} });
    run('not a request');
    run({ id: 32, type: 'variogram', payload: { samples } });
    run({ id: 33, type: 'variogram', payload: { samples: { x: [1] } } });
    const m = sent.map((s) => s.message as Extract<EngineResponse, { type: 'error' }>);
    expect(m.map((e) => [e.id, e.error.code])).toEqual([[31, 'bad-option'], [-1, 'bad-option'], [32, 'internal'], [33, 'bad-option']]);
    expect(m[0].error.message).toContain('got type "explode"');
    expect(m[2].error.message).toBe('Unexpected failure in the engine (a bug): TypeError: boom');
  });
});

describe('predictorKey', () => {
  it('createEngineHandler answers a design request with the same sites as suggestSites', () => {
    const { sent, run } = collect();
    const options = { count: 3, mode: 'variance' as const, cell: 10 };
    run({ id: 11, type: 'design', payload: { samples, model, options } });
    const last = sent.at(-1)!.message as Extract<EngineResponse, { type: 'result' }>;
    expect(last).toMatchObject({ id: 11, type: 'result', request: 'design' });
    const direct = suggestSites(samples, model, options);
    const got = last.result as ReturnType<typeof suggestSites>;
    expect(got.suggestions.map((s) => [s.x, s.y])).toEqual(direct.suggestions.map((s) => [s.x, s.y]));
    expect(got.suggestions).toHaveLength(3);
  });

  it('predictorKey is equal for equal content and differs when values, coordinates or the model change', () => {
    const k = predictorKey(samples, model);
    expect(predictorKey(structuredClone(samples), structuredClone(model))).toBe(k);
    expect(predictorKey(makeSamples(samples.x, samples.y, samples.value.map((v) => v * 2)), model)).not.toBe(k);
    expect(predictorKey(makeSamples(samples.y, samples.x, samples.value), model)).not.toBe(k);
    expect(predictorKey(samples, { ...model, trend: 'linear' })).not.toBe(k);
    // Fit details do not change predictions, so they do not change the key.
    expect(predictorKey(samples, { ...model, fit: { method: 'reml', converged: true } })).toBe(k);
  });

  it('createEngineHandler answers blockSurfaceRows with the same numbers as computeBlockSurface (4 × 4 points), progress first', () => {
    const { sent, run } = collect();
    run({ id: 11, type: 'blockSurfaceRows', payload: { samples, model, grid, options: { threshold: 38, rows: [1, 7], points: 4 } } });
    const last = sent.at(-1)!;
    expect(last.message).toMatchObject({ id: 11, type: 'result', request: 'blockSurfaceRows' });
    const result = (last.message as Extract<EngineResponse, { type: 'result' }>).result as ReturnType<typeof computeBlockSurface>;
    const direct = computeBlockSurface(samples, model, grid, { threshold: 38, rows: [1, 7], points: 4 });
    expect(result.support).toBe('block');
    expect(result.points).toBe(4);
    expect(result.blockVariance).toBe(direct.blockVariance);
    expect(Array.from(result.mean)).toEqual(Array.from(direct.mean));
    expect(Array.from(result.sd)).toEqual(Array.from(direct.sd));
    expect(Array.from(result.pExceed!)).toEqual(Array.from(direct.pExceed!));
    // A block average is smoother than the point value: its sd is below the point sd in every cell.
    const point = computeSurface(samples, model, grid, { rows: [1, 7] });
    let compared = 0;
    for (let k = 0; k < point.sd.length; k++) {
      if (Number.isNaN(point.sd[k])) continue;
      expect(result.sd[k]).toBeLessThan(point.sd[k]);
      compared++;
    }
    expect(compared).toBeGreaterThan(10);
    expect(sent.slice(0, -1).every((s) => s.message.type === 'progress')).toBe(true);
    expect(last.transfer).toContain(result.mean.buffer);
  });

  it('createEngineHandler answers blockSurfaceRows for a log model with the error that names conditional simulation', () => {
    const { sent, run } = collect();
    run({ id: 12, type: 'blockSurfaceRows', payload: { samples, model: { ...model, transform: 'log' }, grid } });
    const last = sent.at(-1)!.message as Extract<EngineResponse, { type: 'error' }>;
    expect(last.type).toBe('error');
    expect(last.error.code).toBe('bad-option');
    expect(last.error.message).toMatch(/conditional simulations/);
  });

  it('createEngineHandler answers simulate with the same realisations, P(exceed) and area as simulateConditional for the seed', () => {
    const { sent, run } = collect();
    const options = { count: 12, seed: 7, threshold: 38, depth: 0.3, keepRealisations: true };
    run({ id: 13, type: 'simulate', payload: { samples, model, grid, options } });
    const last = sent.at(-1)!;
    expect(last.message).toMatchObject({ id: 13, type: 'result', request: 'simulate' });
    const result = (last.message as Extract<EngineResponse, { type: 'result' }>).result as ReturnType<typeof simulateConditional>;
    const direct = simulateConditional(samples, model, grid, options);
    expect(result.count).toBe(12);
    expect(result.realisations).toHaveLength(12);
    expect(Array.from(result.realisations![3])).toEqual(Array.from(direct.realisations![3]));
    expect(Array.from(result.pExceed!)).toEqual(Array.from(direct.pExceed!));
    expect(result.area).toEqual(direct.area);
    expect(result.area!.volume).toBeDefined();
    expect(last.transfer).toContain(result.realisations![0].buffer);
    const progress = sent.slice(0, -1).map((s) => s.message);
    expect(progress.length).toBeGreaterThan(0);
    for (const p of progress) expect(p).toMatchObject({ id: 13, type: 'progress' });
  });

  it('createEngineHandler answers fitStructure (anisotropy) with the model, the isotropic one and the comparison of fitAnisotropic, progress first', () => {
    const { sent, run } = collect();
    const options = { family: 'exponential' as const, method: 'reml' as const };
    run({ id: 16, type: 'fitStructure', payload: { samples, options, choice: { anisotropy: true, structures: 1 } } });
    const last = sent.at(-1)!.message as Extract<EngineResponse, { type: 'result' }>;
    expect(last).toMatchObject({ id: 16, type: 'result', request: 'fitStructure' });
    const direct = fitAnisotropic(samples, options);
    const r = last.result as { model: CovarianceModel; simpler: CovarianceModel; comparison: unknown[] };
    expect(r.model).toEqual(JSON.parse(JSON.stringify(direct.model)));
    expect(r.simpler).toEqual(JSON.parse(JSON.stringify(direct.isotropic)));
    expect(r.comparison.map((c) => (c as { label: string }).label)).toEqual(['isotropic', 'anisotropic']);
    expect(r.model.anisotropy?.ratio).toBeLessThanOrEqual(1);
    const progress = sent.slice(0, -1).map((s) => s.message);
    expect(progress.length).toBeGreaterThan(0);
    for (const p of progress) expect(p).toMatchObject({ id: 16, type: 'progress' });
  });

  it('createEngineHandler answers fitStructure (two structures) as fitNested, with the guard\'s reason when one structure is kept', () => {
    const { sent, run } = collect();
    const options = { family: 'exponential' as const, method: 'reml' as const };
    run({ id: 17, type: 'fitStructure', payload: { samples, options, choice: { anisotropy: false, structures: 2 } } });
    const r = (sent.at(-1)!.message as Extract<EngineResponse, { type: 'result' }>).result as { model: CovarianceModel; simpler: CovarianceModel; notIdentifiable?: string };
    const direct = fitNested(samples, options);
    expect(r.model).toEqual(JSON.parse(JSON.stringify(direct.model)));
    expect(r.simpler).toEqual(JSON.parse(JSON.stringify(direct.single)));
    expect(r.notIdentifiable).toBe(direct.notIdentifiable);
  });

  it('createEngineHandler answers fitStructure with both choices as fitAnisotropicNested: four rows, the model kept and a usable model per row', () => {
    const { sent, run } = collect();
    const options = { family: 'exponential' as const, method: 'reml' as const };
    run({ id: 18, type: 'fitStructure', payload: { samples, options, choice: { anisotropy: true, structures: 2 } } });
    const last = sent.at(-1)!.message as Extract<EngineResponse, { type: 'result' }>;
    expect(last).toMatchObject({ id: 18, type: 'result', request: 'fitStructure' });
    const r = last.result as StructureFitResult;
    const direct = fitAnisotropicNested(samples, options);
    expect(r.model).toEqual(JSON.parse(JSON.stringify(direct.model)));
    expect(r.simpler).toEqual(JSON.parse(JSON.stringify(direct.anisotropic)));
    expect(r.notIdentifiable).toBe(direct.notIdentifiable);
    expect(r.comparison.map((c) => c.label)).toEqual(['isotropic', 'anisotropic', 'two structures', 'anisotropic, two structures']);
    const chosen = r.comparison.find((c) => c.chosen)!;
    expect(r.rowModels[chosen.label]).toEqual(r.model);
    expect(r.rowModels.isotropic).toEqual(JSON.parse(JSON.stringify(direct.isotropic)));
    expect(r.rowModels['anisotropic, two structures'] === undefined).toBe(direct.notIdentifiable !== undefined);
  }, 120_000);

  it('createEngineHandler refuses fitStructure with neither choice, as error data', () => {
    const { sent, run } = collect();
    const options = { family: 'exponential' as const };
    run({ id: 19, type: 'fitStructure', payload: { samples, options, choice: { anisotropy: false, structures: 1 } } });
    expect(sent.map((s) => s.message)).toMatchObject([{ id: 19, type: 'error', error: { code: 'bad-option' } }]);
  });

  it('createEngineHandler answers fitVecchia with the same model as vecchiaFit', () => {
    const { sent, run } = collect();
    const options = { family: 'exponential' as const, neighbours: 8 };
    run({ id: 14, type: 'fitVecchia', payload: { samples, options } });
    const last = sent.at(-1)!.message as Extract<EngineResponse, { type: 'result' }>;
    expect(last).toMatchObject({ id: 14, type: 'result', request: 'fitVecchia' });
    const direct = vecchiaFit(samples, options);
    expect(last.result).toEqual(JSON.parse(JSON.stringify(direct)));
    expect((last.result as CovarianceModel).fit?.method).toBe(direct.fit.method);
  });

  it('createEngineHandler answers surfaceRows with local neighbourhoods (global mean) as computeSurfaceWith on createLocalPredictor', () => {
    const { sent, run } = collect();
    const local = { neighbours: 12, globalMean: true };
    run({ id: 15, type: 'surfaceRows', payload: { samples, model, grid, options: { threshold: 38, rows: [0, 6] }, local } });
    const result = (sent.at(-1)!.message as Extract<EngineResponse, { type: 'result' }>).result as ReturnType<typeof computeSurface>;
    const direct = computeSurfaceWith(createLocalPredictor(samples, model, local), grid, { threshold: 38, rows: [0, 6] });
    expect(Array.from(result.mean)).toEqual(Array.from(direct.mean));
    expect(Array.from(result.sd)).toEqual(Array.from(direct.sd));
    // And not the exact answer: 12 neighbours out of every sample change the numbers.
    const exact = computeSurface(samples, model, grid, { threshold: 38, rows: [0, 6] });
    expect(Array.from(result.mean)).not.toEqual(Array.from(exact.mean));
  });

  it('createEngineHandler answers localAccuracy with grow: a neighbourhood that misses the tolerance gets the larger settings that meet it, rerun on the grid within it', () => {
    // Invented samples with a smooth signal and noise; 8 neighbours with a locally re-estimated mean
    // are far from exact kriging here (as the checked path's own test finds).
    const rnd = createRandom(9);
    const xs: number[] = [], ys: number[] = [], vs: number[] = [];
    for (let i = 0; i < 800; i++) {
      xs.push(300000 + 1000 * rnd.uniform());
      ys.push(5000000 + 1000 * rnd.uniform());
      vs.push(10 + Math.sin(xs[i] / 120) + Math.cos(ys[i] / 170) + 0.3 * rnd.normal());
    }
    const s = makeSamples(xs, ys, vs);
    const m: CovarianceModel = { structures: [{ type: 'nugget', sill: 0.05 }, { type: 'matern', sill: 1, scale: 100, nu: 1.5 }], trend: 'constant', transform: 'none' };
    const g: Grid = { x0: 300000, y0: 5001000, cell: 25, nx: 40, ny: 40 };
    const start = { neighbours: 8, globalMean: false };
    const { sent, run } = collect();
    run({ id: 16, type: 'localAccuracy', payload: { samples: s, model: m, grid: g, local: start, grow: true } });
    const check = (sent.at(-1)!.message as Extract<EngineResponse, { type: 'result' }>).result as LocalGridCheck;
    // The first figures are the plain measurement's.
    expect(check.accuracy).toEqual(measureLocalGrid(s, m, g, start));
    expect(check.accuracy.within).toBe(false);
    expect(check.grown).not.toBeNull();
    expect(check.attempts.at(-1)).toMatchObject({ ...check.grown, within: true });
    expect(check.grown!.neighbours > 8 || check.grown!.globalMean).toBe(true);
    // The surface rerun with the grown settings through the handler measures within the tolerance.
    run({ id: 17, type: 'surfaceRows', payload: { samples: s, model: m, grid: g, local: check.grown! } });
    const rerun = (sent.at(-1)!.message as Extract<EngineResponse, { type: 'result' }>).result as ReturnType<typeof computeSurface>;
    run({ id: 18, type: 'localAccuracy', payload: { samples: s, model: m, grid: g, local: check.grown! } });
    const after = (sent.at(-1)!.message as Extract<EngineResponse, { type: 'result' }>).result as LocalGridCheck;
    expect(after.accuracy.within).toBe(true);
    expect(after.accuracy.mean.max).toBeLessThanOrEqual(1);
    expect(after.accuracy.sd.max).toBeLessThanOrEqual(2);
    expect(after.grown).toBeNull();
    expect(after.attempts).toEqual([]);
    // The measured cells are the surface's own: its values there equal the checked local values.
    const centres = cellCentres(g);
    const idx = chooseCheckTargets(centres.x.length, after.accuracy.checked, after.accuracy.seed);
    const p = createLocalPredictor(s, m, { ...check.grown!, targetSpacing: g.cell }).predict(Float64Array.from(idx, (i) => centres.x[i]), Float64Array.from(idx, (i) => centres.y[i]));
    idx.forEach((i, k) => expect(rerun.mean[centres.index[i]]).toBeCloseTo(p.mean[k], 4));
  });

  it('createEngineHandler answers localAccuracy without grow: no growth tried even when the tolerance is missed', () => {
    const { sent, run } = collect();
    run({ id: 19, type: 'localAccuracy', payload: { samples, model, grid, local: { neighbours: 3, globalMean: false }, tolerance: { mean: 1e-9, sd: 1e-9 } } });
    const check = (sent.at(-1)!.message as Extract<EngineResponse, { type: 'result' }>).result as LocalGridCheck;
    expect(check.accuracy.within).toBe(false);
    expect(check.grown).toBeNull();
    expect(check.attempts).toEqual([]);
  });
});

describe('the command line\'s engine threads', () => {
  it('load no file reader: handler.ts and the thread entry import nothing from io/ but types, and the default handler refuses readSamples', () => {
    for (const file of ['../../src/worker/handler.ts', '../../src/cli/engine.worker.ts', '../../src/worker/design-handler.ts', '../../src/worker/likelihood-part.ts']) {
      const text = readFileSync(new URL(file, import.meta.url), 'utf8');
      const valueImports = [...text.matchAll(/^import\s+(?!type\b)[^;]*?from\s+'([^']+)'/gm)].map((m) => m[1]);
      expect(valueImports.filter((m) => m.includes('/io/')), file).toEqual([]);
    }
    const handle = createEngineHandler();
    const sent: EngineResponse[] = [];
    handle({ id: 1, type: 'readSamples', payload: { text: 'x,y,v\n1,2,3\n', options: { fileName: 'a.csv' } } }, (m) => sent.push(m));
    expect(sent.at(-1)).toMatchObject({ id: 1, type: 'error', error: { code: 'internal' } });
  });
});
