/**
 * Every file the command line writes goes through here, so that no run ever leaves a partial file
 * under the name the user gave, and no output ever lands on one of the run's inputs.
 *
 * - `checkOutputTarget` (before any work): the output's folder exists and is writable, the output is
 *   not a folder, and it is not one of the run's inputs once both are resolved (relative paths, `./x`
 *   against `x`, symbolic links of the file or of its folder, hard links by device and inode).
 * - `writeFileSafely`: the bytes go to a temporary file in the same folder (`.NAME.gapwise-PID-RANDOM.tmp`),
 *   are flushed to the disk (fsync), then renamed onto the final name, which is atomic on one file
 *   system: the final name holds the previous file or the complete new one, never a part. A symbolic
 *   link as output is followed (the file it points to is replaced, the link stays). The temporary file
 *   is removed on any error (full disk, file-size limit) and, through `installSignalCleanup`, on
 *   SIGINT, SIGTERM and SIGHUP, after which the process exits with 128 + the signal number. A SIGKILL
 *   cannot be caught: the final name is then intact and a `.….tmp` file may stay behind; the next
 *   write of the same output removes it once no process holds its process id (`removeStaleTemporaries`),
 *   and says so.
 * - Character devices and FIFOs (`--out /dev/stdout`) are written to directly: they hold no previous
 *   output to protect and cannot be renamed onto.
 */
import {
  accessSync, closeSync, constants, fsyncSync, lstatSync, openSync, readdirSync, realpathSync, renameSync, statSync, unlinkSync, writeSync, type Stats,
} from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';
import { randomBytes } from 'node:crypto';
import { GapwiseError } from '../core/shared/errors.ts';

/** Bytes written between two turns of the event loop, so that a signal is handled during a long write. */
const CHUNK_BYTES = 4 * 1024 * 1024;

/** Temporary files being written now; removed by the signal handlers. */
const pending = new Set<string>();

/** One input of a run: the option that named it and the name as given. */
export interface RunInput {
  option: string;
  file: string;
}

function statOrNull(path: string): Stats | null {
  try {
    return statSync(path);
  } catch {
    return null;
  }
}

/**
 * The path a name resolves to: through every symbolic link when the file exists; else its folder
 * resolved through links, joined with the name (an output that does not exist yet).
 */
export function resolvedPath(cwd: string, file: string): string {
  const full = resolve(cwd, file);
  try {
    return realpathSync(full);
  } catch {
    try {
      return join(realpathSync(dirname(full)), basename(full));
    } catch {
      return full;
    }
  }
}

function writeError(file: string, e: unknown): GapwiseError {
  const code = (e as { code?: string }).code;
  const why = code === 'ENOSPC' ? 'the disk is full'
    : code === 'EFBIG' ? 'the file is larger than the file-size limit of this process allows'
      : code === 'EDQUOT' ? 'the disk quota is used up'
        : code === 'EACCES' || code === 'EPERM' ? 'permission was denied'
          : code === 'EROFS' ? 'the file system is read-only'
            : (e as Error).message;
  return new GapwiseError('bad-file', `Cannot write the file: ${why}; the previous file under this name, if any, is unchanged.`, { file });
}

/**
 * Checks, before any work, that `out` can be written and is none of `inputs`: its folder exists, is
 * a folder and is writable; `out` itself is not a folder; and it does not resolve to an input.
 * Throws GapwiseError('bad-option') naming the output and the input, or ('bad-file') naming the folder.
 */
export function checkOutputTarget(cwd: string, out: string, inputs: readonly RunInput[]): void {
  const target = resolvedPath(cwd, out);
  const targetStat = statOrNull(target);
  for (const input of inputs) {
    const source = resolvedPath(cwd, input.file);
    const sourceStat = statOrNull(source);
    const sameInode = targetStat !== null && sourceStat !== null && targetStat.dev === sourceStat.dev && targetStat.ino === sourceStat.ino;
    if (source === target || sameInode) {
      throw new GapwiseError('bad-option',
        `Option "--out ${out}" names the same file as "--${input.option} ${input.file}", an input of this run; expected a different output file, so that the input is not overwritten.`);
    }
  }
  const folder = dirname(target);
  const folderStat = statOrNull(folder);
  if (folderStat === null) {
    throw new GapwiseError('bad-file', `The output folder ${folder} does not exist; expected an existing folder for "--out ${out}".`, { file: folder });
  }
  if (!folderStat.isDirectory()) {
    throw new GapwiseError('bad-file', `The output folder ${folder} is not a folder; expected a folder for "--out ${out}".`, { file: folder });
  }
  if (targetStat?.isDirectory()) {
    throw new GapwiseError('bad-option', `Option "--out ${out}" names a folder; expected a file name.`);
  }
  if (targetStat !== null && !targetStat.isFile() && !targetStat.isCharacterDevice() && !targetStat.isFIFO()) {
    throw new GapwiseError('bad-option', `Option "--out ${out}" names something that is neither a file, a device nor a pipe; expected a file name.`);
  }
  const direct = targetStat !== null && !targetStat.isFile();
  try {
    accessSync(direct ? target : folder, constants.W_OK | (direct ? 0 : constants.X_OK));
  } catch {
    throw new GapwiseError('bad-file',
      direct ? `The output ${out} cannot be written: permission was denied.` : `The output folder ${folder} is not writable; expected a folder this user may write to for "--out ${out}".`,
      { file: direct ? out : folder });
  }
}

/** Lets signals and timers run between chunks of a long write. */
function turn(): Promise<void> {
  return new Promise((done) => setImmediate(done));
}

