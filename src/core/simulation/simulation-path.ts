/**
 * Exact or local conditioning of simulated fields (./conditional-simulation.ts): the choice by
 * estimated cost and by the accuracy tolerance, as ../prediction/path-choice.ts chooses for kriging,
 * and the measured error of a local run.
 *
 * Costs in multiply-adds (K = KERNEL_COST a covariance evaluation; n samples, T kriged lattice nodes,
 * N realisations shared by P threads, each thread repeating the set-up; m samples per neighbourhood):
 *   exact = n³/6 + K·n²/2 + K·T·n + (N/P)·(n² + T·n)        (the dense kriger: factor, cross-covariances, dot products)
 *   local = T·(m³/6 + m²/2 + K·(m + m²/16)) + (N/P)·T·m + n·log₂n + reference
 * with the reference of the measured error (../prediction/path-choice.ts referenceCost); a covariate
 * trend adds the dense system (n³/6 + K·n²/2) to the local path for its GLS trend of all samples.
 * The unconditional fields and the placement of the samples cost the same on both paths and are left
 * out. The rules of choosePredictionPath hold: never exact above EXACT_SAMPLE_LIMIT samples, exact for
 * a tolerance of 0, exact when a neighbourhood would hold every sample.
 * Measured error: the realisations' mean at a node is the kriging mean of the kriger used (K is
 * linear and G − K[S + ε] has mean zero) and their variance is the error variance of its weights,
 * which for weights from a neighbourhood is the local kriging variance of that neighbourhood
 * (c₀ − λᵀk − μ = c₀ − 2λᵀk + λᵀKλ when Kλ + μ1 = k). So a local run's error is the error of local
 * kriging with the same neighbours (mean re-estimated in each neighbourhood; around the GLS trend of
 * all samples for a covariate trend) against the reference (exact kriging up to MAX_EXACT_SAMPLES
 * samples) at a seeded subset of the nodes (../prediction/local-accuracy.ts), in % of the prior sd.
 * When it misses the tolerance and the neighbourhood was not given, twice the neighbours are tried at
 * the checked nodes (up to maxGrownNeighbours(n)); when the grown neighbourhood costs more than exact
 * conditioning, or none meets the tolerance, exact conditioning is taken if the choice was automatic
 * (up to EXACT_SAMPLE_LIMIT samples), else the miss is warned.
 */
import type { CovarianceModel } from '../covariance/model.ts';
import type { Samples } from '../shared/samples.ts';
import type { Warning } from '../shared/errors.ts';
import type { Grid } from '../geometry/grid.ts';
import { covariateColumnCount } from '../covariance/trend.ts';
import {
  DEFAULT_TOLERANCE, EXACT_SAMPLE_LIMIT, billions, KERNEL_COST, choosePredictionPath, checkCount, localTargetCost, referenceCost,
  type PathChoice, type Tolerance,
} from '../prediction/path-choice.ts';
import {
  DEFAULT_CHECK_SEED, checkedValues, describeAccuracy, chooseCheckTargets, compareWithReference, maxGrownNeighbours, referencePredictions, type LocalAccuracy,
} from '../prediction/local-accuracy.ts';
import { createLocalPredictor } from '../prediction/local-kriging.ts';
import { DEFAULT_SIMULATION_NEIGHBOURS } from './conditional-simulation.ts';


/** The simulation job the path is chosen for (plain data). */
export interface SimulationJob {
  samples: number;
  /** Lattice nodes kriged per realisation (active cells × block points², or active cells when averaged first). */
  nodes: number;
  realisations: number;
  /** Threads sharing the realisations; default 1. */
  threads?: number;
  /** Samples per neighbourhood on the local path; default 64. */
  neighbours?: number;
  /** A covariate trend (its GLS trend needs the dense system on both paths). */
  covariates?: boolean;
  tolerance?: Tolerance;
  /** The user's own choice (--exact / --local), if any. */
  force?: 'exact' | 'local';
}

/** Estimated multiply-adds of conditioning by kriging from all samples (see the file header). */
export function simulationExactCost(samples: number, nodes: number, realisations: number, threads = 1): number {
  const n = samples;
  return n ** 3 / 6 + (KERNEL_COST * n * n) / 2 + KERNEL_COST * nodes * n + (realisations / Math.max(1, threads)) * (n * n + nodes * n);
}

