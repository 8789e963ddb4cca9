/**
 * Small shared pieces of the app's step states: an error as shown on screen, a value computed from
 * the state or the reason it could not be, and the progress of an engine task. Plain TypeScript.
 */
import { GapwiseError } from '../../core/shared/errors.ts';

/** An error as shown on screen: the sentence and where it points. */
export interface ShownError {
  message: string;
  code?: string;
  /** A file with several numeric columns: the columns the value can be chosen from. */
  choices?: string[];
}

/** Any thrown value as a ShownError (a GapwiseError with its place, an engine error, anything else). */
export function showError(e: unknown): ShownError {
  if (e instanceof GapwiseError) {
    const choices = (e as { numericColumns?: unknown }).numericColumns;
    return { message: e.describe(), code: e.code, ...(Array.isArray(choices) && choices.length ? { choices: choices.map(String) } : {}) };
  }
  if (e && typeof e === 'object' && 'message' in e) {
    const o = e as { message: string; code?: string; place?: { file?: string; row?: number; column?: string } };
    const where = o.place ? [o.place.file, o.place.row !== undefined ? `line ${o.place.row}` : '', o.place.column ? `column "${o.place.column}"` : ''].filter(Boolean).join(', ') : '';
    return { message: where ? `${where}: ${o.message}` : o.message, code: o.code };
  }
  return { message: String(e) };
}

/** A value computed from the state, or the reason it could not be. */
export interface Outcome<T> {
  value: T | null;
  error: ShownError | null;
}

export function attempt<T>(f: () => T): Outcome<T> {
  try {
    return { value: f(), error: null };
  } catch (e) {
    return { value: null, error: showError(e) };
  }
}

/** The progress of one engine task as a step shows it. */
export interface TaskState {
  status: 'idle' | 'running' | 'done' | 'error' | 'cancelled';
  done: number;
  total: number;
  what: string;
  error: ShownError | null;
  /** Wall-clock duration of the last run, ms. */
  ms: number;
}

export const idleTask = (): TaskState => ({ status: 'idle', done: 0, total: 0, what: '', error: null, ms: 0 });
