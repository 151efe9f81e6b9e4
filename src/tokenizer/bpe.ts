// Byte-level BPE of one pre-token: UTF-8 bytes, then repeatedly merge the adjacent pair of lowest rank.
//
// Merge order is the reference's: among all adjacent pairs whose concatenation is a token, merge
// the one with the lowest rank, leftmost first on ties, until no pair is a token. Short pieces use
// the reference's rescan-after-each-merge loop; long ones (long runs of one character class, e.g.
// minified data or whitespace) use a heap keyed by (rank, position), which picks the same pair at
// every step but costs O(m log n) instead of O(mn).

import { PieceCache } from "./piece-cache.js";
import { NO_RANK, type RankTable } from "./ranks.js";
import type { TokenBuffer } from "./token-buffer.js";

/** Pieces longer than this many bytes are merged with the heap (measured: both cost the same near 64). */
export const HEAP_THRESHOLD = 64;
/** Pieces longer than this many UTF-16 units are not cached: they rarely repeat and would pin memory. */
const MAX_CACHED_PIECE = 256;
const NONE = 0x7fffffff;
const DEAD = -2;
const POS = 4294967296; // heap key = rank * POS + position; ranks < 2^21 keep keys exact in a double

export type MergeMethod = "auto" | "scan" | "heap";

export class BytePairEncoder {
  private readonly ranks: RankTable;
  private readonly cache: PieceCache;
  private buf = new Uint8Array(1024);
  // Per-part scratch. Scan: parallel arrays over part index. Heap: indexed by the part's start byte.
  private starts = new Int32Array(1025);
  private pairs = new Int32Array(1025);
  private toks = new Int32Array(1025);
  private links = new Int32Array(0);
  private backs = new Int32Array(0);
  private heap = new Float64Array(0);

  constructor(ranks: RankTable, cacheLimit = 100_000) {
    this.ranks = ranks;
    this.cache = new PieceCache(cacheLimit);
  }

  /** Appends the ids of the pre-token text[start..end) to `out`. */
  encodePiece(text: string, start: number, end: number, out: TokenBuffer): void {
    const cacheable = end - start <= MAX_CACHED_PIECE;
    const hash = cacheable ? PieceCache.hash(text, start, end) : 0;
    if (cacheable && this.cache.emit(text, start, end, hash, out)) return;
    const len = this.utf8(text, start, end);
    const toks = this.toks;
    let count = 1;
    const whole = this.ranks.get(this.buf, 0, len);
    if (whole !== NO_RANK) toks[0] = whole;
    else count = len <= HEAP_THRESHOLD ? this.mergeScan(len) : this.mergeHeap(len);
    for (let k = 0; k < count; k++) out.push(toks[k]);
    if (cacheable) this.cache.add(text, start, end, hash, toks, count);
  }

  /** BPE of raw bytes (no whole-piece shortcut, no cache); for tests of the two merge loops. */
  mergeBytes(bytes: Uint8Array, method: MergeMethod = "auto"): number[] {
    if (bytes.length === 0) return [];
    this.reserve(bytes.length);
    this.buf.set(bytes);
    const useHeap = method === "heap" || (method === "auto" && bytes.length > HEAP_THRESHOLD);
    const count = useHeap ? this.mergeHeap(bytes.length) : this.mergeScan(bytes.length);
    return Array.from(this.toks.subarray(0, count));
  }

  /** Number of cached pre-tokens (for tests of the bound). */
  get cacheSize(): number {
    return this.cache.size;
  }

  /** UTF-8 of text[start..end) into this.buf; lone surrogates become U+FFFD, as TextEncoder does. */
  private utf8(text: string, start: number, end: number): number {
    this.reserve((end - start) * 3);
    const buf = this.buf;
    let w = 0;
    for (let i = start; i < end; i++) {
      let c = text.charCodeAt(i);
      if (c < 0x80) {
        buf[w++] = c;
      } else if (c < 0x800) {
        buf[w++] = 0xc0 | (c >> 6);
        buf[w++] = 0x80 | (c & 63);
      } else {
        if (c >= 0xd800 && c <= 0xdfff) {
          const d = i + 1 < end ? text.charCodeAt(i + 1) : 0;
          if (c <= 0xdbff && d >= 0xdc00 && d <= 0xdfff) {
            const cp = 0x10000 + ((c - 0xd800) << 10) + (d - 0xdc00);
            i++;
            buf[w++] = 0xf0 | (cp >> 18);
            buf[w++] = 0x80 | ((cp >> 12) & 63);
            buf[w++] = 0x80 | ((cp >> 6) & 63);
            buf[w++] = 0x80 | (cp & 63);
            continue;
          }
          c = 0xfffd;
        }
        buf[w++] = 0xe0 | (c >> 12);
        buf[w++] = 0x80 | ((c >> 6) & 63);
        buf[w++] = 0x80 | (c & 63);
      }
    }
    return w;
  }

