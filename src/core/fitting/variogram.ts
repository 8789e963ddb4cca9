/**
 * Empirical (semi)variogram of point samples: omnidirectional, directional, and the variogram cloud.
 *
 * Matheron's estimator γ̂(h) = Σ(zᵢ − zⱼ)² / (2N(h)); the robust Cressie–Hawkins estimator
 * (Cressie & Hawkins 1980, Math. Geol. 12:115) 2γ̄(h) = [N(h)⁻¹ Σ|zᵢ − zⱼ|^½]⁴ / (0.457 + 0.494/N(h)).
 * Lag class k holds the pairs with k·w ≤ h < (k+1)·w and h ≤ maxLag (the last class is closed at
 * maxLag); each class reports the mean distance of its pairs. Directional classes: the pair's
 * azimuth (clockwise from north, taken modulo 180°) within ± tolerance of the direction, and
 * optionally the pair's offset across the direction ≤ bandwidth; pairs at zero distance have no
 * direction and count only in the omnidirectional variogram.
 * Defaults (common practice; Webster & Oliver 2001): maximum lag half the largest sample distance,
 * 15 classes; warnings when fewer than 30 pairs fall in a class or there are fewer than 100 samples.
 * Units: metres; semivariance in data units squared. Cost: O(n²) pairs; above `maxPairs` (default
 * all pairs of 5,000 samples) a seeded stratified subsample of pairs is used and the result says so.
 */
import type { Warning } from '../shared/errors.ts';
import type { Samples } from '../shared/samples.ts';
import { GapwiseError, checkCount } from '../shared/errors.ts';
import { createRandom } from '../shared/random.ts';

export type VariogramEstimator = 'matheron' | 'cressie-hawkins';

/** Plain-data options; every field has a default. */
export interface VariogramOptions {
  /** Default 'matheron'. */
  estimator?: VariogramEstimator;
  /** Metres; default maxLag / lagCount. */
  lagWidth?: number;
  /** Metres; default half the largest sample distance. */
  maxLag?: number;
  /** Number of classes when lagWidth is not given; default 15. */
  lagCount?: number;
  /** Azimuth in degrees clockwise from north; absent = all directions. */
  direction?: number;
  /** Angular half-width of a directional class in degrees; default 22.5. */
  tolerance?: number;
  /** Largest offset across the direction in metres; default none. */
  bandwidth?: number;
  /** Largest number of pairs examined before subsampling; default 12,497,500 (n = 5,000). */
  maxPairs?: number;
  /** Seed of the pair subsample; default 1. */
  seed?: number;
}

/** The options as applied, with defaults resolved. */
export interface ResolvedVariogramOptions {
  estimator: VariogramEstimator;
  lagWidth: number;
  maxLag: number;
  lagCount: number;
  direction?: number;
  tolerance?: number;
  bandwidth?: number;
  maxPairs: number;
  seed: number;
}

export interface VariogramLag {
  /** Mean distance of the pairs in the class, metres. */
  distance: number;
  /** γ̂ in data units squared. */
  semivariance: number;
  pairs: number;
  /** Class bounds [from, to), metres. */
  from: number;
  to: number;
}

export interface EmpiricalVariogram {
  /** Non-empty lag classes in order of distance. */
  lags: VariogramLag[];
  options: ResolvedVariogramOptions;
  /** Number of samples. */
  n: number;
  /** Largest distance between two samples, metres. */
  maxDistance: number;
  /** Pairs that fell in a class. */
  pairsUsed: number;
  /** Pairs examined (all n(n−1)/2, or the subsample). */
  pairsExamined: number;
  subsampled: boolean;
  /** Which defaults were applied and other facts worth showing beside the plot. */
  notes: string[];
  warnings: Warning[];
}

/** Common practice (Webster & Oliver 2001): at least 30–50 pairs per lag, about 100 samples. */
const MIN_PAIRS_PER_LAG = 30;
export const RECOMMENDED_SAMPLES = 100;
const DEFAULT_LAG_COUNT = 15;
const DEFAULT_MAX_PAIRS = (5000 * 4999) / 2;

