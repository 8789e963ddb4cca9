import { beforeEach, describe, expect, it, vi } from 'vitest';
import { Session } from '../../../src/ui/state/session.svelte.ts';
import { createAutosave, type KeyValueStore } from '../../../src/ui/state/autosave.ts';
import { suggestions } from '../../../src/ui/state/suggestions.svelte.ts';
import { sessionProject } from '../../../src/ui/components/report/session-project.ts';
import type { DesignResult } from '../../../src/core/design/design.ts';
import type { SessionSnapshot } from '../../../src/ui/state/snapshot.ts';
import { engineLog } from './fake-engine.ts';
import { RichFitState } from '../../../src/ui/state/rich-fit.svelte.ts';
import { MAX_EXACT_SAMPLES } from '../../../src/core/shared/sizes.ts';

vi.mock('../../../src/ui/state/engine.ts', () => import('./fake-engine.ts'));

/** Twelve samples on local coordinates, values 1 to 5. */
const CSV = 'x,y,value,depth\n' + Array.from({ length: 12 }, (_, i) => `${i * 10},${(i * 37) % 50},${1 + (i * 7) % 5},${i}`).join('\n');
const FILE = { fileName: 'site.csv', text: CSV, invented: false };

function memoryStore(): KeyValueStore {
  const data = new Map<string, unknown>();
  return {
    async get(k: string) { return data.get(k); },
    async set(k: string, v: unknown) { data.set(k, v); },
    async del(k: string) { data.delete(k); },
  } as KeyValueStore;
}

function newSession(store: KeyValueStore = memoryStore()): Session {
  return new Session({ autosave: createAutosave({ store, delayMs: 10_000 }) });
}

/** Lets queued promise callbacks run. */
const settle = () => new Promise((r) => setTimeout(r, 0));

/** A session with the file read and the candidates fitted (exponential chosen). */
async function fitted(): Promise<Session> {
  const app = newSession();
  expect(await app.samples.loadSource(FILE)).toBeNull();
  await app.structure.fit();
  return app;
}

beforeEach(() => {
  engineLog.reset();
  suggestions.session = null;
  suggestions.set(null);
});

describe('SamplesState', () => {
  it('SamplesState.loadSource takes a file that reads and gives it a new reading id', async () => {
    const app = newSession();
    expect(await app.samples.loadSource(FILE)).toBeNull();
    expect(app.samples.intake?.samples.x.length).toBe(12);
    expect(app.samples.planar).toBe(true);
    expect(app.samples.lengthUnit).toBe('coordinate units');
    expect(app.s.source?.fileName).toBe('site.csv');
    expect(app.s.readId).not.toBe('');
  });

  it('SamplesState.loadSource keeps the work in use when a file fails, and names the file', async () => {
    const app = await fitted();
    const readId = app.s.readId;
    const error = await app.samples.loadSource({ fileName: 'broken.csv', text: 'a;b\n', invented: false });
    expect(error).not.toBeNull();
    expect(app.samples.rejectedSource?.fileName).toBe('broken.csv');
    expect(app.samples.intake?.samples.x.length).toBe(12);
    expect(app.s.source?.fileName).toBe('site.csv');
    expect(app.s.readId).toBe(readId);
    expect(app.structure.candidates.map((r) => r.key)).toEqual(['exponential', 'matern-1.5']);
  });

  it('SamplesState.setReadChoice keeps samples and choices when the file cannot be read with the choice', async () => {
    const app = await fitted();
    await app.samples.setReadChoice({ value: 'no-such-column' });
    expect(app.samples.rejectedChoice?.what).toBe('value column "no-such-column"');
    // Two numeric columns: the first was mapped on loading, and stays.
    expect(app.s.samples.value).toBe('value');
    expect(app.samples.intake?.report.valueColumn).toBe('value');
    expect(app.s.structure.chosen).toBe('exponential');
  });

  it('SamplesState.setCovariates drops the candidate table fitted without them', async () => {
    const app = await fitted();
    expect(app.structure.candidates).toHaveLength(2);
    app.samples.setCovariates(['depth']);
    expect(app.s.samples.covariates).toEqual(['depth']);
    expect(app.structure.candidates).toEqual([]);
    expect(app.structure.fittedFor).toBe('');
    // The same choice again changes nothing.
    app.structure.candidates = engineLog.rows;
    app.samples.setCovariates(['depth']);
    expect(app.structure.candidates).toHaveLength(2);
  });

  it('SamplesState.setTransform drops the model and every result', async () => {
    const app = await fitted();
    await app.surface.computeSurface();
    expect(app.surface.shown).not.toBeNull();
    app.samples.setTransform('log');
    expect(app.s.structure.model).toBeNull();
    expect(app.structure.candidates).toEqual([]);
    expect(app.surface.shown).toBeNull();
    expect(app.surface.task.status).toBe('idle');
  });
});

