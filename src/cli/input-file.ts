/**
 * Opening an input file for reading: only a regular file is read (a device such as /dev/zero, a FIFO
 * or a folder is refused at once, before anything is read), and never past the size limit; the bytes
 * come in chunks so that the samples file is read as a stream.
 */
import { closeSync, fstatSync, openSync, readSync, statSync } from 'node:fs';
import { resolve } from 'node:path';
import { GapwiseError } from '../core/shared/errors.ts';
import { MAX_SAMPLE_BYTES, megabytes } from '../io/intake-limits.ts';

/** Bytes read from the disk at a time. */
const CHUNK_BYTES = 1 << 20;

function cannotRead(file: string, e: unknown): GapwiseError {
  const code = (e as { code?: string }).code;
  const why = code === 'ENOENT' ? 'the file does not exist'
    : code === 'EISDIR' ? 'it is a folder, not a file'
      : code === 'EACCES' || code === 'EPERM' ? 'permission was denied'
        : (e as Error).message;
  return new GapwiseError('bad-file', `Cannot read the file: ${why}.`, { file });
}

function kindOf(st: import('node:fs').Stats): string {
  if (st.isDirectory()) return 'a folder';
  if (st.isFIFO()) return 'a pipe (FIFO)';
  if (st.isCharacterDevice() || st.isBlockDevice()) return 'a device';
  if (st.isSocket()) return 'a socket';
  return 'not a regular file';
}

/**
 * The bytes of `file` (relative to `cwd`) in chunks, with its size first known from the file system.
 * Throws GapwiseError 'bad-file' when the file is missing or unreadable, is not a regular file, or is
 * larger than `maxBytes` (default MAX_SAMPLE_BYTES).
 */
export function openInputFile(cwd: string, file: string, maxBytes = MAX_SAMPLE_BYTES): { size: number; chunks: Generator<Uint8Array> } {
  const path = resolve(cwd, file);
  let st;
  try {
    // stat before open: opening a FIFO would wait for a writer.
    st = statSync(path);
  } catch (e) {
    throw cannotRead(file, e);
  }
  if (!st.isFile()) throw new GapwiseError('bad-file', `Cannot read the file: it is ${kindOf(st)}; expected a regular file.`, { file });
  if (st.size > maxBytes) throw new GapwiseError('bad-file', `The file is ${megabytes(st.size)}; expected at most ${megabytes(maxBytes)}.`, { file });
  let fd: number;
  try {
    fd = openSync(path, 'r');
    const again = fstatSync(fd);
    if (!again.isFile()) {
      closeSync(fd);
      throw new GapwiseError('bad-file', `Cannot read the file: it is ${kindOf(again)}; expected a regular file.`, { file });
    }
  } catch (e) {
    if (e instanceof GapwiseError) throw e;
    throw cannotRead(file, e);
  }
  function* chunks(): Generator<Uint8Array> {
    let total = 0;
    try {
      for (;;) {
        const buffer = new Uint8Array(CHUNK_BYTES);
        let n: number;
        try {
          n = readSync(fd, buffer, 0, CHUNK_BYTES, null);
        } catch (e) {
          throw cannotRead(file, e);
        }
        if (n === 0) return;
        total += n;
        // A file growing while it is read is still held to the limit.
        if (total > maxBytes) throw new GapwiseError('bad-file', `The file is over ${megabytes(maxBytes)}; expected at most ${megabytes(maxBytes)}.`, { file });
        yield buffer.subarray(0, n);
      }
    } finally {
      closeSync(fd);
    }
  }
  return { size: st.size, chunks: chunks() };
}

/** The whole file as UTF-8 text (a leading byte-order mark kept, as `readFileSync(…, 'utf8')` does). */
export function readInputText(cwd: string, file: string, maxBytes = MAX_SAMPLE_BYTES): string {
  const { size, chunks } = openInputFile(cwd, file, maxBytes);
  const parts: Uint8Array[] = [];
  for (const c of chunks) parts.push(c);
  return Buffer.concat(parts, Math.max(size, 0)).toString('utf8');
}
