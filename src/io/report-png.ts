/**
 * A small PNG encoder for the report's map images: 8-bit palette images (colour type 3) with a
 * transparent index 0, stored (uncompressed) deflate blocks, and base64 data URLs, so a report needs
 * no canvas, no zlib and no request. Format: PNG (ISO/IEC 15948, W3C PNG 2nd edition), zlib
 * (RFC 1950) with stored deflate blocks (RFC 1951 §3.2.4), CRC-32 and Adler-32 as specified there.
 * Cost: O(width·height) time; width·height bytes plus about 5 bytes per 65,535 of overhead.
 */

let crcTable: Uint32Array | null = null;

/** CRC-32 (ISO 3309 polynomial 0xEDB88320, reflected), as PNG chunks use it. */
export function crc32(bytes: Uint8Array, start = 0, end = bytes.length): number {
  if (!crcTable) {
    crcTable = new Uint32Array(256);
    for (let n = 0; n < 256; n++) {
      let c = n;
      for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
      crcTable[n] = c >>> 0;
    }
  }
  let c = 0xffffffff;
  for (let i = start; i < end; i++) c = crcTable[(c ^ bytes[i]) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

/** Adler-32 (RFC 1950 §8.2). */
export function adler32(bytes: Uint8Array): number {
  let a = 1, b = 0;
  for (let i = 0; i < bytes.length; i++) {
    a = (a + bytes[i]) % 65521;
    b = (b + a) % 65521;
  }
  return ((b << 16) | a) >>> 0;
}

/** A zlib stream of stored deflate blocks holding `raw`. */
function zlibStored(raw: Uint8Array): Uint8Array {
  const blocks = Math.max(1, Math.ceil(raw.length / 65535));
  const out = new Uint8Array(2 + raw.length + 5 * blocks + 4);
  out[0] = 0x78;
  out[1] = 0x01;
  let o = 2;
  for (let b = 0; b < blocks; b++) {
    const from = b * 65535;
    const len = Math.min(65535, raw.length - from);
    out[o++] = b === blocks - 1 ? 1 : 0;
    out[o++] = len & 0xff;
    out[o++] = len >>> 8;
    out[o++] = ~len & 0xff;
    out[o++] = (~len >>> 8) & 0xff;
    out.set(raw.subarray(from, from + len), o);
    o += len;
  }
  const ad = adler32(raw);
  out[o++] = ad >>> 24;
  out[o++] = (ad >>> 16) & 0xff;
  out[o++] = (ad >>> 8) & 0xff;
  out[o++] = ad & 0xff;
  return out;
}

function chunk(type: string, data: Uint8Array): Uint8Array {
  const out = new Uint8Array(12 + data.length);
  const v = new DataView(out.buffer);
  v.setUint32(0, data.length);
  for (let i = 0; i < 4; i++) out[4 + i] = type.charCodeAt(i);
  out.set(data, 8);
  v.setUint32(8 + data.length, crc32(out, 4, 8 + data.length));
  return out;
}

/**
 * A palette PNG: `indices` (width·height bytes, row-major from the top) into `palette` (RGB triples,
 * at most 256 colours); index 0 is transparent.
 */
export function palettePng(indices: Uint8Array, width: number, height: number, palette: Uint8Array): Uint8Array {
  if (!(width >= 1 && height >= 1) || indices.length !== width * height) {
    throw new RangeError(`Expected ${width} × ${height} palette indices, got ${indices.length}.`);
  }
  const colours = palette.length / 3;
  if (!Number.isInteger(colours) || colours < 1 || colours > 256) throw new RangeError(`Expected 1 to 256 RGB palette entries, got ${palette.length / 3}.`);
  const ihdr = new Uint8Array(13);
  const hv = new DataView(ihdr.buffer);
  hv.setUint32(0, width);
  hv.setUint32(4, height);
  ihdr[8] = 8; // bit depth
  ihdr[9] = 3; // colour type: palette
  const raw = new Uint8Array((width + 1) * height);
  for (let j = 0; j < height; j++) {
    raw[j * (width + 1)] = 0; // filter: none
    raw.set(indices.subarray(j * width, (j + 1) * width), j * (width + 1) + 1);
  }
  const parts = [
    new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
    chunk('IHDR', ihdr),
    chunk('PLTE', palette),
    chunk('tRNS', new Uint8Array([0])),
    chunk('IDAT', zlibStored(raw)),
    chunk('IEND', new Uint8Array(0)),
  ];
  const out = new Uint8Array(parts.reduce((s, p) => s + p.length, 0));
  let o = 0;
  for (const p of parts) {
    out.set(p, o);
    o += p.length;
  }
  return out;
}

const B64 = 'ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/';

/** Standard base64 (RFC 4648 §4) with padding. */
export function base64(bytes: Uint8Array): string {
  const out: string[] = [];
  let i = 0;
  for (; i + 2 < bytes.length; i += 3) {
    const n = (bytes[i] << 16) | (bytes[i + 1] << 8) | bytes[i + 2];
    out.push(B64[n >>> 18], B64[(n >>> 12) & 63], B64[(n >>> 6) & 63], B64[n & 63]);
  }
  const rest = bytes.length - i;
  if (rest === 1) {
    const n = bytes[i] << 16;
    out.push(B64[n >>> 18], B64[(n >>> 12) & 63], '==');
  } else if (rest === 2) {
    const n = (bytes[i] << 16) | (bytes[i + 1] << 8);
    out.push(B64[n >>> 18], B64[(n >>> 12) & 63], B64[(n >>> 6) & 63], '=');
  }
  return out.join('');
}

/** A data: URL of a PNG. */
export function pngDataUrl(png: Uint8Array): string {
  return `data:image/png;base64,${base64(png)}`;
}
