/**
 * Linear algebra benchmark: Cholesky of an n×n covariance matrix (n = 1,000 / 2,000 / 4,000) with
 *   - the blocked Float64Array factorisation on the hot path (src/core/linalg.ts choleskyInPlace),
 *   - the plain unblocked column-by-column version (choleskyUnblockedInPlace),
 *   - ml-matrix 6.15.1 CholeskyDecomposition (rows as arrays; skipped where it would take too long),
 * and the many-right-hand-side forward solve L·X = B (solveLowerMultiple, n = 2,000, m = 1,000).
 * Figures: wall-clock seconds, median of 3, and GFLOP/s = (n³/3)/t for Cholesky, n²·m/t for the solve;
 * the note gives the process CPU time of the median run (the machine may be shared: compare CPU time
 * when wall time is inflated by other work). Run alone: `npx tsx bench/linalg.ts` (`--quick`: small n).
 */
import type { Row } from './common.ts';
import { loadavg } from 'node:os';
import { pathToFileURL } from 'node:url';
import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { choleskyInPlace, choleskyUnblockedInPlace, solveLowerMultiple } from '../src/core/linalg.ts';
import { createRandom } from '../src/core/random.ts';

/** An exponential covariance (scale 200 m, nugget 0.1) of n random points on a 1 km square. */
function covarianceMatrix(n: number): Float64Array {
  const r = createRandom(n);
  const x = Float64Array.from({ length: n }, () => 1000 * r.uniform());
  const y = Float64Array.from({ length: n }, () => 1000 * r.uniform());
  const A = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < i; j++) {
      const c = Math.exp(-Math.hypot(x[i] - x[j], y[i] - y[j]) / 200);
      A[i * n + j] = c;
      A[j * n + i] = c;
    }
    A[i * n + i] = 1.1;
  }
  return A;
}

interface Timing {
  seconds: number;
  cpuSeconds: number;
}

/** Runs `work` (after `prepare`, untimed) `reps` times; the median run by wall time. */
function measure<T>(reps: number, prepare: () => T, work: (input: T) => void): Timing {
  const runs: Timing[] = [];
  for (let k = 0; k < reps; k++) {
    const input = prepare();
    const cpu0 = process.cpuUsage();
    const t0 = performance.now();
    work(input);
    const seconds = (performance.now() - t0) / 1000;
    const cpu = process.cpuUsage(cpu0);
    runs.push({ seconds, cpuSeconds: (cpu.user + cpu.system) / 1e6 });
  }
  runs.sort((a, b) => a.seconds - b.seconds);
  return runs[runs.length >> 1];
}

function row(name: string, n: number, flops: number, t: Timing): Row {
  return { name, n, seconds: t.seconds, gflops: flops / t.seconds / 1e9, note: `cpu ${t.cpuSeconds.toFixed(3)} s` };
}

/** Runs the linear algebra benchmarks and returns one row per figure. */
export async function runLinalgBench(options: { quick?: boolean } = {}): Promise<Row[]> {
  const sizes = options.quick ? [300, 600] : [1000, 2000, 4000];
  const reps = 3;
  // ml-matrix is skipped at a size when the previous size predicts more than this per run (n³ scaling).
  const mlMatrixBudgetSeconds = 60;
  const rows: Row[] = [];
  let mlPrevious: { n: number; seconds: number } | undefined;
  for (const n of sizes) {
    const A = covarianceMatrix(n);
    const flops = (n * n * n) / 3;
    const copy = () => Float64Array.from(A);
    rows.push(row('cholesky blocked (Float64Array)', n, flops, measure(reps, copy, (a) => {
      if (!choleskyInPlace(a, n)) throw new Error('not positive definite');
    })));
    if (n <= 2000 || options.quick) {
      rows.push(row('cholesky unblocked (Float64Array)', n, flops, measure(reps, copy, (a) => {
        if (!choleskyUnblockedInPlace(a, n)) throw new Error('not positive definite');
      })));
    }
    const predicted = mlPrevious ? mlPrevious.seconds * (n / mlPrevious.n) ** 3 : 0;
    if (predicted > mlMatrixBudgetSeconds) {
      rows.push({ name: 'ml-matrix CholeskyDecomposition', n, seconds: NaN, note: `skipped: about ${predicted.toFixed(0)} s per run predicted` });
    } else {
      const t = measure(reps, () => new Matrix(Array.from({ length: n }, (_, i) => Array.from(A.subarray(i * n, i * n + n)))), (m) => {
        if (!new CholeskyDecomposition(m).isPositiveDefinite()) throw new Error('not positive definite');
      });
      rows.push(row('ml-matrix CholeskyDecomposition', n, flops, t));
      mlPrevious = { n, seconds: t.seconds };
    }
  }
  // Forward solve with many right-hand sides, as kriging variances need.
  const n = options.quick ? 500 : 2000;
  const m = options.quick ? 200 : 1000;
  const L = covarianceMatrix(n);
  choleskyInPlace(L, n);
  const r = createRandom(3);
  const B = Float64Array.from({ length: n * m }, () => r.normal());
  rows.push({
    ...row(`solveLowerMultiple (m = ${m})`, n, n * n * m, measure(reps, () => Float64Array.from(B), (b) => solveLowerMultiple(L, n, b, m))),
  });
  return rows;
}

function printTable(rows: Row[]): void {
  const head = ['benchmark', 'n', 'seconds', 'GFLOP/s', 'note'];
  const body = rows.map((x) => [x.name, x.n.toLocaleString('en-US'), Number.isNaN(x.seconds) ? '-' : x.seconds.toFixed(3),
    x.gflops === undefined ? '' : x.gflops.toFixed(2), x.note ?? '']);
  const widths = head.map((h, i) => Math.max(h.length, ...body.map((b) => b[i].length)));
  const line = (cells: string[]) => cells.map((c, i) => c.padEnd(widths[i])).join('  ');
  console.log([line(head), line(widths.map((w) => '-'.repeat(w))), ...body.map(line)].join('\n'));
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const quick = process.argv.includes('--quick');
  const load = loadavg().map((v) => v.toFixed(1)).join(' ');
  console.log(`linalg benchmark (${quick ? 'quick' : 'full'}), Node ${process.version}, load average at start ${load}`);
  printTable(await runLinalgBench({ quick }));
}
