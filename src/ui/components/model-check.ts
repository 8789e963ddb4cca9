/**
 * Plain-language checks of the model in use, for the Structure step: the leave-one-out MSSE far from 1
 * (the map's sd too small or too large), and a model curve that levels off well below the empirical
 * variogram's plateau. Each concern says what it means and what to try. Pure, no DOM.
 */
import type { CovarianceModel } from '../../core/covariance/model.ts';
import type { EmpiricalVariogram } from '../../core/fitting/variogram.ts';
import { modelCurve } from '../state/structure.ts';
import { formatValue } from '../../io/format.ts';

/** MSSE outside [MSSE_LOW, MSSE_HIGH] is called poor (common practice: about 1 when the sd is right). */
const MSSE_LOW = 0.5;
const MSSE_HIGH = 2;
/** The model's semivariance at the largest lag below this share of the empirical plateau is called low. */
const PLATEAU_SHARE = 0.7;

/**
 * The empirical plateau: the pair-weighted mean semivariance of the lag classes in the outer third of
 * the distances (null with fewer than 2 such classes).
 */
export function empiricalPlateau(v: EmpiricalVariogram): number | null {
  const far = v.lags.filter((l) => l.pairs > 0 && l.distance >= (2 / 3) * v.options.maxLag);
  if (far.length < 2) return null;
  let sum = 0;
  let pairs = 0;
  for (const l of far) {
    sum += l.semivariance * l.pairs;
    pairs += l.pairs;
  }
  return pairs > 0 ? sum / pairs : null;
}

/** Sentences about a poor model in use; empty when none applies. */
export function modelConcerns(model: CovarianceModel, variogram: EmpiricalVariogram | null, msse: number | null): string[] {
  const out: string[] = [];
  if (msse !== null && Number.isFinite(msse)) {
    if (msse > MSSE_HIGH) {
      out.push(`The samples miss their predictions by more than this model expects (MSSE ${formatValue(msse)}, about 1 when right): the sd on the map is too small. Try a candidate with a larger nugget or a shorter range, the log transform for skewed values, or fitting by restricted likelihood.`);
    } else if (msse < MSSE_LOW) {
      out.push(`The samples miss their predictions by less than this model expects (MSSE ${formatValue(msse)}, about 1 when right): the sd on the map is too large, so the map looks less certain than it is. Try another candidate or fitting by restricted likelihood.`);
    }
  }
  if (variogram && variogram.lags.length) {
    const plateau = empiricalPlateau(variogram);
    const curve = modelCurve(model, variogram.options.maxLag, 20);
    const end = curve[curve.length - 1].gamma;
    if (plateau !== null && plateau > 0 && end < PLATEAU_SHARE * plateau) {
      out.push(`The model's curve stays well below the variogram's plateau (${formatValue(end)} against about ${formatValue(plateau)} at the largest lags): it treats the values as less variable than they are, so its sd is too small far from samples. Try fitting by weighted least squares on the variogram, another candidate, or look for a trend across the site.`);
    }
  }
  return out;
}
