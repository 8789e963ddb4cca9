/**
 * Exact kriging or local neighbourhoods: the choice by estimated cost and by an accuracy tolerance.
 *
 * Costs are counted in multiply-adds (a covariance evaluation counts KERNEL_COST). Exact kriging of
 * T targets from n samples on `threads` threads (each thread factorises the n × n matrix once):
 *   exact = n³/6 + K·n²/2 + T·(n²/2 + K·n)/threads
 * Local neighbourhoods of m samples (./local-kriging.ts), plus the measurement of their error
 * (./local-accuracy.ts): exact kriging at c = min(T, CHECK_COUNT) targets, from all samples up to
 * MAX_EXACT_SAMPLES samples and from the REFERENCE_NEIGHBOURS nearest of each checked target above:
 *   local = T·(m³/6 + m²/2 + K·(m + m²/16))/threads + n·log₂n + reference
 *   reference = n³/6 + K·n²/2 + c·(n²/2 + K·n)        (n ≤ MAX_EXACT_SAMPLES)
 *             = c·(R³/6 + K·R²/2 + R²/2 + K·R)       (above)
 * The local path is taken when it is the cheaper one; exact kriging is taken when it is, when the
 * tolerance is 0, or when all targets are checked anyway (T ≤ CHECK_COUNT). The exact path is never
 * chosen automatically above EXACT_SAMPLE_LIMIT samples (its matrix takes 8·n² bytes per thread).
 * The tolerance says how close the local path must come to exact kriging, in % of the prior sd of
 * the surface: mean within 1 % and sd within 2 % by default (common practice for a screening map:
 * far below the kriging sd itself, which is rarely under 10 % of the prior sd).
 */
import { GapwiseError } from '../shared/errors.ts';
import { MAX_EXACT_SAMPLES } from '../shared/sizes.ts';

/** How close the local path must come to exact kriging: largest differences in % of the prior sd. */
export interface Tolerance {
  /** Largest difference of the mean, % of the prior sd. */
  mean: number;
  /** Largest difference of the sd, % of the prior sd. */
  sd: number;
}

/** The default tolerance: mean within 1 %, sd within 2 % of the prior sd. */
export const DEFAULT_TOLERANCE: Readonly<Tolerance> = Object.freeze({ mean: 1, sd: 2 });
/** Targets at which the local path is checked against exact kriging (all of them when fewer). */
export const CHECK_COUNT = 200;
/** Above MAX_EXACT_SAMPLES, the check is against kriging from this many nearest samples of each checked target. */
export const REFERENCE_NEIGHBOURS = 800;
/** Above MAX_EXACT_SAMPLES, at most this many targets are checked (each costs an R × R factorisation). */
export const LARGE_CHECK_COUNT = 30;
/** Most samples for which exact kriging is chosen automatically (or allowed with --exact): 8·n² bytes per thread. */
export const EXACT_SAMPLE_LIMIT = 10_000;
/** A covariance evaluation (square root, exponential, call) costs about this many multiply-adds. */
export const KERNEL_COST = 20;

/** What the choice is made from (plain data). */
export interface PathChoiceInput {
  samples: number;
  targets: number;
  /** Threads sharing the targets; default 1. */
  threads?: number;
  /** Local neighbourhood size m; default 64. */
  neighbours?: number;
  tolerance?: Tolerance;
  /** The user's own choice (--exact / --local), if any. */
  force?: 'exact' | 'local';
}

/** The choice and why (plain data). */
export interface PathChoice {
  path: 'exact' | 'local';
  /** True when costs and tolerance chose (no --exact / --local). */
  automatic: boolean;
  /** Estimated multiply-adds of each path (Infinity where it is not possible). */
  exactCost: number;
  localCost: number;
  /** One clause saying why, e.g. "local neighbourhoods are cheaper here (about 1.2 vs 160 billion operations)". */
  reason: string;
}

/** Targets checked against the reference for `samples` samples and `targets` targets. */
export function checkCount(samples: number, targets: number): number {
  return Math.min(targets, samples <= MAX_EXACT_SAMPLES ? CHECK_COUNT : LARGE_CHECK_COUNT);
}

/** Estimated multiply-adds of exact kriging (mean and sd) of `targets` targets from `samples` samples. */
export function exactCost(samples: number, targets: number, threads = 1): number {
  const n = samples;
  return n ** 3 / 6 + (KERNEL_COST * n * n) / 2 + (targets * (n * n / 2 + KERNEL_COST * n)) / Math.max(1, threads);
}

