/**
 * Bytes of a samples file to text, chunk by chunk: refuses what is not text (a PNG, a spreadsheet,
 * NUL bytes) with a sentence saying what the bytes look like; decodes UTF-16 with a byte-order mark
 * (the BOM sniffing of the WHATWG Encoding standard's "decode"); reads UTF-8, and text that is not
 * valid UTF-8 as Latin-1 (Windows-1252) with a warning. Used by the one intake for the app's worker
 * and the command line alike.
 */
import { GapwiseError } from '../core/shared/errors.ts';
import type { Warning } from '../core/shared/errors.ts';

/** Leading bytes of formats people pick by mistake (file signatures; common practice). */
const SIGNATURES: Array<[string, number[]]> = [
  ['a PNG image', [0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]],
  ['a JPEG image', [0xff, 0xd8, 0xff]],
  ['a GIF image', [0x47, 0x49, 0x46, 0x38]],
  ['a PDF document', [0x25, 0x50, 0x44, 0x46, 0x2d]],
  ['a ZIP archive (an Excel .xlsx or OpenDocument spreadsheet is one: save it as CSV)', [0x50, 0x4b, 0x03, 0x04]],
  ['an old Excel .xls or other Office file (save it as CSV)', [0xd0, 0xcf, 0x11, 0xe0, 0xa1, 0xb1, 0x1a, 0xe1]],
  ['a gzip archive', [0x1f, 0x8b]],
  ['a 7-Zip archive', [0x37, 0x7a, 0xbc, 0xaf, 0x27, 0x1c]],
  ['a TIFF or GeoTIFF image', [0x49, 0x49, 0x2a, 0x00]],
  ['a TIFF or GeoTIFF image', [0x4d, 0x4d, 0x00, 0x2a]],
  ['an SQLite or GeoPackage database', [0x53, 0x51, 0x4c, 0x69, 0x74, 0x65, 0x20, 0x66, 0x6f, 0x72, 0x6d, 0x61, 0x74, 0x20, 0x33, 0x00]],
  ['a shapefile (.shp)', [0x00, 0x00, 0x27, 0x0a]],
  ['a Parquet file', [0x50, 0x41, 0x52, 0x31]],
  ['a program (ELF)', [0x7f, 0x45, 0x4c, 0x46]],
  ['UTF-32 text', [0xff, 0xfe, 0x00, 0x00]],
  ['UTF-32 text', [0x00, 0x00, 0xfe, 0xff]],
];

/** How many leading bytes are looked at before deciding what the file is. */
const SNIFF_BYTES = 4096;

function startsWith(bytes: Uint8Array, sig: number[]): boolean {
  if (bytes.length < sig.length) return false;
  for (let i = 0; i < sig.length; i++) if (bytes[i] !== sig[i]) return false;
  return true;
}

/** What the leading bytes look like when they are not text a samples file can be, or null. */
export function binaryKind(head: Uint8Array): string | null {
  for (const [name, sig] of SIGNATURES) if (startsWith(head, sig)) return name;
  return null;
}

/** UTF-16 without a byte-order mark: NUL in most even or most odd bytes of the head. */
function looksUtf16(head: Uint8Array): 'le' | 'be' | null {
  const n = Math.min(head.length, SNIFF_BYTES) & ~1;
  if (n < 4) return null;
  let evenNul = 0;
  let oddNul = 0;
  for (let i = 0; i < n; i += 2) {
    if (head[i] === 0) evenNul++;
    if (head[i + 1] === 0) oddNul++;
  }
  const half = n / 2;
  if (oddNul > 0.6 * half && evenNul < 0.1 * half) return 'le';
  if (evenNul > 0.6 * half && oddNul < 0.1 * half) return 'be';
  return null;
}

function notText(fileName: string, looks: string): GapwiseError {
  return new GapwiseError('bad-file', `The file is not a UTF-8 text file (it looks like ${looks}); expected CSV or GeoJSON text.`, { file: fileName });
}

/**
 * Length of the longest prefix of `b` (from `start`) that is whole UTF-8, and the offset of the first
 * invalid byte (-1 when none). A sequence cut by the end of the chunk is not invalid: it is left for
 * the next chunk (`complete` stops before it) unless `final`.
 */
function utf8Check(b: Uint8Array, final: boolean): { complete: number; invalid: number } {
  const n = b.length;
  let i = 0;
  while (i < n) {
    const c = b[i];
    if (c < 0x80) {
      i++;
      continue;
    }
    let need: number;
    let min: number;
    if (c >= 0xc2 && c <= 0xdf) {
      need = 1;
      min = 0x80;
    } else if (c >= 0xe0 && c <= 0xef) {
      need = 2;
      min = 0x800;
    } else if (c >= 0xf0 && c <= 0xf4) {
      need = 3;
      min = 0x10000;
    } else return { complete: i, invalid: i };
    if (i + need >= n) {
      // The sequence runs past the end of this chunk.
      for (let k = i + 1; k < n; k++) if ((b[k] & 0xc0) !== 0x80) return { complete: i, invalid: i };
      return final ? { complete: i, invalid: i } : { complete: i, invalid: -1 };
    }
    let cp = c & (need === 1 ? 0x1f : need === 2 ? 0x0f : 0x07);
    for (let k = 1; k <= need; k++) {
      const d = b[i + k];
      if ((d & 0xc0) !== 0x80) return { complete: i, invalid: i };
      cp = (cp << 6) | (d & 0x3f);
    }
    if (cp < min || cp > 0x10ffff || (cp >= 0xd800 && cp <= 0xdfff)) return { complete: i, invalid: i };
    i += need + 1;
  }
  return { complete: n, invalid: -1 };
}

