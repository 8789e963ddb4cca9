/**
 * Greedy choice of new sample sites on the kriging posterior: the sites that most reduce the average
 * variance of the noise-free surface over the area, or the expected misclassified area against an
 * action level.
 *
 * Posterior covariance (noise-free surface, after the samples S) with the factor K = L·Lᵀ of
 * ./kriging.ts, a_q = L⁻¹k(S, q), W = L⁻¹X, G = WᵀW = Lg·Lgᵀ and t_q = Lg⁻¹(x_q − Wᵀa_q):
 *   k₀(q, r) = c(q, r) − a_qᵀa_r + t_qᵀt_r
 * (Rasmussen & Williams 2006, eq. 2.24 and §2.7 for the trend with a flat prior; the t term is the
 * uncertainty of the estimated trend, absent for simple kriging). Observing a site s with noise τ²
 * (the nugget) changes the covariance to
 *   k'(q, r) = k(q, r) − k(q, s)·k(s, r)/(k(s, s) + τ²),
 * whatever value is then measured (Gaussian conditioning; with the flat trend prior this is the limit
 * of a proper prior, so ordinary and universal kriging follow the same update). After picks s₁…s_j,
 *   k_j(q, r) = k₀(q, r) − Σ_l U_l(q)·U_l(r),  U_l(q) = k_{l−1}(q, s_l)/√(k_{l−1}(s_l, s_l) + τ²),
 * a pivoted partial Cholesky factor of the posterior covariance: the update is exact and costs
 * O(m_E·m_C) per pick once k₀(E, C) between the evaluation points E and the candidates C is built.
 * Variance criterion: benefit(c) = (1/m_E)·Σ_e k(e, c)²/(k(c, c) + τ²), the drop of the average
 * variance over E. Decision criterion: benefit(c) = Σ_e area_e·[E_j(e) − E_{j|c}(e)] with E the
 * expected misclassification of ./design-misclassification.ts (Bect et al. 2012, Stat. Comput. 22:773),
 * using the variance before any pick (s₀) and after the picks (the future mean is random).
 * Large candidate sets are screened on a coarser subset and the best coarse site refined exactly among
 * the full-resolution candidates within one coarse spacing.
 * Units: metres; variances on the kriging scale (ln for a log model). Cost: n²·(m_E + m_C) flops for
 * the features, m_E·m_C·n for k₀(E, C), then per pick m_E·m_C (variance) or m_E·m_C bivariate
 * normal evaluations over the undecided points (decision), plus n² + n·(m_E + m_C) per site examined.
 */
import type { KrigingSystem } from '../prediction/kriging.ts';
import { solveLowerBlock } from '../linalg/linalg.ts';
import { crossCovarianceMatrix } from '../covariance/covariance.ts';
import { solveLowerInPlace } from '../linalg/linalg.ts';
import { covariateColumnCount, designRow, type CoordinateFrame } from '../covariance/trend.ts';
import { GapwiseError } from '../shared/errors.ts';
import { expectedMisclassification, misclassificationProbability } from './design-misclassification.ts';
import type { LocalFeatures, LocalPosterior } from './design-posterior.ts';

/** Points in working-CRS metres. */
export interface Points {
  x: Float64Array;
  y: Float64Array;
  /** Covariate trend only: the points' encoded covariates (points × q, row-major). */
  covariates?: Float64Array;
}

/** The covariates of point i of a set, or undefined without covariates. */
function covariatesOf(points: Points, i: number, q: number): Float64Array | undefined {
  return points.covariates ? points.covariates.subarray(i * q, i * q + q) : undefined;
}

/** Posterior features of points: a = L⁻¹k(S, q) (one row of n per point) and t (one row of p). */
export interface Features {
  m: number;
  /** Centred coordinates. */
  u: Float64Array;
  v: Float64Array;
  /** m×n row-major. */
  a: Float64Array;
  /** m×p row-major. */
  t: Float64Array;
  /** k₀(q, q) per point. */
  variance: Float64Array;
}