describe('StructureState', () => {
  it('StructureState.fit fills the table and puts the best candidate in use', async () => {
    const app = await fitted();
    expect(app.structure.fitTask.status).toBe('done');
    expect(app.structure.best).toBe('exponential');
    expect(app.s.structure.chosen).toBe('exponential');
    expect(app.s.structure.model?.structures[1]).toEqual({ type: 'exponential', sill: 1, scale: 30 });
    expect(app.structure.fittedWith).toEqual({ likelihood: 'exact', n: 12, automatic: true });
    expect(app.structure.comparisonCurves.map((c) => c.key)).toEqual(['matern-1.5']);
  });

  it('StructureState.fit drops the late answer of a fit replaced by new samples', async () => {
    const app = newSession();
    await app.samples.loadSource(FILE);
    engineLog.hold.add('fitCandidateRows');
    const first = app.structure.fit();
    expect(app.structure.fitTask.status).toBe('running');
    app.samples.setTransform('log');
    engineLog.held[0].resolve(engineLog.rows);
    await first;
    expect(app.structure.candidates).toEqual([]);
    expect(app.s.structure.model).toBeNull();
    expect(app.structure.fitTask.status).toBe('idle');
  });

  it('StructureState.fit shows a failed fit as an error, not a throw', async () => {
    const app = newSession();
    await app.samples.loadSource(FILE);
    engineLog.hold.add('fitCandidateRows');
    const run = app.structure.fit();
    engineLog.held[0].reject({ code: 'fit-failed', message: 'No candidate could be fitted.' });
    await run;
    expect(app.structure.fitTask.status).toBe('error');
    expect(app.structure.fitTask.error).toEqual({ code: 'fit-failed', message: 'No candidate could be fitted.' });
  });

  it('StructureState.fit keeps a hand-edited model of the chosen candidate', async () => {
    const app = await fitted();
    app.structure.choose('matern-1.5');
    app.structure.editModel({ nugget: 0.5 });
    expect(app.s.structure.model?.fit?.method).toBe('manual');
    engineLog.rows = engineLog.rows.map((r) => ({ ...r, aic: r.key === 'exponential' ? 10 : 50 }));
    await app.structure.fit();
    expect(app.s.structure.chosen).toBe('matern-1.5');
    expect(app.s.structure.model?.structures[0]).toEqual({ type: 'nugget', sill: 0.5 });
  });

  it('StructureState.runCv cross-validates the model in use once and keeps the figures for it', async () => {
    const app = await fitted();
    await app.structure.runCv();
    expect(app.structure.cv?.summary.n).toBe(12);
    expect(app.structure.cvFor).toBe(app.structure.cvKey);
    await app.structure.runCv();
    expect(engineLog.calls.filter((c) => c.name === 'crossValidate')).toHaveLength(1);
  });
});

describe('RichFitState', () => {
  it('RichFitState.run shows a refused richer fit as an error and keeps the model in use', async () => {
    const rich = new RichFitState();
    rich.choice = 'anisotropy';
    const n = MAX_EXACT_SAMPLES;
    const samples = { x: new Float64Array(n), y: new Float64Array(n), value: new Float64Array(n) };
    const used: unknown[] = [];
    await rich.run({ samples, transform: 'none', chosen: 'exponential', chosenModel: null, key: 'k' }, (m) => used.push(m));
    expect(rich.task.status).toBe('error');
    expect(rich.task.error).toContain(`got ${n.toLocaleString('en-US')}`);
    expect(rich.outcome).toBeNull();
    expect(used).toEqual([]);
  });
});