/** Estimated multiply-adds of one target predicted from its own neighbourhood of m samples. */
export function localTargetCost(neighbours: number): number {
  const m = neighbours;
  return m ** 3 / 6 + (m * m) / 2 + KERNEL_COST * (m + (m * m) / 16);
}

/**
 * How many times the cost of the first local run a growth may add before it stops and reports the
 * miss instead (above EXACT_SAMPLE_LIMIT samples, where no exact path follows). Doubling the
 * neighbours costs about 8 times per target, so this allows one doubling at every target, or more
 * at fewer targets.
 */
export const GROWTH_BUDGET = 8;

/**
 * Above EXACT_SAMPLE_LIMIT samples a growth may always spend this many multiply-adds per thread
 * (about half a minute of one thread here, at the 1–1.5 billion a second that neighbourhoods of a
 * few hundred samples reach), however cheap the first run was.
 */
export const GROWTH_OPERATIONS_PER_THREAD = 30e9;

/** Estimated multiply-adds of local neighbourhoods of m samples plus the measurement of their error. */
export function localCost(samples: number, targets: number, neighbours = 64, threads = 1): number {
  const n = samples;
  const m = Math.min(neighbours, n);
  const perTarget = localTargetCost(m);
  const c = checkCount(n, targets);
  const R = REFERENCE_NEIGHBOURS;
  const reference = n <= MAX_EXACT_SAMPLES
    ? n ** 3 / 6 + (KERNEL_COST * n * n) / 2 + c * (n * n / 2 + KERNEL_COST * n)
    : c * (R ** 3 / 6 + (KERNEL_COST * R * R) / 2 + R * R / 2 + KERNEL_COST * R);
  return (targets * perTarget) / Math.max(1, threads) + n * Math.log2(Math.max(2, n)) + reference;
}

/** Operations in billions as the path notes print them: whole from 10, one decimal from 0.1, else one digit. */
export function billions(x: number): string {
  const b = x / 1e9;
  return b >= 10 ? b.toFixed(0) : b >= 0.1 ? b.toFixed(1) : b.toPrecision(1);
}

/**
 * Chooses exact kriging or local neighbourhoods for a prediction job from its estimated cost and the
 * tolerance (see the file header). Throws GapwiseError('bad-option') for --exact beyond
 * EXACT_SAMPLE_LIMIT samples.
 */
export function choosePredictionPath(input: PathChoiceInput): PathChoice {
  const n = input.samples;
  const T = input.targets;
  const threads = Math.max(1, input.threads ?? 1);
  const tolerance = input.tolerance ?? DEFAULT_TOLERANCE;
  const ex = n <= EXACT_SAMPLE_LIMIT ? exactCost(n, T, threads) : Infinity;
  const lo = localCost(n, T, input.neighbours ?? 64, threads);
  const costs = `about ${billions(lo)} billion operations local, ${Number.isFinite(ex) ? billions(ex) : 'too many'} exact`;
  if (input.force === 'exact') {
    if (n > EXACT_SAMPLE_LIMIT) {
      throw new GapwiseError('bad-option',
        `Exact kriging is limited to ${EXACT_SAMPLE_LIMIT.toLocaleString('en-US')} samples (its matrix takes 8·n² bytes, here ${((8 * n * n) / 1e9).toFixed(1)} GB), got ${n.toLocaleString('en-US')}; leave out --exact to predict from local neighbourhoods.`);
    }
    return { path: 'exact', automatic: false, exactCost: ex, localCost: lo, reason: 'as asked (--exact)' };
  }
  if (input.force === 'local') return { path: 'local', automatic: false, exactCost: ex, localCost: lo, reason: 'as asked (--local)' };
  if (n > EXACT_SAMPLE_LIMIT) {
    return { path: 'local', automatic: true, exactCost: ex, localCost: lo, reason: `more than ${EXACT_SAMPLE_LIMIT.toLocaleString('en-US')} samples are too many to factorise together` };
  }
  if (tolerance.mean === 0 || tolerance.sd === 0) {
    return { path: 'exact', automatic: true, exactCost: ex, localCost: lo, reason: 'a tolerance of 0 needs exact kriging' };
  }
  if (T <= checkCount(n, T) && n <= MAX_EXACT_SAMPLES) {
    return { path: 'exact', automatic: true, exactCost: ex, localCost: lo, reason: `${T.toLocaleString('en-US')} targets are few enough to krige exactly (the error check would do it anyway)` };
  }
  if (lo < ex) return { path: 'local', automatic: true, exactCost: ex, localCost: lo, reason: `local neighbourhoods are cheaper here (${costs})` };
  return { path: 'exact', automatic: true, exactCost: ex, localCost: lo, reason: `exact kriging is cheaper here (${costs})` };
}

