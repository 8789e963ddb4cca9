/**
 * The app's door to the sample design ("where to sample next"): runs the engine's 'design' request
 * in one of the engine's workers (the pool the fits and surfaces use, ./engine.ts) so the page stays
 * responsive, with progress and cancel.
 */
import type { DesignResult } from '../../core/design/design.ts';
import type { DesignRequestPayload } from '../../worker/design-handler.ts';
import { enginePool } from './engine.ts';

/**
 * Suggests the next sample sites in a worker. Rejects with the engine's error (a GapwiseError-shaped
 * object with `code`; 'cancelled' when `signal` aborts).
 */
export function runDesign(
  payload: DesignRequestPayload,
  onProgress: (done: number, total: number) => void,
  signal: AbortSignal,
): Promise<DesignResult> {
  return enginePool().request('design', payload, { signal, onProgress: (p) => onProgress(p.done, p.total) });
}