describe('SurfaceState and RealisationsState', () => {
  it('SurfaceState.computeSurface puts the surface on the map; choosing another candidate makes it stale', async () => {
    const app = await fitted();
    await app.surface.computeSurface();
    const shown = app.surface.shown!;
    expect(shown.done).toBe(true);
    expect(shown.result.mean[0]).toBe(5);
    expect(app.surface.task.status).toBe('done');
    expect(app.s.surface.wanted).toBe(true);
    expect(app.s.surface.running).toBe(false);
    expect(app.s.surface.sdLimit).toBe(1);
    expect(app.surface.stale).toBe(false);
    app.structure.choose('matern-1.5');
    expect(app.surface.stale).toBe(true);
  });

  it('SurfaceState.cancelSurface clears the surface, and its late answer is dropped', async () => {
    const app = await fitted();
    engineLog.hold.add('surface');
    const run = app.surface.computeSurface();
    await settle();
    expect(app.s.surface.running).toBe(true);
    app.surface.cancelSurface();
    const grid = (engineLog.held[0].args[0] as { grid: { nx: number; ny: number } }).grid;
    engineLog.held[0].resolve({ rows: [0, grid.ny], nx: grid.nx, mean: new Float32Array(1), sd: new Float32Array(1), range: {}, cells: 1, warnings: [] });
    await run;
    expect(app.surface.shown).toBeNull();
    expect(app.surface.task.status).toBe('cancelled');
    expect(app.s.surface.wanted).toBe(false);
    expect(app.s.surface.running).toBe(false);
  });

  it('RealisationsState.simulate and showSimulation put the realisations on the map and keep the kriged surface', async () => {
    const app = await fitted();
    await app.surface.computeSurface();
    app.realisations.count = 6;
    await app.realisations.simulate();
    const sim = app.realisations.simulation!;
    expect(sim.result.count).toBe(6);
    expect(sim.base).toBe(app.surface.key);
    expect(app.realisations.stale).toBe(false);
    const req = engineLog.calls.find((c) => c.name === 'simulate')!.args[0] as { options: { count: number; seed: number } };
    expect(req.options.count).toBe(6);
    app.realisations.showSimulation();
    expect(app.surface.shown?.fromSimulation).toBe(6);
    expect(app.surface.shown?.result.mean[0]).toBe(7);
    expect(app.surface.kriged?.result.mean[0]).toBe(5);
    expect(app.surface.exportSurface?.result.mean[0]).toBe(5);
    app.realisations.showKriged();
    expect(app.surface.shown?.fromSimulation).toBeUndefined();
    expect(app.surface.shown?.result.mean[0]).toBe(5);
  });
});

