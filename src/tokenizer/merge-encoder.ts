// An Encoder for BPE models given as a merge list (tokenizer files and our own training): merges by merge rank.
//
// Why a second encoder: the built-in encodings merge the pair whose concatenation has the lowest
// id (ids there are in merge order), but a tokenizer file ranks *merges* — the pair (a, b) — and
// its ids may be in any order; a token "abc" made by the merge (ab, c) must not be formed from
// (a, bc). So here each step merges the adjacent pair with the lowest merge rank, leftmost first
// among equal ranks (the same pair occurring twice), until no adjacent pair has a merge.

import { SiftpackError } from "../errors.js";
import type { Encoder } from "./encoder.js";
import type { Splitter } from "./splitter.js";
import { TokenBuffer } from "./token-buffer.js";

/** A byte-level BPE model: what a tokenizer file holds and what training produces. */
export interface BpeModel {
  /** Bytes of each ordinary token by id; undefined where the id is not an ordinary token. */
  tokens: (Uint8Array | undefined)[];
  /** Merges in priority order: [left id, right id, result id]. */
  merges: Array<[number, number, number]>;
  /** Special token strings and their ids (never matched in text; see Encoder.encode). */
  specialTokens: Record<string, number>;
}

export interface MergeEncoderOptions {
  name: string;
  model: BpeModel;
  splitter: Splitter;
  eosToken: string;
  /** A piece that is a whole token is emitted as that token without merging ("ignore_merges"). */
  wholePieceFirst?: boolean;
  /** A space is put before text that does not start with one ("add_prefix_space"). */
  prefixSpace?: boolean;
}

const KEY = 2097152; // 2^21: pair key = left * KEY + right stays exact in a double for ids < 2^21
const CACHE_LIMIT = 100_000; // pieces; the cache is dropped when full (pieces repeat a lot: Zipf)

export class MergeBpeEncoder implements Encoder {
  readonly name: string;
  readonly vocabSize: number;
  readonly specialTokens: Record<string, number>;
  readonly eosId: number;
  private readonly bytesById: (Uint8Array | undefined)[];
  private readonly byteIds = new Int32Array(256);
  private readonly rankOf = new Map<number, number>();
  private readonly resultOf: Int32Array;
  private readonly wholeIds: Map<string, number> | undefined;
  private readonly splitter: Splitter;
  private readonly prefixSpace: boolean;
  private readonly cache = new Map<string, Uint32Array>();
  private readonly utf8 = new TextEncoder();
  private readonly utf8Decoder = new TextDecoder("utf-8", { ignoreBOM: true });

  constructor(o: MergeEncoderOptions) {
    const { model } = o;
    this.name = o.name;
    this.splitter = o.splitter;
    this.prefixSpace = o.prefixSpace ?? false;
    this.bytesById = model.tokens.slice();
    this.specialTokens = { ...model.specialTokens };
    this.byteIds.fill(-1);
    let maxId = model.tokens.length - 1;
    for (let id = 0; id < model.tokens.length; id++) {
      const b = model.tokens[id];
      if (b !== undefined && b.length === 1) this.byteIds[b[0]] = id;
    }
    for (let b = 0; b < 256; b++) {
      if (this.byteIds[b] < 0) throw new SiftpackError("SP_TOKENIZER", `${o.name}: byte 0x${b.toString(16)} has no token; not a byte-level BPE vocabulary`);
    }
    this.resultOf = new Int32Array(model.merges.length);
    model.merges.forEach(([a, b, r], rank) => {
      if (a >= KEY || b >= KEY) throw new SiftpackError("SP_TOKENIZER", `${o.name}: token ids above ${KEY - 1} are not supported`);
      const key = a * KEY + b;
      // A repeated merge keeps its first (highest-priority) rank.
      if (!this.rankOf.has(key)) this.rankOf.set(key, rank);
      this.resultOf[rank] = r;
    });
    const utf8 = new TextEncoder();
    for (const [text, id] of Object.entries(model.specialTokens)) {
      if (this.bytesById[id] === undefined) this.bytesById[id] = utf8.encode(text);
      maxId = Math.max(maxId, id);
    }
    this.vocabSize = maxId + 1;
    const eos = model.specialTokens[o.eosToken];
    if (eos === undefined) throw new SiftpackError("SP_TOKENIZER", `${o.name}: no special token ${JSON.stringify(o.eosToken)} to end documents with`);
    this.eosId = eos;
    if (o.wholePieceFirst) {
      this.wholeIds = new Map();
      model.tokens.forEach((b, id) => {
        if (b !== undefined) this.wholeIds!.set(Buffer.from(b).toString("latin1"), id);
      });
    }
  }

  encode(text: string): number[] {
    const buf = new TokenBuffer(Math.max(16, text.length >> 1));
    this.encodeInto(text, buf);
    return Array.from(buf.ids.subarray(0, buf.length));
  }

  encodeInto(text: string, out: TokenBuffer): number {
    const before = out.length;
    const t = this.prefixSpace && text.length > 0 && !text.startsWith(" ") ? " " + text : text;
    this.splitter(t, 0, t.length, (s, e) => {
      const ids = this.piece(t.slice(s, e));
      for (let k = 0; k < ids.length; k++) out.push(ids[k]);
    });
    return out.length - before;
  }

