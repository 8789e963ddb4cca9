/**
 * The size limits of a samples file, one constant each, shared by the app and the command line (their
 * help and messages are written from these constants). Past them a read is refused at once, before
 * the memory runs out: a file is read as a stream, and the limits stop it early.
 */

/**
 * Largest samples file read, in bytes (CSV or GeoJSON): room for 10 million rows of an ID, two
 * coordinates and a value, and below the longest string a JavaScript engine holds (about 512 MB in V8),
 * since the app reads a file as text.
 */
export const MAX_SAMPLE_BYTES = 500 * 1024 * 1024;

/** Most data rows (CSV) or point features (GeoJSON) read from one samples file (stored by column, about 60 bytes a row). */
export const MAX_SAMPLE_ROWS = 10_000_000;

/** "256 MB" (binary megabytes, as file managers commonly show them). */
export function megabytes(bytes: number): string {
  return `${Math.round(bytes / (1024 * 1024)).toLocaleString('en-US')} MB`;
}

/** One sentence for help texts: the limits in words. */
export function sampleLimitsText(): string {
  return `a samples file may hold up to ${MAX_SAMPLE_ROWS.toLocaleString('en-US')} rows and ${megabytes(MAX_SAMPLE_BYTES)}`;
}
