// A growable Uint32Array of token ids: the output of Encoder.encodeInto, reusable across documents.

import { u32Array } from "../lib/u32-slab.js";

export class TokenBuffer {
  /** Backing storage; ids live in [0, length). Replaced when it grows, so re-read after pushes. */
  ids: Uint32Array;
  length = 0;

  constructor(capacity = 1024) {
    this.ids = new Uint32Array(Math.max(16, capacity));
  }

  push(id: number): void {
    if (this.length === this.ids.length) this.grow(this.length + 1);
    this.ids[this.length++] = id;
  }

  pushAll(ids: Uint32Array): void {
    const end = this.length + ids.length;
    if (end > this.ids.length) this.grow(end);
    this.ids.set(ids, this.length);
    this.length = end;
  }

  /** Appends src[start..start+count); a plain loop, since most calls copy one or two ids. */
  pushFrom(src: Uint32Array, start: number, count: number): void {
    const end = this.length + count;
    if (end > this.ids.length) this.grow(end);
    const ids = this.ids;
    for (let k = 0; k < count; k++) ids[this.length + k] = src[start + k];
    this.length = end;
  }

  clear(): void {
    this.length = 0;
  }

  /** The ids as a view sharing this buffer's memory (invalidated by the next push or clear). */
  view(): Uint32Array {
    return this.ids.subarray(0, this.length);
  }

  /** A copy of the ids that the caller owns (cut from a shared slab: see src/lib/u32-slab.ts). */
  toArray(): Uint32Array {
    const out = u32Array(this.length);
    out.set(this.ids.subarray(0, this.length));
    return out;
  }

  private grow(min: number): void {
    let cap = this.ids.length * 2;
    while (cap < min) cap *= 2;
    const next = new Uint32Array(cap);
    next.set(this.ids.subarray(0, this.length));
    this.ids = next;
  }
}
