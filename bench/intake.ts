/**
 * Intake benchmark: a 100,000-row lon/lat CSV (invented: seeded random points in a 20 km square,
 * lead values with some '<5' non-detects) read, validated and projected to UTM by readSamples, plus
 * 10,000-row and boundary-projection figures. Reports wall seconds (median of 3), the process CPU time
 * (wall time is unreliable on a shared, loaded machine) and memory: the change in
 * heapUsed kept by the result (after a collection with --expose-gc) and the rss growth over the read.
 * Targets: under 2 s and about 50 MB beyond the file for 100,000 rows.
 * File figures: a lon/lat CSV written block by block to a temporary folder (never whole in memory) and
 * read the command line's way (its bytes streamed from the disk through readSamplesStream: parsed,
 * validated, projected to UTM, duplicates and outliers checked, stored by column), each size in a fresh
 * process so that its peak RSS (process.resourceUsage().maxRSS) is its own: seconds, rows per second,
 * CPU and peak RSS for 1 M rows and for the row limit (10 M rows); a file one row past the limit, to
 * time the refusal. Target for 10 M rows: under 60 s and under 2 GB.
 * Run alone: `npx tsx bench/intake.ts` (`--quick`: 20,000 rows, smaller files), `--files` for only
 * the file figures (`--files --rows 10000000` for one size), or via `npm run bench -- intake`.
 */
