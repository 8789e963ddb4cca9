// readSamples against the corpus in tests/fixtures/intake/: each file's expected outcome and numbers
// are in tests/fixtures/intake/expected.json (worked out by hand from the file text). Working
// coordinates of lon/lat files are checked against PROJ values in tests/reference/proj.json.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { readSamples, readSamplesStream, splitUnit, normaliseName, NON_DETECT_NOTE } from '../../src/io/intake.ts';
import { readPolygons, pointInPolygons } from '../../src/io/boundary.ts';
import { GapwiseError } from '../../src/core/shared/errors.ts';
import { MAX_SAMPLE_BYTES, MAX_SAMPLE_ROWS, megabytes } from '../../src/io/intake-limits.ts';
import type { IntakeOptions, IntakeResult, ReportEntry, SampleRow } from '../../src/io/types.ts';
import { rowAt } from '../../src/io/sample-table.ts';
import { expectClose } from '../helpers/tolerance.ts';
import { loadFixture } from '../helpers/fixtures.ts';

const DIR = resolve(__dirname, '..', 'fixtures', 'intake');

/** Every sample of a result as one object (rowAt for each). */
function rowsOf(r: IntakeResult): SampleRow[] {
  return Array.from({ length: r.table.length }, (_, i) => rowAt(r.table, i));
}
const ROOT = resolve(__dirname, '..', '..');

interface Case {
  name: string;
  file: string;
  kind?: 'samples' | 'polygons';
  options?: Partial<IntakeOptions>;
  error?: { code: string; row?: number; feature?: number; column?: string; raw?: string; message?: string[]; notMessage?: string[] };
  expect?: Record<string, unknown>;
  polygons?: { count: number; ringCounts: number[]; inside: Array<[number, number, boolean]> };
}

const manifest = JSON.parse(readFileSync(resolve(DIR, 'expected.json'), 'utf8')) as { cases: Case[] };
const proj = loadFixture<{ crs: string; lon: number; lat: number; x: number; y: number }>('proj.json');

/** Splits bytes into chunks at seeded pseudo-random points (1 to 64 bytes), as a stream might. */
function chunked(bytes: Uint8Array, seed: number): Uint8Array[] {
  const out: Uint8Array[] = [];
  let s = seed;
  for (let i = 0; i < bytes.length; ) {
    s = (s * 1103515245 + 12345) % 2147483648;
    const n = 1 + (s % 64);
    out.push(bytes.subarray(i, i + n));
    i += n;
  }
  return out;
}

/** Reads a corpus file as the command line and the app do: its bytes, streamed in small chunks. */
async function read(c: Case): Promise<IntakeResult> {
  const bytes = new Uint8Array(readFileSync(resolve(DIR, c.file)));
  return readSamplesStream(chunked(bytes, c.file.length), { fileName: c.file, ...c.options });
}

async function catchErrorAsync(f: () => Promise<unknown>): Promise<GapwiseError> {
  try {
    await f();
  } catch (e) {
    expect(e).toBeInstanceOf(GapwiseError);
    return e as GapwiseError;
  }
  throw new Error('expected a GapwiseError, got none');
}

function catchError(f: () => unknown): GapwiseError {
  try {
    f();
  } catch (e) {
    expect(e).toBeInstanceOf(GapwiseError);
    return e as GapwiseError;
  }
  throw new Error('expected a GapwiseError, got none');
}

function checkEntry(entries: ReportEntry[], want: Record<string, unknown>): void {
  const hit = entries.find(
    (e) =>
      (want.line === undefined || e.line === want.line) &&
      (want.feature === undefined || e.feature === want.feature) &&
      e.action === want.action &&
      (want.field === undefined || e.field === want.field) &&
      (want.raw === undefined || e.raw === want.raw) &&
      e.reason.includes(want.reason as string),
  );
  expect(hit, `entry ${JSON.stringify(want)} among ${JSON.stringify(entries)}`).toBeDefined();
}

let projChecks = 0;

