/**
 * The one way the app runs a task that a newer one replaces (a fit, a surface, a file being read):
 * starting a run aborts the previous one, and a run whose answer arrives after it was replaced or
 * cancelled is ignored. Plain TypeScript (no runes), so it is tested directly.
 */

/** One started run: its signal (pass it to the engine) and whether it is still the latest. */
export interface Run {
  readonly signal: AbortSignal;
  /** True while no newer run was started and the run was not cancelled. */
  current(): boolean;
}

export class LatestRun {
  private controller: AbortController | null = null;

  /** Aborts the run in progress (if any) and starts a new one. */
  begin(): Run {
    this.controller?.abort();
    const ac = new AbortController();
    this.controller = ac;
    return { signal: ac.signal, current: () => this.controller === ac };
  }

  /** Aborts the run in progress; its answer, if one still arrives, is ignored. */
  cancel(): void {
    this.controller?.abort();
    this.controller = null;
  }

  /** True while a run is started and neither replaced nor cancelled (it may have finished). */
  get active(): boolean {
    return this.controller !== null;
  }
}
