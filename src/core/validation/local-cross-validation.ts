/**
 * Leave-one-out cross-validation from local neighbourhoods, for data sets too large for the closed
 * form of ./cross-validation.ts (n³/3 flops, 8n² bytes): each sample is left out and predicted by
 * kriging from its M nearest other samples, the same kriging as the local path of
 * ./local-kriging.ts. With M ≥ n − 1 the answer is the closed form's (Dubrule 1983).
 * Units: data units (ln of them for a log model). Cost: n·(M³/3 + M²) flops, O(n + M²) memory.
 */
import { GapwiseError, type Warning } from '../shared/errors.ts';
import { checkLeaveOneOutFinite, summariseErrors, type LeaveOneOutResult } from './cross-validation.ts';
import { createPredictor } from '../prediction/kriging.ts';
import { globalMeanCoefficients, MAX_LOCAL_NEIGHBORS } from '../prediction/local-kriging.ts';
import { checkModelScale, type CovarianceModel } from '../covariance/model.ts';
import { NeighborIndex } from '../geometry/neighbors.ts';
import type { Samples } from '../shared/samples.ts';
import { covariateColumnCount, designRow, trendColumnCount, trendFrame } from '../covariance/trend.ts';
import { toIsotropicCoordinates } from '../covariance/covariance.ts';

/** Options of localLeaveOneOut (plain data). */
export interface LocalLeaveOneOutOptions {
  /** Other samples each left-out sample is predicted from, M (min(M, n − 1) are used). */
  neighbors: number;
  /** Use the GLS mean (trend) of all samples as a known mean in every neighbourhood. */
  globalMean?: boolean;
}

/**
 * Leave-one-out cross-validation from local neighbourhoods: sample i is predicted by kriging from
 * its M nearest other samples (nearest in the model's effective distance, anisotropy included), with
 * the model's trend re-estimated in that neighbourhood (or, with globalMean, the GLS trend of all
 * samples as a known mean). Same result shape and scale rules as leaveOneOut (a log model is
 * cross-validated on ln(value)); sdObserved includes the nugget. Cost: n·(M³/3 + M²) flops and a
 * kd-tree query per sample. Throws GapwiseError as createPredictor does, and 'too-few-samples'.
 */
export function localLeaveOneOut(
  samples: Samples, model: CovarianceModel, options: LocalLeaveOneOutOptions, onProgress?: (done: number, total: number) => void,
): LeaveOneOutResult {
  const n = samples.value.length;
  const pModel = trendColumnCount(model.trend);
  if (n < pModel + 2) throw new GapwiseError('too-few-samples', `Expected at least ${pModel + 2} samples for leave-one-out with this trend, got ${n}.`);
  const m = options.neighbors;
  if (!(Number.isInteger(m) && m >= 1 && m <= MAX_LOCAL_NEIGHBORS)) {
    throw new GapwiseError('bad-option', `Expected a whole number of neighbours from 1 to ${MAX_LOCAL_NEIGHBORS}, got ${m}.`);
  }
  const log = model.transform === 'log';
  const z = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const v = samples.value[i];
    if (log && !(v > 0)) throw new GapwiseError('bad-value', `Sample ${i + 1} has the value ${v}; a log transform needs values greater than 0.`);
    z[i] = log ? Math.log(v) : v;
  }
  checkModelScale(model, samples.x, samples.y, samples.value);
  const warnings: Warning[] = [];
  const frame = trendFrame(model.trend, samples.x, samples.y, samples.covariates);
  const covariateCount = covariateColumnCount(model.trend);
  // With a global mean, neighbourhoods krige residuals from the GLS trend with a known mean of 0.
  // A covariate trend always does (the neighbourhood systems hold no covariate columns).
  const globalMean = (options.globalMean === true || covariateCount > 0) && pModel > 0;
  const trendAt = new Float64Array(n);
  if (globalMean) {
    const g = globalMeanCoefficients(samples, model);
    warnings.push(...g.warnings);
    const row = new Float64Array(pModel);
    for (let i = 0; i < n; i++) {
      designRow(model.trend, samples.x[i], samples.y[i], frame, row, 0, samples.covariates, i * covariateCount);
      let t = 0;
      for (let a = 0; a < pModel; a++) t += row[a] * g.beta[a];
      trendAt[i] = t;
    }
  }
  const local: CovarianceModel = { ...model, transform: 'none', ...(globalMean ? { trend: { known: 0 } } : {}) };
  const q = Math.min(m, n - 1);
  if (!globalMean && pModel > 0 && q <= pModel) {
    throw new GapwiseError('bad-option', `Expected more than ${pModel} samples per neighbourhood for this trend, got ${q}.`);
  }
  const { u, v } = toIsotropicCoordinates(model.anisotropy, samples.x, samples.y, frame.cx, frame.cy);
  const index = new NeighborIndex(u, v);
  const ids = new Uint32Array(q + 1);
  const sx = new Float64Array(q);
  const sy = new Float64Array(q);
  const sz = new Float64Array(q);
  const tx = new Float64Array(1);
  const ty = new Float64Array(1);
  const prediction = new Float64Array(n);
  const sdObserved = new Float64Array(n);
  const error = new Float64Array(n);
  const standardisedError = new Float64Array(n);
  const seen = new Map<string, { warning: Warning; count: number }>();
  const every = Math.max(1, Math.floor(n / 100));
  for (let i = 0; i < n; i++) {
    const found = index.nearest(u[i], v[i], q + 1, ids);
    // Sample i itself is normally the nearest; with coincident samples it may be further down the list.
    let k = 0;
    for (let a = 0; a < found.length && k < q; a++) {
      const j = found[a];
      if (j === i) continue;
      sx[k] = samples.x[j];
      sy[k] = samples.y[j];
      sz[k] = z[j] - trendAt[j];
      k++;
    }
    const predictor = createPredictor({ x: sx.subarray(0, k), y: sy.subarray(0, k), value: sz.subarray(0, k) }, local, { checkScale: false });
    for (const w of predictor.warnings) {
      const key = w.code;
      const had = seen.get(key);
      if (had) had.count++;
      else seen.set(key, { warning: w, count: 1 });
    }
    tx[0] = samples.x[i];
    ty[0] = samples.y[i];
    const p = predictor.predict(tx, ty);
    prediction[i] = p.mean[0] + trendAt[i];
    sdObserved[i] = p.sdObserved[0];
    error[i] = prediction[i] - z[i];
    standardisedError[i] = error[i] / sdObserved[i];
    if ((i + 1) % every === 0 || i + 1 === n) onProgress?.(i + 1, n);
  }
  for (const { warning, count } of seen.values()) {
    warnings.push({ code: warning.code, message: `In ${count} of ${n} neighbourhoods: ${warning.message}` });
  }
  return checkLeaveOneOutFinite(model, {
    prediction, sdObserved, error, standardisedError,
    summary: summariseErrors(error, sdObserved),
    scale: log ? 'log' : 'data',
    warnings,
  });
}