function checkSamples(samples: Samples, minimum: number): number {
  const n = samples.value.length;
  if (samples.x.length !== n || samples.y.length !== n) {
    throw new GapwiseError('bad-value', `Expected x, y and value of equal length, got ${samples.x.length}, ${samples.y.length} and ${n}.`);
  }
  if (n < minimum) throw new GapwiseError('too-few-samples', `Expected at least ${minimum} samples for a variogram, got ${n}.`);
  return n;
}

/** Indices of the convex hull (Andrew's monotone chain), enough to find the largest distance. */
function hullIndices(x: ArrayLike<number>, y: ArrayLike<number>): number[] {
  const idx = Array.from({ length: x.length }, (_, i) => i).sort((a, b) => x[a] - x[b] || y[a] - y[b]);
  if (idx.length < 3) return idx;
  const cross = (o: number, a: number, b: number) => (x[a] - x[o]) * (y[b] - y[o]) - (y[a] - y[o]) * (x[b] - x[o]);
  const lower: number[] = [];
  for (const i of idx) {
    while (lower.length >= 2 && cross(lower[lower.length - 2], lower[lower.length - 1], i) <= 0) lower.pop();
    lower.push(i);
  }
  const upper: number[] = [];
  for (let k = idx.length - 1; k >= 0; k--) {
    const i = idx[k];
    while (upper.length >= 2 && cross(upper[upper.length - 2], upper[upper.length - 1], i) <= 0) upper.pop();
    upper.push(i);
  }
  return lower.slice(0, -1).concat(upper.slice(0, -1));
}

/** Largest distance between two samples (metres), exact, via the convex hull: O(n log n + h²). */
export function maxSampleDistance(x: ArrayLike<number>, y: ArrayLike<number>): number {
  const hull = hullIndices(x, y);
  let best = 0;
  for (let a = 0; a < hull.length; a++) {
    for (let b = a + 1; b < hull.length; b++) {
      const dx = x[hull[a]] - x[hull[b]];
      const dy = y[hull[a]] - y[hull[b]];
      best = Math.max(best, Math.sqrt(dx * dx + dy * dy));
    }
  }
  return best;
}

/**
 * Calls visit(i, j) for every pair (j < i), or for a seeded stratified sample of `maxPairs` of them:
 * one pair drawn uniformly from each of maxPairs equal runs of the row-by-row pair list.
 */
function forEachPair(n: number, maxPairs: number, seed: number, visit: (i: number, j: number) => void): { examined: number; subsampled: boolean } {
  const total = (n * (n - 1)) / 2;
  if (total <= maxPairs) {
    for (let i = 1; i < n; i++) for (let j = 0; j < i; j++) visit(i, j);
    return { examined: total, subsampled: false };
  }
  const random = createRandom(seed);
  const stride = total / maxPairs;
  // The drawn pair numbers increase, so walk the rows: row i holds pairs i(i−1)/2 … i(i+1)/2 − 1.
  let i = 1;
  let rowStart = 0;
  for (let t = 0; t < maxPairs; t++) {
    const k = Math.min(total - 1, Math.floor((t + random.uniform()) * stride));
    while (k >= rowStart + i) {
      rowStart += i;
      i++;
    }
    visit(i, k - rowStart);
  }
  return { examined: maxPairs, subsampled: true };
}

/** The most lag classes a variogram may have (each holds a pair count, a mean distance and a semivariance). */
export const MAX_LAG_CLASSES = 1000;

function positiveOption(v: number | undefined, name: string): void {
  if (v !== undefined && !(Number.isFinite(v) && v > 0)) {
    throw new GapwiseError('bad-option', `Expected ${name} to be a positive number, got ${v}.`);
  }
}

