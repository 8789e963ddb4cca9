/**
 * Pure helpers of the Structure step: candidate names and keys, the best candidate, the parts of a
 * model the user edits (nugget, sill, scale), the model's semivariance curve for the plot, and a
 * plain-language anisotropy hint from the four directional variograms.
 */
import type { CovarianceModel, Family } from '../../core/covariance/model.ts';
import type { EmpiricalVariogram } from '../../core/fitting/variogram.ts';
import { surfaceCovariance, surfaceVariance, practicalRange } from '../../core/covariance/covariance.ts';
import { nuggetOf } from '../../core/covariance/model.ts';

export interface CandidateSpec {
  key: string;
  family: Family;
  nu?: number | 'free';
  label: string;
}

/** The candidate set of the comparison table (core/fitting/fit.ts CANDIDATES; the exponential is Matérn ν = ½, listed once). */
export const CANDIDATE_SPECS: readonly CandidateSpec[] = [
  { key: 'exponential', family: 'exponential', label: 'Exponential (Matérn ν = ½)' },
  { key: 'matern-1.5', family: 'matern', nu: 1.5, label: 'Matérn ν = 3/2' },
  { key: 'matern-2.5', family: 'matern', nu: 2.5, label: 'Matérn ν = 5/2' },
  { key: 'matern-free', family: 'matern', nu: 'free', label: 'Matérn, ν estimated' },
  { key: 'spherical', family: 'spherical', label: 'Spherical' },
  { key: 'gaussian', family: 'gaussian', label: 'Gaussian' },
];

export function specByKey(key: string): CandidateSpec | undefined {
  return CANDIDATE_SPECS.find((c) => c.key === key);
}

/** One row of the comparison table. */
export interface CandidateRow {
  key: string;
  label: string;
  model: CovarianceModel | null;
  logLikelihood: number;
  aic: number;
  /** Leave-one-out figures, on the modelling scale (ln units for a log transform). */
  rmse: number;
  msse: number;
  /** Why the candidate could not be fitted, when it could not. */
  error?: string;
}

/** Key of the row with the lowest finite AIC ('' when none has one). */
export function bestKey(rows: readonly CandidateRow[]): string {
  let best = '';
  let aic = Infinity;
  for (const r of rows) {
    if (r.model && Number.isFinite(r.aic) && r.aic < aic) {
      aic = r.aic;
      best = r.key;
    }
  }
  return best;
}

/** The editable parts of a single-structure model (plus nugget). */
export interface ModelParts {
  nugget: number;
  /** Partial sill of the correlated structure. */
  sill: number;
  scale: number;
  family: Family;
  nu?: number;
}

/** Nugget, partial sill, scale of a model with one correlated structure; null for other shapes. */
export function modelParts(model: CovarianceModel): ModelParts | null {
  const corr = model.structures.filter((s) => s.type !== 'nugget');
  if (corr.length !== 1) return null;
  const c = corr[0] as { type: Family; sill: number; scale: number; nu?: number };
  const parts: ModelParts = { nugget: nuggetOf(model), sill: c.sill, scale: c.scale, family: c.type };
  if (c.type === 'matern') parts.nu = c.nu;
  return parts;
}

/**
 * The model with the given parts replaced. Editing a fitted model makes it a manual one: its
 * likelihood and AIC no longer describe it, so they are dropped (fit.method 'manual', editedFrom).
 */
export function withParts(model: CovarianceModel, change: Partial<Pick<ModelParts, 'nugget' | 'sill' | 'scale'>>): CovarianceModel {
  const p = modelParts(model);
  if (!p) return model;
  const nugget = change.nugget ?? p.nugget;
  const sill = change.sill ?? p.sill;
  const scale = change.scale ?? p.scale;
  if (!(nugget >= 0) || !(sill > 0) || !(scale > 0)) return model;
  const corr: CovarianceModel['structures'][number] = { type: p.family, sill, scale };
  if (p.family === 'matern') (corr as { nu?: number }).nu = p.nu;
  const out: CovarianceModel = {
    structures: nugget > 0 ? [{ type: 'nugget', sill: nugget }, corr] : [corr],
    trend: model.trend,
    transform: model.transform,
    fit: { method: 'manual', converged: true, editedFrom: model.fit?.method === 'manual' ? model.fit.editedFrom : model.fit?.method },
  };
  if (model.anisotropy) out.anisotropy = { ...model.anisotropy };
  out.practicalRange = practicalRange(out);
  return out;
}