describe('readSamples on the intake corpus', () => {
  it('readSamples: the corpus holds at least 25 files, each named in the manifest', () => {
    const files = readdirSync(DIR).filter((f) => f !== 'expected.json');
    expect(files.length).toBeGreaterThanOrEqual(25);
    const named = new Set(manifest.cases.map((c) => c.file));
    for (const f of files) expect(named.has(f), `${f} has no expected outcome`).toBe(true);
  });

  for (const c of manifest.cases) {
    it(`readSamplesStream: ${c.file} — ${c.name}`, async () => {
      if (c.kind === 'polygons') {
        const text = readFileSync(resolve(DIR, c.file), 'utf8');
        if (c.error) {
          const e = catchError(() => readPolygons(text, c.file));
          expect(e.code).toBe(c.error.code);
          if (c.error.feature !== undefined) expect(e.place.feature).toBe(c.error.feature);
          for (const m of c.error.message ?? []) expect(e.message).toContain(m);
          expect(e.place.file).toBe(c.file);
          return;
        }
        const polys = readPolygons(text, c.file);
        const p = c.polygons!;
        expect(polys.length).toBe(p.count);
        expect(polys.map((q) => q.rings.length)).toEqual(p.ringCounts);
        for (const [x, y, inside] of p.inside) expect(pointInPolygons(x, y, polys), `(${x}, ${y})`).toBe(inside);
        return;
      }
      if (c.error) {
        const e = await catchErrorAsync(() => read(c));
        expect(e.code, e.message).toBe(c.error.code);
        if (c.error.row !== undefined) expect(e.place.row).toBe(c.error.row);
        if (c.error.feature !== undefined) expect(e.place.feature).toBe(c.error.feature);
        for (const m of c.error.notMessage ?? []) expect(e.message).not.toContain(m);
        // Messages stay short whatever the file holds.
        expect(e.message.length).toBeLessThan(2000);
        if (c.error.column !== undefined) expect(e.place.column).toBe(c.error.column);
        if (c.error.raw !== undefined) expect(e.place.raw).toBe(c.error.raw);
        for (const m of c.error.message ?? []) expect(e.message).toContain(m);
        return;
      }
      const r = await read(c);
      const x = c.expect!;
      const rep = r.report;
      // Invariants of every read: one row per sample, every input row accounted for, the note present.
      expect(r.samples.x.length).toBe(rowsOf(r).length);
      expect(r.samples.value.length).toBe(rep.summary.n);
      expect(rep.nonDetects.note).toBe(NON_DETECT_NOTE);
      const rejected = rep.entries.filter((e) => e.action === 'rejected').length;
      expect(rep.rowsUsed + rejected).toBe(rep.rowsRead);
      for (const e of rep.entries) expect(e.line !== undefined || e.feature !== undefined).toBe(true);
      expect(JSON.parse(JSON.stringify(rep))).toEqual(rep);

      if (x.format !== undefined) expect(rep.format).toBe(x.format);
      if (x.delimiter !== undefined) expect(rep.delimiter).toBe(x.delimiter);
      if (x.rowsRead !== undefined) expect(rep.rowsRead).toBe(x.rowsRead);
      if (x.rowsUsed !== undefined) expect(rep.rowsUsed).toBe(x.rowsUsed);
      if (x.values !== undefined) expectClose(r.samples.value, x.values as number[], { rel: 1e-12 }, 'values');
      if (x.xs !== undefined) expectClose(r.samples.x, x.xs as number[], { abs: 1e-6 }, 'x');
      if (x.ys !== undefined) expectClose(r.samples.y, x.ys as number[], { abs: 1e-6 }, 'y');
      if (x.inputXs !== undefined) expectClose(rowsOf(r).map((q) => q.inputX), x.inputXs as number[], { abs: 0 }, 'inputX');
      for (const k of ['valueColumn', 'unit', 'xColumn', 'yColumn', 'idColumn', 'qualifierColumn', 'transformAdvice'] as const) {
        if (x[k] === undefined) continue;
        if (k === 'transformAdvice' && x[k] !== '') expect(rep.transformAdvice).toContain(x[k]);
        else expect(rep[k]).toBe(x[k]);
      }
      if (x.columns !== undefined) expect(rep.columns).toEqual(x.columns);
      if (x.numericColumns !== undefined) expect(rep.numericColumns).toEqual(x.numericColumns);
      if (x.decimalMarks !== undefined) expect(rep.decimalMarks).toMatchObject(x.decimalMarks as object);
      if (x.blankLines !== undefined) expect(rep.blankLines).toEqual(x.blankLines);
      if (x.ids !== undefined) expect(rowsOf(r).map((q) => q.id)).toEqual(x.ids);
      if (x.lines !== undefined) expect(rowsOf(r).map((q) => q.lines)).toEqual(x.lines);
      if (x.crsInput !== undefined) expect(rep.crs.input).toBe(x.crsInput);
      if (x.crsWork !== undefined) expect(rep.crs.work).toBe(x.crsWork);
      if (x.crsDetection !== undefined) expect(rep.crs.detection).toContain(x.crsDetection);
      if (x.nonDetects !== undefined) {
        expect(rep.nonDetects.count).toBe(x.nonDetects);
        expect(rowsOf(r).filter((q) => q.flags.includes('nd')).length).toBe(x.nonDetects);
      }
      if (x.nonDetectRule !== undefined) expect(rep.nonDetects.rule).toBe(x.nonDetectRule);
      if (x.duplicateGroups !== undefined) expect(rep.duplicates.groups).toBe(x.duplicateGroups);
      if (x.duplicateRule !== undefined) expect(rep.duplicates.rule).toBe(x.duplicateRule);
      if (x.outliers !== undefined) expect(rep.outliers).toEqual(x.outliers);
      if (x.summary !== undefined) expect(rep.summary).toEqual(x.summary);
      if (x.flags !== undefined) {
        for (const [i, f] of Object.entries(x.flags as Record<string, string[]>)) expect(rowsOf(r)[Number(i)].flags, `flags of row ${i}`).toEqual(f);
      }
      if (x.raw !== undefined) {
        for (const [i, o] of Object.entries(x.raw as Record<string, object>)) expect(rowsOf(r)[Number(i)].raw).toMatchObject(o);
      }
      if (x.entryCount !== undefined) expect(rep.entries.length, JSON.stringify(rep.entries)).toBe(x.entryCount);
      for (const want of (x.entries as Array<Record<string, unknown>>) ?? []) checkEntry(rep.entries, want);
      const codes = rep.warnings.map((w) => w.code);
      for (const w of (x.warnings as string[]) ?? []) expect(codes, JSON.stringify(rep.warnings)).toContain(w);
      for (const w of (x.noWarnings as string[]) ?? []) expect(codes).not.toContain(w);
      for (const [code, text] of Object.entries((x.warningText as Record<string, string>) ?? {})) {
        expect(rep.warnings.find((w) => w.code === code)?.message).toContain(text);
      }
      // Working coordinates against PROJ (tests/reference/proj.json) where the fixture has the point.
      for (let i = 0; i < rowsOf(r).length; i++) {
        const hit = proj.cases.find((q) => q.crs === rep.crs.work && q.lon === rowsOf(r)[i].inputX && q.lat === rowsOf(r)[i].inputY);
        if (!hit) continue;
        projChecks++;
        expectClose(r.samples.x[i], hit.x, proj.tolerance, `${c.file} x[${i}] vs PROJ`);
        expectClose(r.samples.y[i], hit.y, proj.tolerance, `${c.file} y[${i}] vs PROJ`);
      }
    });
  }

  it('readSamples: working coordinates were compared with PROJ for the lon/lat files', () => {
    // semicolon (11.25, 48.5), southern (174.76, −36.85), Svalbard (8.0, 78.2), Norway (5.3, 60.39), ...
    expect(projChecks).toBeGreaterThanOrEqual(4);
  });
});

