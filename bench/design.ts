/**
 * Design benchmark: 10 new sites from 1,000 samples over an area of about 20,000 candidate cells
 * (Matérn ν = 3/2 plus a nugget, ordinary kriging), by the variance criterion and by the
 * decision-targeted criterion against an action level near the median; also the coverage design
 * without a model. One run each (the greedy is deterministic). Target: under 10 s per design.
 * Run alone: `npx tsx bench/design.ts` (`--quick`: 300 samples, about 5,000 cells), or via `npm run bench`.
 * `--large` adds the variance design from 5,000 samples on the exact posterior (what every design
 * used before the choice by cost) and as chosen automatically (src/core/design/design-path.ts).
 */
import { waveSamples, type Row } from './common.ts';
import { pathToFileURL } from 'node:url';
import { suggestSites, type DesignOptions, type DesignResult } from '../src/core/design/design.ts';
import type { CovarianceModel } from '../src/core/covariance/model.ts';
import type { Samples } from '../src/core/shared/samples.ts';
import type { Polygon } from '../src/core/geometry/grid.ts';

const MODEL: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 250, nu: 1.5 }],
  trend: 'constant',
  transform: 'none',
};

/** The benchmark's invented samples (bench/common.ts). */
function makeSamples(n: number, side: number, seed: number): Samples {
  return waveSamples(n, { side, amplitude: 10, lengthX: 300, lengthY: 400, seed });
}

/** Wall-clock and CPU seconds of one call (CPU time tells a busy shared machine from a slow design). */
function time<T>(f: () => T): { value: T; seconds: number; cpu: number } {
  const t = performance.now();
  const c = process.cpuUsage();
  const value = f();
  const used = process.cpuUsage(c);
  return { value, seconds: (performance.now() - t) / 1000, cpu: (used.user + used.system) / 1e6 };
}

/** Runs the design benchmarks and returns one row per figure. */
export async function runDesignBench(options: { quick?: boolean; large?: boolean } = {}): Promise<Row[]> {
  const n = options.quick ? 300 : 1000;
  const cell = 10;
  const side = options.quick ? 700 : 1410; // 141² ≈ 19,900 cells of 10 m
  const samples = makeSamples(n, side, 1);
  const boundary: Polygon[] = [[[[500000, 6000000], [500000 + side, 6000000], [500000 + side, 6000000 + side], [500000, 6000000 + side], [500000, 6000000]]]];
  const base: DesignOptions = { count: 10, boundary: [boundary[0]], cell };
  const log = (s: string) => process.stderr.write(`  design: ${s}\n`);
  const sorted = Float64Array.from(samples.value).sort();
  const threshold = sorted[Math.floor(n / 2)];
  const describe = (r: DesignResult) =>
    `${r.suggestions.length} sites; ${r.candidatePoints.toLocaleString('en-US')} candidates (${r.screenedCandidates.toLocaleString('en-US')} screened), ${r.evaluationPoints.toLocaleString('en-US')} evaluation points`;

  const variance = time(() => suggestSites(samples, MODEL, { ...base, mode: 'variance' }));
  log(`variance: ${variance.seconds.toFixed(2)} s (CPU ${variance.cpu.toFixed(2)} s), ${describe(variance.value)}, average sd ${variance.value.averageSdBefore!.toFixed(4)} → ${variance.value.averageSdAfter!.toFixed(4)}`);
  const decision = time(() => suggestSites(samples, MODEL, { ...base, mode: 'decision', threshold }));
  log(`decision: ${decision.seconds.toFixed(2)} s (CPU ${decision.cpu.toFixed(2)} s), ${describe(decision.value)}, misclassified ${Math.round(decision.value.misclassifiedAreaBefore!)} → ${Math.round(decision.value.misclassifiedAreaAfter!)} m²`);
  const coverage = time(() => suggestSites(samples, null, { ...base, mode: 'coverage', seed: 1 }));
  log(`coverage: ${coverage.seconds.toFixed(2)} s (CPU ${coverage.cpu.toFixed(2)} s), ${describe(coverage.value)}`);

  const cells = variance.value.candidatePoints;
  const large: Row[] = [];
  if (options.large) {
    const big = makeSamples(5000, side, 2);
    const pathText = (r: DesignResult) => `${r.path!.path}${r.path!.neighbours ? ` (${r.path!.neighbours} neighbours)` : ''}: ${r.path!.reason}${r.path!.accuracy ? `; measured mean ${r.path!.accuracy.mean.max.toFixed(2)} %, sd ${r.path!.accuracy.sd.max.toFixed(2)} % of the prior sd` : ''}`;
    const exact = time(() => suggestSites(big, MODEL, { ...base, mode: 'variance', path: 'exact' }));
    log(`variance, 5,000 samples, exact posterior: ${exact.seconds.toFixed(2)} s (CPU ${exact.cpu.toFixed(2)} s), average sd ${exact.value.averageSdBefore!.toFixed(4)} → ${exact.value.averageSdAfter!.toFixed(4)}`);
    const auto = time(() => suggestSites(big, MODEL, { ...base, mode: 'variance' }));
    log(`variance, 5,000 samples, chosen automatically: ${auto.seconds.toFixed(2)} s (CPU ${auto.cpu.toFixed(2)} s), ${pathText(auto.value)}, average sd ${auto.value.averageSdBefore!.toFixed(4)} → ${auto.value.averageSdAfter!.toFixed(4)}`);
    large.push(
      { name: 'variance design, 10 sites, 5,000 samples, exact posterior', n: 5000, seconds: exact.seconds, note: `CPU ${exact.cpu.toFixed(2)} s; before the choice every design took this path` },
      { name: 'variance design, 10 sites, 5,000 samples, chosen by cost', n: 5000, seconds: auto.seconds, note: `CPU ${auto.cpu.toFixed(2)} s; ${pathText(auto.value)}` },
    );
  }
  return [
    ...large,
    { name: `variance design, 10 sites over ${cells.toLocaleString('en-US')} cells`, n, seconds: variance.seconds, note: `CPU ${variance.cpu.toFixed(2)} s; ${describe(variance.value)}; Matérn 3/2 + nugget, ordinary kriging; target < 10 s` },
    { name: `decision design, 10 sites over ${cells.toLocaleString('en-US')} cells`, n, seconds: decision.seconds, note: `CPU ${decision.cpu.toFixed(2)} s; ${describe(decision.value)}; threshold at the median; target < 10 s` },
    { name: `coverage design, 10 sites over ${cells.toLocaleString('en-US')} cells`, n, seconds: coverage.seconds, note: `CPU ${coverage.cpu.toFixed(2)} s; ${describe(coverage.value)}; k-means, 4 restarts` },
  ];
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const rows = await runDesignBench({ quick: process.argv.includes('--quick'), large: process.argv.includes('--large') });
  for (const row of rows) console.log(`${row.name.padEnd(52)} n=${row.n}  ${row.seconds.toFixed(3)} s  ${row.note ?? ''}`);
}
