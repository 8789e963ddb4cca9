/**
 * Simulation benchmark: 100 conditional realisations of a 200 × 200 grid from 500 samples (Matérn
 * ν = 3/2 plus a nugget, ordinary kriging, point support, with a threshold so P(exceed) and the area
 * summary are computed too), on one thread and shared out over worker threads (src/cli/simulation-pool.ts,
 * one per core: the same realisations and area); also block support (2 × 2) with 10 realisations, the
 * circulant embedding alone and a 512 × 512 FFT. Target: the 100 realisations in under 30 s.
 * CPU seconds are the whole process's (worker threads included).
 * Run alone: `npx tsx bench/simulation.ts` (`--quick`: 100 × 100 grid, 20 realisations), or via
 * `npx tsx bench/run.ts simulation`. `--large` runs only the 5,000-sample case: 20 realisations of the
 * 200 × 200 grid with the conditioning chosen by cost (src/core/simulation/simulation-path.ts), on
 * local neighbourhoods of 64 as before the choice (which also built the 5,000 × 5,000 dense system:
 * its time is printed apart), and on the exact path.
 */
import { waveSamples, type Row } from './common.ts';
import { pathToFileURL } from 'node:url';
import { availableParallelism } from 'node:os';
import { simulateParallel, simulationThreads } from '../src/cli/simulation-pool.ts';
import { simulateConditional, type ConditionalSimulationResult } from '../src/core/simulation/conditional-simulation.ts';
import { createCirculantEmbedding } from '../src/core/simulation/circulant-embedding.ts';
import { createFft2Plan } from '../src/core/simulation/fft.ts';
import { buildKrigingSystem } from '../src/core/prediction/kriging.ts';
import type { CovarianceModel } from '../src/core/covariance/model.ts';
import type { Samples } from '../src/core/shared/samples.ts';
import type { Grid } from '../src/core/geometry/grid.ts';

const MODEL: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 150, nu: 1.5 }],
  trend: 'constant',
  transform: 'none',
};

/** The benchmark's invented samples (bench/common.ts). */
function makeSamples(n: number, seed: number): Samples {
  return waveSamples(n, { side: 1000, amplitude: 5, lengthX: 200, lengthY: 260, seed });
}

/** Wall and CPU seconds (all threads of the process) of an asynchronous call. */
async function timeAsync<T>(f: () => Promise<T>): Promise<{ value: T; seconds: number; cpu: number }> {
  const c = process.cpuUsage();
  const t = performance.now();
  const value = await f();
  const used = process.cpuUsage(c);
  return { value, seconds: (performance.now() - t) / 1000, cpu: (used.user + used.system) / 1e6 };
}

function time(f: () => void): number {
  const t = performance.now();
  f();
  return (performance.now() - t) / 1000;
}

/** The 5,000-sample rows (see the header). */
async function largeRows(): Promise<Row[]> {
  const n = 5000;
  const samples = makeSamples(n, 2);
  const grid: Grid = { x0: 500000, y0: 6001000, cell: 5, nx: 200, ny: 200 };
  const count = 20;
  const log = (s: string) => console.error(`  ${s}`);
  const auto = await timeAsync(() => simulateParallel(samples, MODEL, grid, { count, seed: 1, keepRealisations: false }, { workers: 1, choose: {} }));
  const p = auto.value.path!;
  const how = `${p.choice.path}${p.neighbours ? ` (${p.neighbours} neighbours)` : ''}: ${p.choice.reason}${p.accuracy ? `; measured mean ${p.accuracy.mean.max.toFixed(2)} %, sd ${p.accuracy.sd.max.toFixed(2)} % of the prior sd` : ''}`;
  log(`5,000 samples, chosen by cost: ${auto.seconds.toFixed(2)} s (CPU ${auto.cpu.toFixed(2)} s), ${how}`);
  const local = await timeAsync(async () => simulateConditional(samples, MODEL, grid, { count, seed: 1, keepRealisations: false, path: 'local', neighbours: 64 }));
  const dense = await timeAsync(async () => buildKrigingSystem(samples, MODEL));
  log(`5,000 samples, local 64 without the dense system: ${local.seconds.toFixed(2)} s; the dense system the earlier code built as well: ${dense.seconds.toFixed(2)} s`);
  const exact = await timeAsync(async () => simulateConditional(samples, MODEL, grid, { count, seed: 1, keepRealisations: false, path: 'exact' }));
  log(`5,000 samples, exact: ${exact.seconds.toFixed(2)} s (CPU ${exact.cpu.toFixed(2)} s)`);
  return [
    { name: `${count} realisations, 200 × 200, 5,000 samples, chosen by cost`, n, seconds: auto.seconds, note: `1 thread; ${how}` },
    { name: `${count} realisations, 200 × 200, 5,000 samples, local 64 (before: + dense system)`, n, seconds: local.seconds + dense.seconds, note: `local ${local.seconds.toFixed(2)} s + the dense 5,000 × 5,000 system ${dense.seconds.toFixed(2)} s the earlier code built on this path too` },
    { name: `${count} realisations, 200 × 200, 5,000 samples, exact`, n, seconds: exact.seconds, note: '1 thread; kriging from all samples' },
  ];
}

