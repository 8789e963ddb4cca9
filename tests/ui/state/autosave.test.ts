import { describe, expect, it } from 'vitest';
import { AUTOSAVE_KEY, createAutosave, type KeyValueStore } from '../../../src/ui/state/autosave.ts';
import { emptySnapshot, serialiseSnapshot } from '../../../src/ui/state/snapshot.ts';

function memoryStore(): KeyValueStore & { data: Map<string, unknown>; writes: number } {
  const data = new Map<string, unknown>();
  const store = {
    data,
    writes: 0,
    async get(k: string) { return data.get(k); },
    async set(k: string, v: string) { store.writes++; data.set(k, v); },
    async del(k: string) { data.delete(k); },
  };
  return store;
}

describe('createAutosave', () => {
  it('createAutosave writes only the last of several quick changes', async () => {
    const store = memoryStore();
    const a = createAutosave({ store, delayMs: 20 });
    for (let i = 1; i <= 5; i++) {
      const s = emptySnapshot();
      s.surface.cellSize = i;
      a.schedule(s);
    }
    await new Promise((r) => setTimeout(r, 60));
    await a.flush();
    expect(store.writes).toBe(1);
    const loaded = await a.load();
    expect(loaded!.surface.cellSize).toBe(5);
  });

  it('createAutosave.flush writes at once and load restores the same snapshot', async () => {
    const store = memoryStore();
    const a = createAutosave({ store, delayMs: 10_000 });
    const s = emptySnapshot();
    s.source = { fileName: 'a.csv', text: 'x,y,v\n1,2,3\n', invented: false };
    a.schedule(s);
    await a.flush();
    expect(store.data.get(AUTOSAVE_KEY)).toBe(serialiseSnapshot(s));
    expect(await createAutosave({ store }).load()).toEqual(s);
  });

  it('createAutosave.clear cancels a pending save and removes the stored session', async () => {
    const store = memoryStore();
    const a = createAutosave({ store, delayMs: 10 });
    a.schedule(emptySnapshot());
    await a.flush();
    a.schedule(emptySnapshot());
    await a.clear();
    await new Promise((r) => setTimeout(r, 30));
    expect(store.data.has(AUTOSAVE_KEY)).toBe(false);
    expect(await a.load()).toBeNull();
  });

  it('createAutosave.load returns null for an unreadable stored value', async () => {
    const store = memoryStore();
    store.data.set(AUTOSAVE_KEY, '{broken');
    expect(await createAutosave({ store }).load()).toBeNull();
  });
});
