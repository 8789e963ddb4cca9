/**
 * The one error type for problems a user must read and act on.
 *
 * `code` comes from a fixed list; `message` is one plain sentence naming the actual and the expected
 * value; `file`, `row` (1-based line, header = line 1, or feature index) and `column` locate it when
 * there is a place to point at. The CLI maps `kind` to its exit codes: input → 2, numeric → 3.
 */

export type ErrorCode =
  | 'bad-file'            // the file cannot be read as the format it claims
  | 'bad-value'           // a cell or property is not what it must be
  | 'missing-column'      // a needed column is absent or ambiguous
  | 'bad-crs'             // unknown or unusable coordinate reference system
  | 'bad-geometry'        // GeoJSON geometry is invalid
  | 'bad-model'           // the covariance model JSON is invalid
  | 'bad-option'          // a command-line or API option is invalid
  | 'too-few-samples'     // not enough samples for the requested operation
  | 'constant-values'     // all values are identical; nothing to fit
  | 'not-positive-definite' // a covariance matrix could not be factorised
  | 'fit-failed'          // the optimiser found no finite likelihood
  | 'non-finite'          // a result is not a finite number (overflow, or a model out of scale with the data)
  | 'cancelled';          // the user stopped the work

const NUMERIC_CODES: ReadonlySet<ErrorCode> = new Set(['not-positive-definite', 'fit-failed', 'non-finite']);

export interface ErrorPlace {
  file?: string;
  /** 1-based line in a text file (header = line 1). */
  row?: number;
  /** 0-based feature index in a GeoJSON file. */
  feature?: number;
  column?: string;
  /** The raw text that was rejected. */
  raw?: string;
}

export class GapwiseError extends Error {
  readonly code: ErrorCode;
  readonly place: ErrorPlace;

  constructor(code: ErrorCode, message: string, place: ErrorPlace = {}) {
    super(message);
    this.name = 'GapwiseError';
    this.code = code;
    this.place = place;
  }

  /** 'input' problems are the user's file or options; 'numeric' ones are the numbers failing. */
  get kind(): 'input' | 'numeric' | 'cancelled' {
    if (this.code === 'cancelled') return 'cancelled';
    return NUMERIC_CODES.has(this.code) ? 'numeric' : 'input';
  }

  /** The message with its place, e.g. `samples.csv, line 14, column "Pb": "12,5x" is not a number.` */
  describe(): string {
    const parts: string[] = [];
    if (this.place.file) parts.push(this.place.file);
    if (this.place.row !== undefined) parts.push(`line ${this.place.row}`);
    if (this.place.feature !== undefined) parts.push(`feature ${this.place.feature}`);
    if (this.place.column !== undefined) parts.push(`column "${this.place.column}"`);
    return parts.length ? `${parts.join(', ')}: ${this.message}` : this.message;
  }

  /** Plain data for postMessage and JSON reports. */
  toJSON(): { code: ErrorCode; message: string; place: ErrorPlace } {
    return { code: this.code, message: this.message, place: this.place };
  }
}

/** A numerical outcome that is not a failure (jitter added, fit not converged, samples merged). */
export interface Warning {
  code: string;
  message: string;
}

/**
 * Refuses a count derived from user numbers (lag classes, grid cells, points per block, neighbours,
 * realisations, candidates) before anything of that size is allocated: GapwiseError 'bad-option' naming
 * the count, its actual value and the limit, and what to change. `actual` may be fractional or
 * non-finite (it is the count as computed, before rounding); the limit is one named constant per count.
 */
export function checkCount(actual: number, limit: number, what: string, advice: string): void {
  if (actual <= limit) return;
  const shown = !Number.isFinite(actual) ? String(actual) : actual >= 1e15 ? actual.toExponential(2) : Math.ceil(actual).toLocaleString('en');
  throw new GapwiseError('bad-option', `${what} would be ${shown}; the most is ${limit.toLocaleString('en')}: ${advice}.`);
}
