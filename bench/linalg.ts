/**
 * Linear algebra benchmark, TypeScript against WebAssembly against numpy/OpenBLAS in one run:
 *   - Cholesky of an n×n covariance matrix (n = 500 / 1,000 / 2,000): the WebAssembly SIMD kernel
 *     (src/core/linalg/linalg-wasm.ts, what choleskyInPlace uses when WebAssembly is there), the blocked
 *     TypeScript factorisation (choleskyBlockedInPlace, the reference and fallback), the plain
 *     unblocked version and ml-matrix 6.15.1 CholeskyDecomposition (skipped where it would take long);
 *   - triangular solves with many right-hand sides, L·X = B and Lᵀ·X = B (n = 2,000, m = 1,000),
 *     WebAssembly and TypeScript;
 *   - the covariance fill of an n×m cross-covariance (Matérn 3/2, n = 2,000, m = 10,000), WebAssembly
 *     (wasmCrossCovarianceInto, what exact predictions use) and TypeScript (covariance.ts
 *     crossCovarianceInto), in million entries per second;
 *   - the same operations in numpy/scipy on the machine's BLAS (bench/reference_linalg.py with
 *     Debian's /usr/bin/python3; Debian links numpy to OpenBLAS), with one BLAS thread and with its
 *     default (one per core): our kernels run on one thread.
 * Figures: wall-clock seconds, median of 3, and GFLOP/s = (n³/3)/t for Cholesky, n²·m/t for a solve;
 * the note gives the process CPU time of the median run and the GFLOP/s per CPU second (the machine may
 * be shared: compare those when wall time is inflated by other work; numpy's CPU time counts all its
 * threads). Run alone: `npx tsx bench/linalg.ts` (`--quick`: small n).
 */
import type { Row } from './common.ts';
import { loadavg } from 'node:os';
import { pathToFileURL } from 'node:url';
import { CholeskyDecomposition, Matrix } from 'ml-matrix';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import {
  choleskyBlockedInPlace, choleskyUnblockedInPlace, solveLowerMultipleJs, solveUpperTransposeMultipleJs,
} from '../src/core/linalg/linalg.ts';
import {
  wasmCholeskyInPlace, wasmCrossCovarianceInto, wasmKernelActive, wasmSolveLowerMultiple, wasmSolveUpperTransposeMultiple,
} from '../src/core/linalg/linalg-wasm.ts';
import { crossCovarianceInto } from '../src/core/covariance/covariance.ts';
import type { CovarianceModel } from '../src/core/covariance/model.ts';
import { createRandom } from '../src/core/shared/random.ts';

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

/** The note: CPU seconds and, for a flop count, GFLOP/s per CPU second (the figure to compare on a busy machine). */
function cpuNote(flops: number | undefined, cpuSeconds: number): string {
  return `cpu ${cpuSeconds.toFixed(3)} s${flops ? `, ${(flops / cpuSeconds / 1e9).toFixed(2)} GFLOP/s of cpu` : ''}`;
}

function row(name: string, n: number, flops: number, t: Timing): Row {
  return { name, n, seconds: t.seconds, gflops: flops / t.seconds / 1e9, cpuSeconds: t.cpuSeconds, note: cpuNote(flops, t.cpuSeconds) };
}

interface NumpyTimes {
  numpy: string;
  threads: string;
  cholesky: Array<{ n: number; seconds: number; cpuSeconds: number }>;
  solve: { n: number; m: number; seconds: number; cpuSeconds: number };
  fill: { n: number; m: number; seconds: number; cpuSeconds: number };
}