  decode(ids: ArrayLike<number>): string {
    const parts: Uint8Array[] = [];
    let total = 0;
    for (let k = 0; k < ids.length; k++) {
      const b = this.bytesById[ids[k]];
      if (b === undefined) throw new SiftpackError("SP_TOKENIZER", `${this.name}: cannot decode unknown token id ${String(ids[k])}`);
      parts.push(b);
      total += b.length;
    }
    const bytes = new Uint8Array(total);
    let at = 0;
    for (const p of parts) {
      bytes.set(p, at);
      at += p.length;
    }
    return this.utf8Decoder.decode(bytes);
  }

  /** Ids of one pre-token (cached). */
  private piece(text: string): Uint32Array {
    const hit = this.cache.get(text);
    if (hit !== undefined) return hit;
    const bytes = this.utf8.encode(text);
    let ids: Uint32Array;
    const whole = this.wholeIds?.get(Buffer.from(bytes).toString("latin1"));
    if (whole !== undefined) ids = Uint32Array.of(whole);
    else ids = this.merge(bytes);
    if (this.cache.size >= CACHE_LIMIT) this.cache.clear();
    this.cache.set(text, ids);
    return ids;
  }

  /** Merges raw bytes with either loop (tests compare them); "auto" picks by length as encoding does. */
  mergeBytes(bytes: Uint8Array, method: "auto" | "scan" | "heap" = "auto"): number[] {
    const heap = method === "heap" || (method === "auto" && bytes.length > HEAP_THRESHOLD);
    return Array.from(heap ? this.mergeHeap(bytes) : this.mergeScan(bytes));
  }

  private merge(bytes: Uint8Array): Uint32Array {
    return bytes.length > HEAP_THRESHOLD ? this.mergeHeap(bytes) : this.mergeScan(bytes);
  }

  /** Rescan merge: O(n) per merge, so O(n²) a piece; the fastest for the short pieces of prose. */
  private mergeScan(bytes: Uint8Array): Uint32Array {
    const syms: number[] = new Array<number>(bytes.length);
    for (let k = 0; k < bytes.length; k++) syms[k] = this.byteIds[bytes[k]];
    for (;;) {
      let best = Infinity;
      let at = -1;
      for (let k = 0; k + 1 < syms.length; k++) {
        const r = this.rankOf.get(syms[k] * KEY + syms[k + 1]);
        if (r !== undefined && r < best) {
          best = r;
          at = k;
        }
      }
      if (at < 0) break;
      syms.splice(at, 2, this.resultOf[best]);
    }
    return Uint32Array.from(syms);
  }

  /**
   * Heap merge for long pieces (runs of one class, e.g. minified data or whitespace), O(n log n):
   * a min-heap of rank * 2^32 + position picks the lowest rank, leftmost first, as the rescan
   * does; entries whose pair has changed since they were pushed are skipped when popped.
   */
  private mergeHeap(bytes: Uint8Array): Uint32Array {
    const n = bytes.length;
    const syms = new Int32Array(n);
    const next = new Int32Array(n);
    const prev = new Int32Array(n);
    const rk = new Float64Array(n); // current rank of the pair starting at i; -1 none, -2 dead
    const heap = new MinHeap(3 * n);
    const pairRank = (i: number): number => {
      const j = next[i];
      if (j >= n) return -1;
      return this.rankOf.get(syms[i] * KEY + syms[j]) ?? -1;
    };
    for (let k = 0; k < n; k++) {
      syms[k] = this.byteIds[bytes[k]];
      next[k] = k + 1;
      prev[k] = k - 1;
    }
    for (let k = 0; k < n; k++) {
      rk[k] = pairRank(k);
      if (rk[k] >= 0) heap.push(rk[k] * POS + k);
    }
    while (heap.size > 0) {
      const key = heap.pop();
      const r = Math.floor(key / POS);
      const i = key - r * POS;
      if (rk[i] !== r) continue;
      const j = next[i];
      syms[i] = this.resultOf[r];
      rk[j] = -2;
      next[i] = next[j];
      if (next[j] < n) prev[next[j]] = i;
      rk[i] = pairRank(i);
      if (rk[i] >= 0) heap.push(rk[i] * POS + i);
      const p = prev[i];
      if (p >= 0) {
        rk[p] = pairRank(p);
        if (rk[p] >= 0) heap.push(rk[p] * POS + p);
      }
    }
    const out: number[] = [];
    for (let k = 0; k < n; k = next[k]) out.push(syms[k]);
    return Uint32Array.from(out);
  }
}

const HEAP_THRESHOLD = 64; // bytes; below it the rescan is as fast and allocates less
const POS = 4294967296; // 2^32: heap key = rank * POS + position, exact in a double for ranks < 2^21

/** Binary min-heap of numbers with a fixed capacity. */
class MinHeap {
  private readonly a: Float64Array;
  size = 0;
  constructor(capacity: number) {
    this.a = new Float64Array(Math.max(1, capacity));
  }
  push(v: number): void {
    const a = this.a;
    let i = this.size++;
    while (i > 0) {
      const parent = (i - 1) >> 1;
      if (a[parent] <= v) break;
      a[i] = a[parent];
      i = parent;
    }
    a[i] = v;
  }
  pop(): number {
    const a = this.a;
    const top = a[0];
    const last = a[--this.size];
    let i = 0;
    for (;;) {
      let c = 2 * i + 1;
      if (c >= this.size) break;
      if (c + 1 < this.size && a[c + 1] < a[c]) c++;
      if (a[c] >= last) break;
      a[i] = a[c];
      i = c;
    }
    a[i] = last;
    return top;
  }
}