/** Runs the simulation benchmarks and returns one row per figure. */
export async function runSimulationBench(options: { quick?: boolean; large?: boolean } = {}): Promise<Row[]> {
  if (options.large) return largeRows();
  const side = options.quick ? 100 : 200;
  const count = options.quick ? 20 : 100;
  const n = 500;
  const samples = makeSamples(n, 1);
  const grid: Grid = { x0: 500000, y0: 6001000, cell: 1000 / side, nx: side, ny: side };
  const rows: Row[] = [];
  const log = (s: string) => console.error(`  ${s}`);

  const areaText = (r: ConditionalSimulationResult) => `area above 42: median ${Math.round(r.area!.area.median)} m² (5–95 %: ${Math.round(r.area!.area.p05)}–${Math.round(r.area!.area.p95)})`;
  const point = await timeAsync(async () => simulateConditional(samples, MODEL, grid, { count, seed: 1, threshold: 42 }));
  const r1 = point.value;
  const lattice = `lattice ${r1.lattice.nx} × ${r1.lattice.ny}, torus ${r1.lattice.torus.join(' × ')}, ${areaText(r1)}`;
  log(`point, 1 thread: ${point.seconds.toFixed(2)} s (CPU ${point.cpu.toFixed(2)} s; ${lattice})`);
  rows.push({ name: `${count} conditional realisations, ${side} × ${side} grid, point support`, n, seconds: point.seconds, note: `1 thread; CPU ${point.cpu.toFixed(2)} s; Matérn 3/2 + nugget, OK; ${lattice}` });

  const threads = simulationThreads(count, availableParallelism());
  const par = await timeAsync(() => simulateParallel(samples, MODEL, grid, { count, seed: 1, threshold: 42 }, { workers: threads }));
  const same = par.value.realisations!.every((v, r) => v.every((x, k) => Object.is(x, r1.realisations![r][k])));
  log(`point, ${threads} threads: ${par.seconds.toFixed(2)} s (CPU ${par.cpu.toFixed(2)} s; ${areaText(par.value)}; realisations ${same ? 'equal to' : 'DIFFERENT from'} 1 thread)`);
  rows.push({
    name: `${count} conditional realisations, ${side} × ${side} grid, point, ${threads} threads`, n, seconds: par.seconds, threads,
    note: `simulateParallel, ${threads} worker threads of ${availableParallelism()} cores; CPU ${par.cpu.toFixed(2)} s; ${point.seconds > 0 ? `${(point.seconds / par.seconds).toFixed(2)}× the 1-thread speed; ` : ''}realisations ${same ? 'bit for bit' : 'NOT'} equal to 1 thread, ${areaText(par.value)}`,
  });

  const blockCount = options.quick ? 5 : 10;
  const tBlock = time(() => simulateConditional(samples, MODEL, grid, { count: blockCount, seed: 1, support: 'block', blockPoints: 2, threshold: 42 }));
  log(`block: ${tBlock.toFixed(2)} s`);
  rows.push({ name: `${blockCount} conditional realisations, ${side} × ${side} grid, 2 × 2 block support`, n, seconds: tBlock, note: 'lattice spacing cell/2' });

  let torus = '';
  const tEmbed = time(() => {
    const e = createCirculantEmbedding(MODEL, { nx: side + 6, ny: side + 6, spacing: grid.cell });
    torus = `${e.mx} × ${e.my}, ${e.paddingSteps} padding steps`;
  });
  rows.push({ name: `circulant embedding of a ${side + 6} × ${side + 6} lattice`, n: 0, seconds: tEmbed, note: torus });

  const plan = createFft2Plan(512, 512);
  const re = new Float64Array(512 * 512).map((_, k) => Math.sin(k));
  const im = new Float64Array(512 * 512);
  plan.transform(re, im);
  const reps = 5;
  const tFft = time(() => { for (let k = 0; k < reps; k++) plan.transform(re, im); }) / reps;
  rows.push({ name: '2-D FFT 512 × 512 (complex)', n: 0, seconds: tFft, note: `mean of ${reps}` });
  return rows;
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const rows = await runSimulationBench({ quick: process.argv.includes('--quick'), large: process.argv.includes('--large') });
  for (const row of rows) console.log(`${row.name.padEnd(66)} n=${row.n}  ${row.seconds.toFixed(3)} s  ${row.note ?? ''}`);
}