import type { Row } from './common.ts';
import { pathToFileURL, fileURLToPath } from 'node:url';
import { spawnSync } from 'node:child_process';
import { closeSync, mkdtempSync, openSync, rmSync, statSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { readSamples, readSamplesStream } from '../src/io/intake.ts';
import { MAX_SAMPLE_ROWS } from '../src/io/intake-limits.ts';
import { openInputFile } from '../src/cli/input-file.ts';
import { GapwiseError } from '../src/core/shared/errors.ts';
import { projectPolygons, readPolygons } from '../src/io/boundary.ts';
import { createRandom } from '../src/core/shared/random.ts';

/** Invented lon/lat samples near 11.3° E, 48.5° N (seeded). */
export function makeLonLatCsv(n: number, seed = 7): string {
  const rnd = createRandom(seed);
  const lines = ['sample_id,lon,lat,Pb (mg/kg)'];
  for (let i = 0; i < n; i++) {
    const lon = (11.2 + 0.27 * rnd.uniform()).toFixed(7);
    const lat = (48.4 + 0.18 * rnd.uniform()).toFixed(7);
    const v = Math.exp(3.5 + rnd.normal());
    lines.push(`S${i},${lon},${lat},${v < 5 ? '<5' : v.toFixed(1)}`);
  }
  return lines.join('\n') + '\n';
}

const MB = 1024 * 1024;

/** Writes the same invented rows as makeLonLatCsv to a file, block by block (the text is never whole). */
export function writeLonLatCsv(path: string, n: number, seed = 7): number {
  const rnd = createRandom(seed);
  const fd = openSync(path, 'w');
  let block = 'sample_id,lon,lat,Pb (mg/kg)\n';
  for (let i = 0; i < n; i++) {
    const lon = (11.2 + 0.27 * rnd.uniform()).toFixed(7);
    const lat = (48.4 + 0.18 * rnd.uniform()).toFixed(7);
    const v = Math.exp(3.5 + rnd.normal());
    block += `S${i},${lon},${lat},${v < 5 ? '<5' : v.toFixed(1)}\n`;
    if (block.length > 1 << 20) {
      writeSync(fd, block);
      block = '';
    }
  }
  writeSync(fd, block);
  closeSync(fd);
  return statSync(path).size;
}

/** In a child process: reads `file` as the command line does and prints seconds, peak RSS and rows. */
async function childRead(file: string): Promise<void> {
  const t0 = performance.now();
  const c0 = process.cpuUsage();
  let rows = 0;
  let refused = '';
  try {
    const { size, chunks } = openInputFile('.', file);
    const result = await readSamplesStream(chunks, { fileName: file }, { totalBytes: size });
    rows = result.report.rowsUsed;
  } catch (e) {
    if (!(e instanceof GapwiseError)) throw e;
    refused = e.message;
  }
  const seconds = (performance.now() - t0) / 1000;
  const c1 = process.cpuUsage(c0);
  const cpu = (c1.user + c1.system) / 1e6;
  // maxRSS is in KiB: the figure is in MiB.
  const peakMB = process.resourceUsage().maxRSS / 1024;
  console.log(JSON.stringify({ seconds, cpu, peakMB, rows, refused }));
}

/** Reads a generated file of n rows in a fresh process; one figure. */
function fileFigure(dir: string, n: number): Row {
  const path = join(dir, `intake-${n}.csv`);
  const bytes = writeLonLatCsv(path, n);
  const self = fileURLToPath(import.meta.url);
  const child = spawnSync(process.execPath, [...process.execArgv, self, '--child', path], { encoding: 'utf8', maxBuffer: 1 << 24 });
  rmSync(path, { force: true });
  if (child.status !== 0) throw new Error(`bench child failed: ${child.stderr}`);
  const r = JSON.parse(child.stdout.trim().split('\n').pop() as string) as { seconds: number; cpu: number; peakMB: number; rows: number; refused: string };
  const what = r.refused ? `refused: "${r.refused}"` : `${r.rows.toLocaleString('en-US')} rows used, ${Math.round(n / r.seconds).toLocaleString('en-US')} rows/s`;
  return { name: 'CSV file streamed → samples (CLI path)', n, seconds: r.seconds, note: `CPU ${r.cpu.toFixed(1)} s (all threads); file ${(bytes / MB).toFixed(0)} MB; peak RSS ${r.peakMB.toFixed(0)} MiB = ${(r.peakMB * 1.048576).toFixed(0)} MB (whole process); ${what}` };
}

/** The file figures: 1 M rows (quick: 100,000), the row limit (10 M rows) and one row past it; `sizes` picks others. */
export function runIntakeFileBench(options: { quick?: boolean; sizes?: number[] } = {}): Row[] {
  const dir = mkdtempSync(join(tmpdir(), 'gapwise-bench-intake-'));
  try {
    const sizes = options.sizes ?? (options.quick ? [100_000] : [1_000_000, MAX_SAMPLE_ROWS, MAX_SAMPLE_ROWS + 1]);
    return sizes.map((n) => fileFigure(dir, n));
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

function gc(): void {
  const g = (globalThis as { gc?: () => void }).gc;
  if (g) g();
}

function gcNote(): string {
  return (globalThis as { gc?: unknown }).gc ? '' : ' (no --expose-gc: heap includes garbage)';
}

function median(a: number[]): number {
  const s = [...a].sort((x, y) => x - y);
  return s[Math.floor(s.length / 2)];
}

function timeRead(text: string, reps: number): { seconds: number; cpu: number; heapMB: number; rssMB: number; used: number } {
  const times: number[] = [];
  const cpus: number[] = [];
  let heapMB = 0;
  let rssMB = 0;
  let used = 0;
  for (let r = 0; r < reps; r++) {
    gc();
    const before = process.memoryUsage();
    const c0 = process.cpuUsage();
    const t0 = performance.now();
    const result = readSamples(text, { fileName: 'bench.csv' });
    times.push((performance.now() - t0) / 1000);
    const c1 = process.cpuUsage(c0);
    cpus.push((c1.user + c1.system) / 1e6);
    const peakRss = process.memoryUsage().rss;
    gc();
    const after = process.memoryUsage();
    // Heap measured while the result is still alive (after a collection when --expose-gc is on): what
    // a caller holding the result keeps. rss right after the read: closer to the peak.
    heapMB = Math.max(heapMB, (after.heapUsed - before.heapUsed) / MB);
    rssMB = Math.max(rssMB, (peakRss - before.rss) / MB);
    used = result.report.rowsUsed;
  }
  return { seconds: median(times), cpu: median(cpus), heapMB, rssMB, used };
}

/** Runs the intake benchmarks and returns one row per figure. */
export async function runIntakeBench(options: { quick?: boolean } = {}): Promise<Row[]> {
  const n = options.quick ? 20_000 : 100_000;
  const rows: Row[] = [];
  const small = makeLonLatCsv(10_000, 3);
  timeRead(small, 1); // warm-up: JIT and the CRS definitions
  const s = timeRead(small, 3);
  rows.push({ name: 'readSamples lon/lat CSV → UTM', n: 10_000, seconds: s.seconds, note: `median of 3; CPU ${s.cpu.toFixed(3)} s; heapUsed kept +${s.heapMB.toFixed(1)} MB, rss +${s.rssMB.toFixed(1)} MB${gcNote()}` });
  const text = makeLonLatCsv(n);
  const fileMB = Buffer.byteLength(text) / MB;
  const big = timeRead(text, 3);
  rows.push({
    name: 'readSamples lon/lat CSV → UTM',
    n,
    seconds: big.seconds,
    note: `median of 3; CPU ${big.cpu.toFixed(3)} s (all threads); file ${fileMB.toFixed(1)} MB; heapUsed kept +${big.heapMB.toFixed(1)} MB, rss +${big.rssMB.toFixed(1)} MB (max over runs)${gcNote()}; ${big.used} rows used`,
  });
  // A boundary of 4 × 2,500 vertices projected with densification.
  const ring: number[][] = [];
  for (let k = 0; k < 10_000; k++) {
    const a = (2 * Math.PI * k) / 10_000;
    ring.push([11.33 + 0.1 * Math.cos(a), 48.49 + 0.07 * Math.sin(a)]);
  }
  ring.push(ring[0]);
  const polys = readPolygons(JSON.stringify({ type: 'Polygon', coordinates: [ring] }), 'b.geojson');
  const t0 = performance.now();
  const projected = projectPolygons(polys, 'EPSG:32632');
  rows.push({ name: 'projectPolygons to UTM', n: 10_001, seconds: (performance.now() - t0) / 1000, note: `${projected[0].rings[0].length} vertices after densification` });
  rows.push(...runIntakeFileBench(options));
  return rows;
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href && process.argv.includes('--child')) {
  await childRead(process.argv[process.argv.indexOf('--child') + 1]);
} else if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const quick = process.argv.includes('--quick');
  // `--rows N` (with --files): only a file of N rows.
  const at = process.argv.indexOf('--rows');
  const sizes = at > 0 ? [Number(process.argv[at + 1])] : undefined;
  const rows = process.argv.includes('--files') ? runIntakeFileBench({ quick, sizes }) : await runIntakeBench({ quick });
  for (const row of rows) console.log(`${row.name.padEnd(34)} n=${String(row.n).padEnd(7)} ${row.seconds.toFixed(3)} s  ${row.note ?? ''}`);
}
