// `npm run bench`: runs every benchmark in bench/ and prints one table (and writes
// bench/results/bench.json). Figures are medians of several runs where a benchmark says so.
// Select some with names: `npm run bench -- linalg kriging`. `--quick` asks each for small sizes.
import { mkdirSync, writeFileSync } from 'node:fs';
import { cpus, totalmem } from 'node:os';
import type { Row } from './common.ts';

export type BenchRow = Row;

const SUITES: Record<string, { file: string; fn: string }> = {
  linalg: { file: './linalg.ts', fn: 'runLinalgBench' },
  kriging: { file: './kriging.ts', fn: 'runKrigingBench' },
  fit: { file: './fit.ts', fn: 'runFitBench' },
  intake: { file: './intake.ts', fn: 'runIntakeBench' },
  large: { file: './large.ts', fn: 'runLargeBench' },
  design: { file: './design.ts', fn: 'runDesignBench' },
  simulation: { file: './simulation.ts', fn: 'runSimulationBench' },
  contours: { file: './contours.ts', fn: 'runContoursBench' },
  ship: { file: './ship.ts', fn: 'runShipBench' },
};

function format(rows: BenchRow[]): string {
  const head = ['suite', 'benchmark', 'n', 'seconds', 'GFLOP/s', 'note'];
  const body = rows.map((r) => [
    String(r.suite ?? ''), r.name, r.n.toLocaleString('en-US'), r.seconds.toFixed(3),
    r.gflops === undefined ? '' : r.gflops.toFixed(2), r.note ?? '',
  ]);
  const widths = head.map((h, i) => Math.max(h.length, ...body.map((b) => b[i].length)));
  const line = (cells: string[]) => cells.map((c, i) => c.padEnd(widths[i])).join('  ');
  return [line(head), line(widths.map((w) => '-'.repeat(w))), ...body.map(line)].join('\n');
}

async function main(): Promise<void> {
  const args = process.argv.slice(2);
  const quick = args.includes('--quick');
  const wanted = args.filter((a) => !a.startsWith('--'));
  const names = wanted.length ? wanted : Object.keys(SUITES);
  const all: BenchRow[] = [];
  for (const name of names) {
    const suite = SUITES[name];
    if (!suite) {
      console.error(`Unknown benchmark "${name}"; expected one of ${Object.keys(SUITES).join(', ')}.`);
      process.exitCode = 2;
      return;
    }
    let mod: Record<string, unknown>;
    try {
      mod = await import(suite.file);
    } catch {
      console.error(`(${name}: ${suite.file} not present, skipped)`);
      continue;
    }
    const run = mod[suite.fn] as (o: { quick: boolean }) => Promise<BenchRow[]>;
    console.error(`running ${name} ...`);
    const rows = await run({ quick });
    for (const r of rows) all.push({ suite: name, ...r });
  }
  console.log(format(all));
  mkdirSync(new URL('./results/', import.meta.url), { recursive: true });
  const meta = { date: new Date().toISOString(), node: process.version, cpus: cpus().length, cpu: cpus()[0]?.model, memoryGiB: totalmem() / 2 ** 30 };
  writeFileSync(new URL('./results/bench.json', import.meta.url), JSON.stringify({ meta, rows: all }, null, 2));
  console.log(`\nwritten bench/results/bench.json (${meta.cpus} cores, ${meta.cpu})`);
}

await main();