/**
 * Semivariance of the model, γ(h) = nugget + C(0) − C(h) for h > 0 and γ(0) = 0, at `count` distances
 * from 0 to maxLag (isotropic, along the long axis when anisotropic).
 */
export function modelCurve(model: CovarianceModel, maxLag: number, count = 80): Array<{ h: number; gamma: number }> {
  const c0 = surfaceVariance(model);
  const nugget = nuggetOf(model);
  const out = [{ h: 0, gamma: 0 }];
  for (let k = 1; k <= count; k++) {
    const h = (maxLag * k) / count;
    out.push({ h, gamma: nugget + c0 - surfaceCovariance(model, h) });
  }
  return out;
}

export interface AnisotropyHint {
  text: string;
  /** Direction (degrees clockwise from north) where the semivariance rises slowest. */
  longAxis?: number;
  /** Rough short/long ratio of the distances at which the two axes reach the same semivariance. */
  ratio?: number;
}

/**
 * A hint from directional variograms: compares, per direction, the pair-weighted mean semivariance
 * over the first half of the lags (lower = correlated over a longer distance). A spread of less than
 * 25 % between the slowest and the fastest direction gives "no clear direction" (common practice:
 * directional variograms are noisy; this is a hint to look, not an estimate).
 */
export function anisotropyHint(dirs: readonly EmpiricalVariogram[], directions: readonly number[] = [0, 45, 90, 135]): AnisotropyHint {
  if (dirs.length < 2) return { text: '' };
  const scores: number[] = [];
  for (const v of dirs) {
    const maxLag = v.options.maxLag;
    let w = 0;
    let s = 0;
    for (const l of v.lags) {
      if (l.distance > maxLag / 2 || l.pairs < 5) continue;
      w += l.pairs;
      s += l.pairs * l.semivariance;
    }
    scores.push(w > 0 ? s / w : NaN);
  }
  if (scores.some((x) => !Number.isFinite(x))) return { text: 'Too few pairs in some directions to compare them.' };
  let lo = 0;
  let hi = 0;
  scores.forEach((x, i) => {
    if (x < scores[lo]) lo = i;
    if (x > scores[hi]) hi = i;
  });
  const spread = (scores[hi] - scores[lo]) / scores[hi];
  if (!(spread >= 0.25)) {
    return { text: `No clear direction: the four directions rise within ${Math.round(spread * 100)} % of each other, so an isotropic model is reasonable.` };
  }
  const ratio = Math.max(0.1, Math.min(1, scores[lo] / scores[hi]));
  return {
    text: `The semivariance rises slowest toward ${directions[lo]}° and fastest toward ${directions[hi]}° (${Math.round(spread * 100)} % lower at short lags): the values may be correlated over longer distances along ${directions[lo]}°. Check with a model fitted with anisotropy before relying on it.`,
    longAxis: directions[lo],
    ratio: +ratio.toFixed(2),
  };
}

/** Human name of a model, e.g. "Matérn ν = 1.5 + nugget". */
export function modelName(model: CovarianceModel): string {
  const p = modelParts(model);
  const byDirection = model.anisotropy && model.anisotropy.ratio < 1 ? ', range by direction' : '';
  if (!p) {
    const corr = model.structures.filter((s) => s.type !== 'nugget');
    if (corr.length === 2 && corr[0].type === corr[1].type) {
      const c = corr[0] as { type: Family; nu?: number };
      const fam = c.type === 'matern' ? `Matérn ν = ${+(c.nu ?? 1.5).toFixed(2)}` : c.type[0].toUpperCase() + c.type.slice(1);
      return `${fam}, two ranges${byDirection}${nuggetOf(model) > 0 ? ' + nugget' : ''}`;
    }
    return model.structures.map((s) => s.type).join(' + ') + byDirection;
  }
  const fam = p.family === 'matern' ? `Matérn ν = ${+(p.nu ?? 1.5).toFixed(2)}` : p.family[0].toUpperCase() + p.family.slice(1);
  return `${fam}${byDirection}${p.nugget > 0 ? ' + nugget' : ''}`;
}
