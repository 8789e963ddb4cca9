/**
 * A digest of prepared report data: the data as canonical JSON (typed arrays as plain arrays, keys
 * sorted, functions left out, numbers as JavaScript prints them, so bit-for-bit) hashed with SHA-256.
 * Two preparations with the same digest hold the same numbers.
 */
import { createHash } from 'node:crypto';

function canonical(value: unknown): unknown {
  if (ArrayBuffer.isView(value)) return { typed: value.constructor.name, values: Array.from(value as unknown as ArrayLike<number>, (v) => (Number.isNaN(v) ? 'NaN' : v)) };
  if (Array.isArray(value)) return value.map(canonical);
  if (typeof value === 'number') return Number.isFinite(value) ? value : String(value);
  if (value && typeof value === 'object') {
    const out: Record<string, unknown> = {};
    for (const key of Object.keys(value).sort()) {
      const v = (value as Record<string, unknown>)[key];
      if (typeof v === 'function' || v === undefined) continue;
      out[key] = canonical(v);
    }
    return out;
  }
  return value;
}

/** SHA-256 (hex) of the value's canonical JSON. */
export function reportDigest(value: unknown): string {
  return createHash('sha256').update(JSON.stringify(canonical(value))).digest('hex');
}

/**
 * The value with every model's `fit.warnings` read as their messages, as fit warnings were plain
 * strings before they carried codes: digests pinned before then compare with this view.
 */
export function withFitWarningMessages(value: unknown, parentKey = ''): unknown {
  if (Array.isArray(value)) return value.map((v) => withFitWarningMessages(v, parentKey));
  if (!value || typeof value !== 'object' || ArrayBuffer.isView(value)) return value;
  return Object.fromEntries(Object.entries(value).map(([k, v]) => [k,
    parentKey === 'fit' && k === 'warnings' && Array.isArray(v)
      ? v.map((w) => (typeof w === 'string' ? w : (w as { message: string }).message))
      : withFitWarningMessages(v, k)]));
}
