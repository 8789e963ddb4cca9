/**
 * Spatial coverage design before any model exists: new sites placed so that every point of the area
 * is close to a sample, by k-means on a fine grid of the area with the existing samples held fixed as
 * centres (Walvoort, Brus & de Gruijter 2010, Comput. Geosci. 36:1261).
 *
 * Objective: the mean squared distance (MSSD) from the grid points to their nearest sample, old or new.
 * Lloyd iterations: assign each point to its nearest centre, move each new centre to the centroid of
 * its points; here a centre is then snapped to the nearest allowed candidate (inside the area, outside
 * exclusions, at least the minimum spacing from the samples and from the new centres placed before
 * it), so the constraints hold at every step. Starts by seeded k-means++ (Arthur & Vassilvitskii 2007)
 * over the candidates, several restarts, the lowest MSSD kept.
 * Benefit of a site: how much the MSSD would rise without it (m²).
 * Units: metres, m². Cost per iteration O(points·count + count·log(candidates)).
 */
import { NeighbourIndex } from '../geometry/neighbours.ts';
import { createRandom } from '../shared/random.ts';
import { GapwiseError } from '../shared/errors.ts';
import type { Points } from './design-greedy.ts';

export interface CoverageProblem {
  /** The fine grid of the area. */
  points: Points;
  /** Existing samples (fixed centres). */
  fixed: Points;
  /** Allowed candidate sites (every one is allowed at the start). */
  candidates: Points;
  count: number;
  minSpacing: number;
  seed: number;
  restarts: number;
  maxIterations: number;
}

export interface CoverageSite {
  index: number;
  x: number;
  y: number;
  benefit: number;
}

export interface CoverageResult {
  sites: CoverageSite[];
  /** MSSD with the existing samples only, and with the new sites as well (m²). */
  objectiveBefore: number;
  objectiveAfter: number;
  iterations: number;
}

/** Squared distance from each point to its nearest fixed sample (Infinity with none). */
function fixedDistances(points: Points, fixed: Points): Float64Array {
  const m = points.x.length;
  const d = new Float64Array(m).fill(Infinity);
  if (fixed.x.length === 0) return d;
  const index = new NeighbourIndex(fixed.x, fixed.y);
  const id = new Uint32Array(1);
  const d2 = new Float64Array(1);
  for (let k = 0; k < m; k++) {
    index.nearest(points.x[k], points.y[k], 1, id, d2);
    d[k] = d2[0];
  }
  return d;
}

/** Mean over the points of the squared distance to the nearest centre (fixed or among sites). */
export function coverageObjective(points: Points, fixed: Points, sitesX: ArrayLike<number>, sitesY: ArrayLike<number>): number {
  return objectiveWith(points, fixedDistances(points, fixed), sitesX, sitesY, -1);
}

function objectiveWith(points: Points, dFixed: Float64Array, sx: ArrayLike<number>, sy: ArrayLike<number>, skip: number): number {
  const m = points.x.length;
  let total = 0;
  for (let k = 0; k < m; k++) {
    let best = dFixed[k];
    const px = points.x[k];
    const py = points.y[k];
    for (let s = 0; s < sx.length; s++) {
      if (s === skip) continue;
      const dx = px - sx[s];
      const dy = py - sy[s];
      const d = dx * dx + dy * dy;
      if (d < best) best = d;
    }
    total += best;
  }
  return total / m;
}

/** The spacing rules of placed sites: whether a candidate keeps them, and the nearest candidate that does. */
interface SpacingRules {
  farEnough(c: number, placed: readonly number[], skipSlot: number): boolean;
  /** The candidate nearest (x, y) that keeps the spacing to the other placed sites, or −1. */
  snap(x: number, y: number, placed: readonly number[], slot: number): number;
}

function spacingRules(candidates: CoverageProblem['candidates'], minSpacing: number): SpacingRules {
  const mC = candidates.x.length;
  const candIndex = new NeighbourIndex(candidates.x, candidates.y);
  const spacing2 = minSpacing * minSpacing;
  const farEnough = (c: number, placed: readonly number[], skipSlot: number): boolean => {
    if (spacing2 <= 0) {
      for (let s = 0; s < placed.length; s++) if (s !== skipSlot && placed[s] === c) return false;
      return true;
    }
    for (let s = 0; s < placed.length; s++) {
      if (s === skipSlot || placed[s] < 0) continue;
      const dx = candidates.x[c] - candidates.x[placed[s]];
      const dy = candidates.y[c] - candidates.y[placed[s]];
      if (dx * dx + dy * dy < spacing2) return false;
    }
    return true;
  };
  const snap = (x: number, y: number, placed: readonly number[], slot: number): number => {
    for (let k = 16; ; k *= 4) {
      const ids = candIndex.nearest(x, y, Math.min(k, mC));
      for (const c of ids) if (farEnough(c, placed, slot)) return c;
      if (k >= mC) return -1;
    }
  };
  return { farEnough, snap };
}

