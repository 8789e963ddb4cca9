#!/usr/bin/env node
// Draws the app's icons (our own design: three samples and a dashed ring where the next one goes, the
// drawing of public/favicon.svg) into public/icons/ as PNG: 192 and 512 px with rounded corners,
// and a 512 px "maskable" one (full-bleed background, the drawing inside the central 80 % that every
// mask keeps). Plain Node: shapes sampled 4 × 4 per pixel, PNG written with zlib. Deterministic:
// rerun after changing the drawing and commit the files. `node scripts/make-icons.mjs`
import { mkdirSync, writeFileSync } from 'node:fs';
import { deflateSync } from 'node:zlib';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const OUT = join(dirname(fileURLToPath(import.meta.url)), '..', 'public', 'icons');
const BACK = [0x2d, 0x5f, 0x7c];
const INK = [0xf5, 0xf4, 0xf0];
const DOTS = [[10, 11, 3], [22, 9, 3], [15, 22, 3]];
const RING = { x: 23.5, y: 21.5, r: 2.7, width: 1.1, dashes: 6, on: 0.6 };

/** Coverage in the 32-unit drawing at (u, v): 'ink', 'back' or null (outside the rounded square). */
function shade(u, v, maskable) {
  if (!maskable) {
    const rx = 7;
    const cx = Math.min(Math.max(u, rx), 32 - rx);
    const cy = Math.min(Math.max(v, rx), 32 - rx);
    if (u < 0 || v < 0 || u > 32 || v > 32 || (u - cx) ** 2 + (v - cy) ** 2 > rx * rx) return null;
  }
  for (const [x, y, r] of DOTS) if ((u - x) ** 2 + (v - y) ** 2 <= r * r) return 'ink';
  const d = Math.hypot(u - RING.x, v - RING.y);
  if (Math.abs(d - RING.r) <= RING.width / 2) {
    const turn = (Math.atan2(v - RING.y, u - RING.x) / (2 * Math.PI) + 1.05) % 1;
    if ((turn * RING.dashes) % 1 < RING.on) return 'ink';
  }
  return 'back';
}

function crc32(bytes) {
  let c = ~0;
  for (const b of bytes) {
    c ^= b;
    for (let k = 0; k < 8; k++) c = (c >>> 1) ^ (0xedb88320 & -(c & 1));
  }
  return ~c >>> 0;
}

function chunk(type, data) {
  const head = Buffer.alloc(8);
  head.writeUInt32BE(data.length, 0);
  head.write(type, 4, 'latin1');
  const crc = Buffer.alloc(4);
  crc.writeUInt32BE(crc32(Buffer.concat([head.subarray(4), data])), 0);
  return Buffer.concat([head, data, crc]);
}

/** RGBA PNG of the icon at `size` px; `maskable` draws full bleed with the drawing in the central 80 %. */
function icon(size, maskable) {
  const S = 4;
  const scale = maskable ? 32 / (0.8 * size) : 32 / size;
  const offset = maskable ? -0.1 * size * scale : 0;
  const rows = [];
  for (let py = 0; py < size; py++) {
    const row = Buffer.alloc(1 + 4 * size);
    for (let px = 0; px < size; px++) {
      let ink = 0, back = 0;
      for (let sy = 0; sy < S; sy++) {
        for (let sx = 0; sx < S; sx++) {
          const s = shade(offset + (px + (sx + 0.5) / S) * scale, offset + (py + (sy + 0.5) / S) * scale, maskable);
          if (s === 'ink') ink++;
          else if (s === 'back') back++;
        }
      }
      const cover = ink + back;
      const o = 1 + 4 * px;
      for (let c = 0; c < 3; c++) row[o + c] = cover ? Math.round((INK[c] * ink + BACK[c] * back) / cover) : 0;
      row[o + 3] = Math.round((255 * cover) / (S * S));
    }
    rows.push(row);
  }
  const ihdr = Buffer.alloc(13);
  ihdr.writeUInt32BE(size, 0);
  ihdr.writeUInt32BE(size, 4);
  ihdr[8] = 8; // bit depth
  ihdr[9] = 6; // RGBA
  return Buffer.concat([
    Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
    chunk('IHDR', ihdr),
    chunk('IDAT', deflateSync(Buffer.concat(rows), { level: 9 })),
    chunk('IEND', Buffer.alloc(0)),
  ]);
}

mkdirSync(OUT, { recursive: true });
for (const [name, size, maskable] of [['icon-192.png', 192, false], ['icon-512.png', 512, false], ['icon-maskable-512.png', 512, true]]) {
  writeFileSync(join(OUT, name), icon(size, maskable));
  console.log(`wrote public/icons/${name}`);
}
