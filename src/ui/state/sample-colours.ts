/**
 * Colours of the samples on the map: the 'loam' scale over the sample values (on a log axis when the
 * log transform is chosen), cut into a few labelled classes so the legend can name each colour.
 */
import { classColours, classify, hex, type Rgb } from '../map/colour-scales.ts';

export interface SampleClasses {
  /** Class boundaries in data units, length steps + 1 (ascending). */
  breaks: number[];
  colours: string[];
  log: boolean;
  /** Class index of each value. */
  classOf(value: number): number;
}

/**
 * Equal classes over [min, max] of the values, on a log axis when `log` and all values are positive.
 */
export function sampleClasses(values: ArrayLike<number>, log: boolean, steps = 6): SampleClasses {
  let min = Infinity;
  let max = -Infinity;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (!Number.isFinite(v)) continue;
    if (v < min) min = v;
    if (v > max) max = v;
  }
  if (!(min <= max)) { min = 0; max = 1; }
  const useLog = log && min > 0;
  const f = (v: number) => (useLog ? Math.log(v) : v);
  const finv = (t: number) => (useLog ? Math.exp(t) : t);
  const domain: [number, number] = [f(min), f(max)];
  const breaks = Array.from({ length: steps + 1 }, (_, k) => finv(domain[0] + ((domain[1] - domain[0]) * k) / steps));
  breaks[0] = min;
  breaks[steps] = max;
  const colours = classColours('loam', steps).map((c: Rgb) => hex(c));
  return {
    breaks,
    colours,
    log: useLog,
    classOf: (value: number) => classify(f(value), domain, steps),
  };
}