describe('DesignState and ReportState', () => {
  const design = (n: number): DesignResult => ({ mode: 'coverage', suggestions: [{ rank: 1, x: n, y: n, benefit: 1, mean: null, sd: null, pExceed: null }] } as unknown as DesignResult);

  it('DesignState.run answers the newer design and rejects the replaced one as cancelled', async () => {
    const runs: Array<(v: DesignResult) => void> = [];
    const runner = (_p: unknown, _progress: unknown, signal: AbortSignal) => new Promise<DesignResult>((resolve) => { void signal; runs.push(resolve); });
    const withRunner = new Session({ autosave: createAutosave({ store: memoryStore(), delayMs: 10_000 }), design: runner as never });
    const a = withRunner.design.run({} as never, () => {}, new AbortController().signal);
    const b = withRunner.design.run({} as never, () => {}, new AbortController().signal);
    runs[1](design(2));
    runs[0](design(1));
    await expect(b).resolves.toMatchObject({ suggestions: [{ x: 2 }] });
    await expect(a).rejects.toMatchObject({ code: 'cancelled' });
    const ac = new AbortController();
    const c = withRunner.design.run({} as never, () => {}, ac.signal);
    ac.abort();
    runs[2](design(3));
    await expect(c).rejects.toMatchObject({ code: 'cancelled' });
  });

  it('ReportState.analyteWork gives the current work: table, finished surface, sites', async () => {
    const app = await fitted();
    await app.surface.computeSurface();
    app.design.set(design(4), { count: 1 });
    const [work] = app.report.analyteWork();
    expect(work.name).toBe('value');
    expect(work.current).toBe(true);
    expect(work.candidates.map((r) => r.key)).toEqual(['exponential', 'matern-1.5']);
    expect(work.surface?.result.mean[0]).toBe(5);
    expect(work.suggestions?.result.suggestions[0].x).toBe(4);
    app.structure.choose('matern-1.5');
    expect(app.report.analyteWork()[0].surface).toBeNull();
  });

  it('ReportState.openProject with samples that do not read keeps the work in use', async () => {
    const app = await fitted();
    const snap = JSON.parse(JSON.stringify(app.s)) as SessionSnapshot;
    snap.source = { fileName: 'other.csv', text: 'a;b\n', invented: false };
    const project = sessionProject({ snapshot: snap, software: { name: 'gapwise', version: 'test' } })!;
    const outcome = await app.report.openProject({ project, fileVersion: 2, warnings: [] });
    expect(outcome.error).toMatch(/^The project was not opened; its samples could not be used: .* The work in use is unchanged\.$/);
    expect(app.s.source?.fileName).toBe('site.csv');
    expect(app.structure.candidates).toHaveLength(2);
  });

  it('ReportState.openProject with good samples replaces the work and fits the table again', async () => {
    const app = await fitted();
    const snap = JSON.parse(JSON.stringify(app.s)) as SessionSnapshot;
    snap.surface.threshold = 3;
    const project = sessionProject({ snapshot: snap, candidates: app.structure.candidates, software: { name: 'gapwise', version: 'test' } })!;
    const other = newSession();
    const outcome = await other.report.openProject({ project, fileVersion: 2, warnings: [] });
    expect(outcome).toEqual({ error: null, note: null });
    await settle();
    expect(other.s.surface.threshold).toBe(3);
    expect(other.s.structure.chosen).toBe('exponential');
    expect(other.structure.candidates.map((r) => r.key)).toEqual(['exponential', 'matern-1.5']);
  });
});

describe('SavingState', () => {
  it('SavingState round trip: a reload shows the stored table, model and surface without computing them again', async () => {
    const store = memoryStore();
    const app = newSession(store);
    await app.samples.loadSource(FILE);
    await app.structure.fit();
    app.structure.choose('matern-1.5');
    await app.surface.computeSurface();
    const autosave = app.saving.autosave;
    autosave.schedule(JSON.parse(JSON.stringify(app.s)) as SessionSnapshot);
    autosave.scheduleResults(app.saving.resultsRecord());
    await app.flush();

    engineLog.reset();
    const back = newSession(store);
    expect(await back.restore()).toBe(true);
    expect(back.ready).toBe(true);
    expect(back.s.readId).toBe(app.s.readId);
    expect(back.s.structure.chosen).toBe('matern-1.5');
    expect(back.samples.intake?.samples.x.length).toBe(12);
    expect(back.structure.candidates.map((r) => [r.key, r.aic])).toEqual([['exponential', 26], ['matern-1.5', 30]]);
    expect(back.structure.fitTask.status).toBe('done');
    expect(back.surface.shown?.result.mean[0]).toBe(5);
    expect(back.surface.stale).toBe(false);
    expect(back.digest()).toMatchObject({ chosen: 'matern-1.5', samples: { n: 12 } });
    expect(engineLog.calls.map((c) => c.name)).toEqual([]);
  });

  it('Session.startOver clears the stored session and every result', async () => {
    const store = memoryStore();
    const app = newSession(store);
    await app.samples.loadSource(FILE);
    await app.structure.fit();
    await app.surface.computeSurface();
    app.saving.autosave.schedule(JSON.parse(JSON.stringify(app.s)) as SessionSnapshot);
    await app.flush();
    expect(await newSession(store).restore()).toBe(true);
    await app.startOver();
    expect(app.s.source).toBeNull();
    expect(app.samples.intake).toBeNull();
    expect(app.structure.candidates).toEqual([]);
    expect(app.surface.shown).toBeNull();
    expect(await newSession(store).restore()).toBe(false);
  });
});