/** Hooks for long work (functions, so not part of the JSON options). */
export interface GreedyHooks {
  onProgress?: (done: number, total: number) => void;
  isCancelled?: () => boolean;
}

/** What the greedy search is told. */
export interface GreedyProblem {
  /** The factorised system of the exact posterior (not needed with `local`). */
  system?: KrigingSystem;
  /** When given, the posterior comes from local neighbourhoods instead (./design-posterior.ts). */
  local?: LocalPosterior;
  /** Evaluation points (the area) and the area each stands for (m²). */
  evaluation: Points;
  evaluationArea: number;
  /** All candidate sites (full resolution). */
  candidates: Points;
  /** Indices into `candidates` screened in the first pass (all when absent). */
  screen?: Uint32Array;
  /** Radius (m) around the best screened site within which full-resolution candidates are refined. */
  refineRadius?: number;
  /** Neighbours of a candidate within a radius (ids into `candidates`), for refinement and spacing. */
  within: (x: number, y: number, r: number) => number[];
  /** Candidates allowed at the start (spacing to existing samples, constraints); 1 = allowed. */
  allowed: Uint8Array;
  count: number;
  /** Noise variance of a new measurement (kriging scale). */
  noise: number;
  minSpacing: number;
  /** Action level on the kriging scale: the decision criterion. Absent: the variance criterion. */
  threshold?: number;
  /** Evaluate the misclassification figures even for the variance criterion. */
  reportThreshold?: number;
}

export interface GreedyPick {
  index: number;
  x: number;
  y: number;
  benefit: number;
}

export interface GreedyResult {
  picks: GreedyPick[];
  /** Posterior mean (kriging scale) at the evaluation points. */
  mean: Float64Array;
  /** Variance at the evaluation points before and after the picks (kriging scale). */
  varianceBefore: Float64Array;
  varianceAfter: Float64Array;
  /** Expected misclassified area (m²) before and after, when a threshold is known. */
  misclassifiedBefore?: number;
  misclassifiedAfter?: number;
  /** Sites examined exactly beyond the screened ones. */
  refined: number;
  /** Evaluation points dropped from the decision sums because their misclassification chance is below 1e-12. */
  decidedSkipped: number;
}

/** Below this misclassification chance an evaluation point cannot change a decision benefit by more than it. */
const DECIDED = 1e-12;

/**
 * Posterior features (a, t, k₀(q, q)) of points through the factorised system; a covariate trend reads
 * the points' encoded covariates (points × q, row-major).
 */
function posteriorFeatures(sys: KrigingSystem, px: ArrayLike<number>, py: ArrayLike<number>, covariates?: ArrayLike<number>): Features {
  const { n, p, model, frame, u, v, W, Lg, c0 } = sys;
  const nq = covariateColumnCount(model.trend);
  const m = px.length;
  const qu = new Float64Array(m);
  const qv = new Float64Array(m);
  for (let j = 0; j < m; j++) {
    qu[j] = px[j] - frame.cx;
    qv[j] = py[j] - frame.cy;
  }
  const a = new Float64Array(m * n);
  const t = new Float64Array(m * p);
  const variance = new Float64Array(m);
  const centred: CoordinateFrame = { ...frame, cx: 0, cy: 0 };
  const BLOCK = 512;
  const x0 = new Float64Array(p);
  const tj = new Float64Array(p);
  for (let j0 = 0; j0 < m; j0 += BLOCK) {
    const mb = Math.min(BLOCK, m - j0);
    // n×mb: sample rows, point columns; then L⁻¹ in place.
    const B = crossCovarianceMatrix(model, u, v, qu.subarray(j0, j0 + mb), qv.subarray(j0, j0 + mb));
    solveLowerBlock(sys.factor.L, n, B, mb);
    for (let i = 0; i < n; i++) {
      const bi = i * mb;
      for (let j = 0; j < mb; j++) a[(j0 + j) * n + i] = B[bi + j];
    }
    for (let j = 0; j < mb; j++) {
      const row = (j0 + j) * n;
      let q = 0;
      for (let i = 0; i < n; i++) q += a[row + i] * a[row + i];
      let s = c0 - q;
      if (p > 0) {
        designRow(model.trend, qu[j0 + j], qv[j0 + j], centred, x0, 0, covariates, (j0 + j) * nq);
        for (let c = 0; c < p; c++) {
          let acc = x0[c];
          for (let i = 0; i < n; i++) acc -= W[i * p + c] * a[row + i];
          tj[c] = acc;
        }
        solveLowerInPlace(Lg, p, tj);
        for (let c = 0; c < p; c++) {
          t[(j0 + j) * p + c] = tj[c];
          s += tj[c] * tj[c];
        }
      }
      variance[j0 + j] = Math.max(0, s);
    }
  }
  return { m, u: qu, v: qv, a, t, variance };
}

