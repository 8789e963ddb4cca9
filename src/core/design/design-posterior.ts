/**
 * The kriging posterior a design reads (./design-greedy.ts): variances of points, covariances between
 * point sets and the kriging mean, exact (from all samples) or from local neighbourhoods.
 *
 * Exact: the features a_q = L⁻¹k(S, q) and t_q of ./design-greedy.ts, k₀(q, r) = c(q, r) − a_qᵀa_r + t_qᵀt_r.
 * Local: each point r gets the kriging weights λ_r of its m nearest samples N_r (distance as the model
 * measures it) and ν_r = G_r⁻¹(x_r − X_rᵀK_r⁻¹k_r), the trend part (K_rλ_r = k_r + X_rν_r, as in
 * ../prediction/kriging.ts weightsWithSystem, ν = −μ). The posterior covariance from all samples
 * is c(q, r) − k_qᵀK⁻¹k_r + r_qᵀG⁻¹r_r = c(q, r) − λ_rᵀk_q + x_qᵀν_r (substitute λ_r); the local
 * posterior takes it with r's own neighbourhood: k₀(q, r) ≈ c(q, r) − λ_rᵀk(N_r, q) + x_qᵀν_r, whose
 * diagonal is r's local kriging variance. A column k₀(·, r) is then m covariances per point instead of
 * n multiply-adds after n² per point of features, and no n × n matrix is made.
 * Units: metres; variances on the kriging scale (ln for a log model).
 * Cost: exact n³/6 + (points)·n²/2 + pairs·n; local points·(m³/6 + K·m²/2) + pairs·K·m (K ≈ 20, a covariance).
 */
import type { CovarianceModel } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import { crossCovarianceMatrix, surfaceVariance, toIsotropicCoordinates } from '../covariance/covariance.ts';
import { designRow, trendColumnCount, type CoordinateFrame } from '../covariance/trend.ts';
import { buildKrigingSystem, weightsWithSystem } from '../prediction/kriging.ts';
import { NeighbourIndex } from '../geometry/neighbours.ts';
import type { Warning } from '../shared/errors.ts';

/** Posterior features of a set of points (what a column of the posterior covariance is built from). */
export interface LocalFeatures {
  m: number;
  x: Float64Array;
  y: Float64Array;
  /** k₀(q, q) per point: the local kriging variance. */
  variance: Float64Array;
  /** Kriging-scale mean per point (local kriging). */
  mean: Float64Array;
  /** m × k sample ids and weights of each point's neighbourhood. */
  ids: Uint32Array;
  lambda: Float64Array;
  /** m × p trend part ν and each neighbourhood's frame (centre and scale of its coordinates). */
  nu: Float64Array;
  frames: CoordinateFrame[];
}

/** Local-neighbourhood posterior of a design: build once, then features and cross-covariances. */
export interface LocalPosterior {
  /** Samples per neighbourhood: min(m, n). */
  neighbours: number;
  c0: number;
  features(px: ArrayLike<number>, py: ArrayLike<number>): LocalFeatures;
  /** k₀(A_i, B_j) (mA × mB, row-major), each column from B_j's neighbourhood. */
  cross(A: LocalFeatures, B: LocalFeatures): Float64Array;
  warnings: Warning[];
}

/** A local posterior from the m nearest samples of each point (no covariates: those need the global trend). */
export function createLocalPosterior(samples: Samples, model: CovarianceModel, neighbours: number): LocalPosterior {
  const n = samples.x.length;
  const k = Math.min(neighbours, n);
  const p = trendColumnCount(model.trend);
  let cx = 0, cy = 0;
  for (let i = 0; i < n; i++) { cx += samples.x[i]; cy += samples.y[i]; }
  cx /= n; cy /= n;
  const iso = toIsotropicCoordinates(model.anisotropy, samples.x, samples.y, cx, cy);
  const index = new NeighbourIndex(iso.u, iso.v);
  const warnings: Warning[] = [];
  const seen = new Set<string>();
  const sub = { x: new Float64Array(k), y: new Float64Array(k), value: new Float64Array(k) };

  const features = (px: ArrayLike<number>, py: ArrayLike<number>): LocalFeatures => {
    const m = px.length;
    const f: LocalFeatures = {
      m, x: Float64Array.from(px), y: Float64Array.from(py), variance: new Float64Array(m), mean: new Float64Array(m),
      ids: new Uint32Array(m * k), lambda: new Float64Array(m * k), nu: new Float64Array(m * p), frames: new Array(m),
    };
    const one = toIsotropicCoordinates(model.anisotropy, f.x, f.y, cx, cy);
    for (let j = 0; j < m; j++) {
      const found = index.nearest(one.u[j], one.v[j], k);
      for (let a = 0; a < k; a++) {
        const id = found[a];
        f.ids[j * k + a] = id;
        sub.x[a] = samples.x[id];
        sub.y[a] = samples.y[id];
        sub.value[a] = samples.value[id];
      }
      const sys = buildKrigingSystem(sub, model, { checkScale: false });
      for (const w of sys.warnings) if (!seen.has(w.code)) { seen.add(w.code); warnings.push(w); }
      const w = weightsWithSystem(sys, f.x[j], f.y[j]);
      f.lambda.set(w.weights, j * k);
      for (let a = 0; a < p; a++) f.nu[j * p + a] = -w.lagrange[a];
      f.variance[j] = w.variance;
      f.mean[j] = w.mean;
      f.frames[j] = sys.frame;
    }
    return f;
  };

  const cross = (A: LocalFeatures, B: LocalFeatures): Float64Array => {
    const out = crossCovarianceMatrix(model, A.x, A.y, B.x, B.y);
    const row = new Float64Array(Math.max(1, p));
    const nx = new Float64Array(k), ny = new Float64Array(k);
    for (let j = 0; j < B.m; j++) {
      // k(N_j, A) in one fill (k × mA), then λ_jᵀk(N_j, A_i) for every i.
      for (let a = 0; a < k; a++) {
        const id = B.ids[j * k + a];
        nx[a] = samples.x[id];
        ny[a] = samples.y[id];
      }
      const C = crossCovarianceMatrix(model, nx, ny, A.x, A.y);
      const frame = B.frames[j];
      const centred: CoordinateFrame = { ...frame, cx: 0, cy: 0 };
      for (let i = 0; i < A.m; i++) {
        let s = 0;
        for (let a = 0; a < k; a++) s += B.lambda[j * k + a] * C[a * A.m + i];
        let t = 0;
        if (p > 0) {
          designRow(model.trend, A.x[i] - frame.cx, A.y[i] - frame.cy, centred, row, 0);
          for (let a = 0; a < p; a++) t += row[a] * B.nu[j * p + a];
        }
        out[i * B.m + j] += t - s;
      }
    }
    return out;
  };

  return { neighbours: k, c0: surfaceVariance(model), features, cross, warnings };
}
