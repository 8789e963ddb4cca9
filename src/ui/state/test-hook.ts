/**
 * A small read-only hook for the browser tests, installed only in development or when the page is
 * opened with `?gapwise-test` in its address. It reports what the page shows (screen positions of the
 * samples, the surface status); it never computes results of its own.
 */
export interface TestHook {
  /** Container (CSS pixel, page coordinates) positions and values of the samples on the map. */
  samplePoints(): Array<{ id: string; value: number; pageX: number; pageY: number }>;
  /** Surface status and figures. */
  surfaceInfo(): Record<string, unknown> | null;
  /** The colour domain of the mean layer and the number of colour steps drawn. */
  meanScale(): { domain: [number, number]; steps: number; log: boolean } | null;
  /** Engine requests started since the page loaded, by type (tells what was computed). */
  engineRequests(): Record<string, number>;
  /** Figures of the session's state (see Session.digest), to compare before and after a reload. */
  sessionDigest(): Record<string, unknown>;
  /** On a planar map (local coordinates): the length unit, the grid lines drawn and the scale bar's length. */
  planarView(): { unit: string; lines: { x: number[]; y: number[] } | null; scale: number } | null;
  /** The contour lines on the map: each level, whether it is the action level, its line count; null when off. */
  contourLines(): Array<{ level: number; action: boolean; lines: number }> | null;
}

function testHookEnabled(): boolean {
  if (import.meta.env.DEV) return true;
  try {
    return new URLSearchParams(globalThis.location?.search ?? '').has('gapwise-test');
  } catch {
    return false;
  }
}

const parts: Partial<TestHook> = {};

/** Adds functions to the hook (no-op unless enabled). */
export function provideTestHook(p: Partial<TestHook>): void {
  if (!testHookEnabled()) return;
  Object.assign(parts, p);
  (globalThis as unknown as { __gapwiseTest?: Partial<TestHook> }).__gapwiseTest = parts;
}
