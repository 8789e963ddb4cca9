// prepareReport: the data a report shows, computed from a project. The digests pin the prepared data
// (canonical JSON of every number, tests/helpers/report-digest.ts) as the preparation gave them
// before it moved out of the formatting layer, so the move is shown to change nothing.
import { describe, expect, it } from 'vitest';
import { prepareReport } from '../../src/worker/report-data.ts';
import { createProject } from '../../src/io/project.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';
import { planarSamplesCsv } from '../cli/run-cli.ts';
import { reportDigest, withFitWarningMessages } from '../helpers/report-digest.ts';
import { createEngineHandler, COMPUTE_OPERATIONS } from '../../src/worker/handler.ts';
import { ENGINE_OPERATIONS } from '../../src/worker/operations.ts';
import type { EngineResponse } from '../../src/worker/protocol.ts';
import type { ReportInput } from '../../src/io/report.ts';

const SOFTWARE = { name: 'gapwise', version: '9.9.9' };
const created = '2026-03-01T10:00:00.000Z';
const model: CovarianceModel = { structures: [{ type: 'nugget', sill: 0.5 }, { type: 'exponential', sill: 12, scale: 80 }], trend: 'constant', transform: 'none' };
const logModel: CovarianceModel = { structures: [{ type: 'nugget', sill: 0.002 }, { type: 'exponential', sill: 0.05, scale: 80 }], trend: 'constant', transform: 'log' };

function project(extra: Partial<Parameters<typeof createProject>[0]> = {}) {
  return createProject({
    samples: { fileName: 'wells.csv', text: planarSamplesCsv(), intake: { crs: 'EPSG:32633' } },
    model, grid: { cellSize: 10 }, threshold: 25, saved: '2026-03-01T09:00:00.000Z', ...extra,
  });
}

/** Digests of the prepared data before the move (the preparation in src/io/report.ts at commit 1b6bfa5). */
const PINNED = {
  compared: '310f625d6ed217df1694c4aa3adc27205df2c9e06ca77f5040eafbbe37b001c9',
  plain: '5dcb526a45fc8f5414859af4217901509aef39e4fe0f2bd6c019206a4b5932fb',
  simulated: '5f2ff3a4cee8cddd2e17b2d1df25a4a72e13d6f0aeb5efc687037de1b9766713',
  noModel: 'fbbd0f8d7b6cfa34ecc18d417194d254945eb51b2be6cd4328d739124c983931',
};

describe('prepareReport', () => {
  it('prepareReport gives the data it gave before the move: candidates compared, a coarser grid, realisations, no model', () => {
    const compared = prepareReport(project(), { software: SOFTWARE, created });
    expect(compared.comparison).toHaveLength(6);
    // Fit warnings now carry codes; read as their messages, the data are those pinned before.
    expect(reportDigest(withFitWarningMessages(compared))).toBe(PINNED.compared);
    expect(reportDigest(prepareReport(project(), { software: SOFTWARE, created, compare: false, cellSize: 20 }))).toBe(PINNED.plain);
    const simulated = prepareReport(project({ model: logModel }), {
      software: SOFTWARE, created, compare: false, simulate: { count: 8, seed: 3, support: 'block', blockPoints: 2, depth: 0.5 },
    });
    expect(simulated.simulation?.summary?.volume?.depth).toBe(0.5);
    expect(reportDigest(simulated)).toBe(PINNED.simulated);
    const noModel = prepareReport(project({ model: null }), { software: SOFTWARE, created });
    expect(noModel.warnings?.map((w) => w.code)).toEqual(['no-model']);
    expect(reportDigest(noModel)).toBe(PINNED.noModel);
  });

  it('reportDigest changes when one number changes', () => {
    const a = prepareReport(project(), { software: SOFTWARE, created, compare: false, cellSize: 20 });
    const mean = Float64Array.from(a.surface!.mean);
    mean[3] = mean[3] * (1 + Number.EPSILON);
    expect(reportDigest({ ...a, surface: { ...a.surface!, mean } })).not.toBe(PINNED.plain);
  });
});

/** Runs one request through the handler; every message copied as postMessage copies it. */
function request(payload: unknown, ops = ENGINE_OPERATIONS): EngineResponse[] {
  const handle = createEngineHandler(ops);
  const sent: EngineResponse[] = [];
  handle({ id: 7, type: 'prepareReport', payload }, (message) => sent.push(structuredClone(message)));
  return sent;
}

describe('the prepareReport request', () => {
  it('createEngineHandler answers prepareReport with what prepareReport gives in-process, with progress of the candidate fits', () => {
    const sent = request({ project: project(), options: { software: SOFTWARE, created } });
    const last = sent[sent.length - 1];
    expect(last.type).toBe('result');
    if (last.type !== 'result') return;
    expect(last.request).toBe('prepareReport');
    expect(reportDigest(withFitWarningMessages(last.result as ReportInput))).toBe(PINNED.compared);
    const progress = sent.filter((m) => m.type === 'progress');
    expect(progress.length).toBeGreaterThan(1);
    expect(progress.every((m) => m.type === 'progress' && m.total === 6 && m.done <= 6)).toBe(true);
    expect(progress[progress.length - 1]).toMatchObject({ done: 6, total: 6, fraction: 1 });
  });

  it('createEngineHandler answers a prepareReport that cannot be made with the error as data', () => {
    const refused = request({ project: project({ threshold: null }), options: { software: SOFTWARE, compare: false, simulate: { count: 2, seed: 1, support: 'point', blockPoints: 1, depth: null } } });
    expect(refused).toHaveLength(1);
    expect(refused[0]).toMatchObject({ id: 7, type: 'error', error: { code: 'bad-option' } });
    expect((refused[0] as { error: { message: string } }).error.message).toContain('needs an action level');
    // The command line's engine threads do not read projects.
    const elsewhere = request({ project: project(), options: { software: SOFTWARE, compare: false } }, COMPUTE_OPERATIONS);
    expect(elsewhere[0]).toMatchObject({ type: 'error', error: { code: 'internal' } });
    expect((elsewhere[0] as { error: { message: string } }).error.message).toContain('prepares no reports');
  });
});
