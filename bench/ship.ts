// What a user of the built app and of the installed command line waits for, as figures (never
// asserted): the app's first load in compressed bytes (gzip -9 of every file the service worker
// keeps, and of the files the page itself loads before the EPSG list is needed; target 1.5 MB),
// `gapwise --help` from the compiled CLI and from the TypeScript source through tsx (target 0.3 s),
// and a worker thread's start-up until it answers, compiled and through tsx (target 100 ms).
// Needs `npm run build` first. `npx tsx bench/ship.ts` or `npm run bench -- ship`.
import { existsSync, readFileSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { gzipSync } from 'node:zlib';
import { loadavg } from 'node:os';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { join, resolve } from 'node:path';
import { Worker } from 'node:worker_threads';
import type { Row } from './common.ts';
import { precacheList } from '../pwa/build-service-worker.ts';
import { startWorker } from '../src/cli/engine-threads.ts';

const ROOT = resolve(fileURLToPath(new URL('.', import.meta.url)), '..');
const DIST = join(ROOT, 'dist');
const CLI = join(ROOT, 'dist-cli');

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

const mb = (bytes: number) => `${(bytes / 1e6).toFixed(2)} MB`;

/** The environment of a plain `node` (tsx, which runs this file, passes its loader on in NODE_OPTIONS). */
function plainEnv(): NodeJS.ProcessEnv {
  const { NODE_OPTIONS: _options, ...rest } = process.env;
  return rest;
}

function loadFigures(): Row[] {
  const files = precacheList(DIST).map((f) => ({ url: f.url, gzip: gzipSync(readFileSync(join(DIST, f.url)), { level: 9 }).length }));
  const all = files.reduce((s, f) => s + f.gzip, 0);
  // The EPSG list is its own chunk, fetched when a CRS search or an unusual code needs it.
  const epsg = files.filter((f) => /^assets\/all-[^/]+\.js$/.test(f.url)).reduce((s, f) => s + f.gzip, 0);
  return [
    { name: 'app, every built file (what the service worker keeps), gzip -9', n: files.length, seconds: 0, bytes: all, note: `${mb(all)} compressed (target < 1.5 MB)` },
    { name: 'app, page start without the EPSG list, gzip -9', n: files.length - 1, seconds: 0, bytes: all - epsg, note: mb(all - epsg) },
  ];
}

/** Wall and CPU seconds of `node args` (CPU through /usr/bin/time when present). */
function timed(args: string[]): { wall: number; cpu: number | null } {
  const hasTime = existsSync('/usr/bin/time');
  const t0 = performance.now();
  const r = hasTime
    ? spawnSync('/usr/bin/time', ['-f', 'CPU %U %S', process.execPath, ...args], { encoding: 'utf8', cwd: ROOT, env: plainEnv() })
    : spawnSync(process.execPath, args, { encoding: 'utf8', cwd: ROOT, env: plainEnv() });
  const wall = (performance.now() - t0) / 1000;
  if (r.status !== 0) throw new Error(`node ${args.join(' ')} failed: ${r.stderr}`);
  const m = /CPU ([\d.]+) ([\d.]+)/.exec(r.stderr ?? '');
  return { wall, cpu: m ? Number(m[1]) + Number(m[2]) : null };
}

function helpFigures(runs: number): Row[] {
  const compiled = ['--input-type=module', '-e', `const { main } = await import(${JSON.stringify(pathToFileURL(join(CLI, 'main.js')).href)}); process.exitCode = await main(['--help']);`];
  const rows: Row[] = [];
  for (const [name, args] of [['gapwise --help, compiled (the installed package)', compiled], ['gapwise --help, TypeScript through tsx (a checkout)', [join(ROOT, 'bin', 'gapwise.js'), '--help']]] as const) {
    const t = Array.from({ length: runs }, () => timed([...args]));
    const cpu = t.every((x) => x.cpu !== null) ? median(t.map((x) => x.cpu as number)) : null;
    rows.push({ name, n: runs, seconds: median(t.map((x) => x.wall)), note: `median wall${cpu === null ? '' : `; CPU ${cpu.toFixed(2)} s`} (target < 0.3 s)` });
  }
  return rows;
}

/** The engine's request that answers as soon as the worker runs (src/worker/protocol.ts). */
const READY = { id: 1, type: 'ready', payload: {} };

/**
 * Seconds from starting a worker thread until it answers a `ready` request posted at once, wall and
 * CPU (the whole process's CPU time over that span: the main thread only waits, so it is the worker's
 * start-up cost, a fairer figure than wall time on a busy machine).
 */
async function workerStart(start: () => Worker): Promise<Start> {
  const c0 = process.cpuUsage();
  const t0 = performance.now();
  const w = start();
  w.postMessage(READY);
  await new Promise<void>((res, rej) => {
    w.once('message', () => res());
    w.once('error', rej);
  });
  const wall = (performance.now() - t0) / 1000;
  const c = process.cpuUsage(c0);
  await w.terminate();
  return { wall, cpu: (c.user + c.system) / 1e6 };
}

/**
 * Start-up of the compiled worker and of an empty ES-module worker, measured in a plain `node` child:
 * this benchmark runs under tsx, whose loader hooks would also sit under any worker started here.
 */
function compiledWorkerStarts(runs: number): { compiled: Start[]; empty: Start[] } {
  const script = `
    import { Worker } from 'node:worker_threads';
    const start = async (make) => {
      const c0 = process.cpuUsage(); const t0 = performance.now(); const w = make(); w.postMessage(${JSON.stringify(READY)});
      await new Promise((res, rej) => { w.once('message', res); w.once('error', rej); });
      const wall = (performance.now() - t0) / 1000; const c = process.cpuUsage(c0); await w.terminate();
      return { wall, cpu: (c.user + c.system) / 1e6 };
    };
    const empty = "data:text/javascript,import { parentPort } from 'node:worker_threads'; parentPort.postMessage('ready');";
    const out = { compiled: [], empty: [] };
    for (let i = 0; i < ${runs}; i++) {
      out.compiled.push(await start(() => new Worker(new URL(${JSON.stringify(pathToFileURL(join(CLI, 'engine.worker.js')).href)}), { execArgv: [] })));
      out.empty.push(await start(() => new Worker(new URL(empty), { execArgv: [] })));
    }
    console.log(JSON.stringify(out));`;
  const r = spawnSync(process.execPath, ['--input-type=module', '-e', script], { encoding: 'utf8', cwd: ROOT, env: plainEnv() });
  if (r.status !== 0) throw new Error(`worker start-up run failed: ${r.stderr}`);
  return JSON.parse(r.stdout) as { compiled: Start[]; empty: Start[] };
}

type Start = { wall: number; cpu: number };

async function workerFigures(runs: number): Promise<Row[]> {
  const source: Start[] = [];
  for (let i = 0; i < runs; i++) source.push(await workerStart(() => startWorker()));
  const { compiled, empty } = compiledWorkerStarts(runs);
  const row = (name: string, t: Start[], target = ''): Row => ({
    name, n: runs, seconds: median(t.map((x) => x.wall)), note: `median wall; CPU ${median(t.map((x) => x.cpu)).toFixed(3)} s${target}`,
  });
  return [
    row('worker thread start until it answers, compiled (plain node)', compiled, ' (target < 0.1 s)'),
    row('worker thread start until it answers, through tsx', source),
    row('empty ES-module worker thread start (Node\'s own floor)', empty),
  ];
}

export async function runShipBench(options: { quick: boolean }): Promise<Row[]> {
  for (const built of [join(DIST, 'sw.js'), join(CLI, 'main.js')]) {
    if (!existsSync(built)) throw new Error(`${built} is missing: run "npm run build" first.`);
  }
  const runs = options.quick ? 3 : 7;
  const rows = [...loadFigures(), ...helpFigures(runs), ...(await workerFigures(runs))];
  const [one] = loadavg();
  for (const r of rows) r.note = `${r.note ?? ''}; load average ${one.toFixed(2)}`;
  return rows;
}

if (process.argv[1] && resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  for (const r of await runShipBench({ quick: process.argv.includes('--quick') })) {
    console.log(`${r.name}: ${r.seconds ? `${r.seconds.toFixed(3)} s, ` : ''}${r.note}`);
  }
}
