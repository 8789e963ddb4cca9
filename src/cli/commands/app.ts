/**
 * `gapwise app`: serves the built app that ships in the package (dist/) on 127.0.0.1 and prints its
 * address, so a user with Node has the app without a checkout. The app runs in the browser as it does
 * from any static host: samples and results stay in that browser, the server only hands out the files.
 * Runs until stopped (Ctrl+C). The port is fixed by default because the browser keeps the saved work
 * and the offline copy per address.
 */
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { numberOption } from '../args.ts';
import { GapwiseError } from '../../core/shared/errors.ts';
import { SOFTWARE } from '../../core/shared/version.ts';
import type { CliIo, CommandSpec, OptionValues } from '../common.ts';
import { serveStatic } from '../static-server.ts';

/** The default port of `gapwise app`. */
const APP_PORT = 4180;

/** The folder of the gapwise package this module belongs to (the checkout, or the installed package). */
export function packageRoot(from = fileURLToPath(import.meta.url)): string {
  for (let dir = dirname(from); ; dir = dirname(dir)) {
    const manifest = join(dir, 'package.json');
    if (existsSync(manifest) && (JSON.parse(readFileSync(manifest, 'utf8')) as { name?: string }).name === 'gapwise') return dir;
    if (dirname(dir) === dir) throw new Error(`No gapwise package.json above ${from}.`);
  }
}

async function run(values: OptionValues, io: CliIo): Promise<number> {
  const port = numberOption(values, 'port') ?? APP_PORT;
  if (!Number.isInteger(port) || port < 0 || port > 65535) {
    throw new GapwiseError('bad-option', `Option "--port" expects a whole number from 0 to 65535, got ${port}.`);
  }
  const root = join(packageRoot(), 'dist');
  if (!existsSync(join(root, 'index.html'))) {
    throw new GapwiseError('bad-file', `The built app is missing (no ${join(root, 'index.html')}); expected it in the package, or run "npm run build" in a checkout.`);
  }
  const server = await serveStatic({ root, port });
  io.stdout(`${SOFTWARE}: the app is at ${server.url}\n`);
  if (!io.quiet) io.stderr('note: it runs in your browser; samples and results stay there. Ctrl+C stops the server.\n');
  await new Promise<void>(() => {
    // Serves until the process is stopped.
  });
  return 0;
}

export const appCommand: CommandSpec = {
  name: 'app',
  summary: 'serve the app on this machine (127.0.0.1) and print its address',
  usage: 'gapwise app [--port N]',
  description: [
    'Serves the built app from the installed package on 127.0.0.1 (this machine only) and prints its address; '
      + 'open it in a browser. Everything is computed in the browser and saved there, per address: use the same '
      + 'port to find your work again. After the first visit the app also works with the server stopped and '
      + 'with no network. Stop the server with Ctrl+C.',
  ],
  options: [
    { name: 'port', kind: 'number', placeholder: 'N', help: 'port to listen on (0: any free port)', defaultText: String(APP_PORT) },
  ],
  examples: ['gapwise app', 'gapwise app --port 8080'],
  run,
};
