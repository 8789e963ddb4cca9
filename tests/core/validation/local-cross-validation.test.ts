import { describe, expect, it } from 'vitest';
import { readSamples } from '../../../src/io/intake.ts';
import { leaveOneOut } from '../../../src/core/validation/cross-validation.ts';
import { parseModel } from '../../../src/core/covariance/model.ts';
import { createPredictor } from '../../../src/core/prediction/kriging.ts';
import { localLeaveOneOut } from '../../../src/core/validation/local-cross-validation.ts';
import { expectClose } from '../../helpers/tolerance.ts';
import { planarSamplesCsv } from '../../cli/run-cli.ts';

const MODEL = { structures: [{ type: 'nugget', sill: 1.2 }, { type: 'matern', sill: 16, scale: 55, nu: 1.5 }], trend: 'constant' };
const intake = readSamples(planarSamplesCsv(), { fileName: 'wells.csv', crs: 'EPSG:32633' });

describe('localLeaveOneOut', () => {
  it('localLeaveOneOut with every other sample as neighbours equals the closed form (Dubrule 1983): ordinary, universal, log and anisotropic', () => {
    const models = [
      MODEL,
      { ...MODEL, trend: 'linear' },
      { structures: [{ type: 'nugget', sill: 0.002 }, { type: 'exponential', sill: 0.04, scale: 60 }], trend: 'constant', transform: 'log' },
      { ...MODEL, anisotropy: { azimuth: 30, ratio: 0.5 } },
      { ...MODEL, trend: { known: 24 } },
    ];
    for (const m of models) {
      const model = parseModel(m);
      const closed = leaveOneOut(intake.samples, model);
      const local = localLeaveOneOut(intake.samples, model, { neighbours: 24 });
      const what = JSON.stringify(m.trend) + (model.anisotropy ? ' anisotropic' : '') + model.transform;
      expect(local.scale, what).toBe(closed.scale);
      expectClose(local.prediction, closed.prediction, { rel: 1e-9 }, `${what} prediction`);
      expectClose(local.sdObserved, closed.sdObserved, { rel: 1e-9 }, `${what} sdObserved`);
      expectClose(local.error, closed.error, { abs: 1e-9 }, `${what} error`);
    }
  });

  it('localLeaveOneOut with few neighbours leaves the sample itself out (a coincident copy is still used) and differs from the closed form', () => {
    const model = parseModel(MODEL);
    const few = localLeaveOneOut(intake.samples, model, { neighbours: 6 });
    const closed = leaveOneOut(intake.samples, model);
    expect(Array.from(few.prediction)).not.toEqual(Array.from(closed.prediction));
    // Leaving a sample out never predicts it perfectly here (no zero errors) and sds include the nugget.
    for (let i = 0; i < 25; i++) {
      expect(few.error[i]).not.toBe(0);
      expect(few.sdObserved[i]).toBeGreaterThan(Math.sqrt(1.2));
    }
    // A duplicated sample: its twin is its nearest other sample and predicts it almost exactly.
    const x = Float64Array.from([...intake.samples.x, intake.samples.x[0]]);
    const y = Float64Array.from([...intake.samples.y, intake.samples.y[0]]);
    const v = Float64Array.from([...intake.samples.value, intake.samples.value[0]]);
    const twin = localLeaveOneOut({ x, y, value: v }, parseModel({ ...MODEL, structures: [{ type: 'nugget', sill: 1e-6 }, MODEL.structures[1]] }), { neighbours: 6 });
    expect(Math.abs(twin.error[0])).toBeLessThan(1e-3);
    expect(Math.abs(twin.error[25])).toBeLessThan(1e-3);
  });

  it('localLeaveOneOut with the global mean uses the GLS mean of all samples as a known mean', () => {
    const model = parseModel(MODEL);
    const global = localLeaveOneOut(intake.samples, model, { neighbours: 24, globalMean: true });
    // With every other sample it is simple kriging around the GLS mean β̂ of all 25 samples.
    const beta = createPredictor(intake.samples, model).beta[0];
    const simple = localLeaveOneOut(intake.samples, parseModel({ ...MODEL, trend: { known: beta } }), { neighbours: 24 });
    expectClose(global.prediction, simple.prediction, { rel: 1e-9 }, 'prediction');
    expectClose(global.sdObserved, simple.sdObserved, { rel: 1e-9 }, 'sdObserved');
  });
});
