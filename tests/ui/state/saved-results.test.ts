import { describe, expect, it } from 'vitest';
import { parseResults, RESULTS_VERSION, validGrid, type SavedResults } from '../../../src/ui/state/saved-results.ts';
import {
  createAutosave, parseRasters, RASTERS_KEY, RESULTS_KEY, AUTOSAVE_KEY, type KeyValueStore,
} from '../../../src/ui/state/autosave.ts';
import { readSamples } from '../../../src/io/intake.ts';

const CSV = 'id,easting,northing,lead\nA,500010,4980010,120\nB,500050,4980020,180\nC,500030,4980070,95\nD,500070,4980060,60\n';
const expectation = { readId: 'reading-7', fileName: 'yard.csv' };

/** A complete record as the session stores it: 2 × 3 grid, one finished surface, realisations, sites. */
function record(): SavedResults {
  const r = readSamples(CSV, { fileName: 'yard.csv', crs: 'EPSG:32633' });
  const n = r.samples.x.length;
  const grid = { x0: 500000, y0: 4980100, cell: 50, nx: 3, ny: 2 };
  const cells = 6;
  const model = { structures: [{ type: 'nugget' as const, sill: 1 }, { type: 'exponential' as const, sill: 400, scale: 60 }], trend: 'constant' as const, transform: 'none' as const };
  return {
    version: RESULTS_VERSION,
    readId: 'reading-7',
    intake: r,
    variograms: null,
    fit: {
      key: 'reading-7|none', ms: 1200, fittedWith: { likelihood: 'exact', n, automatic: true },
      rows: [{ key: 'exponential', label: 'Exponential', model, logLikelihood: -20, aic: 46, rmse: 30, msse: 1.1 }],
    },
    cv: {
      key: 'k', result: {
        prediction: new Float64Array(n), sdObserved: new Float64Array(n).fill(1), error: new Float64Array(n), standardisedError: new Float64Array(n),
        summary: { me: 0, rmse: 30, msse: 1.1, coverage95: 0.95, n }, scale: 'data', warnings: [],
      },
    },
    surface: {
      grid, result: { rows: [0, 2], nx: 3, mean: new Float32Array(cells).fill(100), sd: new Float32Array(cells).fill(20), pExceed: new Float32Array(cells), threshold: 150, range: { mean: { min: 100, max: 100 }, sd: { min: 20, max: 20 } }, cells, warnings: [] },
      work: 'EPSG:32633', threshold: 150, key: 'surface-key', bands: 3, done: true, support: 'point', points: 1, local: null, ms: 800,
    },
    rate: { flopsPerSecond: 2e8, overheadSeconds: 0.4 },
    simulation: null,
    simRate: null,
    suggestions: {
      options: { count: 1, mode: 'variance' },
      result: {
        mode: 'variance', requested: 1, suggestions: [{ rank: 1, x: 500040, y: 4980040, benefit: 3, mean: 100, sd: 20, pExceed: null }],
        benefitMeaning: 'b', scale: 'data', averageSdBefore: 20, averageSdAfter: 18, misclassifiedAreaBefore: null, misclassifiedAreaAfter: null,
        areaDecided: null, coverageDistanceBefore: null, coverageDistanceAfter: null, threshold: null, area: 15000, cell: 50, minSpacing: 0,
        evaluationPoints: 6, candidatePoints: 6, screenedCandidates: 6, warnings: [], caution: 'c',
      },
    },
  };
}

