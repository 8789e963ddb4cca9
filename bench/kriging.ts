/**
 * Kriging benchmark: build a predictor for n = 2,000 samples (Matérn ν = 3/2 plus a nugget, ordinary
 * kriging) and predict mean and sd at 40,000 targets (median of 3 runs); also the mean alone and the
 * closed-form leave-one-out. The sd costs n² flops per target (one forward triangular solve), so the
 * figure is dominated by L⁻¹k₀ for 40,000 right-hand sides: GFLOP/s counts those n²·targets flops.
 * Run alone: `npx tsx bench/kriging.ts` (`--quick`: n = 500, 5,000 targets), or via `npm run bench`.
 */
import { waveSamples, type Row } from './common.ts';
import { pathToFileURL } from 'node:url';
import { createPredictor } from '../src/core/prediction/kriging.ts';
import { leaveOneOut } from '../src/core/validation/cross-validation.ts';
import { createRandom } from '../src/core/shared/random.ts';
import type { CovarianceModel } from '../src/core/covariance/model.ts';
import type { Samples } from '../src/core/shared/samples.ts';

const MODEL: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 400, nu: 1.5 }],
  trend: 'constant',
  transform: 'none',
};

/** The benchmark's invented samples (bench/common.ts). */
function makeSamples(n: number, seed: number): Samples {
  return waveSamples(n, { side: 5000, amplitude: 10, lengthX: 700, lengthY: 900, seed });
}

function median(a: number[]): number {
  const s = [...a].sort((p, q) => p - q);
  const k = s.length >> 1;
  return s.length % 2 ? s[k] : (s[k - 1] + s[k]) / 2;
}

function time(f: () => void): number {
  const t = performance.now();
  f();
  return (performance.now() - t) / 1000;
}

/** Runs the kriging benchmarks and returns one row per figure. */
export async function runKrigingBench(options: { quick?: boolean } = {}): Promise<Row[]> {
  const n = options.quick ? 500 : 2000;
  const m = options.quick ? 5000 : 40000;
  const reps = 3;
  const samples = makeSamples(n, 1);
  const r = createRandom(2);
  const tx = Float64Array.from({ length: m }, () => 500000 + 5000 * r.uniform());
  const ty = Float64Array.from({ length: m }, () => 6000000 + 5000 * r.uniform());
  const log = (s: string) => process.stderr.write(`  kriging: ${s}\n`);

  const build: number[] = [];
  let predictor = createPredictor(samples, MODEL);
  for (let k = 0; k < reps; k++) {
    build.push(time(() => { predictor = createPredictor(samples, MODEL); }));
    log(`build ${k + 1}/${reps}: ${build[k].toFixed(2)} s`);
  }
  const full: number[] = [];
  for (let k = 0; k < reps; k++) {
    full.push(time(() => predictor.predict(tx, ty)));
    log(`predict mean+sd ${k + 1}/${reps}: ${full[k].toFixed(2)} s`);
  }
  const meanOnly: number[] = [];
  for (let k = 0; k < reps; k++) {
    meanOnly.push(time(() => predictor.predict(tx, ty, { sd: false })));
    log(`predict mean ${k + 1}/${reps}: ${meanOnly[k].toFixed(2)} s`);
  }
  const loo = time(() => leaveOneOut(samples, MODEL));
  log(`leave-one-out: ${loo.toFixed(2)} s`);

  const tBuild = median(build);
  const tFull = median(full);
  const tMean = median(meanOnly);
  const model = 'Matérn 3/2 + nugget, ordinary kriging';
  return [
    { name: 'build predictor (K and its Cholesky factor)', n, seconds: tBuild, gflops: n ** 3 / 3 / tBuild / 1e9, note: `${model}; median of ${reps}` },
    { name: `predict mean+sd at ${m.toLocaleString('en-US')} targets`, n, seconds: tFull, gflops: n * n * m / tFull / 1e9, note: `median of ${reps}; GFLOP/s counts the n²·targets of L⁻¹k₀` },
    { name: `predict mean only at ${m.toLocaleString('en-US')} targets`, n, seconds: tMean, note: `median of ${reps}; n covariances per target` },
    { name: 'leave-one-out (closed form)', n, seconds: loo, gflops: (2 * n ** 3) / 3 / loo / 1e9, note: '1 run; Cholesky plus L⁻¹' },
  ];
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const rows = await runKrigingBench({ quick: process.argv.includes('--quick') });
  for (const row of rows) {
    const rate = row.gflops === undefined ? '' : `  ${row.gflops.toFixed(2)} GFLOP/s`;
    console.log(`${row.name.padEnd(48)} n=${row.n}  ${row.seconds.toFixed(3)} s${rate}  ${row.note ?? ''}`);
  }
}
