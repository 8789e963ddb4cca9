/**
 * The size limits of a samples file, one constant each, shared by the app and the command line (their
 * help and messages are written from these constants). Past them a read is refused at once, before
 * the memory runs out: a file is read as a stream, and the limits stop it early.
 */

/** Largest samples file read, in bytes (CSV or GeoJSON). */
export const MAX_SAMPLE_BYTES = 128 * 1024 * 1024;

/** Most data rows (CSV) or point features (GeoJSON) read from one samples file. */
export const MAX_SAMPLE_ROWS = 2_000_000;

/** "256 MB" (binary megabytes, as file managers commonly show them). */
export function megabytes(bytes: number): string {
  return `${Math.round(bytes / (1024 * 1024)).toLocaleString('en-US')} MB`;
}

/** One sentence for help texts: the limits in words. */
export function sampleLimitsText(): string {
  return `a samples file may hold up to ${MAX_SAMPLE_ROWS.toLocaleString('en-US')} rows and ${megabytes(MAX_SAMPLE_BYTES)}`;
}
