/**
 * The app's door to the sample design ("where to sample next"): runs the engine's 'design' request
 * in a worker so the page stays responsive, with progress and cancel. The design is one request at
 * a time, so it gets one worker of its own, started on first use.
 */
import type { DesignResult } from '../../core/design.ts';
import type { DesignRequestPayload } from '../../worker/design-handler.ts';
import { EnginePool } from '../../worker/pool.ts';

let pool: EnginePool | null = null;

function designPool(): EnginePool {
  pool ??= new EnginePool({ size: 1 });
  return pool;
}

/**
 * Suggests the next sample sites in a worker. Rejects with the engine's error (a GapwiseError-shaped
 * object with `code`; 'cancelled' when `signal` aborts).
 */
export function runDesign(
  payload: DesignRequestPayload,
  onProgress: (done: number, total: number) => void,
  signal: AbortSignal,
): Promise<DesignResult> {
  return designPool().request('design', payload, { signal, onProgress: (p) => onProgress(p.done, p.total) });
}