/** bench/reference_linalg.py with the given BLAS thread count ('' = its default); undefined when absent. */
function numpyTimes(sizes: number[], solve: [number, number], fill: [number, number], threads: string): NumpyTimes | undefined {
  const dir = mkdtempSync(join(tmpdir(), 'gapwise-linalg-'));
  try {
    const input = join(dir, 'in.json');
    const output = join(dir, 'out.json');
    writeFileSync(input, JSON.stringify({ cholesky: sizes, solve, fill, repeats: 3 }));
    const env = { ...process.env };
    if (threads) env.OPENBLAS_NUM_THREADS = threads;
    else delete env.OPENBLAS_NUM_THREADS;
    const r = spawnSync('/usr/bin/python3', [new URL('./reference_linalg.py', import.meta.url).pathname, input, output], { encoding: 'utf8', env });
    if (r.status !== 0) return undefined;
    return JSON.parse(readFileSync(output, 'utf8')) as NumpyTimes;
  } catch {
    return undefined;
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

function wallRow(name: string, n: number, flops: number | undefined, t: { seconds: number; cpuSeconds: number }, note: string): Row {
  return { name, n, seconds: t.seconds, ...(flops === undefined ? {} : { gflops: flops / t.seconds / 1e9 }), cpuSeconds: t.cpuSeconds,
    note: `${note}; ${cpuNote(flops, t.cpuSeconds)}` };
}

/** Runs the linear algebra benchmarks and returns one row per figure. */
export async function runLinalgBench(options: { quick?: boolean } = {}): Promise<Row[]> {
  const sizes = options.quick ? [300, 600] : [500, 1000, 2000];
  const reps = 3;
  // ml-matrix is skipped at a size when the previous size predicts more than this per run (n³ scaling).
  const mlMatrixBudgetSeconds = 20;
  const rows: Row[] = [];
  if (!wasmKernelActive()) rows.push({ name: 'WebAssembly kernel unavailable: its rows are missing', n: 0, seconds: NaN });
  let mlPrevious: { n: number; seconds: number } | undefined;
  for (const n of sizes) {
    const A = covarianceMatrix(n);
    const flops = (n * n * n) / 3;
    const copy = () => Float64Array.from(A);
    if (wasmKernelActive()) {
      rows.push(row('cholesky WebAssembly SIMD', n, flops, measure(reps, copy, (a) => {
        if (!wasmCholeskyInPlace(a, n, 1)) throw new Error('not positive definite');
      })));
    }
    rows.push(row('cholesky blocked TypeScript', n, flops, measure(reps, copy, (a) => {
      if (!choleskyBlockedInPlace(a, n)) throw new Error('not positive definite');
    })));
    if (n <= 1000) {
      rows.push(row('cholesky unblocked TypeScript', n, flops, measure(reps, copy, (a) => {
        if (!choleskyUnblockedInPlace(a, n)) throw new Error('not positive definite');
      })));
    }
    const predicted = mlPrevious ? mlPrevious.seconds * (n / mlPrevious.n) ** 3 : 0;
    if (predicted > mlMatrixBudgetSeconds) {
      rows.push({ name: 'cholesky ml-matrix', n, seconds: NaN, note: `skipped: about ${predicted.toFixed(0)} s per run predicted` });
    } else {
      const t = measure(reps, () => new Matrix(Array.from({ length: n }, (_, i) => Array.from(A.subarray(i * n, i * n + n)))), (m) => {
        if (!new CholeskyDecomposition(m).isPositiveDefinite()) throw new Error('not positive definite');
      });
      rows.push(row('cholesky ml-matrix', n, flops, t));
      mlPrevious = { n, seconds: t.seconds };
    }
  }
  // Triangular solves with many right-hand sides, as kriging variances need.
  const n = options.quick ? 500 : 2000;
  const m = options.quick ? 200 : 1000;
  const L = covarianceMatrix(n);
  choleskyBlockedInPlace(L, n);
  const r = createRandom(3);
  const B = Float64Array.from({ length: n * m }, () => r.normal());
  const rhs = () => Float64Array.from(B);
  if (wasmKernelActive()) {
    rows.push(row(`L·X = B WebAssembly (m = ${m})`, n, n * n * m, measure(reps, rhs, (b) => wasmSolveLowerMultiple(L, n, b, m))));
    rows.push(row(`Lᵀ·X = B WebAssembly (m = ${m})`, n, n * n * m, measure(reps, rhs, (b) => wasmSolveUpperTransposeMultiple(L, n, b, m))));
  }
  rows.push(row(`L·X = B TypeScript (m = ${m})`, n, n * n * m, measure(reps, rhs, (b) => solveLowerMultipleJs(L, n, b, m))));
  rows.push(row(`Lᵀ·X = B TypeScript (m = ${m})`, n, n * n * m, measure(reps, rhs, (b) => solveUpperTransposeMultipleJs(L, n, b, m))));

  // Covariance fill: n samples × mf targets, Matérn 3/2 (scale 100 m) plus a nugget.
  const mf = options.quick ? 2000 : 10000;
  const model: CovarianceModel = {
    structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 100, nu: 1.5 }],
    trend: 'constant', transform: 'none',
  };
  const rf = createRandom(5);
  const pu = Float64Array.from({ length: n }, () => 1000 * rf.uniform());
  const pv = Float64Array.from({ length: n }, () => 1000 * rf.uniform());
  const tu = Float64Array.from({ length: mf }, () => 1000 * rf.uniform());
  const tv = Float64Array.from({ length: mf }, () => 1000 * rf.uniform());
  const fillOut = new Float64Array(n * mf);
  const fillRow = (name: string, t: Timing): Row => ({ name: `covariance fill ${name} (${n} × ${mf})`, n, seconds: t.seconds, cpuSeconds: t.cpuSeconds,
    note: `${((n * mf) / t.seconds / 1e6).toFixed(0)} M entries/s; ${cpuNote(undefined, t.cpuSeconds)}` });
  if (wasmKernelActive()) {
    rows.push(fillRow('WebAssembly', measure(reps, () => fillOut, (out) => {
      if (!wasmCrossCovarianceInto(model, pu, pv, tu, tv, out)) throw new Error('declined');
    })));
  }
  rows.push(fillRow('TypeScript', measure(reps, () => fillOut, (out) => crossCovarianceInto(model, pu, pv, tu, tv, out))));

  // numpy / OpenBLAS on the same machine, same sizes.
  for (const threads of ['1', '']) {
    const np = numpyTimes(sizes, [n, m], [n, mf], threads);
    const label = `numpy/OpenBLAS, ${threads ? '1 thread' : 'default threads'}`;
    if (!np) {
      rows.push({ name: `${label}: not available (/usr/bin/python3 with numpy and scipy)`, n: 0, seconds: NaN });
      break;
    }
    for (const c of np.cholesky) rows.push(wallRow(`cholesky ${label}`, c.n, (c.n ** 3) / 3, c, `numpy ${np.numpy}`));
    rows.push(wallRow(`L·X = B ${label} (m = ${np.solve.m})`, np.solve.n, np.solve.n ** 2 * np.solve.m, np.solve, 'scipy solve_triangular'));
    rows.push(wallRow(`covariance fill ${label} (${np.fill.n} × ${np.fill.m})`, np.fill.n, undefined, np.fill,
      `${((np.fill.n * np.fill.m) / np.fill.seconds / 1e6).toFixed(0)} M entries/s; cdist + exp`));
  }
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
