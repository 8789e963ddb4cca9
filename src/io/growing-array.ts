/**
 * A typed array filled one item at a time whose final length is not known ahead (a column of a file
 * read as a stream). Small arrays double by copying. From GROW_IN_PLACE items on, the items live in one
 * resizable ArrayBuffer (ES2024) that grows in place up to the array's item limit, and `take()` shrinks
 * it to exactly its items: no copy of a large column, and no freed blocks left behind (a copy of every
 * column at the end of a 10-million-row read left about 400 MB of freed memory that the process kept).
 * Where resizable buffers are missing, cannot be cloned (postMessage, IndexedDB), or the reservation is
 * refused, or the limit is passed, the items go into chunks of CHUNK items joined by one copy in `take()`.
 */

type Typed = Float64Array | Uint32Array | Uint8Array;

/** The constructor of a typed array kind (Float64Array, Uint32Array, Uint8Array). */
export interface TypedKind<T extends Typed> {
  new (length: number): T;
  new (buffer: ArrayBuffer, byteOffset: number, length: number): T;
  readonly BYTES_PER_ELEMENT: number;
}

/** Items from which an array grows in place (below, doubling by a copy costs little). */
export const GROW_IN_PLACE = 65536;
/** Items per chunk where an array cannot grow in place. */
const CHUNK = 65536;

/** ES2024 resizable buffers, not yet in the TypeScript library this project targets. */
interface ResizableBuffer extends ArrayBuffer {
  resize(byteLength: number): void;
  readonly resizable: boolean;
}
type ResizableConstructor = new (byteLength: number, options: { maxByteLength: number }) => ResizableBuffer;

function resizableBuffersWork(): boolean {
  try {
    const b = new (ArrayBuffer as unknown as ResizableConstructor)(8, { maxByteLength: 16 });
    if (typeof b.resize !== 'function' || b.resizable !== true) return false;
    b.resize(16);
    // postMessage and IndexedDB clone a buffer the way structuredClone does.
    if (typeof structuredClone === 'function' && (structuredClone(b) as ArrayBuffer).byteLength !== 16) return false;
    return b.byteLength === 16;
  } catch {
    return false;
  }
}

let growInPlace = resizableBuffersWork();

/**
 * Turns growing in place on or off for this process (tests compare both ways; off is also what an
 * engine without resizable buffers does). Returns the previous setting. Turning it on where resizable
 * buffers do not work leaves it off.
 */
export function setGrowInPlace(enabled: boolean): boolean {
  const was = growInPlace;
  growInPlace = enabled && resizableBuffersWork();
  return was;
}

export class GrowingArray<T extends Typed> {
  /** Items pushed so far. */
  length = 0;
  /** The chunk being filled (16 items, doubling to CHUNK): pushes go only here, into a plain array. */
  private current: T;
  private used = 0;
  /** Full chunks not yet moved to `reserved` (all of them when the array does not grow in place). */
  private full: T[] | null = null;
  /** The resizable buffer the full chunks are copied into, its view and the items in it. */
  private reserved: ResizableBuffer | null = null;
  private view: T | null = null;
  private committed = 0;
  /** The reservation was refused once: chunks from then on. */
  private refused = false;

  /**
   * @param kind Float64Array, Uint32Array or Uint8Array.
   * @param limit Items the array is expected to reach at most (the size of the in-place reservation;
   *   more items still fit, in chunks).
   */
  constructor(
    private readonly kind: TypedKind<T>,
    private readonly limit: number,
  ) {
    // No storage until the first item: a file may have a million columns of one row each.
    this.current = new kind(0);
  }

  push(v: number): void {
    if (this.used === this.current.length) this.nextChunk();
    this.current[this.used++] = v;
    this.length++;
  }

  /** Item k. */
  get(k: number): number {
    if (this.view !== null) return k < this.committed ? this.view[k] : this.current[k - this.committed];
    for (const c of this.full ?? []) {
      if (k < c.length) return c[k];
      k -= c.length;
    }
    return this.current[k];
  }

  /** The current chunk is full (or there is none yet): keep it and start the next. */
  private nextChunk(): void {
    const chunk = this.current;
    if (chunk.length > 0) {
      if ((this.view !== null || (growInPlace && this.length >= GROW_IN_PLACE)) && this.commit(chunk)) {
        // Its items were copied into the buffer: the chunk is filled again.
        this.used = 0;
        return;
      }
      (this.full ??= []).push(chunk);
    }
    this.current = new this.kind(Math.min(CHUNK, Math.max(16, this.length)));
    this.used = 0;
  }

  /** Copies the full chunks and `chunk` into the resizable buffer, growing it; false when it cannot. */
  private commit(chunk: T): boolean {
    const kind = this.kind;
    const bytes = kind.BYTES_PER_ELEMENT;
    const need = this.length;
    if (this.view === null) {
      if (need >= this.limit || this.refused) return false;
      try {
        const size = Math.min(2 * need, this.limit);
        this.reserved = new (ArrayBuffer as unknown as ResizableConstructor)(size * bytes, { maxByteLength: this.limit * bytes });
        this.view = new kind(this.reserved, 0, size);
      } catch {
        // The reservation was refused (address space): chunks instead.
        this.refused = true;
        return false;
      }
      for (const c of this.full ?? []) {
        this.view.set(c, this.committed);
        this.committed += c.length;
      }
      this.full = null;
    } else if (need > this.view.length) {
      const size = Math.min(2 * this.view.length, this.limit);
      if (size < need) {
        // Past the limit: what the buffer holds becomes the first chunk, and chunks follow.
        this.full = [this.view.subarray(0, this.committed) as T];
        this.reserved = null;
        this.view = null;
        this.committed = 0;
        return false;
      }
      (this.reserved as ResizableBuffer).resize(size * bytes);
      this.view = new kind(this.reserved as ResizableBuffer, 0, size);
    }
    this.view.set(chunk.subarray(0, this.used), this.committed);
    this.committed += this.used;
    return true;
  }

  /** The items in one array of exactly their number; the builder is empty afterwards. */
  take(): T {
    const n = this.length;
    let out: T;
    if (this.view !== null && this.commit(this.current)) {
      (this.reserved as ResizableBuffer).resize(n * this.kind.BYTES_PER_ELEMENT);
      out = new this.kind(this.reserved as ResizableBuffer, 0, n);
    } else if (this.full === null && this.used === n && this.current.length === n) {
      out = this.current;
    } else {
      out = new this.kind(n);
      let at = 0;
      for (const c of this.full ?? []) {
        out.set(c, at);
        at += c.length;
      }
      out.set(this.current.subarray(0, this.used), at);
    }
    this.current = new this.kind(0);
    this.used = 0;
    this.length = 0;
    this.full = null;
    this.reserved = null;
    this.view = null;
    this.committed = 0;
    return out;
  }
}