/**
 * out[i·mb + j] = c(Pᵢ, Qⱼ) − aᵢ·aⱼ + tᵢ·tⱼ for the features of two point sets: the posterior
 * cross-covariance (mA×mB, row-major). Dot products in 2×4 register blocks over contiguous rows.
 */
function posteriorCrossCovariance(sys: KrigingSystem, A: Features, B: Features): Float64Array {
  const { n, p, model } = sys;
  const mA = A.m;
  const mB = B.m;
  const out = crossCovarianceMatrix(model, A.u, A.v, B.u, B.v);
  const a = A.a;
  const b = B.a;
  let i = 0;
  for (; i + 1 < mA; i += 2) {
    const r0 = i * n;
    const r1 = r0 + n;
    let j = 0;
    for (; j + 3 < mB; j += 4) {
      const q0 = j * n, q1 = q0 + n, q2 = q1 + n, q3 = q2 + n;
      let s00 = 0, s01 = 0, s02 = 0, s03 = 0, s10 = 0, s11 = 0, s12 = 0, s13 = 0;
      for (let k = 0; k < n; k++) {
        const x0 = a[r0 + k];
        const x1 = a[r1 + k];
        const y0 = b[q0 + k], y1 = b[q1 + k], y2 = b[q2 + k], y3 = b[q3 + k];
        s00 += x0 * y0; s01 += x0 * y1; s02 += x0 * y2; s03 += x0 * y3;
        s10 += x1 * y0; s11 += x1 * y1; s12 += x1 * y2; s13 += x1 * y3;
      }
      const o0 = i * mB + j;
      const o1 = o0 + mB;
      out[o0] -= s00; out[o0 + 1] -= s01; out[o0 + 2] -= s02; out[o0 + 3] -= s03;
      out[o1] -= s10; out[o1 + 1] -= s11; out[o1 + 2] -= s12; out[o1 + 3] -= s13;
    }
    for (; j < mB; j++) {
      const q0 = j * n;
      let s0 = 0, s1 = 0;
      for (let k = 0; k < n; k++) {
        s0 += a[r0 + k] * b[q0 + k];
        s1 += a[r1 + k] * b[q0 + k];
      }
      out[i * mB + j] -= s0;
      out[(i + 1) * mB + j] -= s1;
    }
  }
  for (; i < mA; i++) {
    const r0 = i * n;
    for (let j = 0; j < mB; j++) {
      const q0 = j * n;
      let s = 0;
      for (let k = 0; k < n; k++) s += a[r0 + k] * b[q0 + k];
      out[i * mB + j] -= s;
    }
  }
  if (p > 0) {
    for (let i2 = 0; i2 < mA; i2++) {
      for (let j = 0; j < mB; j++) {
        let s = 0;
        for (let c = 0; c < p; c++) s += A.t[i2 * p + c] * B.t[j * p + c];
        out[i2 * mB + j] += s;
      }
    }
  }
  return out;
}

function checkCancelled(hooks: GreedyHooks, what: string): void {
  if (hooks.isCancelled?.()) throw new GapwiseError('cancelled', `The design was stopped ${what}.`);
}

/**
 * The posterior the greedy search reads: features of point sets, their cross-covariances, one
 * covariance between two single points, and the mean at the evaluation points.
 */