describe('readSamples on the demo data', () => {
  const demo = resolve(ROOT, 'data-demo');
  const csvs = existsSync(demo) ? readdirSync(demo).filter((f) => f.endsWith('.csv')) : [];
  it.skipIf(csvs.length === 0)('readSamples: each demo CSV reads with its non-detects and its duplicate location reported', () => {
    for (const f of csvs) {
      // The covariate file holds a second numeric column (workshop_dist_m), so the value column is named.
      const r = readSamples(readFileSync(resolve(demo, f), 'utf8'), { fileName: f, value: 'Pb (mg/kg)' });
      const rep = r.report;
      expect(rep.nonDetects.count, f).toBeGreaterThan(0);
      expect(rowsOf(r).filter((q) => q.flags.includes('nd')).length).toBe(rep.nonDetects.count);
      expect(rep.entries.filter((e) => e.action === 'changed' && /non-detect/.test(e.reason)).length).toBe(rep.nonDetects.count);
      expect(rep.duplicates.groups, f).toBeGreaterThanOrEqual(1);
      expect(rep.warnings.map((w) => w.code)).toContain('duplicates-merged');
      expect(rep.entries.filter((e) => e.action === 'merged').length).toBeGreaterThanOrEqual(2);
      expect(rep.crs.input).toBe('EPSG:4326');
      expect(rep.unit).toBe('mg/kg');
      expect(rep.rowsUsed + rep.entries.filter((e) => e.action === 'rejected').length).toBe(rep.rowsRead);
    }
  });
});

