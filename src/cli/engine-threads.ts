// The engine's pool (src/worker/pool.ts) over worker threads, for the command line: the same
// protocol, handler, queue, failure and cancel as the app's Web Workers, through one adapter from a
// worker_threads Worker to the engine's transport. Surfaces (./parallel.ts), realisations
// (./simulation-pool.ts) and the likelihood passes (./vecchia-pool.ts) all run on it.
//
// Workers run the TypeScript sources through tsx's loader in a checkout (no build step), and the
// compiled JavaScript beside this module in the installed package (see startWorker).
import { Worker } from 'node:worker_threads';
import { createRequire } from 'node:module';
import { pathToFileURL } from 'node:url';
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { EnginePool } from '../worker/pool.ts';
import type { Transport } from '../worker/transport.ts';

/** File URL of tsx's ESM register API (the "import" condition of its "./esm/api" export). */
function tsxEsmApi(): string {
  const require = createRequire(import.meta.url);
  const manifest = require.resolve('tsx/package.json');
  const pkg = JSON.parse(readFileSync(manifest, 'utf8')) as { exports: Record<string, { import: { default: string } }> };
  return pathToFileURL(join(dirname(manifest), pkg.exports['./esm/api'].import.default)).href;
}

/**
 * True when this module runs from its TypeScript source (through tsx in a checkout); false in the
 * compiled CLI (dist-cli/, written by scripts/build-cli.mjs), where the worker entry sits beside
 * this module's chunk as plain JavaScript under the same name.
 */
const FROM_SOURCE = import.meta.url.endsWith('.ts');

/**
 * Starts a worker thread on a worker entry (file URL of its `.ts` source; default the engine
 * worker, ./engine.worker.ts). Compiled, the entry is the `.js` file of the same name and starts with
 * no loader at all. From source, Node 20 does not apply loader hooks given by `--import` in a
 * worker's execArgv to the worker's own entry file, so the worker starts from a small script that
 * registers tsx's loader and then imports the TypeScript entry (both resolved from this file, so the
 * CLI works from any directory).
 */
export function startWorker(entry = new URL('./engine.worker.ts', import.meta.url).href): Worker {
  if (!FROM_SOURCE) return new Worker(new URL(entry.replace(/\.ts$/, '.js')));
  const api = tsxEsmApi();
  const boot = `import(${JSON.stringify(api)}).then((m) => { m.register(); return import(${JSON.stringify(entry)}); })` +
    '.catch((e) => { setImmediate(() => { throw e; }); });';
  return new Worker(boot, { eval: true });
}

/**
 * A worker thread as the engine's transport: its messages, its errors and an exit we did not ask for
 * (a non-zero code, or a thread that ended) reach the pool as a failure.
 */
export function threadTransport(worker: Worker): Transport {
  let stopping = false;
  const transport: Transport = {
    post: (message, transfer = []) => worker.postMessage(message, transfer as ArrayBuffer[]),
    onmessage: null,
    onerror: null,
    terminate: async () => {
      stopping = true;
      await worker.terminate();
    },
  };
  worker.on('message', (data: unknown) => transport.onmessage?.(data));
  worker.on('error', (e: unknown) => transport.onerror?.(e instanceof Error ? `${e.name}: ${e.message}` : String(e)));
  worker.on('exit', (code: number) => {
    if (!stopping) transport.onerror?.(`the worker thread stopped with exit code ${code}`);
  });
  return transport;
}

/** The engine's pool on `size` worker threads (each started on its first request); dispose() it when done. */
export function startEngineThreads(size: number): EnginePool {
  return new EnginePool({ size, factory: () => threadTransport(startWorker()) });
}
