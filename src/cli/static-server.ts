/**
 * A small static file server for the built app (dist/): GET and HEAD only, files under one folder
 * (never outside it), index.html for a folder, optionally under a path prefix such as
 * "/tools/gapwise/". `gapwise app` serves the installed package's copy with it on 127.0.0.1; the
 * browser tests use it to serve a build from a sub-path and to swap one build for another in place.
 * Hashed files under assets/ may be cached for good; everything else is revalidated on each visit, so
 * a new deployment (a new service worker) is seen at once.
 */
import { createServer, type IncomingMessage, type ServerResponse } from 'node:http';
import { createReadStream, statSync } from 'node:fs';
import { extname, join, resolve, sep } from 'node:path';
import { GapwiseError } from '../core/shared/errors.ts';

const TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.json': 'application/json; charset=utf-8',
  '.webmanifest': 'application/manifest+json; charset=utf-8',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.ico': 'image/x-icon',
  '.wasm': 'application/wasm',
  '.csv': 'text/csv; charset=utf-8',
  '.geojson': 'application/geo+json; charset=utf-8',
  '.txt': 'text/plain; charset=utf-8',
  '.woff2': 'font/woff2',
};

export interface StaticServerOptions {
  /** The folder served. */
  root: string;
  /** Address to listen on; default 127.0.0.1 (this machine only). */
  host?: string;
  /** Port; 0 picks a free one. */
  port?: number;
  /** Path the folder appears under, starting and ending with "/"; default "/". */
  prefix?: string;
}

export interface StaticServer {
  /** The address of the served folder, e.g. "http://127.0.0.1:4180/". */
  url: string;
  port: number;
  /** Serves another folder from now on (a new deployment in place of the old one). */
  setRoot(root: string): void;
  close(): Promise<void>;
}

function send(res: ServerResponse, status: number, text: string, headers: Record<string, string> = {}): void {
  res.writeHead(status, { 'Content-Type': 'text/plain; charset=utf-8', 'X-Content-Type-Options': 'nosniff', ...headers });
  res.end(text);
}

/** The file a request path names under `root`, or null when it is outside it or absent. */
function fileFor(root: string, path: string): string | null {
  let rel: string;
  try {
    rel = decodeURIComponent(path);
  } catch {
    return null;
  }
  if (rel.includes('\0')) return null;
  let file = resolve(root, `.${rel.startsWith('/') ? rel : `/${rel}`}`);
  if (file !== root && !file.startsWith(root + sep)) return null;
  try {
    if (statSync(file).isDirectory()) file = join(file, 'index.html');
    return statSync(file).isFile() ? file : null;
  } catch {
    return null;
  }
}

/** Starts serving `options.root`; resolves once listening. Throws GapwiseError 'bad-option' for a port in use. */
export async function serveStatic(options: StaticServerOptions): Promise<StaticServer> {
  let root = resolve(options.root);
  const host = options.host ?? '127.0.0.1';
  const prefix = options.prefix ?? '/';
  if (!prefix.startsWith('/') || !prefix.endsWith('/')) {
    throw new GapwiseError('bad-option', `Expected a path prefix that starts and ends with "/", got "${prefix}".`);
  }
  const handle = (req: IncomingMessage, res: ServerResponse): void => {
    if (req.method !== 'GET' && req.method !== 'HEAD') return send(res, 405, 'Only GET and HEAD.\n', { Allow: 'GET, HEAD' });
    const path = new URL(req.url ?? '/', 'http://server').pathname;
    if (`${path}/` === prefix) return send(res, 301, '', { Location: prefix });
    if (!path.startsWith(prefix)) return send(res, 404, 'Not found.\n');
    const file = fileFor(root, path.slice(prefix.length - 1));
    if (!file) return send(res, 404, 'Not found.\n');
    const size = statSync(file).size;
    res.writeHead(200, {
      'Content-Type': TYPES[extname(file).toLowerCase()] ?? 'application/octet-stream',
      'Content-Length': String(size),
      'Cache-Control': path.slice(prefix.length).startsWith('assets/') ? 'public, max-age=31536000, immutable' : 'no-cache',
      'X-Content-Type-Options': 'nosniff',
    });
    if (req.method === 'HEAD') return void res.end();
    createReadStream(file).pipe(res);
  };
  const server = createServer(handle);
  const port = await new Promise<number>((res, rej) => {
    server.once('error', (e: NodeJS.ErrnoException) => {
      rej(e.code === 'EADDRINUSE'
        ? new GapwiseError('bad-option', `Port ${options.port} on ${host} is in use; expected a free port (--port N, or --port 0 for any free one).`)
        : e);
    });
    server.listen(options.port ?? 0, host, () => res((server.address() as { port: number }).port));
  });
  return {
    url: `http://${host}:${port}${prefix}`,
    port,
    setRoot(next: string) {
      root = resolve(next);
    },
    close: () => new Promise<void>((res) => {
      server.closeAllConnections();
      server.close(() => res());
    }),
  };
}
