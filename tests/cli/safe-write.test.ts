import { afterAll, describe, expect, it } from 'vitest';
import { spawn, spawnSync } from 'node:child_process';
import { chmodSync, mkdirSync, readFileSync, readdirSync, statSync, symlinkSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { pendingFiles, temporaryName, writeFileSafely } from '../../src/cli/safe-write.ts';
import { createRandom } from '../../src/core/shared/random.ts';
import { planarSamplesCsv, workspace } from './run-cli.ts';

const ws = workspace();
afterAll(() => ws.remove());

const ROOT = resolve(__dirname, '..', '..');
const CHILD = join(ROOT, 'tests', 'cli', 'write-child.ts');
const BIN = join(ROOT, 'bin', 'gapwise.js');
const LINE = 'new output line, complete\n';
const PREVIOUS = 'previous output, which must survive\n';

/** What the write child writes for `mib` mebibytes. */
function expectedBytes(mib: number): Buffer {
  return Buffer.alloc(mib * 1024 * 1024, LINE);
}

function fresh(name: string): string {
  const dir = join(ws.dir, name);
  mkdirSync(dir, { recursive: true });
  return dir;
}

const temporaries = (dir: string) => readdirSync(dir).filter((f) => f.endsWith('.tmp'));

/** Runs the write child and sends `signal` `delay` ms after its temporary file appears (or at once if it never does). */
function killDuringWrite(dir: string, mib: number, signal: NodeJS.Signals, delay: number): Promise<{ code: number | null; signal: NodeJS.Signals | null }> {
  return new Promise((done) => {
    const child = spawn(process.execPath, ['--import', 'tsx', CHILD, dir, 'out.txt', String(mib)], { cwd: ROOT, stdio: 'ignore' });
    let sent = false;
    const poll = setInterval(() => {
      if (sent) return;
      if (temporaries(dir).length > 0) {
        sent = true;
        clearInterval(poll);
        setTimeout(() => child.kill(signal), delay);
      }
    }, 2);
    child.on('exit', (code, sig) => {
      clearInterval(poll);
      done({ code, signal: sig });
    });
  });
}

describe('writeFileSafely', () => {
  it('writeFileSafely replaces the previous file with the complete new one and leaves no temporary file', async () => {
    const dir = fresh('plain');
    writeFileSync(join(dir, 'out.csv'), PREVIOUS);
    chmodSync(join(dir, 'out.csv'), 0o640);
    await writeFileSafely(dir, 'out.csv', 'a,b\n1,2\n');
    expect(readFileSync(join(dir, 'out.csv'), 'utf8')).toBe('a,b\n1,2\n');
    expect(statSync(join(dir, 'out.csv')).mode & 0o777).toBe(0o640);
    const big = expectedBytes(9); // more than one chunk: written over several turns of the event loop
    await writeFileSafely(dir, 'big.bin', big);
    expect(readFileSync(join(dir, 'big.bin')).equals(big)).toBe(true);
    expect(temporaries(dir)).toEqual([]);
    expect(pendingFiles()).toEqual([]);
  });

  it('writeFileSafely through a symbolic link replaces the file it points to and keeps the link', async () => {
    const dir = fresh('link');
    writeFileSync(join(dir, 'real.json'), PREVIOUS);
    symlinkSync('real.json', join(dir, 'link.json'));
    await writeFileSafely(dir, 'link.json', '{}\n');
    expect(readFileSync(join(dir, 'real.json'), 'utf8')).toBe('{}\n');
    expect(statSync(join(dir, 'link.json')).isFile()).toBe(true);
    expect(readdirSync(dir).sort()).toEqual(['link.json', 'real.json']);
  });

  it('writeFileSafely writes to a character device directly (--out /dev/null)', async () => {
    await expect(writeFileSafely(ws.dir, '/dev/null', 'x\n')).resolves.toBeUndefined();
    expect(statSync('/dev/null').isCharacterDevice()).toBe(true);
  });

  it('writeFileSafely under a file-size limit (ulimit -f) fails with the limit named, keeps the previous file and removes the temporary one', () => {
    const dir = fresh('ulimit');
    writeFileSync(join(dir, 'out.txt'), PREVIOUS);
    // 1,024 blocks of 1 KiB (bash's unit for -f): the 8 MiB write goes past it.
    const r = spawnSync('bash', ['-c', `ulimit -f 1024; exec "${process.execPath}" --import tsx "${CHILD}" "${dir}" out.txt 8`], { cwd: ROOT, encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(2);
    expect(r.stderr).toContain('Cannot write the file: the file is larger than the file-size limit of this process allows; the previous file under this name, if any, is unchanged.');
    expect(readFileSync(join(dir, 'out.txt'), 'utf8')).toBe(PREVIOUS);
    expect(temporaries(dir)).toEqual([]);
  });

  it('writeFileSafely killed by SIGTERM or SIGKILL at random points of a 48 MiB write: the previous file or the complete new one, never a part; no temporary file after SIGTERM', async () => {
    const rng = createRandom(17);
    const mib = 48;
    const complete = expectedBytes(mib);
    const outcomes: string[] = [];
    for (const signal of ['SIGTERM', 'SIGKILL', 'SIGTERM', 'SIGKILL'] as const) {
      const dir = fresh(`kill-${outcomes.length}`);
      writeFileSync(join(dir, 'out.txt'), PREVIOUS);
      const delay = Math.floor(rng.uniform() * 150);
      const r = await killDuringWrite(dir, mib, signal, delay);
      const now = readFileSync(join(dir, 'out.txt'));
      const kept = now.toString('utf8') === PREVIOUS;
      expect(kept || now.equals(complete), `${signal} after ${delay} ms: ${now.length} bytes under the final name`).toBe(true);
      if (signal === 'SIGTERM') {
        // The handler removed the temporary file and exited with 128 + 15, or the write had finished
        // (a signal that lands while node is shutting down after it takes the default action).
        const finished = now.equals(complete);
        expect(r.code === 143 || (finished && (r.code === 0 || r.signal === 'SIGTERM')), `exit ${r.code} ${r.signal}`).toBe(true);
        expect(temporaries(dir)).toEqual([]);
      }
      outcomes.push(`${signal} +${delay} ms: ${kept ? 'previous kept' : 'new complete'} (exit ${r.code ?? r.signal})`);
    }
    // At least one kill landed mid-write (the previous file kept).
    expect(outcomes.some((o) => o.includes('previous kept')), outcomes.join('; ')).toBe(true);
  }, 60_000);

  it('writeFileSafely removes temporary files that killed writes of the same output left, and says so; a live writer\'s and another output\'s stay', async () => {
    const dir = fresh('stale');
    const target = join(dir, 'out.txt');
    writeFileSync(target, PREVIOUS);
    // A process id that no process holds any more: a child that has exited.
    const dead = spawnSync(process.execPath, ['-e', '']).pid as number;
    const staleName = temporaryName(target, dead);
    writeFileSync(staleName, 'half of a killed write');
    const live = temporaryName(target, process.pid);
    writeFileSync(live, 'a write in progress');
    const other = temporaryName(join(dir, 'other.txt'), dead);
    writeFileSync(other, 'another output');
    const notes: string[] = [];
    await writeFileSafely(dir, 'out.txt', 'new\n', (t) => notes.push(t));
    expect(readFileSync(target, 'utf8')).toBe('new\n');
    expect(temporaries(dir).sort()).toEqual([live, other].map((p) => p.slice(dir.length + 1)).sort());
    expect(notes).toEqual([`removed 1 temporary file that an earlier, interrupted write of out.txt left in its folder: ${staleName.slice(dir.length + 1)}`]);
    // After a real SIGKILL mid-write, the next write of the output clears what it left.
    const killed = fresh('stale-kill');
    writeFileSync(join(killed, 'out.txt'), PREVIOUS);
    await killDuringWrite(killed, 48, 'SIGKILL', 20);
    const left = temporaries(killed);
    const after: string[] = [];
    await writeFileSafely(killed, 'out.txt', 'new\n', (t) => after.push(t));
    expect(temporaries(killed)).toEqual([]);
    expect(after.length).toBe(left.length ? 1 : 0);
  }, 60_000);

  it('gapwise grid under a file-size limit exits 2 naming the output, keeps the previous grid and leaves no temporary file', () => {
    const dir = fresh('grid-limit');
    writeFileSync(join(dir, 'wells.csv'), planarSamplesCsv());
    writeFileSync(join(dir, 'model.json'), JSON.stringify({
      structures: [{ type: 'nugget', sill: 0.5 }, { type: 'exponential', sill: 20, scale: 80 }], trend: 'constant', transform: 'none', crs: { work: 'EPSG:32633' },
    }));
    writeFileSync(join(dir, 'grid.csv'), PREVIOUS);
    // About 15,000 cells of about 90 bytes: some 1.3 MB of CSV against a limit of 512 KiB.
    const r = spawnSync('bash', ['-c', `ulimit -f 512; exec "${process.execPath}" "${BIN}" grid --samples wells.csv --crs EPSG:32633 --model model.json --cell 1.6 --workers 1 --out grid.csv`],
      { cwd: dir, encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(2);
    expect(r.stderr).toMatch(/error: grid\.csv: Cannot write the file: the file is larger than the file-size limit/);
    expect(readFileSync(join(dir, 'grid.csv'), 'utf8')).toBe(PREVIOUS);
    expect(temporaries(dir)).toEqual([]);
  }, 60_000);
});

describe('temporaryName', () => {
  it('temporaryName is hidden, beside the target, and within 255 bytes for a long name', async () => {
    const { temporaryName } = await import('../../src/cli/safe-write.ts');
    const t = temporaryName('/data/out/grid.csv');
    expect(t).toMatch(/^\/data\/out\/\.grid\.csv\.gapwise-\d+-[0-9a-f]{8}\.tmp$/);
    const long = temporaryName(`/data/${'é'.repeat(120)}.csv`);
    expect(Buffer.byteLength(long.slice('/data/'.length))).toBeLessThanOrEqual(255);
    expect(long).not.toContain('\uFFFD');
  });
});