interface PosteriorView<F extends { m: number; variance: Float64Array }> {
  c0: number;
  features(px: ArrayLike<number>, py: ArrayLike<number>, covariates?: ArrayLike<number>): F;
  cross(A: F, B: F): Float64Array;
  /** k₀(q, s) of one-point feature sets. */
  pairCovariance(f: F, g: F): number;
  /** Kriging-scale mean at the evaluation points. */
  meanAt(fE: F, evaluation: Points): Float64Array;
}

/** The exact posterior of the factorised system (features a, t of every point). */
function exactView(sys: KrigingSystem): PosteriorView<Features> {
  const { n, p } = sys;
  return {
    c0: sys.c0,
    features: (px, py, covariates) => posteriorFeatures(sys, px, py, covariates),
    cross: (A, B) => posteriorCrossCovariance(sys, A, B),
    pairCovariance(f, g) {
      let k = crossCovarianceMatrix(sys.model, [f.u[0]], [f.v[0]], [g.u[0]], [g.v[0]])[0];
      for (let i = 0; i < n; i++) k -= f.a[i] * g.a[i];
      for (let c = 0; c < p; c++) k += f.t[c] * g.t[c];
      return k;
    },
    meanAt(fE, evaluation) {
      // Mean at the evaluation points (kriging scale): m0 + x₀ᵀβ̂ + k₀ᵀα, for the decision sums.
      const q = covariateColumnCount(sys.model.trend);
      const mE = fE.m;
      const mean = new Float64Array(mE);
      const centred: CoordinateFrame = { ...sys.frame, cx: 0, cy: 0 };
      const x0 = new Float64Array(p);
      const kE = crossCovarianceMatrix(sys.model, fE.u, fE.v, sys.u, sys.v);
      for (let e = 0; e < mE; e++) {
        let s = sys.m0;
        if (p > 0) {
          designRow(sys.model.trend, fE.u[e], fE.v[e], centred, x0, 0, evaluation.covariates, e * q);
          for (let c = 0; c < p; c++) s += x0[c] * sys.beta[c];
        }
        for (let i = 0; i < n; i++) s += sys.alpha[i] * kE[e * n + i];
        mean[e] = s;
      }
      return mean;
    },
  };
}

/** The local-neighbourhood posterior (./design-posterior.ts). */
function localView(local: LocalPosterior): PosteriorView<LocalFeatures> {
  return {
    c0: local.c0,
    features: (px, py) => local.features(px, py),
    cross: (A, B) => local.cross(A, B),
    pairCovariance: (f, g) => local.cross(f, g)[0],
    meanAt: (fE) => fE.mean,
  };
}

/** Everything the greedy search updates as it picks (the pivoted partial Cholesky factor of the posterior). */
interface GreedyState<F> {
  mE: number;
  mC: number;
  screen: Uint32Array;
  /** k_j(E, C), updated in place (mE × mC). */
  P: Float64Array;
  fE: F;
  fC: F;
  mean: Float64Array;
  /** k_j(c, c), k_j(e, e) and the sd before any pick. */
  dC: Float64Array;
  vE: Float64Array;
  sd0: Float64Array;
  /** Decision bookkeeping: undecided evaluation points and their current expected misclassification. */
  active: number[];
  eNow: Float64Array;
  allowed: Uint8Array;
  /** Index into the screened list of each candidate, or −1. */
  screened: Int32Array;
  picks: GreedyPick[];
  UE: Float64Array[];
  UC: Float64Array[];
  /** Features of each pick, U_l(s_j) for l < j, and δ_j. */
  pickF: F[];
  pickU: Float64Array[];
  pickDelta: number[];
  tiny: number;
  refined: number;
}

/** The current column k_j(E, q), k_j(q, q) and U_l(q) of a candidate, from scratch. */
interface Column<F> {
  f: F;
  colE: Float64Array;
  d: number;
  U: Float64Array;
}

