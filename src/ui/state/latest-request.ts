/**
 * The one way the app runs engine work that a newer request replaces (a variogram, a fit, a
 * cross-validation, a surface, realisations, suggested sites, a file being read): starting a request
 * aborts the previous one; an answer that arrives after its request was replaced or cancelled is
 * dropped; errors come back as data (a ShownError), never thrown. Plain TypeScript (no runes), so it
 * is tested directly.
 */
import { GapwiseError } from '../../core/shared/errors.ts';
import { showError, type ShownError } from './shown-error.ts';

/** One started request: its signal (pass it to the engine) and whether it is still the latest. */
export interface Run {
  readonly signal: AbortSignal;
  /** True while no newer request was started and the request was not cancelled. */
  current(): boolean;
  /**
   * Throws when the request is no longer current, so the rest of its work (a second engine call,
   * a state change) stops there; `LatestRequest.run` reports that as 'stale'.
   */
  check(): void;
}

/** How a request ended, as seen by its caller. 'stale': replaced or cancelled meanwhile; drop the answer. */
export type Answer<T> =
  | { status: 'done'; value: T }
  | { status: 'error'; error: ShownError }
  | { status: 'cancelled'; error: ShownError }
  | { status: 'stale' };

export class LatestRequest {
  private controller: AbortController | null = null;

  /** Aborts the request in progress (if any) and starts a new one. */
  begin(): Run {
    this.controller?.abort();
    const ac = new AbortController();
    this.controller = ac;
    const current = () => this.controller === ac;
    return {
      signal: ac.signal,
      current,
      check: () => {
        if (!current()) throw new GapwiseError('cancelled', 'A newer request replaced this one.');
      },
    };
  }

  /**
   * Starts `work` as the latest request (the previous one is aborted) and says how it ended: its
   * value, its error (a 'cancelled' error code gives status 'cancelled'), or 'stale' when a newer
   * request or a cancel came first, whatever it answered. `work` receives the run, whose
   * `current()` guards progress callbacks.
   */
  async run<T>(work: (run: Run) => Promise<T>): Promise<Answer<T>> {
    const run = this.begin();
    try {
      const value = await work(run);
      return run.current() ? { status: 'done', value } : { status: 'stale' };
    } catch (e) {
      if (!run.current()) return { status: 'stale' };
      const error = showError(e);
      return error.code === 'cancelled' ? { status: 'cancelled', error } : { status: 'error', error };
    }
  }

  /** Aborts the request in progress; its answer, if one still arrives, is dropped. */
  cancel(): void {
    this.controller?.abort();
    this.controller = null;
  }

  /** True while a request is started and neither replaced nor cancelled (it may have finished). */
  get active(): boolean {
    return this.controller !== null;
  }
}
