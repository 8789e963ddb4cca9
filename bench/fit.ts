// Model-fitting benchmark: REML fit of a Matérn ν = 3/2 (fixed) + nugget model on invented simulated
// samples in a 1 km square (true scale 150 m, sill 1, nugget 0.1), and the cost of one likelihood
// evaluation. n = 500: median of 3 runs; n = 2,000: one run (skipped with --quick). Then a REML fit
// with two covariates in the mean (a distance and a three-level category) on 2,000 samples (500 with
// --quick).
// Alone: `npx tsx bench/fit.ts [--quick]`; with the others: `npm run bench -- fit`.
import type { Row } from './common.ts';
import { pathToFileURL } from 'node:url';
import { fitModel } from '../src/core/fit.ts';
import { createLikelihood } from '../src/core/likelihood.ts';
import { simulateSamples } from '../src/core/simulate.ts';
import type { CorrelatedStructure, CovarianceModel } from '../src/core/model.ts';
import type { Samples } from '../src/core/samples.ts';
import { encodeCovariates, resolveCovariateTrend, type CovariateColumn } from '../src/core/covariates.ts';

const truth: CovarianceModel = {
  structures: [{ type: 'nugget', sill: 0.1 }, { type: 'matern', sill: 1, scale: 150, nu: 1.5 }],
  trend: 'constant',
  transform: 'none',
};

function invented(n: number): Samples {
  // Simulating 2,000 points needs one 2,000² Cholesky; it is not part of the timed fit.
  return simulateSamples(truth, { count: n, extent: { xmin: 0, ymin: 0, xmax: 1000, ymax: 1000 }, seed: 42 });
}

function median(v: number[]): number {
  const s = [...v].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

function describeFit(m: CovarianceModel): string {
  const c = m.structures.find((s) => s.type !== 'nugget') as CorrelatedStructure;
  const nugget = m.structures.find((s) => s.type === 'nugget')?.sill ?? 0;
  const f = m.fit!;
  return `scale ${c.scale.toFixed(1)} m, sill ${c.sill.toFixed(3)}, nugget ${nugget.toFixed(3)}; ${f.evaluations} full + ${f.screenEvaluations} subset evaluations${f.converged ? '' : ', NOT converged'}`;
}

export async function runFitBench(options: { quick?: boolean } = {}): Promise<Row[]> {
  const rows: Row[] = [];
  const sizes: [number, number][] = options.quick ? [[500, 1]] : [[500, 3], [2000, 1]];
  for (const [n, runs] of sizes) {
    const samples = invented(n);
    const lik = createLikelihood(samples, { family: 'matern', nu: 1.5, trend: 'constant', method: 'reml' });
    const evalTimes: number[] = [];
    for (let r = 0; r < runs; r++) {
      const t0 = performance.now();
      lik.evaluate({ scale: 150 + r, nuggetRatio: 0.1 });
      evalTimes.push((performance.now() - t0) / 1000);
    }
    rows.push({ name: 'REML likelihood, one evaluation (Matérn 3/2 + nugget)', n, seconds: median(evalTimes), note: runs > 1 ? `median of ${runs}` : '1 run' });
    const times: number[] = [];
    let last: CovarianceModel | undefined;
    for (let r = 0; r < runs; r++) {
      const t0 = performance.now();
      last = fitModel(samples, { family: 'matern', nu: 1.5, method: 'reml' });
      times.push((performance.now() - t0) / 1000);
    }
    rows.push({ name: 'REML fit, Matérn 3/2 (fixed ν) + nugget', n, seconds: median(times), note: `${runs > 1 ? `median of ${runs}` : '1 run'}; ${describeFit(last!)}` });
  }
  rows.push(covariateFitRow(options.quick ? 500 : 2000));
  return rows;
}

/**
 * The invented samples with two covariates: the distance to an invented point source (300, 700) and a
 * three-level category by region, with the values shifted by −0.002 per metre and by level (0, 0.8, −0.5).
 */
function covariateSamples(n: number): { samples: Samples; columns: Record<string, CovariateColumn> } {
  const base = invented(n);
  const dist = Float64Array.from(base.x, (x, i) => Math.hypot(x - 300, base.y[i] - 700));
  const codes = Uint32Array.from(base.x, (x, i) => (x < 400 ? 0 : base.y[i] < 500 ? 1 : 2));
  const shift = [0, 0.8, -0.5];
  const value = Float64Array.from(base.value, (v, i) => v - 0.002 * dist[i] + shift[codes[i]]);
  return { samples: { ...base, value }, columns: { dist: { kind: 'numeric', values: dist }, soil: { kind: 'text', codes, levels: ['clay', 'loam', 'sand'] } } };
}

export function covariateFitRow(n: number): Row {
  const { samples, columns } = covariateSamples(n);
  const trend = resolveCovariateTrend({ covariates: ['dist', 'soil'] }, columns);
  const withCovariates = { ...samples, covariates: encodeCovariates(trend, columns, n) };
  const t0 = performance.now();
  const c0 = process.cpuUsage();
  const m = fitModel(withCovariates, { family: 'matern', nu: 1.5, method: 'reml', trend });
  const seconds = (performance.now() - t0) / 1000;
  const cpu = process.cpuUsage(c0);
  const cpuSeconds = (cpu.user + cpu.system) / 1e6;
  const k = (m.fit!.coefficients as Array<{ name: string; estimate: number; standardError: number }>)
    .map((c) => `${c.name} ${c.estimate.toFixed(4)} ± ${c.standardError.toFixed(4)}`).join(', ');
  return { name: 'REML fit with two covariates (distance, 3-level category)', n, seconds, cpuSeconds, note: `1 run, ${cpuSeconds.toFixed(2)} s CPU; ${describeFit(m)}; ${k}` };
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const rows = await runFitBench({ quick: process.argv.includes('--quick') });
  for (const r of rows) console.log(`${r.name.padEnd(56)} n=${String(r.n).padStart(5)}  ${r.seconds.toFixed(3).padStart(8)} s  ${r.note ?? ''}`);
}
