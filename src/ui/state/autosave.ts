/**
 * Autosave: writes the session snapshot (JSON text) and the computed results (by structured clone,
 * typed arrays as they are; ./saved-results.ts) to IndexedDB (idb-keyval) shortly after each change,
 * reads them back on start, and clears both on "Start over". Each write goes after the previous one.
 * The storage is injectable so the logic runs in tests.
 */
import { get, set, del } from 'idb-keyval';
import { deserialiseSnapshot, serialiseSnapshot, type SessionSnapshot } from './snapshot.ts';
import { parseResults, type ResultsExpectation, type SavedResults } from './saved-results.ts';

export const AUTOSAVE_KEY = 'gapwise-session-v1';
export const RESULTS_KEY = 'gapwise-results-v1';
export const RASTERS_KEY = 'gapwise-rasters-v1';

/** A covariate raster file as loaded in the Surface step: read again (and so checked again) on a reload. */
export interface SavedRaster {
  /** The covariate it serves. */
  name: string;
  fileName: string;
  bytes: Uint8Array;
}

/** A raster file larger than this is not kept in the browser (the Surface step says so). */
export const MAX_SAVED_RASTER_BYTES = 100 * 1024 * 1024;

/** Rasters kept at most (one per covariate; a model rarely has more than a few). */
const MAX_SAVED_RASTERS = 20;

/** The stored raster list, checked: entries with a name, a file name and bytes; others dropped. */
export function parseRasters(v: unknown): SavedRaster[] {
  if (!Array.isArray(v)) return [];
  const out: SavedRaster[] = [];
  for (const r of v.slice(0, MAX_SAVED_RASTERS)) {
    if (typeof r !== 'object' || r === null) continue;
    const { name, fileName, bytes } = r as Record<string, unknown>;
    if (typeof name !== 'string' || name === '' || typeof fileName !== 'string' || !(bytes instanceof Uint8Array) || bytes.length === 0 || bytes.length > MAX_SAVED_RASTER_BYTES) continue;
    if (out.some((o) => o.name === name)) continue;
    out.push({ name, fileName, bytes });
  }
  return out;
}

export interface KeyValueStore {
  get(key: string): Promise<unknown>;
  /** Stores a structured-clone copy of `value` (text for the snapshot, an object for the results). */
  set(key: string, value: unknown): Promise<void>;
  del(key: string): Promise<void>;
}

const indexedDbStore: KeyValueStore = {
  get: (key) => get(key),
  set: (key, value) => set(key, value),
  del: (key) => del(key),
};

export interface Autosave {
  /** Schedules a save of this snapshot; a later call within the delay replaces it. */
  schedule(snapshot: SessionSnapshot): void;
  /** Writes any pending snapshot now. */
  flush(): Promise<void>;
  /**
   * The stored snapshot, or null when there is none or it cannot be read. Also starts reading the
   * stored results, which the next `loadResults` takes (so a reload waits for one read, not two).
   */
  load(): Promise<SessionSnapshot | null>;
  /** Schedules a save of the computed results (null deletes them); a later call within the delay replaces it. */
  scheduleResults(results: SavedResults | null): void;
  /** The stored results when they belong to the reading `expect` names (checked part by part), else null. */
  loadResults(expect: ResultsExpectation): Promise<SavedResults | null>;
  /** Schedules a save of the covariate raster files (an empty list deletes them). */
  scheduleRasters(rasters: SavedRaster[]): void;
  /** The stored covariate raster files (checked entry by entry; see parseRasters), [] when none. */
  loadRasters(): Promise<SavedRaster[]>;
  /** Drops any pending save and deletes the stored snapshot, results and rasters. */
  clear(): Promise<void>;
  /** Number of completed writes (shown as "saved" in the page; read by tests). */
  readonly saves: number;
}

export interface AutosaveOptions {
  store?: KeyValueStore;
  delayMs?: number;
  onError?: (error: unknown) => void;
  onSaved?: () => void;
}

/** Creates the autosave with a debounce delay (default 300 ms). */
export function createAutosave(options: AutosaveOptions = {}): Autosave {
  const store = options.store ?? indexedDbStore;
  const delay = options.delayMs ?? 300;
  let pending: SessionSnapshot | null = null;
  // undefined: nothing to write; null: delete the stored results.
  let pendingResults: SavedResults | null | undefined;
  let pendingRasters: SavedRaster[] | undefined;
  let timer: ReturnType<typeof setTimeout> | null = null;
  let saves = 0;
  let chain: Promise<void> = Promise.resolve();
  /** The stored results, asked for together with the snapshot by `load` (one wait for both on a reload). */
  let resultsAsked: Promise<unknown> | null = null;

  const write = (): Promise<void> => {
    if (timer !== null) {
      clearTimeout(timer);
      timer = null;
    }
    if (pending === null && pendingResults === undefined && pendingRasters === undefined) return chain;
    const text = pending === null ? null : serialiseSnapshot(pending);
    const results = pendingResults;
    const rasters = pendingRasters;
    pending = null;
    pendingResults = undefined;
    pendingRasters = undefined;
    chain = chain
      .then(async () => {
        if (text !== null) await store.set(AUTOSAVE_KEY, text);
        if (results === null) await store.del(RESULTS_KEY);
        else if (results !== undefined) await store.set(RESULTS_KEY, results);
        if (rasters !== undefined) {
          if (rasters.length === 0) await store.del(RASTERS_KEY);
          else await store.set(RASTERS_KEY, rasters.map((r) => ({ name: r.name, fileName: r.fileName, bytes: r.bytes })));
        }
      })
      .then(() => {
        saves++;
        options.onSaved?.();
      })
      .catch((e) => options.onError?.(e));
    return chain;
  };
  const later = () => {
    if (timer !== null) clearTimeout(timer);
    timer = setTimeout(() => void write(), delay);
  };

  return {
    schedule(snapshot) {
      pending = snapshot;
      later();
    },
    scheduleResults(results) {
      pendingResults = results;
      later();
    },
    scheduleRasters(rasters) {
      pendingRasters = rasters;
      later();
    },
    async loadRasters() {
      try {
        return parseRasters(await store.get(RASTERS_KEY));
      } catch (e) {
        options.onError?.(e);
        return [];
      }
    },
    flush: write,
    async loadResults(expect) {
      const asked = resultsAsked ?? store.get(RESULTS_KEY);
      resultsAsked = null;
      try {
        return parseResults(await asked, expect);
      } catch (e) {
        options.onError?.(e);
        return null;
      }
    },
    async load() {
      // The results are asked for at once too: a reload wants both, and the two reads overlap.
      resultsAsked = store.get(RESULTS_KEY);
      resultsAsked.catch(() => undefined);
      try {
        const v = await store.get(AUTOSAVE_KEY);
        return typeof v === 'string' ? deserialiseSnapshot(v) : null;
      } catch (e) {
        options.onError?.(e);
        return null;
      }
    },
    async clear() {
      resultsAsked = null;
      pending = null;
      pendingResults = undefined;
      pendingRasters = undefined;
      if (timer !== null) clearTimeout(timer);
      timer = null;
      await chain;
      await store.del(AUTOSAVE_KEY);
      await store.del(RESULTS_KEY);
      await store.del(RASTERS_KEY);
    },
    get saves() {
      return saves;
    },
  };
}