describe('readSamples details', () => {
  it('splitUnit: takes the unit from parentheses or brackets', () => {
    expect(splitUnit('Pb (mg/kg)')).toEqual({ base: 'Pb', unit: 'mg/kg' });
    expect(splitUnit('NO3 [mg/L]')).toEqual({ base: 'NO3', unit: 'mg/L' });
    expect(splitUnit('pH')).toEqual({ base: 'pH', unit: '' });
    expect(splitUnit('(x)')).toEqual({ base: '(x)', unit: '' });
  });

  it('normaliseName: lowercases, drops the unit, joins words with underscores', () => {
    expect(normaliseName('Sample ID')).toBe('sample_id');
    expect(normaliseName('Easting (m)')).toBe('easting');
  });

  it('readSamples: a duplicate tolerance in metres merges nearby samples', () => {
    // 11.25° E at 48.5° N: 0.0001° of longitude is about 7.4 m (111.32 km · cos 48.5°).
    const text = 'id,lon,lat,Pb\n1,11.25,48.5,10\n2,11.2501,48.5,30\n3,11.26,48.51,5\n';
    const near = readSamples(text, { fileName: 't.csv', duplicateTolerance: 10 });
    expect(near.report.duplicates.groups).toBe(1);
    expectClose(near.samples.value, [20, 5], { abs: 0 }, 'merged values');
    const far = readSamples(text, { fileName: 't.csv', duplicateTolerance: 5 });
    expect(far.report.duplicates.groups).toBe(0);
  });

  it('readSamples: bad options are GapwiseError bad-option', () => {
    for (const o of [{ nonDetect: 'third' }, { duplicates: 'drop' }, { duplicateTolerance: -1 }, { format: 'xlsx' }]) {
      const e = catchError(() => readSamples('id,lon,lat,v\n1,1,1,1\n', { fileName: 'o.csv', ...(o as object) }));
      expect(e.code).toBe('bad-option');
    }
  });

  it('readSamples: a detection-limit column supplies the limit for "ND" cells', () => {
    const text = 'id,lon,lat,Cd,dl\n1,11.25,48.5,ND,0.2\n2,11.26,48.51,0.9,0.2\n3,11.27,48.52,1.4,0.2\n';
    const r = readSamples(text, { fileName: 'dl.csv' });
    expect(r.report.detectionLimitColumn).toBe('dl');
    expect(r.report.numericColumns).toEqual(['Cd']);
    expectClose(r.samples.value, [0.1, 0.9, 1.4], { rel: 1e-12 }, 'values');
  });

  it('readSamples: a GeoJSON latitude out of range rejects that feature, counted from 1 and named by its id', () => {
    const pt = (lon: number, lat: number, id: string, Pb: number) => ({ type: 'Feature', id, geometry: { type: 'Point', coordinates: [lon, lat] }, properties: { Pb } });
    const one = JSON.stringify({ type: 'FeatureCollection', features: [pt(11.25, 48.5, 'A-1', 1), pt(11.26, 95, 'B-7', 2), pt(11.27, 48.52, 'C-3', 3)] });
    const r = readSamples(one, { fileName: 'g.geojson' });
    expect(r.report.rowsUsed).toBe(2);
    expect(rowsOf(r).map((q) => q.lines)).toEqual([[1], [3]]);
    expect(r.report.entries).toEqual([{ feature: 2, id: 'B-7', field: 'geometry', raw: '95', action: 'rejected', reason: 'latitude 95 is outside −90…90; expected degrees in EPSG:4326' }]);
    const most = JSON.stringify({ type: 'FeatureCollection', features: [pt(11.25, 48.5, 'A-1', 1), pt(11.26, 195, 'B-7', 2), pt(11.27, 197, 'C-3', 3)] });
    const e = catchError(() => readSamples(most, { fileName: 'g.geojson' }));
    expect(e.code).toBe('bad-value');
    expect(e.place).toMatchObject({ file: 'g.geojson', feature: 2 });
    expect(e.place.row).toBeUndefined();
    expect(e.describe()).toContain('feature 2');
    expect(e.message).not.toContain('swapped');
  });

  it('readSamples: CSV headers named __proto__, constructor and toString are plain columns', () => {
    const text = 'id,lon,lat,__proto__,constructor,toString\n1,11.25,48.5,10,a,b\n2,11.26,48.51,20,c,d\n3,11.27,48.52,30,e,f\n';
    const r = readSamples(text, { fileName: 'p.csv' });
    expect(r.report.valueColumn).toBe('__proto__');
    expect(r.report.columns).toEqual(['id', 'lon', 'lat', '__proto__', 'constructor', 'toString']);
    expect(Object.entries(rowsOf(r)[0].raw)).toEqual([['id', '1'], ['lon', '11.25'], ['lat', '48.5'], ['__proto__', '10'], ['constructor', 'a'], ['toString', 'b']]);
    expect(Object.getPrototypeOf(rowsOf(r)[0].raw)).toBe(Object.prototype);
    expect(Object.keys(r.report.decimalMarks ?? {})).toContain('__proto__');
    expect(JSON.parse(JSON.stringify(rowsOf(r)[0].raw)).__proto__).toBe('10');
    const g = '{"type":"FeatureCollection","features":[{"type":"Feature","geometry":{"type":"Point","coordinates":[11.25,48.5]},"properties":{"__proto__":"7.5"}},{"type":"Feature","geometry":{"type":"Point","coordinates":[11.26,48.51]},"properties":{"__proto__":"8"}}]}';
    const rg = readSamples(g, { fileName: 'p.geojson' });
    expect(rg.report.valueColumn).toBe('__proto__');
    expectClose(rg.samples.value, [7.5, 8], { abs: 0 }, 'values');
  });

  it('readSamples: an option naming an Object.prototype member is refused, not used', () => {
    const e = catchError(() => readSamples('id,lon,lat,v\n1,1,1,1\n', { fileName: 'o.csv', nonDetect: 'toString' as never }));
    expect(e.code).toBe('bad-option');
  });

  it('readSamples: a header of a million columns gives a short message', () => {
    const header = Array.from({ length: 1_000_000 }, (_, i) => `c${i}`).join(',');
    const e = catchError(() => readSamples(`${header}\n${'1,'.repeat(999_999)}1\n`, { fileName: 'wide.csv' }));
    expect(e.code).toBe('missing-column');
    expect(e.message.length).toBeLessThan(2000);
    expect(e.message).toContain('999,988 more');
  });

  it('readSamples: a thousand samples at one place give one merged sample with a short id and warning', () => {
    const lines = Array.from({ length: 1000 }, (_, i) => `s${i},11.25,48.5,${i}`);
    const other = Array.from({ length: 40 }, (_, i) => `t${i},${11.3 + i * 0.001},48.6,1\nu${i},${11.3 + i * 0.001},48.6,3`);
    const r = readSamples(`id,lon,lat,v\n${lines.join('\n')}\n${other.join('\n')}\n`, { fileName: 'same.csv' });
    expect(rowsOf(r)[0].id).toBe(`${Array.from({ length: 12 }, (_, i) => `s${i}`).join(' + ')} + 988 more`);
    expectClose([r.samples.value[0]], [499.5], { rel: 1e-12 }, 'mean of 0…999');
    const w = r.report.warnings.find((x) => x.code === 'duplicates-merged')!;
    expect(w.message).toContain('41 duplicate locations');
    expect(w.message).toContain('and 29 more');
    expect(w.message.length).toBeLessThan(1000);
  });

  it('readSamples: UTF-16 decoded as UTF-8 by a caller is named, not taken for binary data', () => {
    const bytes = new Uint8Array([0xff, 0xfe, ...new Uint8Array(Buffer.from('id,lon,lat,v\n1,2,3,4\n', 'utf16le'))]);
    const e = catchError(() => readSamples(new TextDecoder().decode(bytes), { fileName: 'u.csv' }));
    expect(e.message).toContain('UTF-16');
  });

  it('readSamples: control characters in file text are shown as codes in messages', () => {
    const e = catchError(() => readSamples('id,lon,lat,a\u001b[2Jb,c\u0007d\n1,1,1,2,3\n', { fileName: 'esc.csv' }));
    expect(e.message).not.toMatch(/[\u0000-\u001f]/);
    expect(e.message).toContain('\\u001b');
  });

  it('readSamples: a yes/no non-detect column is read by its name', () => {
    const text = 'id,lon,lat,Cd,non_detect\n1,11.25,48.5,0.2,yes\n2,11.26,48.51,0.9,no\n3,11.27,48.52,1.4,no\n';
    const r = readSamples(text, { fileName: 'yn.csv' });
    expect(r.report.qualifierColumn).toBe('non_detect');
    expectClose(r.samples.value, [0.1, 0.9, 1.4], { rel: 1e-12 }, 'values');
  });
});

