// Model-fitting benchmark: REML fit of a Matérn ν = 3/2 (fixed) + nugget model on invented simulated
// samples in a 1 km square (true scale 150 m, sill 1, nugget 0.1), and the cost of one likelihood
// evaluation. n = 500: median of 3 runs; n = 2,000: one run (skipped with --quick). Then a REML fit
// with two covariates in the mean (a distance and a three-level category) on 2,000 samples (500 with
// --quick). Then a fitted
// anisotropy (core/fitting/fit-anisotropy.ts: the isotropic fit, then azimuth and ratio) on 1,000 samples of an
// anisotropic field (azimuth 30°, ratio 0.4), one run, target < 20 s (300 samples with --quick).
// Last, several analytes: `gapwise grid` (in process, as a user runs it) on a 200 × 200 grid from
// 500 samples, one analyte and then four (--value a,b,c,d with a model set, one worker pool for all),
// target four < 4 × one.
// Alone: `npx tsx bench/fit.ts [--quick]`; with the others: `npm run bench -- fit`.
import type { Row } from './common.ts';
import { pathToFileURL } from 'node:url';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../src/cli/main.ts';
import { createRandom } from '../src/core/shared/random.ts';
import { fitModel } from '../src/core/fitting/fit.ts';
import { fitAnisotropic } from '../src/core/fitting/fit-anisotropy.ts';
import { createLikelihood } from '../src/core/fitting/likelihood.ts';
import { simulateSamples } from '../src/core/simulation/simulate.ts';
import type { CorrelatedStructure, CovarianceModel } from '../src/core/covariance/model.ts';
import type { Samples } from '../src/core/shared/samples.ts';
import { encodeCovariates, resolveCovariateTrend, type CovariateColumn } from '../src/core/covariance/covariates.ts';

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
  rows.push(anisotropicRow(options.quick ? 300 : 1000));
  rows.push(...(await analyteGridRows(options.quick ? 50 : 200)));
  return rows;
}

/** Runs `gapwise ARGS` in process in `dir`; throws on a non-zero exit. */
async function gapwise(dir: string, ...argv: string[]): Promise<string> {
  let out = '';
  let err = '';
  const code = await main(argv, { stdout: (t) => { out += t; }, stderr: (t) => { err += t; }, cwd: dir, quiet: true });
  if (code !== 0) throw new Error(`gapwise ${argv.join(' ')} exited ${code}: ${err}`);
  return out;
}

export async function analyteGridRows(side: number): Promise<Row[]> {
  const dir = mkdtempSync(join(tmpdir(), 'gapwise-bench-'));
  try {
    // Invented survey: 500 planar samples in a 1 km square, four analytes of different patterns.
    const rng = createRandom(11);
    const lines = ['id,easting,northing,zinc,lead,copper,nickel'];
    for (let i = 0; i < 500; i++) {
      const dx = 1000 * rng.uniform();
      const dy = 1000 * rng.uniform();
      const v = [500 + 150 * Math.sin(dx / 200), 300 + 120 * Math.cos(dy / 150), 40 + 10 * Math.sin((dx + dy) / 250), 20 + 5 * Math.cos((dx - dy) / 300)]
        .map((m) => (m + m * 0.1 * rng.normal()).toFixed(2));
      lines.push(`P${i + 1},${(500000 + dx).toFixed(2)},${(5400000 + dy).toFixed(2)},${v.join(',')}`);
    }
    writeFileSync(join(dir, 'survey.csv'), `${lines.join('\n')}\n`);
    const base = ['--samples', 'survey.csv', '--crs', 'EPSG:32633'];
    await gapwise(dir, 'fit', ...base, '--value', 'zinc,lead,copper,nickel', '--family', 'exponential', '--out', 'set.json');
    const cell = String(1000 / side);
    const grid = ['grid', ...base, '--model', 'set.json', '--cell', cell, '--padding', '0', '--exact'];
    // A warm-up run (module loading, compilation) that is not timed; then one analyte as the plain
    // one-analyte command, then four from the model set.
    await gapwise(dir, ...grid, '--value', 'zinc,lead', '--threshold', 'zinc=600', '--out', 'warm.tif');
    await gapwise(dir, 'fit', ...base, '--value', 'zinc', '--family', 'exponential', '--out', 'zinc.json');
    const s1 = performance.now();
    const u1 = process.cpuUsage();
    await gapwise(dir, 'grid', ...base, '--model', 'zinc.json', '--value', 'zinc', '--cell', cell, '--padding', '0', '--exact', '--threshold', '600', '--out', 'one.tif');
    const oneSeconds = (performance.now() - s1) / 1000;
    const oneCpu = cpuSince(u1);
    const s4 = performance.now();
    const u4 = process.cpuUsage();
    await gapwise(dir, ...grid, '--value', 'zinc,lead,copper,nickel', '--threshold', 'zinc=600,lead=350', '--out', 'four.tif');
    const fourSeconds = (performance.now() - s4) / 1000;
    const fourCpu = cpuSince(u4);
    const cells = `${side} × ${side} cells`;
    return [
      { name: `grid, one analyte, ${cells} (gapwise grid)`, n: 500, seconds: oneSeconds, note: `CPU ${oneCpu.toFixed(1)} s (the process, worker threads included); exact kriging, workers one per core` },
      { name: `grid, four analytes, ${cells} (gapwise grid --value a,b,c,d)`, n: 500, seconds: fourSeconds, note: `CPU ${fourCpu.toFixed(1)} s (the process, worker threads included); ${(fourSeconds / oneSeconds).toFixed(2)} × one analyte in wall time, ${(fourCpu / oneCpu).toFixed(2)} × in CPU; target < 4 ×` },
    ];
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

function cpuSince(start: NodeJS.CpuUsage): number {
  const used = process.cpuUsage(start);
  return (used.user + used.system) / 1e6;
}

/** Wall and CPU seconds of one call. */
function timed<T>(f: () => T): { value: T; seconds: number; cpu: number } {
  const t = performance.now();
  const c = process.cpuUsage();
  const value = f();
  const used = process.cpuUsage(c);
  return { value, seconds: (performance.now() - t) / 1000, cpu: (used.user + used.system) / 1e6 };
}

export function anisotropicRow(n: number): Row {
  const field: CovarianceModel = { ...truth, anisotropy: { azimuth: 30, ratio: 0.4 } };
  const samples = simulateSamples(field, { count: n, extent: { xmin: 0, ymin: 0, xmax: 1000, ymax: 1000 }, seed: 42 });
  const run = timed(() => fitAnisotropic(samples, { family: 'matern', nu: 1.5, method: 'reml' }));
  const m = run.value.model;
  const iso = run.value.isotropic.fit!;
  return {
    name: 'REML fit with anisotropy (isotropic fit + azimuth, ratio)', n, seconds: run.seconds,
    note: `CPU ${run.cpu.toFixed(1)} s; azimuth ${m.anisotropy!.azimuth.toFixed(1)}° (true 30), ratio ${m.anisotropy!.ratio.toFixed(3)} (true 0.4); `
      + `${describeFit(m)}; isotropic part ${iso.evaluations} full evaluations; target < 20 s`,
  };
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