function resolveOptions(samples: Samples, options: VariogramOptions, maxDistance: number, notes: string[]): ResolvedVariogramOptions {
  positiveOption(options.lagWidth, 'the lag width');
  positiveOption(options.maxLag, 'the maximum lag');
  positiveOption(options.lagCount, 'the number of lag classes');
  positiveOption(options.maxPairs, 'the maximum number of pairs');
  if (options.bandwidth !== undefined) positiveOption(options.bandwidth, 'the bandwidth');
  if (options.tolerance !== undefined && !(options.tolerance > 0 && options.tolerance <= 90)) {
    throw new GapwiseError('bad-option', `Expected the angular tolerance in (0, 90] degrees, got ${options.tolerance}.`);
  }
  if (options.estimator !== undefined && options.estimator !== 'matheron' && options.estimator !== 'cressie-hawkins') {
    throw new GapwiseError('bad-option', `Expected the estimator "matheron" or "cressie-hawkins", got ${JSON.stringify(options.estimator)}.`);
  }
  if (maxDistance <= 0) {
    throw new GapwiseError('too-few-samples', `Expected samples at two or more distinct places, got all ${samples.value.length} at one place.`);
  }
  let maxLag = options.maxLag ?? maxDistance / 2;
  if (options.maxLag === undefined) notes.push(`Maximum lag defaulted to half the largest sample distance: ${fmt(maxLag)} m.`);
  let lagCount: number;
  let lagWidth: number;
  if (options.lagWidth !== undefined) {
    lagWidth = options.lagWidth;
    if (options.lagCount !== undefined && options.maxLag === undefined) {
      lagCount = Math.round(options.lagCount);
      maxLag = lagWidth * lagCount;
      notes.pop();
      notes.push(`Maximum lag set to lag width × classes: ${fmt(maxLag)} m.`);
    } else {
      lagCount = Math.max(1, Math.ceil(maxLag / lagWidth - 1e-9));
    }
  } else {
    lagCount = Math.max(1, Math.round(options.lagCount ?? DEFAULT_LAG_COUNT));
    lagWidth = maxLag / lagCount;
    notes.push(`Lag width defaulted to ${options.lagCount === undefined ? `the maximum lag / ${DEFAULT_LAG_COUNT}` : 'the maximum lag / classes'}: ${fmt(lagWidth)} m.`);
  }
  // Counted from user lengths before any per-class array exists (lagWidth 1e-9 would ask for billions).
  checkCount(lagCount, MAX_LAG_CLASSES, `The number of lag classes (maximum lag ${fmt(maxLag)} m / lag width ${fmt(lagWidth)} m)`,
    `choose a lag width of at least ${fmt(maxLag / MAX_LAG_CLASSES)} m or fewer classes`);
  const resolved: ResolvedVariogramOptions = {
    estimator: options.estimator ?? 'matheron',
    lagWidth, maxLag, lagCount,
    maxPairs: Math.floor(options.maxPairs ?? DEFAULT_MAX_PAIRS),
    seed: options.seed ?? 1,
  };
  if (options.estimator === undefined) notes.push("Estimator defaulted to Matheron's.");
  if (options.direction !== undefined) {
    if (!Number.isFinite(options.direction)) throw new GapwiseError('bad-option', `Expected the direction as an azimuth in degrees, got ${options.direction}.`);
    resolved.direction = options.direction;
    resolved.tolerance = options.tolerance ?? 22.5;
    if (options.tolerance === undefined) notes.push('Angular tolerance defaulted to ±22.5°.');
    if (options.bandwidth !== undefined) resolved.bandwidth = options.bandwidth;
  }
  return resolved;
}

function fmt(v: number): string {
  return Number(v.toPrecision(4)).toString();
}

/** Folds an angle in degrees into [0, 180): pairs have no orientation. */
function axial(deg: number): number {
  const a = deg % 180;
  return a < 0 ? a + 180 : a;
}

/**
 * Empirical variogram of the samples: lag classes with mean pair distance, semivariance and pair
 * count, the options used, notes on applied defaults and warnings when the data fall short of common
 * practice. Throws GapwiseError 'too-few-samples' for fewer than 2 samples or all at one place.
 */
export function empiricalVariogram(samples: Samples, options: VariogramOptions = {}): EmpiricalVariogram {
  checkSamples(samples, 2);
  const maxDistance = maxSampleDistance(samples.x, samples.y);
  const notes: string[] = [];
  const o = resolveOptions(samples, options, maxDistance, notes);
  return passVariograms(samples, [o], maxDistance, notes)[0];
}

/**
 * One pass over the (seeded, possibly subsampled) pairs for several option sets that share lag
 * classes, estimator, pair budget and seed and differ only in direction, tolerance and bandwidth:
 * each pair's distance and angle are computed once. Same result per set as a pass of its own.
 */
