// Pieces every benchmark shares: the row each suite returns to bench/run.ts, and seeded invented
// samples on a square at UTM-like coordinates (a smooth wave pattern plus unit noise).
import { createRandom } from '../src/core/shared/random.ts';
import type { Samples } from '../src/core/shared/samples.ts';

/** One benchmark figure; bench/run.ts prints these as a table and writes them to JSON. */
export interface Row {
  name: string;
  n: number;
  seconds: number;
  gflops?: number;
  note?: string;
  [key: string]: unknown;
}

export interface WaveSamplesOptions {
  /** Side of the square, metres. */
  side: number;
  /** Amplitude of the wave pattern (data units). */
  amplitude: number;
  /** Wavelength-like lengths of the pattern along x and y, metres. */
  lengthX: number;
  lengthY: number;
  seed: number;
}

/**
 * n invented samples uniformly on a side × side square at (500,000, 6,000,000) m:
 * value = 40 + amplitude·sin(x/lengthX)·cos(y/lengthY) + N(0, 1).
 */
export function waveSamples(n: number, o: WaveSamplesOptions): Samples {
  const r = createRandom(o.seed);
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  const value = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    x[i] = 500000 + o.side * r.uniform();
    y[i] = 6000000 + o.side * r.uniform();
    value[i] = 40 + o.amplitude * Math.sin((x[i] - 500000) / o.lengthX) * Math.cos((y[i] - 6000000) / o.lengthY) + r.normal();
  }
  return { x, y, value };
}
