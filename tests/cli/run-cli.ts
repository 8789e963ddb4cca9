// Runs the command line in-process with captured output, in a fresh temporary folder.
import { mkdtempSync, rmSync, writeFileSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../src/cli/main.ts';
import { createRandom } from '../../src/core/shared/random.ts';

export interface CliRun {
  code: number;
  stdout: string;
  stderr: string;
}

/** A temporary folder to run commands in, with helpers to write and read its files. */
export interface Workspace {
  dir: string;
  write(name: string, text: string): string;
  read(name: string): string;
  run(...argv: string[]): Promise<CliRun>;
  remove(): void;
}

/**
 * `maxWorkers`: most threads --workers may ask for (4 by default, so that tests of the split over 3
 * threads run the same on a 2-core machine). `progressAfterSeconds`: 0 shows progress lines from the
 * start of a run (default: the command line's own delay, so short runs print none).
 */
export function workspace(options: { maxWorkers?: number; progressAfterSeconds?: number } = {}): Workspace {
  const dir = mkdtempSync(join(tmpdir(), 'gapwise-cli-'));
  return {
    dir,
    write(name, text) {
      writeFileSync(join(dir, name), text);
      return name;
    },
    read(name) {
      return readFileSync(join(dir, name), 'utf8');
    },
    async run(...argv) {
      let stdout = '';
      let stderr = '';
      const code = await main(argv, { stdout: (t) => { stdout += t; }, stderr: (t) => { stderr += t; }, cwd: dir, maxWorkers: options.maxWorkers ?? 4,
        ...(options.progressAfterSeconds !== undefined ? { progressAfterSeconds: options.progressAfterSeconds } : {}) });
      return { code, stdout, stderr };
    },
    remove() {
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

/** Planar samples (metres, EPSG:32633) on a jittered 5 × 5 grid with a smooth signal, seeded. */
export function planarSamplesCsv(): string {
  const lines = ['station,easting,northing,nitrate (mg/L)'];
  let k = 0;
  for (let i = 0; i < 5; i++) {
    for (let j = 0; j < 5; j++) {
      k++;
      const x = 500000 + 40 * i + ((k * 7) % 11);
      const y = 5400000 + 35 * j + ((k * 5) % 9);
      const v = 20 + 8 * Math.sin(i / 1.7) + 5 * Math.cos(j / 1.3) + ((k * 13) % 7) / 3;
      lines.push(`S${k},${x},${y},${v.toFixed(2)}`);
    }
  }
  return `${lines.join('\n')}\n`;
}

/**
 * An invented survey of `n` samples (planar metres, EPSG:32633) over a square of side 25·√n m
 * (about one sample per 625 m²): a smooth field of three waves (scales of a few hundred metres) plus
 * normal noise of sd 0.5, seeded. Not real data.
 */
export function fieldSamplesCsv(n: number, seed = 1): string {
  const rng = createRandom(seed);
  const side = 25 * Math.sqrt(n);
  const lines = ['id,easting,northing,value'];
  for (let i = 0; i < n; i++) {
    const dx = side * rng.uniform();
    const dy = side * rng.uniform();
    const v = 30 + 6 * Math.sin(dx / 180) + 5 * Math.cos(dy / 140) + 3 * Math.sin((dx + dy) / 90) + 0.5 * rng.normal();
    lines.push(`P${i + 1},${(500000 + dx).toFixed(2)},${(5400000 + dy).toFixed(2)},${v.toFixed(3)}`);
  }
  return `${lines.join('\n')}\n`;
}

/** A model of that field (Matérn ν = 3/2, as `gapwise fit` finds it on 5,000 such samples), with its working CRS. */
export const FIELD_MODEL = {
  structures: [{ type: 'nugget', sill: 0.23 }, { type: 'matern', sill: 178, scale: 720, nu: 1.5 }],
  trend: 'constant', transform: 'none', crs: { work: 'EPSG:32633' },
};