function passVariograms(samples: Samples, sets: ResolvedVariogramOptions[], maxDistance: number, notes: string[]): EmpiricalVariogram[] {
  const n = samples.x.length;
  const { x, y, value } = samples;
  const o = sets[0];
  const S = sets.length;
  const K = o.lagCount;
  const count = new Float64Array(K * S);
  const sumH = new Float64Array(K * S);
  const sumD = new Float64Array(K * S);
  const used = new Float64Array(S);
  const zeroPairs = new Float64Array(S);
  const robust = o.estimator === 'cressie-hawkins';
  const toRad = Math.PI / 180;
  const dirs = sets.map((v) => (v.direction !== undefined ? axial(v.direction) : NaN));
  const tols = sets.map((v) => v.tolerance ?? 90);
  const bands = sets.map((v) => v.bandwidth ?? Infinity);
  const anyDirection = dirs.some((d) => !Number.isNaN(d));
  const { examined, subsampled } = forEachPair(n, o.maxPairs, o.seed, (i, j) => {
    const dx = x[i] - x[j];
    const dy = y[i] - y[j];
    const h = Math.sqrt(dx * dx + dy * dy);
    if (h > o.maxLag) return;
    const k = Math.min(K - 1, Math.floor(h / o.lagWidth));
    const dz = value[i] - value[j];
    const d = robust ? Math.sqrt(Math.abs(dz)) : dz * dz;
    const angle = anyDirection && h > 0 ? axial((Math.atan2(dx, dy) * 180) / Math.PI) : 0;
    for (let s = 0; s < S; s++) {
      if (!Number.isNaN(dirs[s])) {
        // A pair at one place has no direction.
        if (h === 0) continue;
        let diff = Math.abs(angle - dirs[s]);
        if (diff > 90) diff = 180 - diff;
        if (diff > tols[s] + 1e-12) continue;
        if (h * Math.sin(diff * toRad) > bands[s]) continue;
      }
      const at = s * K + k;
      count[at]++;
      sumH[at] += h;
      sumD[at] += d;
      used[s]++;
      if (h === 0) zeroPairs[s]++;
    }
  });
  return sets.map((set, s) => {
    const setNotes = [...notes];
    const lags: VariogramLag[] = [];
    for (let k = 0; k < K; k++) {
      const N = count[s * K + k];
      if (N === 0) continue;
      const semivariance = robust ? (0.5 * (sumD[s * K + k] / N) ** 4) / (0.457 + 0.494 / N) : sumD[s * K + k] / (2 * N);
      lags.push({ distance: sumH[s * K + k] / N, semivariance, pairs: N, from: k * o.lagWidth, to: Math.min(o.maxLag, (k + 1) * o.lagWidth) });
    }
    const warnings: Warning[] = [];
    if (lags.length < K) setNotes.push(`${K - lags.length} of ${K} lag classes hold no pairs and are left out.`);
    if (zeroPairs[s] > 0) setNotes.push(`${zeroPairs[s]} pairs at zero distance (repeated locations) are in the first lag class.`);
    if (subsampled) {
      const msg = `With ${n.toLocaleString('en-US')} samples (${((n * (n - 1)) / 2).toLocaleString('en-US')} pairs), a seeded sample of ${examined.toLocaleString('en-US')} pairs was used (seed ${o.seed}).`;
      setNotes.push(msg);
      warnings.push({ code: 'pairs-subsampled', message: msg });
    }
    if (n < RECOMMENDED_SAMPLES) {
      warnings.push({ code: 'few-samples', message: `Only ${n} samples: a variogram is usually taken as reliable from about ${RECOMMENDED_SAMPLES} (common practice).` });
    }
    const thin = lags.filter((l) => l.pairs < MIN_PAIRS_PER_LAG);
    if (thin.length > 0) {
      warnings.push({
        code: 'few-pairs',
        message: `${thin.length} of ${lags.length} lag classes have fewer than ${MIN_PAIRS_PER_LAG} pairs (fewest ${Math.min(...thin.map((l) => l.pairs))}); common practice asks for at least 30–50 per lag.`,
      });
    }
    return { lags, options: set, n, maxDistance, pairsUsed: used[s], pairsExamined: examined, subsampled, notes: setNotes, warnings };
  });
}