/**
 * Exact or local leave-one-out (cv). The closed form of exact leave-one-out (./cross-validation.ts)
 * costs about n³/2 multiply-adds; checking local leave-one-out against it costs the same, so up to
 * MAX_EXACT_SAMPLES samples exact leave-one-out is taken, and local above (where the exact
 * reference is out of reach; every sample is predicted from its nearest other samples).
 */
export function chooseLeaveOneOutPath(input: Pick<PathChoiceInput, 'samples' | 'tolerance' | 'force'>): PathChoice {
  const n = input.samples;
  const ex = n <= EXACT_SAMPLE_LIMIT ? n ** 3 / 2 : Infinity;
  const lo = localCost(n, n, 64, 1);
  if (input.force === 'exact') {
    if (n > EXACT_SAMPLE_LIMIT) return choosePredictionPath({ samples: n, targets: n, force: 'exact' });
    return { path: 'exact', automatic: false, exactCost: ex, localCost: lo, reason: 'as asked (--exact)' };
  }
  if (input.force === 'local') return { path: 'local', automatic: false, exactCost: ex, localCost: lo, reason: 'as asked (--local)' };
  if (n <= MAX_EXACT_SAMPLES) {
    return { path: 'exact', automatic: true, exactCost: ex, localCost: lo, reason: `up to ${MAX_EXACT_SAMPLES.toLocaleString('en-US')} samples exact leave-one-out costs no more than checking local neighbourhoods against it` };
  }
  return { path: 'local', automatic: true, exactCost: ex, localCost: lo, reason: `above ${MAX_EXACT_SAMPLES.toLocaleString('en-US')} samples exact leave-one-out (about n³/2 operations) costs too much` };
}

/**
 * Reads a tolerance such as "mean=1,sd=2" or "mean=0.5" (percent of the prior sd; a part left out
 * keeps its default). Throws GapwiseError('bad-option') naming the bad part.
 */
export function parseTolerance(text: string, defaults: Tolerance = DEFAULT_TOLERANCE): Tolerance {
  const out: Tolerance = { ...defaults };
  const parts = text.split(',').map((p) => p.trim()).filter((p) => p !== '');
  if (parts.length === 0) throw new GapwiseError('bad-option', `Expected a tolerance like "mean=1,sd=2" (percent of the prior sd), got "${text}".`);
  const seen = new Set<string>();
  for (const part of parts) {
    const m = /^(mean|sd)\s*=\s*([^%\s]+)\s*%?$/i.exec(part);
    if (!m) throw new GapwiseError('bad-option', `Expected each part of the tolerance to be mean=P or sd=P (percent of the prior sd), got "${part}".`);
    const key = m[1].toLowerCase() as keyof Tolerance;
    const v = Number(m[2]);
    if (!(Number.isFinite(v) && v >= 0 && v <= 100)) {
      throw new GapwiseError('bad-option', `Expected the ${key} tolerance to be a percentage from 0 to 100, got "${m[2]}".`);
    }
    if (seen.has(key)) throw new GapwiseError('bad-option', `The tolerance names ${key} twice ("${text}"); expected it at most once.`);
    seen.add(key);
    out[key] = v;
  }
  return out;
}

/**
 * Estimated multiply-adds of measuring a local run at `targets` targets against its reference (the
 * `reference` term of localCost): exact kriging from all samples up to MAX_EXACT_SAMPLES, above that
 * kriging from the REFERENCE_NEIGHBOURS nearest at each checked target.
 */
export function referenceCost(samples: number, targets: number): number {
  const n = samples;
  const c = checkCount(n, targets);
  const R = REFERENCE_NEIGHBOURS;
  return n <= MAX_EXACT_SAMPLES
    ? n ** 3 / 6 + (KERNEL_COST * n * n) / 2 + c * (n * n / 2 + KERNEL_COST * n)
    : c * (R ** 3 / 6 + (KERNEL_COST * R * R) / 2 + R * R / 2 + KERNEL_COST * R);
}
