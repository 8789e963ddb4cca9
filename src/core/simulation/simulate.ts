/**
 * Unconditional simulation of a Gaussian field at points, for tests and invented demo data.
 *
 * z = m + L·ε with K = LLᵀ the sample covariance matrix of the model (covariance.ts: the surface
 * covariance plus the nugget on the diagonal, so each value is a noisy measurement) and ε ~ N(0, I)
 * from the seeded generator (random.ts). Coordinates are centred before building K.
 * Units: metres and data units. Cost: n²/2 covariances, n³/3 flops, 8n² bytes; fine to a few
 * thousand points.
 */
import type { CovarianceModel } from '../covariance/model.ts';
import { isKnownTrend } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import type { Warning } from '../shared/errors.ts';
import { GapwiseError } from '../shared/errors.ts';
import { centroid } from '../shared/samples.ts';
import { sampleCovarianceMatrix } from '../covariance/covariance.ts';
import { cholesky } from '../linalg/linalg.ts';
import { createRandom } from '../shared/random.ts';

export interface SimulateOptions {
  seed: number;
  /**
   * Mean of the field. Default: the model's known mean, else 0. A linear trend adds
   * `drift.x`·(x − x̄) + `drift.y`·(y − ȳ) (per metre, centred coordinates).
   */
  mean?: number;
  drift?: { x: number; y: number };
}

export interface SimulatedField {
  values: Float64Array;
  /** Jitter added to factorise K (e.g. with duplicate points and no nugget). */
  warnings: Warning[];
}

/**
 * Draws one realisation of the model's field (measurement noise included) at the points (x, y).
 * Deterministic for a given seed.
 */
export function simulateField(model: CovarianceModel, x: ArrayLike<number>, y: ArrayLike<number>, options: SimulateOptions): SimulatedField {
  const n = x.length;
  if (y.length !== n) throw new GapwiseError('bad-option', `Expected as many y as x coordinates, got ${y.length} and ${n}.`);
  const { cx, cy } = centroid(x, y);
  const xs = new Float64Array(n);
  const ys = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    xs[i] = x[i] - cx;
    ys[i] = y[i] - cy;
  }
  const K = sampleCovarianceMatrix(model, xs, ys);
  const f = cholesky(K, n, { jitter: true });
  const random = createRandom(options.seed);
  const eps = new Float64Array(n);
  for (let i = 0; i < n; i++) eps[i] = random.normal();
  const base = options.mean ?? (isKnownTrend(model.trend) ? model.trend.known : 0);
  const values = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const row = i * n;
    let s = 0;
    for (let k = 0; k <= i; k++) s += f.L[row + k] * eps[k];
    values[i] = base + s + (options.drift ? options.drift.x * xs[i] + options.drift.y * ys[i] : 0);
  }
  return { values, warnings: f.warnings };
}

export interface SimulateSamplesOptions extends SimulateOptions {
  count: number;
  /** Rectangle the points are drawn uniformly in, metres. */
  extent: { xmin: number; ymin: number; xmax: number; ymax: number };
}

/**
 * Invented samples: `count` points uniform in `extent` and a simulated field at them, from one seed
 * (locations and values from separate streams, so changing the model keeps the locations).
 */
export function simulateSamples(model: CovarianceModel, options: SimulateSamplesOptions): Samples & { warnings: Warning[] } {
  const { count, extent } = options;
  if (!(count >= 1)) throw new GapwiseError('bad-option', `Expected a positive sample count, got ${count}.`);
  const random = createRandom(options.seed ^ 0x5bd1e995);
  const x = new Float64Array(count);
  const y = new Float64Array(count);
  for (let i = 0; i < count; i++) {
    x[i] = extent.xmin + random.uniform() * (extent.xmax - extent.xmin);
    y[i] = extent.ymin + random.uniform() * (extent.ymax - extent.ymin);
  }
  const field = simulateField(model, x, y, options);
  return { x, y, value: field.values, warnings: field.warnings };
}