/** k-means++ seeding over the candidates, weighted by the squared distance to the nearest centre (fixed samples included). */
function seedSites(problem: CoverageProblem, rules: SpacingRules, candFixed: Float64Array, rnd: ReturnType<typeof createRandom>): number[] {
  const { candidates, count } = problem;
  const mC = candidates.x.length;
  const sites: number[] = [];
  const dCand = Float64Array.from(candFixed);
  for (let s = 0; s < count; s++) {
    let total = 0;
    for (let c = 0; c < mC; c++) if (rules.farEnough(c, sites, -1)) total += Number.isFinite(dCand[c]) ? dCand[c] : 1;
    if (!(total > 0)) break;
    let r = rnd.uniform() * total;
    let pick = -1;
    for (let c = 0; c < mC; c++) {
      if (!rules.farEnough(c, sites, -1)) continue;
      pick = c;
      r -= Number.isFinite(dCand[c]) ? dCand[c] : 1;
      if (r < 0) break;
    }
    if (pick < 0) break;
    sites.push(pick);
    for (let c = 0; c < mC; c++) {
      const dx = candidates.x[c] - candidates.x[pick];
      const dy = candidates.y[c] - candidates.y[pick];
      const d = dx * dx + dy * dy;
      if (!(d >= dCand[c])) dCand[c] = d;
    }
  }
  return sites;
}

/** Lloyd iterations: each site moves to the candidate nearest the centroid of the points it owns, until none moves; returns the iterations. */
function lloydIterations(problem: CoverageProblem, rules: SpacingRules, dFixed: Float64Array, sites: number[]): number {
  const { points, candidates } = problem;
  const m = points.x.length;
  const k = sites.length;
  const sx = new Float64Array(k);
  const sy = new Float64Array(k);
  const sumX = new Float64Array(k);
  const sumY = new Float64Array(k);
  const members = new Float64Array(k);
  let iterations = 0;
  for (; iterations < problem.maxIterations; iterations++) {
    for (let s = 0; s < k; s++) {
      sx[s] = candidates.x[sites[s]];
      sy[s] = candidates.y[sites[s]];
    }
    sumX.fill(0);
    sumY.fill(0);
    members.fill(0);
    for (let q = 0; q < m; q++) {
      let bestD = dFixed[q];
      let owner = -1;
      const px = points.x[q];
      const py = points.y[q];
      for (let s = 0; s < k; s++) {
        const dx = px - sx[s];
        const dy = py - sy[s];
        const d = dx * dx + dy * dy;
        if (d < bestD) {
          bestD = d;
          owner = s;
        }
      }
      if (owner >= 0) {
        sumX[owner] += px;
        sumY[owner] += py;
        members[owner]++;
      }
    }
    let moved = false;
    for (let s = 0; s < k; s++) {
      if (members[s] === 0) continue;
      const c = rules.snap(sumX[s] / members[s], sumY[s] / members[s], sites, s);
      if (c >= 0 && c !== sites[s]) {
        sites[s] = c;
        moved = true;
      }
    }
    if (!moved) break;
  }
  return iterations;
}

/** Runs the constrained k-means; fewer sites than asked when the constraints leave no room. */
export function coverageDesign(problem: CoverageProblem, isCancelled?: () => boolean): CoverageResult {
  const { points, fixed, candidates } = problem;
  const m = points.x.length;
  if (m === 0) throw new GapwiseError('bad-option', 'The area holds no grid points; expected at least one: choose a smaller cell.');
  const dFixed = fixedDistances(points, fixed);
  // Squared distance of each candidate to the nearest fixed sample (for k-means++ seeding).
  const candFixed = fixedDistances(candidates, fixed);
  const rules = spacingRules(candidates, problem.minSpacing);
  let best: { sites: number[]; objective: number; iterations: number } | null = null;
  let iterationsTotal = 0;
  for (let restart = 0; restart < problem.restarts; restart++) {
    if (isCancelled?.()) throw new GapwiseError('cancelled', `The coverage design was stopped after ${restart} restarts.`);
    const rnd = createRandom((problem.seed >>> 0) + 7919 * restart);
    const sites = seedSites(problem, rules, candFixed, rnd);
    const iterations = lloydIterations(problem, rules, dFixed, sites);
    iterationsTotal += iterations + 1;
    const sxs = sites.map((c) => candidates.x[c]);
    const sys = sites.map((c) => candidates.y[c]);
    const objective = objectiveWith(points, dFixed, sxs, sys, -1);
    if (!best || objective < best.objective || (objective === best.objective && sites.length > best.sites.length)) {
      best = { sites: [...sites], objective, iterations: iterations + 1 };
    }
  }
  const chosen = best?.sites ?? [];
  const sxs = chosen.map((c) => candidates.x[c]);
  const sys = chosen.map((c) => candidates.y[c]);
  const objectiveAfter = best?.objective ?? objectiveWith(points, dFixed, [], [], -1);
  const sites: CoverageSite[] = chosen.map((c, s) => ({
    index: c, x: candidates.x[c], y: candidates.y[c],
    benefit: objectiveWith(points, dFixed, sxs, sys, s) - objectiveAfter,
  }));
  sites.sort((a, b) => b.benefit - a.benefit || a.index - b.index);
  let before = 0;
  for (let q = 0; q < m; q++) before += dFixed[q];
  return { sites, objectiveBefore: before / m, objectiveAfter, iterations: iterationsTotal };
}
