// The engine request 'simulationPath': the app's realisations choose exact or local conditioning in a
// worker by the same cost model and measured error as `gapwise simulate` (core/simulation/simulation-path.ts).
import { describe, expect, it } from 'vitest';
import { createEngineHandler } from '../../src/worker/handler.ts';
import { ENGINE_OPERATIONS } from '../../src/worker/operations.ts';
import type { EngineResponse } from '../../src/worker/protocol.ts';
import { planSimulationPath, type SimulationPath } from '../../src/core/simulation/simulation-path.ts';
import { makeSamples } from '../../src/core/shared/samples.ts';
import { createRandom } from '../../src/core/shared/random.ts';
import type { CovarianceModel } from '../../src/core/covariance/model.ts';
import type { Grid } from '../../src/core/geometry/grid.ts';

const model: CovarianceModel = { structures: [{ type: 'nugget', sill: 0.1 }, { type: 'exponential', sill: 1, scale: 60 }], trend: 'constant', transform: 'none' };
const grid: Grid = { x0: 0, y0: 400, cell: 20, nx: 20, ny: 20 };

function samplesOf(n: number) {
  const r = createRandom(7);
  const x = Array.from({ length: n }, () => 400 * r.uniform());
  const y = Array.from({ length: n }, () => 400 * r.uniform());
  return makeSamples(x, y, x.map((v, i) => Math.sin(v / 50) + Math.cos(y[i] / 70)));
}

function ask(payload: unknown): SimulationPath {
  const sent: EngineResponse[] = [];
  createEngineHandler(ENGINE_OPERATIONS)({ id: 3, type: 'simulationPath', payload }, (m) => sent.push(m));
  const last = sent.at(-1)!;
  expect(last).toMatchObject({ id: 3, type: 'result', request: 'simulationPath' });
  return (last as Extract<EngineResponse, { type: 'result' }>).result as SimulationPath;
}

describe('the simulationPath request', () => {
  it('answers a small job with exact conditioning, chosen automatically, as planSimulationPath does in-process', () => {
    const samples = samplesOf(60);
    const options = { realisations: 50, threads: 2 };
    const answer = ask({ samples, model, grid, options });
    expect(answer.choice.path).toBe('exact');
    expect(answer.choice.automatic).toBe(true);
    expect(answer.accuracy).toBeUndefined();
    expect(answer).toEqual(planSimulationPath(samples, model, grid, options));
  });

  it('answers a forced local run with its neighbours and the error measured at the seeded nodes, equal to the in-process plan', () => {
    const samples = samplesOf(300);
    const options = { realisations: 20, threads: 2, force: 'local' as const, neighbours: 16 };
    const answer = ask({ samples, model, grid, options });
    expect(answer.choice.path).toBe('local');
    expect(answer.neighbours).toBe(16);
    expect(answer.accuracy!.mean.max).toBeGreaterThan(0);
    expect(answer).toEqual(planSimulationPath(samples, model, grid, options));
  });

  it('answers a request without samples with the error as data', () => {
    const sent: EngineResponse[] = [];
    createEngineHandler(ENGINE_OPERATIONS)({ id: 4, type: 'simulationPath', payload: { model, grid, options: { realisations: 5 } } }, (m) => sent.push(m));
    expect(sent.at(-1)!.type).toBe('error');
  });
});