export interface DirectionalOptions extends Omit<VariogramOptions, 'direction'> {
  /** Azimuths in degrees clockwise from north; default [0, 45, 90, 135]. */
  directions?: number[];
}

/**
 * One empirical variogram per direction, sharing lag classes (resolved once from the whole data),
 * all from one pass over the pairs (the angle of each pair computed once).
 */
export function directionalVariograms(samples: Samples, options: DirectionalOptions = {}): EmpiricalVariogram[] {
  const { directions = [0, 45, 90, 135], ...rest } = options;
  if (directions.length === 0) throw new GapwiseError('bad-option', 'Expected at least one direction, got none.');
  checkSamples(samples, 2);
  const notes: string[] = [];
  const maxDistance = maxSampleDistance(samples.x, samples.y);
  const shared = resolveOptions(samples, rest, maxDistance, notes);
  // Each direction's options resolved as a single-direction call would (its notes follow the set's).
  const perDirection: string[][] = [];
  const sets = directions.map((direction) => {
    const own: string[] = [];
    const o = resolveOptions(samples, { ...rest, lagWidth: shared.lagWidth, maxLag: shared.maxLag, estimator: shared.estimator, direction }, maxDistance, own);
    perDirection.push(own);
    return o;
  });
  // Report the defaults as applied to the set, not the explicit values passed on per direction.
  return passVariograms(samples, sets, maxDistance, []).map((v, s) => ({ ...v, notes: [...notes, ...perDirection[s], ...v.notes] }));
}

export interface VariogramCloud {
  /** Pair distance, metres. */
  distance: number[];
  /** ½(zᵢ − zⱼ)², data units squared. */
  semivariance: number[];
  /** Sample indices of each pair. */
  i: number[];
  j: number[];
  totalPairs: number;
  subsampled: boolean;
  notes: string[];
}

/**
 * The variogram cloud: every pair's distance and half squared difference, or — when there are more
 * than `maxPairs` pairs — a seeded stratified sample of them (deterministic for a seed).
 */
export function variogramCloud(samples: Samples, maxPairs = 20000, seed = 1): VariogramCloud {
  const n = checkSamples(samples, 2);
  positiveOption(maxPairs, 'the maximum number of pairs');
  const { x, y, value } = samples;
  const out: VariogramCloud = { distance: [], semivariance: [], i: [], j: [], totalPairs: (n * (n - 1)) / 2, subsampled: false, notes: [] };
  const { subsampled, examined } = forEachPair(n, Math.floor(maxPairs), seed, (i, j) => {
    const dx = x[i] - x[j];
    const dy = y[i] - y[j];
    const dz = value[i] - value[j];
    out.distance.push(Math.sqrt(dx * dx + dy * dy));
    out.semivariance.push(0.5 * dz * dz);
    out.i.push(i);
    out.j.push(j);
  });
  out.subsampled = subsampled;
  if (subsampled) out.notes.push(`Showing a seeded sample of ${examined.toLocaleString('en-US')} of ${out.totalPairs.toLocaleString('en-US')} pairs (seed ${seed}).`);
  return out;
}

/** What the structure view shows at once: the variogram, and on request the four directions and the cloud. */
export interface VariogramSet {
  omni: EmpiricalVariogram;
  directional: EmpiricalVariogram[] | null;
  cloud: VariogramCloud | null;
}

/**
 * The omnidirectional variogram and, when asked, the directional ones (same lag classes) and the
 * cloud of up to `cloudPairs` pairs: one request for a worker. Throws as empiricalVariogram does; a
 * direction or cloud that cannot be computed comes back as null.
 */
export function variogramSet(samples: Samples, options: VariogramOptions = {}, extra: { directional?: boolean; cloudPairs?: number } = {}): VariogramSet {
  const omni = empiricalVariogram(samples, options);
  const { lagWidth, maxLag } = options;
  let directional: EmpiricalVariogram[] | null = null;
  let cloud: VariogramCloud | null = null;
  if (extra.directional) {
    try {
      directional = directionalVariograms(samples, { lagWidth, maxLag });
    } catch {
      directional = null;
    }
  }
  if (extra.cloudPairs !== undefined) {
    try {
      cloud = variogramCloud(samples, extra.cloudPairs);
    } catch {
      cloud = null;
    }
  }
  return { omni, directional, cloud };
}
