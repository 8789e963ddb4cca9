import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { request } from 'node:http';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { serveStatic, type StaticServer } from '../../src/cli/static-server.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';
import { appCommand, packageRoot } from '../../src/cli/commands/app.ts';
import { workspace } from './run-cli.ts';

/** One raw request (the path is sent as written, not normalised as fetch would). */
function get(server: StaticServer, path: string, method = 'GET'): Promise<{ status: number; headers: Record<string, string | string[] | undefined>; body: string }> {
  return new Promise((res, rej) => {
    const req = request({ host: '127.0.0.1', port: server.port, path, method }, (r) => {
      let body = '';
      r.on('data', (d: Buffer) => (body += d.toString()));
      r.on('end', () => res({ status: r.statusCode ?? 0, headers: r.headers, body }));
    });
    req.once('error', rej);
    req.end();
  });
}

describe('serveStatic', () => {
  let base: string;
  let server: StaticServer;

  beforeAll(async () => {
    base = mkdtempSync(join(tmpdir(), 'gapwise-static-'));
    mkdirSync(join(base, 'app', 'assets'), { recursive: true });
    mkdirSync(join(base, 'next'));
    writeFileSync(join(base, 'secret.txt'), 'outside the served folder');
    writeFileSync(join(base, 'app', 'index.html'), '<p>first</p>');
    writeFileSync(join(base, 'app', 'assets', 'index-1.js'), 'console.log(1);');
    writeFileSync(join(base, 'next', 'index.html'), '<p>second</p>');
    server = await serveStatic({ root: join(base, 'app'), port: 0, prefix: '/tools/gapwise/' });
  });

  afterAll(async () => {
    await server.close();
    rmSync(base, { recursive: true, force: true });
  });

  it('serveStatic serves index.html for the prefix, files with their type, hashed assets cached for good', async () => {
    expect(server.url).toBe(`http://127.0.0.1:${server.port}/tools/gapwise/`);
    const page = await get(server, '/tools/gapwise/?gapwise-test');
    expect(page.status).toBe(200);
    expect(page.body).toBe('<p>first</p>');
    expect(page.headers['content-type']).toBe('text/html; charset=utf-8');
    expect(page.headers['cache-control']).toBe('no-cache');
    const js = await get(server, '/tools/gapwise/assets/index-1.js');
    expect(js.headers['content-type']).toBe('text/javascript; charset=utf-8');
    expect(js.headers['cache-control']).toBe('public, max-age=31536000, immutable');
    const head = await get(server, '/tools/gapwise/assets/index-1.js', 'HEAD');
    expect([head.status, head.body, head.headers['content-length']]).toEqual([200, '', '15']);
  });

  it('serveStatic redirects the prefix without its slash and refuses other paths, escapes from the folder and other methods', async () => {
    const bare = await get(server, '/tools/gapwise');
    expect([bare.status, bare.headers.location]).toEqual([301, '/tools/gapwise/']);
    expect((await get(server, '/')).status).toBe(404);
    expect((await get(server, '/tools/gapwise/missing.js')).status).toBe(404);
    expect((await get(server, '/tools/gapwise/../secret.txt')).status).toBe(404);
    expect((await get(server, '/tools/gapwise/%2e%2e/secret.txt')).status).toBe(404);
    expect((await get(server, '/tools/gapwise/..%2fsecret.txt')).status).toBe(404);
    expect((await get(server, '/tools/gapwise/%00')).status).toBe(404);
    expect((await get(server, '/tools/gapwise/', 'POST')).status).toBe(405);
  });

  it('serveStatic setRoot serves another folder from the next request on', async () => {
    server.setRoot(join(base, 'next'));
    expect((await get(server, '/tools/gapwise/')).body).toBe('<p>second</p>');
    server.setRoot(join(base, 'app'));
    expect((await get(server, '/tools/gapwise/')).body).toBe('<p>first</p>');
  });

  it('serveStatic refuses a port in use with a GapwiseError naming it', async () => {
    const error = await serveStatic({ root: join(base, 'app'), port: server.port }).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(GapwiseError);
    expect((error as GapwiseError).message).toBe(`Port ${server.port} on 127.0.0.1 is in use; expected a free port (--port N, or --port 0 for any free one).`);
  });
});

describe('gapwise app', () => {
  it('packageRoot finds the checkout from the command\'s own file', () => {
    expect(packageRoot()).toBe(join(import.meta.dirname, '..', '..'));
  });

  it('gapwise app refuses a port out of range (exit 2) and lists --port in its help', async () => {
    const ws = workspace();
    try {
      const r = await ws.run('app', '--port', '70000');
      expect(r.code).toBe(2);
      expect(r.stderr).toBe('error: Option "--port" expects a whole number from 0 to 65535, got 70000.\n');
      expect((await ws.run('app', '--help')).stdout).toContain('--port N');
      expect(appCommand.options.map((o) => o.name)).toEqual(['port']);
    } finally {
      ws.remove();
    }
  });
});