/**
 * Turns the bytes of a file, given in chunks, into text. Push each chunk, then call `end()`.
 * Throws GapwiseError 'bad-file' for binary formats, NUL bytes and UTF-16 without a byte-order mark;
 * `warnings` holds the Latin-1 note when the bytes were not valid UTF-8.
 */
export class TextFromBytes {
  readonly warnings: Warning[] = [];
  private head: Uint8Array | null = new Uint8Array(0);
  private mode: 'utf-8' | 'utf-16le' | 'utf-16be' | 'latin1' | null = null;
  private decoder: TextDecoder | null = null;
  private carry: Uint8Array = new Uint8Array(0);
  private bytesSeen = 0;
  private linesSoFar = 1;

  constructor(private readonly fileName: string) {}

  /** Text of the chunk (possibly '' while the first bytes are looked at). */
  push(chunk: Uint8Array): string {
    if (this.head !== null) {
      const joined = new Uint8Array(this.head.length + chunk.length);
      joined.set(this.head);
      joined.set(chunk, this.head.length);
      if (joined.length < SNIFF_BYTES) {
        this.head = joined;
        return '';
      }
      this.head = null;
      return this.start(joined, false);
    }
    return this.decode(chunk, false);
  }

  /** The rest of the text. */
  end(): string {
    if (this.head !== null) {
      const h = this.head;
      this.head = null;
      return this.start(h, true);
    }
    return this.decode(new Uint8Array(0), true);
  }

  private start(bytes: Uint8Array, final: boolean): string {
    const kind = binaryKind(bytes);
    if (kind) throw notText(this.fileName, kind);
    let body = bytes;
    if (startsWith(bytes, [0xff, 0xfe])) {
      this.mode = 'utf-16le';
      body = bytes.subarray(2);
    } else if (startsWith(bytes, [0xfe, 0xff])) {
      this.mode = 'utf-16be';
      body = bytes.subarray(2);
    } else {
      const u16 = looksUtf16(bytes);
      if (u16) throw notText(this.fileName, `UTF-16${u16 === 'le' ? 'LE' : 'BE'} text without a byte-order mark: save it as UTF-8`);
      this.mode = 'utf-8';
      if (startsWith(bytes, [0xef, 0xbb, 0xbf])) body = bytes.subarray(3);
    }
    if (this.mode !== 'utf-8') this.decoder = new TextDecoder(this.mode, { fatal: false, ignoreBOM: true });
    return this.decode(body, final);
  }

  private decode(chunk: Uint8Array, final: boolean): string {
    if (this.mode === 'utf-16le' || this.mode === 'utf-16be') {
      const t = (this.decoder as TextDecoder).decode(chunk, { stream: !final });
      const nul = t.indexOf('\u0000');
      if (nul >= 0) throw this.nulError(t, nul);
      this.bytesSeen += chunk.length;
      this.countLines(t);
      return t;
    }
    let bytes = chunk;
    if (this.carry.length) {
      bytes = new Uint8Array(this.carry.length + chunk.length);
      bytes.set(this.carry);
      bytes.set(chunk, this.carry.length);
    }
    const nul = bytes.indexOf(0);
    if (nul >= 0) {
      throw new GapwiseError('bad-file', `The file is not a UTF-8 text file (it holds a NUL byte at byte ${this.bytesSeen + nul + 1}, as binary data does); expected CSV or GeoJSON text.`, { file: this.fileName });
    }
    let text: string;
    if (this.mode === 'utf-8') {
      const { complete, invalid } = utf8Check(bytes, final);
      if (invalid < 0) {
        text = utf8.decode(bytes.subarray(0, complete));
        this.carry = bytes.slice(complete);
        this.bytesSeen += complete;
        this.countLines(text);
        return text;
      }
      // Not UTF-8: what was read so far stays (it was ASCII-compatible UTF-8), the rest is Latin-1.
      const before = utf8.decode(bytes.subarray(0, invalid));
      this.countLines(before);
      this.warnings.push({
        code: 'not-utf8',
        message: `The file is not valid UTF-8 (the first invalid byte is on line ${this.linesSoFar}); it was read as Latin-1 (Windows-1252): check accented letters and symbols such as µ, and save the file as UTF-8 to be sure.`,
      });
      this.mode = 'latin1';
      this.bytesSeen += invalid;
      const rest = latin1.decode(bytes.subarray(invalid));
      this.bytesSeen += bytes.length - invalid;
      this.carry = new Uint8Array(0);
      return before + rest;
    }
    this.carry = new Uint8Array(0);
    this.bytesSeen += bytes.length;
    return latin1.decode(bytes);
  }

  private countLines(t: string): void {
    for (let i = t.indexOf('\n'); i !== -1; i = t.indexOf('\n', i + 1)) this.linesSoFar++;
  }

  private nulError(t: string, at: number): GapwiseError {
    let line = this.linesSoFar;
    for (let i = t.indexOf('\n'); i !== -1 && i < at; i = t.indexOf('\n', i + 1)) line++;
    return new GapwiseError('bad-file', `The file is not a text file (its UTF-16 text holds a NUL character on line ${line}, as binary data does); expected CSV or GeoJSON text.`, { file: this.fileName });
  }
}

const utf8 = new TextDecoder('utf-8', { ignoreBOM: true });
const latin1 = new TextDecoder('windows-1252');