/** Benefit of a site whose current column over E is col and whose current variance is d. */
function benefitOf<F>(s: GreedyState<F>, problem: GreedyProblem, col: (e: number) => number, d: number): number {
  const denom = d + problem.noise;
  if (!(denom > s.tiny) || !(d > 0)) return 0;
  const threshold = problem.threshold;
  if (threshold === undefined) {
    let sum = 0;
    for (let e = 0; e < s.mE; e++) {
      const k = col(e);
      sum += k * k;
    }
    return sum / denom / s.mE;
  }
  let sum = 0;
  for (const e of s.active) {
    const k = col(e);
    if (k === 0) continue;
    const after = Math.max(0, s.vE[e] - (k * k) / denom);
    sum += s.eNow[e] - expectedMisclassification(s.mean[e], s.sd0[e], Math.sqrt(after), threshold);
  }
  return sum * problem.evaluationArea;
}

/** The current column of candidate `id` (features from scratch, then the picks' updates). */
function columnOf<F extends { m: number; variance: Float64Array }>(view: PosteriorView<F>, s: GreedyState<F>, candidates: Points, id: number, q: number): Column<F> {
  const f = view.features([candidates.x[id]], [candidates.y[id]], covariatesOf(candidates, id, q));
  const colE = view.cross(s.fE, f); // mE×1
  let d = f.variance[0];
  const j = s.picks.length;
  const U = new Float64Array(j);
  for (let l = 0; l < j; l++) {
    // k₀(q, s_l) from the stored features of pick l.
    let k = view.pairCovariance(f, s.pickF[l]);
    for (let i = 0; i < l; i++) k -= U[i] * s.pickU[l][i];
    U[l] = k / s.pickDelta[l];
  }
  for (let l = 0; l < j; l++) {
    const ue = s.UE[l];
    const ul = U[l];
    for (let e = 0; e < s.mE; e++) colE[e] -= ul * ue[e];
    d -= ul * ul;
  }
  return { f, colE, d: Math.max(0, d), U };
}

/** Step 1 of a pick: the best allowed screened candidate and its benefit (−1 when none is allowed). */
function bestScreened<F>(s: GreedyState<F>, problem: GreedyProblem, colSq: Float64Array): { best: number; benefit: number } {
  const { mE, mC, P, dC, screen, allowed, tiny } = s;
  const noise = problem.noise;
  let best = -1;
  let bestBenefit = -Infinity;
  if (problem.threshold === undefined) {
    colSq.fill(0);
    for (let e = 0; e < mE; e++) {
      const row = e * mC;
      for (let c = 0; c < mC; c++) {
        const k = P[row + c];
        colSq[c] += k * k;
      }
    }
    for (let c = 0; c < mC; c++) {
      if (!allowed[screen[c]]) continue;
      const denom = dC[c] + noise;
      const b = denom > tiny && dC[c] > 0 ? colSq[c] / denom / mE : 0;
      if (b > bestBenefit) {
        bestBenefit = b;
        best = c;
      }
    }
  } else {
    for (let c = 0; c < mC; c++) {
      if (!allowed[screen[c]]) continue;
      const b = benefitOf(s, problem, (e) => P[e * mC + c], dC[c]);
      if (b > bestBenefit) {
        bestBenefit = b;
        best = c;
      }
    }
  }
  return { best, benefit: bestBenefit };
}

/** Step 2: refines a screened pick among the full-resolution candidates within the refine radius. */
function refinePick<F extends { m: number; variance: Float64Array }>(
  view: PosteriorView<F>, s: GreedyState<F>, problem: GreedyProblem, q: number, chosen: number, bestBenefit: number,
): { chosen: number; benefit: number; column: Column<F> | null } {
  const { candidates } = problem;
  let column: Column<F> | null = null;
  if (problem.screen && problem.refineRadius && problem.refineRadius > 0) {
    for (const id of problem.within(candidates.x[chosen], candidates.y[chosen], problem.refineRadius)) {
      if (!s.allowed[id] || s.screened[id] >= 0) continue;
      const col = columnOf(view, s, candidates, id, q);
      s.refined++;
      const b = benefitOf(s, problem, (e) => col.colE[e], col.d);
      if (b > bestBenefit) {
        bestBenefit = b;
        chosen = id;
        column = col;
      }
    }
  }
  return { chosen, benefit: bestBenefit, column };
}