/** Estimated multiply-adds of conditioning from neighbourhoods of m samples, its measured error included. */
export function simulationLocalCost(samples: number, nodes: number, realisations: number, neighbours = DEFAULT_SIMULATION_NEIGHBOURS, threads = 1, covariates = false): number {
  const n = samples;
  const m = Math.min(neighbours, n);
  const dense = covariates ? n ** 3 / 6 + (KERNEL_COST * n * n) / 2 : 0;
  return nodes * localTargetCost(m) + (realisations / Math.max(1, threads)) * nodes * m
    + n * Math.log2(Math.max(2, n)) + referenceCost(n, nodes) + dense;
}

/**
 * Chooses exact or local conditioning for a simulation job (see the file header). Throws
 * GapwiseError('bad-option') for --exact beyond EXACT_SAMPLE_LIMIT samples.
 */
export function chooseSimulationPath(job: SimulationJob): PathChoice {
  const n = job.samples;
  const m = job.neighbours ?? DEFAULT_SIMULATION_NEIGHBOURS;
  const threads = Math.max(1, job.threads ?? 1);
  const ex = n <= EXACT_SAMPLE_LIMIT ? simulationExactCost(n, job.nodes, job.realisations, threads) : Infinity;
  const lo = simulationLocalCost(n, job.nodes, job.realisations, m, threads, job.covariates ?? false);
  const tolerance = job.tolerance ?? DEFAULT_TOLERANCE;
  const choice = (path: 'exact' | 'local', automatic: boolean, reason: string): PathChoice => ({ path, automatic, exactCost: ex, localCost: lo, reason });
  if (job.force === 'exact' && n > EXACT_SAMPLE_LIMIT) choosePredictionPath({ samples: n, targets: job.nodes, force: 'exact' }); // throws its message
  if (job.force) return choice(job.force, false, `as asked (--${job.force})`);
  if (n > EXACT_SAMPLE_LIMIT) return choice('local', true, `more than ${EXACT_SAMPLE_LIMIT.toLocaleString('en-US')} samples are too many to factorise together`);
  if (tolerance.mean === 0 || tolerance.sd === 0) return choice('exact', true, 'a tolerance of 0 needs exact conditioning');
  if (m >= n) return choice('exact', true, `a neighbourhood of ${m.toLocaleString('en-US')} would hold all ${n.toLocaleString('en-US')} samples`);
  const costs = `about ${billions(lo)} billion operations local, ${billions(ex)} exact`;
  if (lo < ex) return choice('local', true, `local neighbourhoods are cheaper here (${costs})`);
  return choice('exact', true, `kriging from all samples is cheaper here (${costs})`);
}

/** The lattice nodes a simulation on `grid` krigs per realisation: k² per active cell (a block average is taken after kriging every node). */
export function krigedNodes(grid: Grid, blockPoints = 1): number {
  let active = 0;
  const cells = grid.nx * grid.ny;
  if (!grid.mask) active = cells;
  else for (let c = 0; c < cells; c++) if (grid.mask[c] === 1) active++;
  return active * blockPoints * blockPoints;
}

/** What the simulation's path is and why, with the measured error of a local run (plain data). */
export interface SimulationPath {
  choice: PathChoice;
  /** Samples per neighbourhood on the local path (after any growth). */
  neighbours?: number;
  /** The measured error of the local path. */
  accuracy?: LocalAccuracy;
  warnings: Warning[];
}

/** Options of planSimulationPath (plain data). */
export interface SimulationPathOptions {
  realisations: number;
  threads?: number;
  support?: 'point' | 'block';
  blockPoints?: number;
  /** Samples per neighbourhood; a given size is not grown. */
  neighbours?: number;
  tolerance?: Tolerance;
  force?: 'exact' | 'local';
  /** Covariate trend: the encoded covariates at every lattice node (./conditional-simulation.ts order). */
  covariates?: Float64Array;
  seed?: number;
}

/**
 * The checked nodes of a local run: a seeded subset of the active cells, each at its north-west
 * lattice node (the cell centre for point support), with that node's covariates.
 */
