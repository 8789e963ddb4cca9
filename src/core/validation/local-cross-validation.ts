/**
 * Leave-one-out cross-validation from local neighbourhoods, for data sets too large for the closed
 * form of ./cross-validation.ts (n³/3 flops, 8n² bytes): each sample is left out and predicted by
 * kriging from its M nearest other samples, the same kriging as the local path of
 * ./local-kriging.ts. With M ≥ n − 1 the answer is the closed form's (Dubrule 1983).
 * Units: data units (ln of them for a log model). Cost: n·(M³/3 + M²) flops, O(n + M²) memory.
 */
import { GapwiseError, type Warning } from '../shared/errors.ts';
import { checkLeaveOneOutFinite, leaveOneOut, summariseErrors, type LeaveOneOutResult } from './cross-validation.ts';
import {
  chooseCheckTargets, compareWithReference, DEFAULT_CHECK_SEED, type CheckedValues, type LocalAccuracy, type LocalSettings, type ReferenceValues,
} from '../prediction/local-accuracy.ts';
import { checkCount, REFERENCE_NEIGHBOURS, type Tolerance } from '../prediction/path-choice.ts';
import { createPredictor } from '../prediction/kriging.ts';
import { globalMeanCoefficients, MAX_LOCAL_NEIGHBOURS } from '../prediction/local-kriging.ts';
import { checkModelScale, type CovarianceModel } from '../covariance/model.ts';
import { NeighbourIndex } from '../geometry/neighbours.ts';
import type { Samples } from '../shared/samples.ts';
import { covariateColumnCount, designRow, knownMean, trendColumnCount, trendFrame } from '../covariance/trend.ts';
import { toIsotropicCoordinates } from '../covariance/covariance.ts';
import { MAX_EXACT_SAMPLES } from '../shared/sizes.ts';

/** Options of localLeaveOneOut (plain data). */
export interface LocalLeaveOneOutOptions {
  /** Other samples each left-out sample is predicted from, M (min(M, n − 1) are used). */
  neighbours: number;
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
  const m = options.neighbours;
  if (!(Number.isInteger(m) && m >= 1 && m <= MAX_LOCAL_NEIGHBOURS)) {
    throw new GapwiseError('bad-option', `Expected a whole number of neighbours from 1 to ${MAX_LOCAL_NEIGHBOURS}, got ${m}.`);
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
  const index = new NeighbourIndex(u, v);
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

/**
 * The measured error of a local leave-one-out (localLeaveOneOut above): at a seeded subset of the
 * samples (checkCount(n, n)), the local prediction and sd_obs of each left-out sample against the
 * reference leave-one-out there: the closed form from all other samples (./cross-validation.ts leaveOneOut) up to
 * MAX_EXACT_SAMPLES samples, above that kriging from the REFERENCE_NEIGHBOURS nearest other samples
 * around the GLS mean of all samples (the reference of core/prediction/local-accuracy.ts predictLocalChecked, for the same reason).
 * Largest and RMS differences in % of the prior sd (on the log scale for a log model, as leave-one-out
 * itself). `local` holds the local leave-one-out of every sample (the values the user gets).
 * Cost: n³/3 flops up to MAX_EXACT_SAMPLES samples; above, c factorisations of R × R.
 */
export function measureLocalLeaveOneOut(
  samples: Samples, model: CovarianceModel, local: Pick<LeaveOneOutResult, 'prediction' | 'sdObserved'>, settings: LocalSettings,
  options: { tolerance?: Tolerance; seed?: number } = {},
): LocalAccuracy {
  const n = samples.x.length;
  const seed = options.seed ?? DEFAULT_CHECK_SEED;
  const idx = chooseCheckTargets(n, checkCount(n, n), seed);
  const pick = (a: ArrayLike<number>): Float64Array => Float64Array.from(idx, (i) => a[i]);
  let reference: ReferenceValues;
  if (n <= MAX_EXACT_SAMPLES) {
    const exact = leaveOneOut(samples, model);
    reference = { mean: pick(exact.prediction), sd: pick(exact.sdObserved), reference: 'exact' };
  } else {
    const near = localLeaveOneOutAt(samples, model, idx, REFERENCE_NEIGHBOURS);
    reference = { ...near, reference: 'nearest', referenceNeighbours: Math.min(n - 1, REFERENCE_NEIGHBOURS) };
  }
  return compareWithReference(model, reference, { mean: pick(local.prediction), sd: pick(local.sdObserved) }, {
    targets: n, seed, ...settings, ...(options.tolerance ? { tolerance: options.tolerance } : {}),
  });
}

/**
 * Leave-one-out at the samples `idx` only, each predicted from its `neighbours` nearest other samples
 * around the GLS mean of all samples (kriging scale): prediction and sd_obs, in idx order.
 */
function localLeaveOneOutAt(
  samples: Samples, model: CovarianceModel, idx: Uint32Array, neighbours: number,
): CheckedValues {
  const n = samples.x.length;
  const trend = model.trend ?? 'constant';
  const log = model.transform === 'log';
  const z = log ? Float64Array.from(samples.value, Math.log) : samples.value;
  const p = trendColumnCount(trend);
  const frame = trendFrame(trend, samples.x, samples.y, samples.covariates);
  const qc = covariateColumnCount(trend);
  const trendAt = new Float64Array(n);
  if (p > 0) {
    const beta = globalMeanCoefficients(samples, model).beta;
    const row = new Float64Array(Math.max(3, p));
    for (let i = 0; i < n; i++) {
      designRow(trend, samples.x[i], samples.y[i], frame, row, 0, samples.covariates, i * qc);
      let t = 0;
      for (let a = 0; a < p; a++) t += row[a] * beta[a];
      trendAt[i] = t;
    }
  } else {
    trendAt.fill(knownMean(trend) ?? 0);
  }
  const simple: CovarianceModel = { ...model, transform: 'none', trend: { known: 0 } };
  const { u, v } = toIsotropicCoordinates(model.anisotropy, samples.x, samples.y, frame.cx, frame.cy);
  const index = new NeighbourIndex(u, v);
  const q = Math.min(neighbours, n - 1);
  const ids = new Uint32Array(q + 1);
  const mean = new Float64Array(idx.length);
  const sd = new Float64Array(idx.length);
  idx.forEach((i, k) => {
    const found = index.nearest(u[i], v[i], q + 1, ids);
    const chosen = Array.from(found).filter((j) => j !== i).slice(0, q);
    const sub: Samples = {
      x: Float64Array.from(chosen, (j) => samples.x[j]), y: Float64Array.from(chosen, (j) => samples.y[j]),
      value: Float64Array.from(chosen, (j) => z[j] - trendAt[j]),
    };
    const r = createPredictor(sub, simple, { checkScale: false }).predict([samples.x[i]], [samples.y[i]]);
    mean[k] = r.mean[0] + trendAt[i];
    sd[k] = r.sdObserved[0];
  });
  return { mean, sd };
}