/** Step 3: the rank-one update of k_j(E, C), k_j(e, e) and k_j(c, c) with the chosen site's column. */
function rankOneUpdate<F>(view: PosteriorView<F & { m: number; variance: Float64Array }>, s: GreedyState<F & { m: number; variance: Float64Array }>, column: Column<F & { m: number; variance: Float64Array }>, noise: number): void {
  const { mE, mC, P, vE, dC } = s;
  const delta = Math.sqrt(column.d + noise);
  const ue = new Float64Array(mE);
  for (let e = 0; e < mE; e++) ue[e] = column.colE[e] / delta;
  // k_j(C, s) = k₀(C, s) − Σ_l U_l(C)·U_l(s)
  const colC = view.cross(s.fC, column.f);
  for (let l = 0; l < s.picks.length; l++) {
    const ul = column.U[l];
    const uc = s.UC[l];
    for (let c = 0; c < mC; c++) colC[c] -= ul * uc[c];
  }
  const uc = new Float64Array(mC);
  for (let c = 0; c < mC; c++) uc[c] = colC[c] / delta;
  for (let e = 0; e < mE; e++) {
    const row = e * mC;
    const a = ue[e];
    if (a === 0) continue;
    for (let c = 0; c < mC; c++) P[row + c] -= a * uc[c];
    vE[e] = Math.max(0, vE[e] - a * a);
  }
  for (let c = 0; c < mC; c++) dC[c] = Math.max(0, dC[c] - uc[c] * uc[c]);
  s.UE.push(ue);
  s.UC.push(uc);
  s.pickF.push(column.f);
  s.pickU.push(column.U);
  s.pickDelta.push(delta);
}

/** The evaluation points' features and mean, the screened candidates' features and k₀(E, C), and the decision bookkeeping. */
function startSearch<F extends { m: number; variance: Float64Array }>(
  view: PosteriorView<F>, problem: GreedyProblem, q: number, hooks: GreedyHooks, step: () => void,
): { state: GreedyState<F>; misclassifiedBefore?: number; decidedSkipped: number } {
  const { evaluation, candidates } = problem;
  const mE = evaluation.x.length;
  const screen = problem.screen ?? Uint32Array.from({ length: candidates.x.length }, (_, i) => i);
  const mC = screen.length;
  const reportThreshold = problem.threshold ?? problem.reportThreshold;
  const fE = view.features(evaluation.x, evaluation.y, evaluation.covariates);
  const mean = view.meanAt(fE, evaluation);
  step();
  checkCancelled(hooks, 'while preparing the evaluation points');
  const sx = new Float64Array(mC);
  const sy = new Float64Array(mC);
  const sc = candidates.covariates ? new Float64Array(mC * q) : undefined;
  for (let c = 0; c < mC; c++) {
    sx[c] = candidates.x[screen[c]];
    sy[c] = candidates.y[screen[c]];
    if (sc) sc.set(covariatesOf(candidates, screen[c], q)!, c * q);
  }
  const fC = view.features(sx, sy, sc);
  step();
  checkCancelled(hooks, 'while preparing the candidates');
  const P = view.cross(fE, fC); // k_j(E, C), updated in place
  step();
  const varianceBefore = Float64Array.from(fE.variance);
  const active: number[] = [];
  const eNow = new Float64Array(mE);
  const sd0 = Float64Array.from(varianceBefore, Math.sqrt);
  let decidedSkipped = 0;
  let misclassifiedBefore: number | undefined;
  if (reportThreshold !== undefined) {
    misclassifiedBefore = 0;
    for (let e = 0; e < mE; e++) {
      const p0 = misclassificationProbability(mean[e], sd0[e], reportThreshold);
      eNow[e] = p0;
      misclassifiedBefore += p0 * problem.evaluationArea;
      if (p0 >= DECIDED) active.push(e);
      else decidedSkipped++;
    }
  }
  const screened = new Int32Array(candidates.x.length).fill(-1);
  for (let c = 0; c < mC; c++) screened[screen[c]] = c;
  const state: GreedyState<F> = {
    mE, mC, screen, P, fE, fC, mean, dC: Float64Array.from(fC.variance), vE: Float64Array.from(fE.variance), sd0,
    active, eNow, allowed: Uint8Array.from(problem.allowed), screened,
    picks: [], UE: [], UC: [], pickF: [], pickU: [], pickDelta: [],
    tiny: 1e-12 * Math.max(view.c0, 1e-300), refined: 0,
  };
  return { state, ...(misclassifiedBefore !== undefined ? { misclassifiedBefore } : {}), decidedSkipped };
}

