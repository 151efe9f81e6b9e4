// Learns a byte-level BPE from pre-token counts: deterministic, with a documented tie rule.
//
// Ids: the special tokens first (0..k-1, in the order given, so the EOS id is known before
// training), then the 256 bytes (id k + b for byte b), then one id per merge in merge order.
// Each step merges the adjacent pair with the highest count over the corpus (a pre-token's count
// times its occurrences of the pair, non-overlapping, left to right); ties go to the pair whose
// byte strings are lexicographically smallest — compare the left token's bytes, then the right's.
// Training stops at `vocabSize` ids or when the best count is below `minFrequency`. A merge whose
// bytes equal an existing token's (e.g. "ab"+"c" after "a"+"bc") reuses that token's id, so it
// adds a merge but no id.

import { forEachPiece } from "./pretokenize.js";
import { scanGpt2 } from "./scan-gpt2.js";
import { classTable } from "./unicode-classes.js";
import type { BpeModel } from "./merge-encoder.js";

export interface TrainOptions {
  vocabSize: number;
  minFrequency: number;
  specialTokens: string[];
}

const KEY = 2097152; // 2^21: pair key = left * KEY + right, exact in a double for ids < 2^21
/** Largest vocabulary we train (ids must stay below KEY). */
export const MAX_TRAIN_VOCAB = KEY - 1;

/**
 * Counts pre-tokens (GPT-2 pattern) of texts fed one at a time. Memory: one Map entry per
 * *distinct* pre-token — its string (2 bytes a UTF-16 unit) plus roughly 50-80 bytes of Map and
 * string overhead — so a corpus with a million distinct words needs on the order of 100 MB,
 * whatever its total size. The texts themselves are not kept.
 */
export class PretokenCounter {
  readonly counts = new Map<string, number>();
  private readonly pre = { kind: "scanner" as const, scan: scanGpt2, classes: classTable() };

  add(text: string): void {
    const counts = this.counts;
    forEachPiece(text, this.pre, (s, e) => {
      const p = text.slice(s, e);
      counts.set(p, (counts.get(p) ?? 0) + 1);
    });
  }
}

interface Word {
  syms: number[];
  count: number;
}