describe('parseResults', () => {
  it('parseResults keeps a complete record for the reading it names, every part as stored', () => {
    const r = record();
    const back = parseResults(structuredClone(r), expectation);
    expect(back).toEqual(r);
    expect(back!.surface!.result.mean).toBeInstanceOf(Float32Array);
    expect(back!.intake.table.length).toBe(4);
    expect(back!.intake.table.inputX).toBeInstanceOf(Float64Array);
  });

  it('parseResults drops a record of another reading, another file, another version or without readable samples', () => {
    expect(parseResults(record(), { ...expectation, readId: 'reading-8' })).toBeNull();
    expect(parseResults(record(), { ...expectation, readId: '' })).toBeNull();
    expect(parseResults(record(), { ...expectation, fileName: 'other.csv' })).toBeNull();
    expect(parseResults({ ...record(), version: 1 }, expectation)).toBeNull();
    const shortY = record();
    shortY.intake.samples = { ...shortY.intake.samples, y: new Float64Array(2) };
    expect(parseResults(shortY, expectation)).toBeNull();
    const noRows = record() as unknown as { intake: { table: unknown } };
    noRows.intake.table = { length: 4 };
    expect(parseResults(noRows, expectation)).toBeNull();
    expect(parseResults(null, expectation)).toBeNull();
    expect(parseResults('{"version":1}', expectation)).toBeNull();
  });

  it('parseResults drops a malformed part alone: a surface whose arrays do not fill its grid, one still arriving, a bad model in the table', () => {
    const short = record();
    short.surface!.result.sd = new Float32Array(5);
    const a = parseResults(short, expectation)!;
    expect(a.surface).toBeNull();
    expect(a.fit).not.toBeNull();
    expect(a.suggestions).not.toBeNull();

    const arriving = record();
    arriving.surface!.done = false;
    expect(parseResults(arriving, expectation)!.surface).toBeNull();

    const maskShort = record();
    maskShort.surface!.grid = { ...maskShort.surface!.grid, mask: new Uint8Array(4) };
    expect(parseResults(maskShort, expectation)!.surface).toBeNull();

    const badModel = record();
    (badModel.fit!.rows[0] as unknown as { model: unknown }).model = { structures: [{ type: 'exponential', sill: -1, scale: 60 }] };
    const b = parseResults(badModel, expectation)!;
    expect(b.fit).toBeNull();
    expect(b.surface).not.toBeNull();

    const cvShort = record();
    cvShort.cv!.result.prediction = new Float64Array(3);
    expect(parseResults(cvShort, expectation)!.cv).toBeNull();

    const badSite = record();
    badSite.suggestions!.result.suggestions[0].x = NaN;
    expect(parseResults(badSite, expectation)!.suggestions).toBeNull();

    const badRate = record();
    badRate.rate = { flopsPerSecond: -3, overheadSeconds: 0 };
    expect(parseResults(badRate, expectation)!.rate).toBeNull();
  });

  it('parseResults keeps a local-neighbourhood surface only with its measured error', () => {
    const accuracy = {
      checked: 6, targets: 6, seed: 1, reference: 'exact' as const, scale: 'data' as const, priorSd: 20,
      mean: { max: 0.4, rms: 0.2 }, sd: { max: 0.9, rms: 0.5 }, tolerance: { mean: 1, sd: 2 }, within: true, neighbours: 64, globalMean: true,
    };
    const measured = record();
    measured.surface = { ...measured.surface!, local: 64, accuracy, pathNote: 'The 32 nearest samples missed the tolerance.' };
    expect(parseResults(structuredClone(measured), expectation)!.surface).toEqual(measured.surface);
    const unmeasured = record();
    unmeasured.surface = { ...unmeasured.surface!, local: 64 };
    expect(parseResults(unmeasured, expectation)!.surface).toBeNull();
    const broken = record();
    broken.surface = { ...broken.surface!, local: 64, accuracy: { ...accuracy, mean: { max: NaN, rms: 0 } } };
    expect(parseResults(broken, expectation)!.surface).toBeNull();
  });

  it('parseResults checks realisations against their grid', () => {
    const r = record();
    const grid = r.surface!.grid;
    const sim = {
      grid, key: 'sk', base: 'surface-key', ms: 900, seed: 5, depth: null, made: '2026-12-03T10:00:00Z',
      result: { count: 20, mean: new Float64Array(6), sd: new Float64Array(6), realisations: [new Float32Array(6), new Float32Array(6)], warnings: [] },
    };
    expect(parseResults({ ...r, simulation: sim }, expectation)!.simulation).not.toBeNull();
    const bad = { ...sim, result: { ...sim.result, realisations: [new Float32Array(6), new Float32Array(7)] } };
    expect(parseResults({ ...r, simulation: bad }, expectation)!.simulation).toBeNull();
    expect(parseResults({ ...r, simulation: { ...sim, seed: 'five' } }, expectation)!.simulation).toBeNull();
  });
});

describe('validGrid', () => {
  it('validGrid accepts whole positive counts and a mask of nx·ny cells only', () => {
    expect(validGrid({ x0: 0, y0: 0, cell: 1, nx: 2, ny: 2 })).toBe(true);
    expect(validGrid({ x0: 0, y0: 0, cell: 1, nx: 2, ny: 2, mask: new Uint8Array(4) })).toBe(true);
    expect(validGrid({ x0: 0, y0: 0, cell: 0, nx: 2, ny: 2 })).toBe(false);
    expect(validGrid({ x0: 0, y0: 0, cell: 1, nx: 2.5, ny: 2 })).toBe(false);
    expect(validGrid({ x0: NaN, y0: 0, cell: 1, nx: 2, ny: 2 })).toBe(false);
    expect(validGrid({ x0: 0, y0: 0, cell: 1, nx: 2, ny: 2, mask: [1, 1, 1, 1] })).toBe(false);
  });
});

function cloningStore(): KeyValueStore & { data: Map<string, unknown> } {
  const data = new Map<string, unknown>();
  return {
    data,
    async get(k) { return data.get(k); },
    async set(k, v) { data.set(k, structuredClone(v)); },
    async del(k) { data.delete(k); },
  };
}