/**
 * Picks sites one at a time by the variance or decision criterion with exact rank-one updates of the
 * posterior: exact from the factorised system, or from local neighbourhoods when `problem.local` is given.
 */
export function greedyDesign(problem: GreedyProblem, hooks: GreedyHooks = {}): GreedyResult {
  if (problem.local) return greedySearch(localView(problem.local), problem, hooks, 0);
  if (!problem.system) throw new GapwiseError('bad-option', 'Expected the factorised kriging system or a local posterior for the design.');
  return greedySearch(exactView(problem.system), problem, hooks, covariateColumnCount(problem.system.model.trend));
}

/** The search itself over either posterior (q: covariate columns of the points). */
function greedySearch<F extends { m: number; variance: Float64Array }>(view: PosteriorView<F>, problem: GreedyProblem, hooks: GreedyHooks, q: number): GreedyResult {
  const { candidates, noise, count, minSpacing, threshold } = problem;
  const reportThreshold = threshold ?? problem.reportThreshold;
  const stepsTotal = 3 + count;
  let stepsDone = 0;
  const step = (): void => {
    stepsDone++;
    hooks.onProgress?.(stepsDone, stepsTotal);
  };
  const { state: s, misclassifiedBefore, decidedSkipped } = startSearch(view, problem, q, hooks, step);
  const varianceBefore = Float64Array.from(s.fE.variance);
  const colSq = new Float64Array(s.mC);
  for (let j = 0; j < count; j++) {
    checkCancelled(hooks, `after ${j} of ${count} sites`);
    const screened = bestScreened(s, problem, colSq);
    if (screened.best < 0) break;
    const refined = refinePick(view, s, problem, q, s.screen[screened.best], screened.benefit);
    if (!(refined.benefit > 0)) break;
    const chosen = refined.chosen;
    rankOneUpdate(view, s, refined.column ?? columnOf(view, s, candidates, chosen, q), noise);
    if (threshold !== undefined) {
      for (const e of s.active) s.eNow[e] = expectedMisclassification(s.mean[e], s.sd0[e], Math.sqrt(s.vE[e]), threshold);
    }
    const x = candidates.x[chosen];
    const y = candidates.y[chosen];
    s.picks.push({ index: chosen, x, y, benefit: refined.benefit });
    // 4. Constraints: no site twice, and the minimum spacing.
    s.allowed[chosen] = 0;
    if (minSpacing > 0) for (const id of problem.within(x, y, minSpacing)) if (dist(candidates, id, x, y) < minSpacing) s.allowed[id] = 0;
    step();
  }

  let misclassifiedAfter: number | undefined;
  if (reportThreshold !== undefined) {
    misclassifiedAfter = 0;
    for (let e = 0; e < s.mE; e++) {
      misclassifiedAfter += expectedMisclassification(s.mean[e], s.sd0[e], Math.sqrt(s.vE[e]), reportThreshold) * problem.evaluationArea;
    }
  }
  return {
    picks: s.picks, mean: s.mean, varianceBefore, varianceAfter: s.vE, misclassifiedBefore, misclassifiedAfter, refined: s.refined, decidedSkipped,
  };
}

function dist(points: Points, i: number, x: number, y: number): number {
  return Math.hypot(points.x[i] - x, points.y[i] - y);
}
