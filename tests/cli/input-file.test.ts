// Input files on the command line: only regular files are read, never past the size limit, and the
// samples file is read as a stream through the one intake.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { workspace, type Workspace } from './run-cli.ts';
import { openInputFile, readInputText } from '../../src/cli/input-file.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';

let ws: Workspace;
beforeAll(() => {
  ws = workspace();
});
afterAll(() => ws.remove());

function refusal(f: () => unknown): GapwiseError {
  try {
    f();
  } catch (e) {
    expect(e).toBeInstanceOf(GapwiseError);
    return e as GapwiseError;
  }
  throw new Error('expected a GapwiseError');
}

describe('input files', () => {
  it('inspect --samples /dev/zero is refused at once as a device (exit 2)', async () => {
    const r = await ws.run('inspect', '--samples', '/dev/zero');
    expect(r.code).toBe(2);
    expect(r.stderr).toBe('error: /dev/zero: Cannot read the file: it is a device; expected a regular file.\n');
  });

  it('a FIFO is refused without waiting for a writer', async () => {
    execFileSync('mkfifo', [join(ws.dir, 'pipe.csv')]);
    const r = await ws.run('inspect', '--samples', 'pipe.csv');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('it is a pipe (FIFO); expected a regular file');
  });

  it('a folder is refused', async () => {
    mkdirSync(join(ws.dir, 'folder.csv'));
    const r = await ws.run('inspect', '--samples', 'folder.csv');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('it is a folder; expected a regular file');
  });

  it('openInputFile: a file over the limit is refused before reading, with the limit in the message', () => {
    writeFileSync(join(ws.dir, 'big.csv'), 'x'.repeat(3 * 1024 * 1024));
    const e = refusal(() => openInputFile(ws.dir, 'big.csv', 2 * 1024 * 1024));
    expect(e.message).toBe('The file is 3 MB; expected at most 2 MB.');
    expect(readInputText(ws.dir, 'big.csv', 4 * 1024 * 1024)).toHaveLength(3 * 1024 * 1024);
  });

  it('inspect reads a UTF-16 samples file with a byte-order mark, and names a PNG as one (exit 2)', async () => {
    const csv = 'id,lon,lat,Pb (mg/kg)\nA,11.25,48.5,30\nB,11.26,48.51,40\nC,11.27,48.52,50\n';
    writeFileSync(join(ws.dir, 'u16.csv'), Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(csv, 'utf16le')]));
    const ok = await ws.run('inspect', '--samples', 'u16.csv');
    expect(ok.code).toBe(0);
    writeFileSync(join(ws.dir, 'img.csv'), Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0, 0, 13]));
    const png = await ws.run('inspect', '--samples', 'img.csv');
    expect(png.code).toBe(2);
    expect(png.stderr).toContain('not a UTF-8 text file (it looks like a PNG image)');
  });

  it('a GeoJSON property named __proto__ is read as a value column (exit 0, not a crash)', async () => {
    ws.write('proto.geojson', '{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[11.25,48.5]},"properties":{"__proto__":"7.5"}},{"type":"Feature","geometry":{"type":"Point","coordinates":[11.26,48.51]},"properties":{"__proto__":"8"}},{"type":"Feature","geometry":{"type":"Point","coordinates":[11.27,48.52]},"properties":{"__proto__":"9"}}]}');
    const r = await ws.run('inspect', '--samples', 'proto.geojson');
    expect(r.stderr).not.toContain('is not a function');
    expect(r.code).toBe(0);
  });
});