describe('createAutosave results', () => {
  it('createAutosave.scheduleResults stores a structured clone that loadResults gives back for the same reading only', async () => {
    const store = cloningStore();
    const a = createAutosave({ store, delayMs: 5 });
    a.scheduleResults(record());
    await a.flush();
    expect(store.data.get(RESULTS_KEY)).toBeDefined();
    const back = await createAutosave({ store }).loadResults(expectation);
    expect(back!.surface!.result.sd).toEqual(record().surface!.result.sd);
    expect(await a.loadResults({ ...expectation, readId: 'another' })).toBeNull();
  });

  it('createAutosave.scheduleResults(null) deletes the stored results; clear deletes session and results', async () => {
    const store = cloningStore();
    const a = createAutosave({ store, delayMs: 5 });
    a.scheduleResults(record());
    await a.flush();
    a.scheduleResults(null);
    await a.flush();
    expect(store.data.has(RESULTS_KEY)).toBe(false);
    a.scheduleResults(record());
    await a.flush();
    await store.set(AUTOSAVE_KEY, '{}');
    await a.clear();
    expect(store.data.has(RESULTS_KEY)).toBe(false);
    expect(store.data.has(AUTOSAVE_KEY)).toBe(false);
  });
});


describe('parseResults with several analytes', () => {
  /** A record of the same file read with another value column (its own reading). */
  function parkedRecord(readId: string): SavedResults {
    const csv = 'id,easting,northing,lead,zinc\nA,500010,4980010,120,300\nB,500050,4980020,180,410\nC,500030,4980070,95,260\nD,500070,4980060,60,150\n';
    return { ...record(), readId, intake: readSamples(csv, { fileName: 'yard.csv', crs: 'EPSG:32633', value: 'zinc' }) };
  }

  it('parseResults keeps a parked analyte\'s record for the reading the saved session names for it', () => {
    const r = { ...record(), parked: { zinc: parkedRecord('reading-zinc') } };
    const back = parseResults(structuredClone(r), { ...expectation, parked: { zinc: 'reading-zinc' } });
    expect(Object.keys(back!.parked!)).toEqual(['zinc']);
    expect(back!.parked!.zinc.intake.report.valueColumn).toBe('zinc');
    expect(back!.parked!.zinc.intake.samples.value[1]).toBe(410);
    expect(back!.parked!.zinc.surface!.result.mean).toBeInstanceOf(Float32Array);
  });

  it('parseResults drops a parked record of another reading, of another value column, or not named by the session, keeping the rest', () => {
    const r = { ...record(), parked: { zinc: parkedRecord('reading-zinc'), copper: parkedRecord('reading-copper') } };
    // Another reading for zinc; copper's record holds zinc's samples; nothing asked for "nickel".
    const back = parseResults(structuredClone(r), { ...expectation, parked: { zinc: 'reading-old', copper: 'reading-copper', nickel: 'reading-n' } });
    expect(back!.parked).toBeUndefined();
    expect(back!.surface).not.toBeNull();
    // Without the session naming any parked analyte, none is taken.
    expect(parseResults(structuredClone(r), expectation)!.parked).toBeUndefined();
  });
});

describe('createAutosave rasters', () => {
  it('createAutosave.scheduleRasters stores the files that loadRasters gives back checked; an empty list and clear delete them', async () => {
    const store = cloningStore();
    const a = createAutosave({ store, delayMs: 5 });
    const bytes = new Uint8Array([73, 73, 42, 0, 8, 0, 0, 0]);
    a.scheduleRasters([{ name: 'dist', fileName: 'dist.tif', bytes }]);
    await a.flush();
    expect(await createAutosave({ store }).loadRasters()).toEqual([{ name: 'dist', fileName: 'dist.tif', bytes }]);
    a.scheduleRasters([]);
    await a.flush();
    expect(store.data.has(RASTERS_KEY)).toBe(false);
    a.scheduleRasters([{ name: 'dist', fileName: 'dist.tif', bytes }]);
    await a.flush();
    await a.clear();
    expect(store.data.has(RASTERS_KEY)).toBe(false);
  });

  it('parseRasters drops entries without a name, a file name or bytes, and repeated covariates', () => {
    const ok = { name: 'dist', fileName: 'd.tif', bytes: new Uint8Array([1]) };
    expect(parseRasters(null)).toEqual([]);
    expect(parseRasters([ok, { ...ok, fileName: 'again.tif' }, { name: '', fileName: 'x', bytes: new Uint8Array([1]) },
      { name: 'soil', fileName: 's.tif', bytes: [1, 2] }, { name: 'elev', fileName: 'e.tif', bytes: new Uint8Array(0) }, 'text'])).toEqual([ok]);
  });
});