function writeAll(fd: number, bytes: Uint8Array): Promise<void> | void {
  if (bytes.length <= CHUNK_BYTES) {
    let at = 0;
    while (at < bytes.length) at += writeSync(fd, bytes, at, bytes.length - at);
    return;
  }
  return (async () => {
    let at = 0;
    while (at < bytes.length) {
      const end = Math.min(bytes.length, at + CHUNK_BYTES);
      while (at < end) at += writeSync(fd, bytes, at, end - at);
      await turn();
    }
  })();
}

/** What an output holds: text, bytes, or pieces of either written one after another (a large text never whole). */
export type OutputData = string | Uint8Array | Iterable<string | Uint8Array>;

function bytesOf(piece: string | Uint8Array): Uint8Array {
  return typeof piece === 'string' ? Buffer.from(piece, 'utf8') : piece;
}

async function writeData(fd: number, data: OutputData): Promise<void> {
  if (typeof data === 'string' || data instanceof Uint8Array) {
    await writeAll(fd, bytesOf(data));
    return;
  }
  for (const piece of data) {
    await writeAll(fd, bytesOf(piece));
    await turn();
  }
}

/** The start of every temporary name of `target`: hidden, the (cut) name, then ".gapwise-". */
function temporaryPrefix(target: string): string {
  // Cut long names so that the temporary name stays within the 255 bytes most file systems allow.
  const name = Buffer.from(basename(target)).subarray(0, 200).toString('utf8').replace(/\uFFFD$/, '');
  return `.${name}.gapwise-`;
}

/** The temporary name beside `target`: hidden, with the writer's process id and random letters. */
export function temporaryName(target: string, pid = process.pid): string {
  return join(dirname(target), `${temporaryPrefix(target)}${pid}-${randomBytes(4).toString('hex')}.tmp`);
}

/** Whether a process with this id exists (signal 0 only asks; EPERM: it exists under another user). */
function processExists(pid: number): boolean {
  if (pid === process.pid) return true;
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as { code?: string }).code === 'EPERM';
  }
}

/**
 * Removes the temporary files that earlier writes of `target` left beside it when they were killed
 * outright (SIGKILL, a power cut): regular files named as `temporaryName` names them whose process id
 * no running process holds. A file of a writer still running is kept. Returns the names removed.
 */
function removeStaleTemporaries(target: string): string[] {
  const folder = dirname(target);
  const prefix = temporaryPrefix(target);
  let names: string[];
  try {
    names = readdirSync(folder);
  } catch {
    return [];
  }
  const removed: string[] = [];
  for (const name of names) {
    if (!name.startsWith(prefix)) continue;
    const m = /^(\d{1,10})-[0-9a-f]{8}\.tmp$/.exec(name.slice(prefix.length));
    if (!m || processExists(Number(m[1]))) continue;
    const path = join(folder, name);
    try {
      if (!lstatSync(path).isFile()) continue;
      unlinkSync(path);
      removed.push(name);
    } catch {
      // Gone meanwhile, or not ours to remove.
    }
  }
  return removed;
}

/**
 * Writes `data` to `file` (relative to `cwd`) through a temporary file in the same folder, flushed
 * and renamed onto the final name. Throws GapwiseError('bad-file') naming the file; on any failure
 * the temporary file is removed and the final name is untouched.
 */
export async function writeFileSafely(cwd: string, file: string, data: OutputData, onNote?: (text: string) => void): Promise<void> {
  const target = resolvedPath(cwd, file);
  const existing = statOrNull(target);
  if (existing !== null && !existing.isFile() && (existing.isCharacterDevice() || existing.isFIFO())) {
    let fd = -1;
    try {
      fd = openSync(target, 'w');
      await writeData(fd, data);
    } catch (e) {
      throw writeError(file, e);
    } finally {
      if (fd !== -1) closeSync(fd);
    }
    return;
  }
  const stale = removeStaleTemporaries(target);
  if (stale.length) {
    onNote?.(`removed ${stale.length} temporary file${stale.length === 1 ? '' : 's'} that an earlier, interrupted write of ${file} left in its folder: ${stale.join(', ')}`);
  }
  const temp = temporaryName(target);
  let fd = -1;
  pending.add(temp);
  try {
    // 'wx': never follow or reuse something already there under the temporary name.
    fd = openSync(temp, 'wx', existing ? existing.mode & 0o777 : 0o666);
    await writeData(fd, data);
    fsyncSync(fd);
    closeSync(fd);
    fd = -1;
    renameSync(temp, target);
    pending.delete(temp);
  } catch (e) {
    if (fd !== -1) {
      try { closeSync(fd); } catch { /* already failing */ }
    }
    removeQuietly(temp);
    pending.delete(temp);
    // A problem of the data being written (pieces made as they are written) is said as it is.
    if (e instanceof GapwiseError) throw e;
    throw writeError(file, e);
  }
}

function removeQuietly(path: string): void {
  try {
    unlinkSync(path);
  } catch {
    // Not created, or already gone.
  }
}

/** Removes the temporary files of writes in progress (the signal handlers call it). */
function removePendingFiles(): void {
  for (const temp of pending) removeQuietly(temp);
  pending.clear();
}

/** Temporary files being written now (for tests). */
export function pendingFiles(): readonly string[] {
  return [...pending];
}

const SIGNAL_NUMBERS = { SIGHUP: 1, SIGINT: 2, SIGTERM: 15 } as const;
let installed = false;

/**
 * Installs handlers for SIGINT, SIGTERM and SIGHUP that remove the temporary files of writes in
 * progress and exit with the conventional code 128 + the signal number (130, 143, 129). Once per process.
 */
export function installSignalCleanup(): void {
  if (installed) return;
  installed = true;
  for (const [name, number] of Object.entries(SIGNAL_NUMBERS)) {
    process.on(name as NodeJS.Signals, () => {
      removePendingFiles();
      process.exit(128 + number);
    });
  }
}
