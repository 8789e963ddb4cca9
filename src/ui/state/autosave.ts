/**
 * Autosave: writes the session snapshot to IndexedDB (idb-keyval) shortly after each change, reads it
 * back on start, and clears it on "Start over". The storage is injectable so the logic runs in tests.
 */
import { get, set, del } from 'idb-keyval';
import { deserialiseSnapshot, serialiseSnapshot, type SessionSnapshot } from './snapshot.ts';

export const AUTOSAVE_KEY = 'gapwise-session-v1';

export interface KeyValueStore {
  get(key: string): Promise<unknown>;
  set(key: string, value: string): Promise<void>;
  del(key: string): Promise<void>;
}

export const indexedDbStore: KeyValueStore = {
  get: (key) => get(key),
  set: (key, value) => set(key, value),
  del: (key) => del(key),
};

export interface Autosave {
  /** Schedules a save of this snapshot; a later call within the delay replaces it. */
  schedule(snapshot: SessionSnapshot): void;
  /** Writes any pending snapshot now. */
  flush(): Promise<void>;
  /** The stored snapshot, or null when there is none or it cannot be read. */
  load(): Promise<SessionSnapshot | null>;
  /** Drops any pending save and deletes the stored snapshot. */
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
  let timer: ReturnType<typeof setTimeout> | null = null;
  let saves = 0;
  let chain: Promise<void> = Promise.resolve();

  const write = (): Promise<void> => {
    if (timer !== null) {
      clearTimeout(timer);
      timer = null;
    }
    if (pending === null) return chain;
    const text = serialiseSnapshot(pending);
    pending = null;
    chain = chain
      .then(() => store.set(AUTOSAVE_KEY, text))
      .then(() => {
        saves++;
        options.onSaved?.();
      })
      .catch((e) => options.onError?.(e));
    return chain;
  };

  return {
    schedule(snapshot) {
      pending = snapshot;
      if (timer !== null) clearTimeout(timer);
      timer = setTimeout(() => void write(), delay);
    },
    flush: write,
    async load() {
      try {
        const v = await store.get(AUTOSAVE_KEY);
        return typeof v === 'string' ? deserialiseSnapshot(v) : null;
      } catch (e) {
        options.onError?.(e);
        return null;
      }
    },
    async clear() {
      pending = null;
      if (timer !== null) clearTimeout(timer);
      timer = null;
      await chain;
      await store.del(AUTOSAVE_KEY);
    },
    get saves() {
      return saves;
    },
  };
}