  private reserve(bytes: number): void {
    if (this.buf.length >= bytes) return;
    let cap = this.buf.length;
    while (cap < bytes) cap *= 2;
    this.buf = new Uint8Array(cap);
    this.starts = new Int32Array(cap + 1);
    this.pairs = new Int32Array(cap + 1);
    this.toks = new Int32Array(cap + 1);
  }

  private rankOf(start: number, end: number): number {
    const r = this.ranks.get(this.buf, start, end);
    return r === NO_RANK ? NONE : r;
  }

  /** Rescan merge over buf[0..len); leaves the part ranks in toks[0..count) and returns count. */
  private mergeScan(len: number): number {
    const { buf, starts, pairs, toks } = this;
    const pairRanks = this.ranks.pairRanks;
    const byteRanks = this.ranks.byteRanks;
    for (let k = 0; k < len; k++) {
      starts[k] = k;
      toks[k] = byteRanks[buf[k]];
    }
    starts[len] = len;
    for (let k = 0; k + 1 < len; k++) {
      const r = pairRanks[(buf[k] << 8) | buf[k + 1]];
      pairs[k] = r === NO_RANK ? NONE : r;
    }
    pairs[len - 1] = NONE;
    let count = len;
    for (;;) {
      let best = NONE;
      let at = -1;
      for (let k = 0; k + 1 < count; k++) {
        if (pairs[k] < best) {
          best = pairs[k];
          at = k;
        }
      }
      if (at < 0) break;
      // Part `at` absorbs part at+1; its new neighbours' pair ranks cover the merged span.
      toks[at] = best;
      if (at > 0) pairs[at - 1] = this.rankOf(starts[at - 1], starts[at + 2]);
      pairs[at] = at + 3 <= count ? this.rankOf(starts[at], starts[at + 3]) : NONE;
      for (let k = at + 1; k < count - 1; k++) {
        toks[k] = toks[k + 1];
        pairs[k] = pairs[k + 1];
      }
      for (let k = at + 1; k < count; k++) starts[k] = starts[k + 1];
      count--;
    }
    return count;
  }

  /** Heap merge over buf[0..len); same result as mergeScan. */
  private mergeHeap(len: number): number {
    if (this.links.length < len + 1) {
      this.links = new Int32Array(len + 1);
      this.backs = new Int32Array(len + 1);
      // Up to len - 1 initial pairs plus two pushes per merge (at most len - 1 merges).
      this.heap = new Float64Array(3 * len);
    }
    const { buf, links: next, backs: prev, pairs: rk, toks: tok, heap } = this;
    const pairRanks = this.ranks.pairRanks;
    const byteRanks = this.ranks.byteRanks;
    let size = 0;
    const push = (key: number): void => {
      let i = size++;
      while (i > 0) {
        const parent = (i - 1) >> 1;
        if (heap[parent] <= key) break;
        heap[i] = heap[parent];
        i = parent;
      }
      heap[i] = key;
    };
    const pop = (): number => {
      const top = heap[0];
      const last = heap[--size];
      let i = 0;
      for (;;) {
        let child = 2 * i + 1;
        if (child >= size) break;
        if (child + 1 < size && heap[child + 1] < heap[child]) child++;
        if (heap[child] >= last) break;
        heap[i] = heap[child];
        i = child;
      }
      heap[i] = last;
      return top;
    };

    for (let k = 0; k < len; k++) {
      next[k] = k + 1;
      prev[k] = k - 1;
      tok[k] = byteRanks[buf[k]];
    }
    for (let k = 0; k + 1 < len; k++) {
      const r = pairRanks[(buf[k] << 8) | buf[k + 1]];
      rk[k] = r === NO_RANK ? NONE : r;
      if (r !== NO_RANK) push(r * POS + k);
    }
    rk[len - 1] = NONE;
    while (size > 0) {
      const key = pop();
      const r = Math.floor(key / POS);
      const i = key - r * POS;
      if (rk[i] !== r) continue; // stale: the part died or its right neighbour changed
      const j = next[i];
      const after = next[j];
      tok[i] = r;
      rk[j] = DEAD;
      next[i] = after;
      if (after < len) prev[after] = i;
      rk[i] = after < len ? this.rankOf(i, next[after]) : NONE;
      if (rk[i] !== NONE) push(rk[i] * POS + i);
      const p = prev[i];
      if (p >= 0) {
        rk[p] = this.rankOf(p, after);
        if (rk[p] !== NONE) push(rk[p] * POS + p);
      }
    }
    let count = 0;
    for (let k = 0; k < len; k = next[k]) tok[count++] = tok[k];
    return count;
  }
}
