/**
 * Step 4, Next samples: runs the design of the next sample sites in an engine worker (one request
 * at a time through LatestRequest: a newer design or a cancel drops the older answer) and keeps the
 * sites in the shared suggestions state (./suggestions.svelte.ts), which the map and the report read.
 */
import type { DesignResult } from '../../core/design/design.ts';
import type { DesignRequestPayload } from '../../worker/design-handler.ts';
import { LatestRequest } from './latest-request.ts';
import { runDesign } from './design-request.ts';
import { suggestions } from './suggestions.svelte.ts';
import { designWithCovariates } from './covariate-grid.ts';
import type { Session } from './session.svelte.ts';

/** Runs a design request in a worker (./design-request.ts runDesign; a test passes a fake). */
export type DesignRunner = (payload: DesignRequestPayload, onProgress: (done: number, total: number) => void, signal: AbortSignal) => Promise<DesignResult>;

export class DesignState {
  private runs = new LatestRequest();

  constructor(private readonly app: Session, private readonly runner: DesignRunner = runDesign) {}

  /** The suggested sites for the samples now read, or null. */
  get current(): DesignResult | null {
    return suggestions.session === this.app ? suggestions.current : null;
  }

  /** The options the current sites were made with (for the project file). */
  get options(): Record<string, unknown> | null {
    return suggestions.options;
  }

  /**
   * Suggests the next sample sites; aborting `signal` (the panel's cancel) cancels the request, and a
   * newer request replaces this one. Rejects with the error as shown (code 'cancelled' when cancelled
   * or replaced), as the panel expects.
   */
  async run(payload: DesignRequestPayload, onProgress: (done: number, total: number) => void, signal: AbortSignal): Promise<DesignResult> {
    const onAbort = () => this.cancel();
    signal.addEventListener('abort', onAbort, { once: true });
    try {
      const intake = this.app.samples.intake;
      const rasters = this.app.rasters.covariateRasters;
      const answer = await this.runs.run((run) => {
        const progress = (d: number, t: number) => { if (run.current()) onProgress(d, t); };
        // A covariate model: the area's cells and the candidates take the covariates of the loaded rasters.
        return intake ? designWithCovariates(intake, rasters, payload, (p) => this.runner(p, progress, run.signal)) : this.runner(payload, progress, run.signal);
      });
      if (answer.status === 'done') return answer.value;
      throw answer.status === 'stale' ? { code: 'cancelled', message: 'The design was cancelled or replaced by a newer one.' } : answer.error;
    } finally {
      signal.removeEventListener('abort', onAbort);
    }
  }

  cancel(): void {
    this.runs.cancel();
  }

  /** Keeps new sites for the samples now read (null clears). */
  set(result: DesignResult | null, options: Record<string, unknown> | null = null): void {
    suggestions.session ??= this.app;
    suggestions.set(result, options);
  }

  /** Forgets the sites (start over). */
  clear(): void {
    this.runs.cancel();
    if (suggestions.session === this.app) suggestions.set(null);
  }
}