describe('readSamplesStream', () => {
  // Every UTF-8 text file of the corpus: the stream (in chunks of 1 to 64 bytes) and the text give
  // the same result, or the same error.
  for (const c of manifest.cases.filter((k) => k.kind !== 'polygons')) {
    it(`readSamplesStream: ${c.file} (${c.name}) gives what readSamples gives on its text`, async () => {
      const bytes = new Uint8Array(readFileSync(resolve(DIR, c.file)));
      const text = new TextDecoder('utf-8', { fatal: false }).decode(bytes);
      if (text.includes('\ufffd') || text.includes('\u0000') || bytes[0] === 0xff || bytes[0] === 0xfe) return; // not UTF-8: only the stream reads it
      const options = { fileName: c.file, ...c.options };
      let fromText: unknown;
      let fromStream: unknown;
      try {
        fromText = readSamples(readFileSync(resolve(DIR, c.file), 'utf8'), options);
      } catch (e) {
        fromText = (e as GapwiseError).toJSON();
      }
      try {
        fromStream = await readSamplesStream(chunked(bytes, 17), options);
      } catch (e) {
        fromStream = (e as GapwiseError).toJSON();
      }
      expect(fromStream).toEqual(fromText);
    });
  }

  it('readSamplesStream: reports progress in bytes and rows, and reads a ReadableStream', async () => {
    const text = 'id,lon,lat,v\n' + Array.from({ length: 500 }, (_, i) => `${i},${11 + i * 1e-3},48.5,${i}`).join('\n') + '\n';
    const bytes = new TextEncoder().encode(text);
    const seen: Array<{ bytes: number; rows: number; totalBytes?: number }> = [];
    const stream = new ReadableStream<Uint8Array>({
      start(controller) {
        for (const c of chunked(bytes, 3)) controller.enqueue(c);
        controller.close();
      },
    });
    const r = await readSamplesStream(stream, { fileName: 's.csv' }, { totalBytes: bytes.length, onProgress: (p) => seen.push(p) });
    expect(r.report.rowsUsed).toBe(500);
    const last = seen[seen.length - 1];
    expect(last).toEqual({ bytes: bytes.length, rows: 500, totalBytes: bytes.length });
    for (let i = 1; i < seen.length; i++) expect(seen[i].bytes).toBeGreaterThanOrEqual(seen[i - 1].bytes);
  });

  it('readSamplesStream: a stated size over the byte limit is refused before reading, with the limit in the message', async () => {
    let pulled = 0;
    const source = (function* () {
      pulled++;
      yield new Uint8Array(10);
    })();
    const e = await catchErrorAsync(() => readSamplesStream(source, { fileName: 'big.csv' }, { totalBytes: MAX_SAMPLE_BYTES + 1 }));
    expect(e.code).toBe('bad-file');
    expect(e.message).toContain(megabytes(MAX_SAMPLE_BYTES));
    expect(pulled).toBe(0);
  });

  it('readSamplesStream: an endless stream of zero bytes is refused at its first chunk', async () => {
    let pulled = 0;
    const zeros = (function* () {
      for (;;) {
        pulled++;
        yield new Uint8Array(65536);
      }
    })();
    const e = await catchErrorAsync(() => readSamplesStream(zeros, { fileName: 'zero' }));
    expect(e.code).toBe('bad-file');
    expect(e.message).toContain('not a UTF-8 text file');
    expect(pulled).toBe(1);
  });

  it('readSamplesStream: an endless stream of text stops at the byte limit', async () => {
    let bytes = 0;
    const line = new TextEncoder().encode('x'.repeat(1023) + '\n');
    const big = new Uint8Array(1024 * 1024);
    for (let i = 0; i < 1024; i++) big.set(line, i * 1024);
    const endless = (function* () {
      for (;;) {
        bytes += big.length;
        yield big;
      }
    })();
    // A smaller limit than MAX_SAMPLE_BYTES keeps the test short; the check is the same.
    const limit = 64 * 1024 * 1024;
    const e = await catchErrorAsync(() => readSamplesStream(endless, { fileName: 'endless.txt' }, { limits: { bytes: limit } }));
    expect(e.code).toBe('bad-file');
    expect(e.message).toContain(`at most ${megabytes(limit)}`);
    expect(bytes).toBeLessThanOrEqual(limit + big.length);
  });

  it('readSamplesStream: rows past the row limit are refused as soon as one more is read', async () => {
    let rows = 0;
    const endless = (function* () {
      yield new TextEncoder().encode('id,lon,lat,v\n');
      const block = new TextEncoder().encode('1,11.2,48.5,3\n'.repeat(10_000));
      for (;;) {
        rows += 10_000;
        yield block;
      }
    })();
    // A smaller limit than MAX_SAMPLE_ROWS keeps the test short; the check is the same.
    const limit = 1_000_000;
    const e = await catchErrorAsync(() => readSamplesStream(endless, { fileName: 'rows.csv' }, { limits: { rows: limit } }));
    expect(e.code).toBe('bad-file');
    expect(e.message).toContain(`expected at most ${limit.toLocaleString('en-US')}`);
    expect(rows).toBeLessThan(limit + (1 << 20));
    expect(MAX_SAMPLE_ROWS).toBe(10_000_000);
  }, 60_000);
});

