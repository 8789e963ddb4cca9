/**
 * Yielding the main thread between stages of one piece of work (a file read, a reload), so that no
 * single task holds the page for long: the page paints and takes input between the stages. Plain
 * TypeScript, no runes.
 */

type Yielding = { scheduler?: { yield?: () => Promise<void> } };

/** Resolves in a later task: `scheduler.yield()` where the browser has it (it keeps the work's priority), else a zero timeout. */
export function nextTask(): Promise<void> {
  const s = (globalThis as Yielding).scheduler;
  if (typeof s?.yield === 'function') return s.yield();
  return new Promise((resolve) => setTimeout(resolve, 0));
}
