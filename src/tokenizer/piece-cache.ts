// Bounded cache of pre-token -> ids, probed with the pre-token's position in the text (no substring per lookup).
//
// Pre-tokens repeat heavily in real text, so most of them are answered here. Keys (UTF-16 code
// units) and ids live in flat typed-array pools behind an open-addressing table; when the entry
// count or a pool reaches its limit everything is dropped at once, which bounds memory without
// per-entry bookkeeping.

import type { TokenBuffer } from "./token-buffer.js";

const KEY_POOL_LIMIT = 1 << 22; // code units (8 MiB)
const ID_POOL_LIMIT = 1 << 21; // ids (8 MiB)

export class PieceCache {
  readonly maxEntries: number;
  private readonly slots: Int32Array; // entry + 1; 0 = empty
  private readonly mask: number;
  private readonly hashes: Int32Array;
  private readonly keyStart: Int32Array;
  private readonly keyLen: Int32Array;
  private readonly idStart: Int32Array;
  private readonly idLen: Int32Array;
  private keys: Uint16Array = new Uint16Array(1 << 16);
  private ids: Uint32Array = new Uint32Array(1 << 15);
  private count = 0;
  private keyUsed = 0;
  private idUsed = 0;

  constructor(maxEntries = 100_000) {
    this.maxEntries = Math.max(1, maxEntries);
    let cap = 8;
    while (cap < this.maxEntries * 2) cap <<= 1;
    this.slots = new Int32Array(cap);
    this.mask = cap - 1;
    this.hashes = new Int32Array(this.maxEntries);
    this.keyStart = new Int32Array(this.maxEntries);
    this.keyLen = new Int32Array(this.maxEntries);
    this.idStart = new Int32Array(this.maxEntries);
    this.idLen = new Int32Array(this.maxEntries);
  }

  get size(): number {
    return this.count;
  }

  /** Hash of text[start..end), to pass to find and add. */
  static hash(text: string, start: number, end: number): number {
    let h = 0x811c9dc5;
    for (let i = start; i < end; i++) h = Math.imul(h ^ text.charCodeAt(i), 0x01000193);
    h ^= h >>> 16;
    h = Math.imul(h, 0x7feb352d);
    return h ^ (h >>> 15);
  }

  /** Appends the cached ids of text[start..end) to `out` and returns true, or returns false. */
  emit(text: string, start: number, end: number, hash: number, out: TokenBuffer): boolean {
    const len = end - start;
    let slot = hash & this.mask;
    for (;;) {
      const held = this.slots[slot];
      if (held === 0) return false;
      const e = held - 1;
      if (this.hashes[e] === hash && this.keyLen[e] === len && this.sameKey(e, text, start, len)) {
        out.pushFrom(this.ids, this.idStart[e], this.idLen[e]);
        return true;
      }
      slot = (slot + 1) & this.mask;
    }
  }

  /** Remembers ids[0..n) for text[start..end), which must not be cached already. */
  add(text: string, start: number, end: number, hash: number, ids: Int32Array, n: number): void {
    const len = end - start;
    if (this.count === this.maxEntries || this.keyUsed + len > KEY_POOL_LIMIT || this.idUsed + n > ID_POOL_LIMIT) this.clear();
    if (this.keyUsed + len > this.keys.length) this.keys = grow16(this.keys, this.keyUsed + len);
    if (this.idUsed + n > this.ids.length) this.ids = grow32(this.ids, this.idUsed + n);
    const e = this.count++;
    this.hashes[e] = hash;
    this.keyStart[e] = this.keyUsed;
    this.keyLen[e] = len;
    for (let i = 0; i < len; i++) this.keys[this.keyUsed + i] = text.charCodeAt(start + i);
    this.keyUsed += len;
    this.idStart[e] = this.idUsed;
    this.idLen[e] = n;
    for (let i = 0; i < n; i++) this.ids[this.idUsed + i] = ids[i];
    this.idUsed += n;
    let slot = hash & this.mask;
    while (this.slots[slot] !== 0) slot = (slot + 1) & this.mask;
    this.slots[slot] = e + 1;
  }

  clear(): void {
    this.slots.fill(0);
    this.count = 0;
    this.keyUsed = 0;
    this.idUsed = 0;
  }

  private sameKey(e: number, text: string, start: number, len: number): boolean {
    const keys = this.keys;
    const at = this.keyStart[e];
    for (let i = 0; i < len; i++) if (keys[at + i] !== text.charCodeAt(start + i)) return false;
    return true;
  }
}

function grow16(a: Uint16Array, min: number): Uint16Array {
  let cap = a.length * 2;
  while (cap < min) cap *= 2;
  const b = new Uint16Array(Math.min(cap, KEY_POOL_LIMIT));
  b.set(a);
  return b;
}

function grow32(a: Uint32Array, min: number): Uint32Array {
  let cap = a.length * 2;
  while (cap < min) cap *= 2;
  const b = new Uint32Array(Math.min(cap, ID_POOL_LIMIT));
  b.set(a);
  return b;
}