function checkedNodes(grid: Grid, k: number, q: number, count: number, seed: number, covariates?: Float64Array): { x: Float64Array; y: Float64Array; covariates?: Float64Array; total: number } {
  const active: number[] = [];
  for (let c = 0; c < grid.nx * grid.ny; c++) if (!grid.mask || grid.mask[c] === 1) active.push(c);
  const pick = chooseCheckTargets(active.length, count, seed);
  const h = grid.cell / k;
  const x = new Float64Array(pick.length), y = new Float64Array(pick.length);
  const cov = q > 0 && covariates ? new Float64Array(pick.length * q) : undefined;
  pick.forEach((a, t) => {
    const c = active[a];
    const i = c % grid.nx, j = Math.floor(c / grid.nx);
    x[t] = grid.x0 + (i * k + 0.5) * h;
    y[t] = grid.y0 - (j * k + 0.5) * h;
    if (cov && covariates) cov.set(covariates.subarray(c * k * k * q, c * k * k * q + q), t * q);
  });
  return { x, y, ...(cov ? { covariates: cov } : {}), total: active.length };
}

/**
 * Chooses exact or local conditioning for a simulation on `grid` (chooseSimulationPath) and, on the
 * local path, measures its error at a seeded subset of the nodes, growing the neighbourhood or taking
 * exact conditioning when it misses the tolerance (see the file header).
 */
export function planSimulationPath(samples: Samples, model: CovarianceModel, grid: Grid, options: SimulationPathOptions): SimulationPath {
  const n = samples.x.length;
  const k = options.support === 'block' ? options.blockPoints ?? 4 : 1;
  const q = covariateColumnCount(model.trend);
  const tolerance = options.tolerance ?? DEFAULT_TOLERANCE;
  const job: SimulationJob = {
    samples: n, nodes: krigedNodes(grid, k), realisations: options.realisations, threads: options.threads,
    neighbours: options.neighbours ?? DEFAULT_SIMULATION_NEIGHBOURS, covariates: q > 0, tolerance, ...(options.force ? { force: options.force } : {}),
  };
  const first = chooseSimulationPath(job);
  if (first.path === 'exact') return { choice: first, warnings: [] };
  const seed = options.seed ?? DEFAULT_CHECK_SEED;
  const nodes = checkedNodes(grid, k, q, checkCount(n, job.nodes), seed, options.covariates);
  const withCovariates = nodes.covariates ? { covariates: nodes.covariates } : {};
  const reference = referencePredictions(samples, model, nodes.x, nodes.y, undefined, nodes.covariates);
  const log = model.transform === 'log';
  const all = Uint32Array.from({ length: nodes.x.length }, (_, i) => i);
  const measure = (m: number): LocalAccuracy => {
    const p = createLocalPredictor(samples, model, { neighbours: m, globalMean: q > 0 }).predict(nodes.x, nodes.y, withCovariates);
    return compareWithReference(model, reference, checkedValues(p, all, log), { targets: job.nodes, seed, neighbours: m, globalMean: q > 0, tolerance });
  };
  let m = Math.min(job.neighbours!, n);
  let accuracy = measure(m);
  const warnings: Warning[] = [];
  const canGrow = options.neighbours === undefined;
  while (!accuracy.within && canGrow && m < maxGrownNeighbours(n)) {
    m = Math.min(2 * m, maxGrownNeighbours(n));
    accuracy = measure(m);
  }
  const grownCost = simulationLocalCost(n, job.nodes, job.realisations, m, job.threads, q > 0);
  if (first.automatic && n <= EXACT_SAMPLE_LIMIT && (!accuracy.within || grownCost >= first.exactCost)) {
    const why = !accuracy.within
      ? `local neighbourhoods up to ${m.toLocaleString('en-US')} samples missed the tolerance (mean ${accuracy.mean.max.toFixed(2)} %, sd ${accuracy.sd.max.toFixed(2)} % of the prior sd)`
      : `local neighbourhoods needed ${m.toLocaleString('en-US')} samples to meet the tolerance, which costs more than kriging from all samples`;
    return { choice: { ...first, path: 'exact', reason: why, localCost: grownCost }, warnings };
  }
  if (!accuracy.within) {
    warnings.push({
      code: 'tolerance-missed',
      message: `Local conditioning missed the tolerance (${describeAccuracy(accuracy)}); more neighbours (--neighbours) or exact conditioning (--exact) come closer.`,
    });
  }
  const grown = m !== Math.min(job.neighbours!, n);
  const reason = grown ? `${first.reason}; grown to ${m.toLocaleString('en-US')} neighbours to meet the tolerance` : first.reason;
  return { choice: { ...first, reason, localCost: grownCost }, neighbours: m, accuracy, warnings };
}
