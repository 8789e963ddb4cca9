// A child process for the kill tests: writes SIZE mebibytes of whole lines to DIR/NAME through the
// command line's safe write, with the command line's signal handlers installed.
// Run as: node --import tsx tests/cli/write-child.ts DIR NAME SIZE
import { installSignalCleanup, writeFileSafely } from '../../src/cli/safe-write.ts';

installSignalCleanup();
const [dir, name, size] = process.argv.slice(2);
const line = 'new output line, complete\n';
const bytes = Buffer.alloc(Number(size) * 1024 * 1024, line);
try {
  await writeFileSafely(dir, name, bytes);
  process.stdout.write('written\n');
} catch (e) {
  process.stderr.write(`${(e as Error).message}\n`);
  process.exitCode = 2;
}