/** Trains a model from pre-token counts; the result does not depend on the Map's order. */
export function trainBpe(counts: ReadonlyMap<string, number>, o: TrainOptions): BpeModel {
  const specials = [...new Set(o.specialTokens)];
  const base = specials.length;
  const limit = Math.min(o.vocabSize, MAX_TRAIN_VOCAB);
  const tokens: Uint8Array[] = [];
  const utf8 = new TextEncoder();
  const specialTokens: Record<string, number> = {};
  specials.forEach((s, i) => {
    specialTokens[s] = i;
    tokens.push(utf8.encode(s));
  });
  // Byte strings as latin1 text (one char per byte), so comparing them compares the bytes.
  const key: string[] = specials.map(() => "");
  for (let b = 0; b < 256; b++) {
    tokens.push(Uint8Array.of(b));
    key.push(String.fromCharCode(b));
  }
  const idOfKey = new Map<string, number>();
  for (let id = base; id < tokens.length; id++) idOfKey.set(key[id], id);

  const words: Word[] = [];
  for (const [piece, count] of counts) {
    const bytes = utf8.encode(piece);
    if (bytes.length < 2) continue; // no pair to merge
    words.push({ syms: Array.from(bytes, (b) => base + b), count });
  }

  const pairCount = new Map<number, number>();
  const pairWords = new Map<number, Set<number>>();
  const addPairs = (w: number, sign: number, touched: Set<number>) => {
    const { syms, count } = words[w];
    for (let k = 0; k + 1 < syms.length; k++) {
      const p = syms[k] * KEY + syms[k + 1];
      pairCount.set(p, (pairCount.get(p) ?? 0) + sign * count);
      touched.add(p);
      if (sign > 0) {
        let set = pairWords.get(p);
        if (set === undefined) pairWords.set(p, (set = new Set()));
        set.add(w);
      }
    }
  };
  const init = new Set<number>();
  for (let w = 0; w < words.length; w++) addPairs(w, 1, init);

  // Max-heap of [count, pair] with lazy deletion: an entry is used only if its count is current.
  const heap = new PairHeap((p) => [key[Math.floor(p / KEY)], key[p % KEY]]);
  for (const p of init) heap.push(pairCount.get(p) as number, p);

  const merges: BpeModel["merges"] = [];
  const minCount = Math.max(1, o.minFrequency);
  while (tokens.length < limit) {
    let best = -1;
    while (heap.size > 0) {
      const [c, p] = heap.pop();
      if (pairCount.get(p) === c) {
        best = p;
        break;
      }
    }
    if (best < 0 || (pairCount.get(best) as number) < minCount) break;
    const a = Math.floor(best / KEY);
    const b = best % KEY;
    const merged = key[a] + key[b];
    let id = idOfKey.get(merged);
    if (id === undefined) {
      id = tokens.length;
      tokens.push(Buffer.from(merged, "latin1"));
      key.push(merged);
      idOfKey.set(merged, id);
    }
    merges.push([a, b, id]);
    const touched = new Set<number>();
    for (const w of pairWords.get(best) as Set<number>) {
      const syms = words[w].syms;
      let has = false;
      for (let k = 0; k + 1 < syms.length && !has; k++) has = syms[k] === a && syms[k + 1] === b;
      if (!has) continue; // the word lost this pair to an earlier merge
      addPairs(w, -1, touched);
      const out: number[] = [];
      for (let k = 0; k < syms.length; k++) {
        if (k + 1 < syms.length && syms[k] === a && syms[k + 1] === b) {
          out.push(id);
          k++;
        } else out.push(syms[k]);
      }
      words[w].syms = out;
      addPairs(w, 1, touched);
    }
    pairWords.delete(best);
    for (const p of touched) {
      const c = pairCount.get(p) as number;
      if (c > 0) heap.push(c, p);
      else pairCount.delete(p);
    }
  }
  return { tokens, merges, specialTokens };
}

/** Binary max-heap on (count desc, then left bytes asc, then right bytes asc). */
class PairHeap {
  private readonly counts: number[] = [];
  private readonly pairs: number[] = [];
  constructor(private readonly bytesOf: (pair: number) => [string, string]) {}

  get size(): number {
    return this.counts.length;
  }

  /** Whether entry i comes before entry j. */
  private before(i: number, j: number): boolean {
    const ci = this.counts[i];
    const cj = this.counts[j];
    if (ci !== cj) return ci > cj;
    const [ai, bi] = this.bytesOf(this.pairs[i]);
    const [aj, bj] = this.bytesOf(this.pairs[j]);
    if (ai !== aj) return ai < aj;
    return bi < bj;
  }

  private swap(i: number, j: number): void {
    [this.counts[i], this.counts[j]] = [this.counts[j], this.counts[i]];
    [this.pairs[i], this.pairs[j]] = [this.pairs[j], this.pairs[i]];
  }

  push(count: number, pair: number): void {
    this.counts.push(count);
    this.pairs.push(pair);
    let i = this.counts.length - 1;
    while (i > 0) {
      const parent = (i - 1) >> 1;
      if (!this.before(i, parent)) break;
      this.swap(i, parent);
      i = parent;
    }
  }

  pop(): [number, number] {
    const top: [number, number] = [this.counts[0], this.pairs[0]];
    const lastC = this.counts.pop() as number;
    const lastP = this.pairs.pop() as number;
    if (this.counts.length > 0) {
      this.counts[0] = lastC;
      this.pairs[0] = lastP;
      let i = 0;
      for (;;) {
        const l = 2 * i + 1;
        const r = l + 1;
        let m = i;
        if (l < this.counts.length && this.before(l, m)) m = l;
        if (r < this.counts.length && this.before(r, m)) m = r;
        if (m === i) break;
        this.swap(i, m);
        i = m;
      }
    }
    return top;
  }
}