describe('readSamples properties (fast-check)', () => {
  const AMBIGUOUS = /^-?[1-9]\d{0,2}[.,]\d{3}$/;

  it('readSamples: random tables written with random delimiters, quoting and decimal marks read back to the same numbers', () => {
    const text = fc.string({ maxLength: 10 });
    fc.assert(
      fc.property(
        fc.record({
          delimiter: fc.constantFrom(',', ';', '\t'),
          comma: fc.boolean(),
          quoting: fc.constantFrom('none', 'all', 'some'),
          crlf: fc.boolean(),
          bom: fc.boolean(),
          centre: fc.integer({ min: -170, max: 170 }),
          rows: fc.array(
            fc.record({
              value: fc.double({ min: -1e6, max: 1e6, noNaN: true }),
              lat: fc.double({ min: -60, max: 60, noNaN: true }),
              note: text,
              quote: fc.boolean(),
            }),
            { minLength: 1, maxLength: 20 },
          ),
        }),
        (t) => {
          const comma = t.comma && t.delimiter !== ',';
          const eol = t.crlf ? '\r\n' : '\n';
          const num = (v: number) => (comma ? String(v).replace('.', ',') : String(v));
          const cell = (s: string, force: boolean) => {
            const needs = /["\r\n]/.test(s) || s.includes(t.delimiter);
            if (t.quoting === 'all' || needs || (t.quoting === 'some' && force)) return `"${s.replace(/"/g, '""')}"`;
            return s;
          };
          const lines = ['id', 'lon', 'lat', 'v', 'note'].join(t.delimiter);
          let body = '';
          let line = 2;
          const expectedLines: number[] = [];
          const want = t.rows.map((r, i) => {
            const lon = t.centre + i * 0.013;
            // Spaces around a note would be data; keep notes non-blank so that no row is blank.
            const note = `n${r.note}`;
            const written = [cell(`S${i}`, r.quote), cell(num(lon), r.quote), cell(num(r.lat), r.quote), cell(num(r.value), r.quote), cell(note, r.quote)];
            body += written.join(t.delimiter) + eol;
            expectedLines.push(line);
            line += 1 + (note.match(/\r\n|\r|\n/g)?.length ?? 0);
            return { id: `S${i}`, lon, lat: r.lat, value: r.value, cells: [num(lon), num(r.lat), num(r.value)] };
          });
          const csv = (t.bom ? '\ufeff' : '') + lines + eol + body;
          let result: IntakeResult;
          try {
            result = readSamples(csv, { fileName: 'p.csv', value: 'v', duplicates: 'keep' });
          } catch (e) {
            // The only refusal allowed: every row held a cell whose grouping nothing could settle.
            expect(e).toBeInstanceOf(GapwiseError);
            expect((e as GapwiseError).message).toContain('ambiguous');
            return;
          }
          expect(result.report.delimiter).toBe(t.delimiter);
          const byId = new Map(rowsOf(result).map((r) => [r.id, r]));
          want.forEach((w, i) => {
            const got = byId.get(w.id);
            if (!got) {
              const entry = result.report.entries.find((e) => e.line === expectedLines[i] && e.action === 'rejected');
              expect(entry?.reason, `row ${i} missing: ${JSON.stringify(result.report.entries)}`).toContain('ambiguous');
              expect(w.cells.some((c) => AMBIGUOUS.test(c))).toBe(true);
              return;
            }
            // === so that −0 written as "0" counts as read back.
            expect(got.inputX === w.lon, `lon ${got.inputX} vs ${w.lon}`).toBe(true);
            expect(got.inputY === w.lat, `lat ${got.inputY} vs ${w.lat}`).toBe(true);
            expect(got.value === w.value, `value ${got.value} vs ${w.value}`).toBe(true);
            expect(got.lines).toEqual([expectedLines[i]]);
          });
        },
      ),
      { numRuns: 150 },
    );
  });

  it('readSamplesStream: text that starts with two byte-order marks reads as its decoded text does (one mark removed by decoding)', async () => {
    // The case fast-check found (seed 1881233651): the stream and the decoded text must fail alike.
    const t = '\ufeff\ufeffid,lon,lat,Pb\n';
    const options = { fileName: 'r.csv', duplicates: 'keep' as const };
    const decoded = new TextDecoder().decode(new TextEncoder().encode(t));
    expect(decoded).toBe(t.slice(1));
    let whole: unknown, streamed: unknown;
    try { readSamples(decoded, options); } catch (e) { whole = (e as GapwiseError).toJSON(); }
    try { await readSamplesStream(chunked(new TextEncoder().encode(t), 1), options); } catch (e) { streamed = (e as GapwiseError).toJSON(); }
    expect(whole).toBeDefined();
    expect(streamed).toEqual(whole);
  });

  it('readSamplesStream: random CSV-like text split at random points reads as readSamples reads the whole decoded text', async () => {
    const tokens = fc.constantFrom('lon', 'lat', 'id', 'Pb', '1', '2.5', '11.25', '48.5', '-3', '1,5', '<0.5', 'NA', '', ' ', '"', '""', '\n', '\r\n', '\r', ',', ';', '\t', 'é', '\ufeff', '{');
    const body = fc.array(tokens, { maxLength: 120 }).map((a) => a.join(''));
    const text = fc.tuple(fc.constantFrom('id,lon,lat,Pb\n', 'id;lon;lat;Pb\r\n', '\ufeffid\tlon\tlat\tPb\r', ''), body).map(([h, b]) => h + b);
    const outcome = async (f: () => Promise<IntakeResult> | IntakeResult) => {
      try {
        return await f();
      } catch (e) {
        if (!(e instanceof GapwiseError)) throw e;
        return e.toJSON();
      }
    };
    await fc.assert(
      fc.asyncProperty(text, fc.integer({ min: 1, max: 1 << 30 }), fc.constantFrom('r.csv', 'r'), async (t, seed, fileName) => {
        const options = { fileName, duplicates: 'keep' as const };
        // The decoded text, as File.text() or TextDecoder gives it: one leading byte-order mark removed.
        const whole = await outcome(() => readSamples(new TextDecoder().decode(new TextEncoder().encode(t)), options));
        const streamed = await outcome(() => readSamplesStream(chunked(new TextEncoder().encode(t), seed), options));
        expect(streamed).toEqual(whole);
      }),
      { numRuns: 300 },
    );
  });

  it('readSamples: random text and bytes raise nothing but GapwiseError', () => {
    const tokens = fc.constantFrom('lon', 'lat', 'x', 'y', 'easting', 'id', 'Pb (mg/kg)', 'qualifier', 'ND', '<', '<0.5', '< 5', '1', '2.5', '-3', '1,5', '1.234', '1,234.5', 'NA', '', ' ', '"', '""', '\n', '\r\n', ',', ';', '\t', '123', '1e400', '200', '-91', '95', '637l80.0', '<script>', '{', '}', '[', ']', ':', 'null');
    const csvish = fc.array(tokens, { maxLength: 80 }).map((a) => a.join(''));
    const headed = fc
      .tuple(fc.constantFrom('lon,lat,v\n', 'x;y;v;flag\n', 'id\tlongitude\tlatitude\tPb\tAs\n', 'easting,northing,Pb,detect\n'), csvish)
      .map(([h, b]) => h + b);
    const bytes = fc.uint8Array({ maxLength: 300 }).map((u) => new TextDecoder('utf-8').decode(u));
    const geo = fc
      .array(fc.oneof(fc.jsonValue({ maxDepth: 4 }), fc.record({ type: fc.constantFrom('Feature', 'Point'), geometry: fc.jsonValue({ maxDepth: 3 }), properties: fc.jsonValue({ maxDepth: 2 }) })), { maxLength: 6 })
      .map((features) => JSON.stringify({ type: 'FeatureCollection', features }));
    const input = fc.oneof(fc.string({ maxLength: 200 }), fc.string({ unit: 'binary', maxLength: 200 }), bytes, csvish, headed, fc.json({ maxDepth: 4 }), geo);
    const options = fc.record(
      {
        fileName: fc.constantFrom('r.csv', 'r.geojson', 'r.txt', 'r'),
        crs: fc.constantFrom('EPSG:4326', 'EPSG:32633', 'EPSG:27700', 'nonsense'),
        nonDetect: fc.constantFrom('half', 'dl', 'sqrt2'),
        value: fc.constantFrom('v', 'Pb', 'nothing'),
        strict: fc.boolean(),
      },
      { requiredKeys: ['fileName'] },
    );
    fc.assert(
      fc.property(input, options, (text, o) => {
        for (const f of [() => readSamples(text, o as IntakeOptions), () => readPolygons(text, o.fileName)]) {
          try {
            f();
          } catch (e) {
            if (!(e instanceof GapwiseError)) throw e;
            expect(e.message.length).toBeGreaterThan(0);
          }
        }
      }),
      { numRuns: 400 },
    );
  });
});
