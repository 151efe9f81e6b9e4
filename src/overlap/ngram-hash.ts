// 64-bit hashes of word n-grams, as two 32-bit halves (hi, lo), computed without allocating per n-gram.
//
// Each word is hashed once into two independent 32-bit values (two seeds) with the body and finalizer
// steps of MurmurHash3's 32-bit variant (multiply by 0xcc9e2d51, rotate 15, multiply by 0x1b873593,
// rotate 13, ×5 + 0xe6546b64; finalizer with 0x85ebca6b and 0xc2b2ae35 — constants from memory of
// A. Appleby's public-domain code). An n-gram's half is a polynomial in its word values,
// Σ w[s+j]·B^(n−1−j) mod 2^32 with an odd B (another B for the other half), rolled from one window to
// the next in a few operations whatever n is (Karp and Rabin's rolling hash), then passed through the
// finalizer. Two different n-grams meet in one half only when their word values satisfy one linear
// equation mod 2^32 — for word values that behave as random, about 2^-31 (2^-32 up to the factor 2 an
// even difference of powers of B can lose) — and in both halves, with independent word values and
// bases, about 2^-62. The result is only compared with other results of this file, never with an
// outside implementation; tests/overlap/ngram-hash.test.ts checks for collisions among a million
// distinct n-grams and that hashing a text equals hashing its word list.
import { fmix32 } from "../lib/fmix32.js";
import { wordTable, wordText, isWordCodePoint, type WordForm } from "./words.js";

const C1 = 0xcc9e2d51;
const C2 = 0x1b873593;

function rotl(x: number, r: number): number {
  return (x << r) | (x >>> (32 - r));
}

/** One MurmurHash3 body step: mixes the 32-bit block `k` into the state `h`. */
function step(h: number, k: number): number {
  k = Math.imul(k, C1);
  k = rotl(k, 15);
  k = Math.imul(k, C2);
  h ^= k;
  h = rotl(h, 13);
  return (Math.imul(h, 5) + 0xe6546b64) | 0;
}

const SEED_A = 0x5f3759df;
const SEED_B = 0x2545f491;
/** The rolling hash's odd bases (arbitrary odd constants with well-mixed bits). */
const BASE_A = 0x9e3779b1;
const BASE_B = 0x85ebca77;

/** A word's UTF-16 code units, two at a time, folded from `seed`. */
function hashWord(word: string, seed: number): number {
  let h = seed;
  const n = word.length;
  let i = 0;
  for (; i + 1 < n; i += 2) h = step(h, word.charCodeAt(i) | (word.charCodeAt(i + 1) << 16));
  if (i < n) h = step(h, word.charCodeAt(i));
  return fmix32(h ^ n);
}

/** b^e mod 2^32. */
function power(b: number, e: number): number {
  let r = 1;
  for (let i = 0; i < e; i++) r = Math.imul(r, b);
  return r;
}

/** Hashes the n-grams of a text or word list into reused buffers: `hi[i], lo[i]` is the n-gram starting at word i. */
export class NgramHasher {
  hi = new Uint32Array(1024);
  lo = new Uint32Array(1024);
  private wa = new Uint32Array(1024);
  private wb = new Uint32Array(1024);
  /** B^(n−1) of each half: what the word leaving a window weighs. */
  private readonly topA: number;
  private readonly topB: number;

  constructor(readonly n: number) {
    if (!Number.isInteger(n) || n < 1) throw new RangeError(`ngram must be a positive integer, got ${n}`);
    this.topA = power(BASE_A, n - 1);
    this.topB = power(BASE_B, n - 1);
  }

  /** Number of n-grams of `words` (0 when there are fewer than n words); their hashes are in hi/lo[0, count). */
  hash(words: readonly string[]): number {
    const w = words.length;
    this.room(w);
    for (let i = 0; i < w; i++) {
      this.wa[i] = hashWord(words[i], SEED_A);
      this.wb[i] = hashWord(words[i], SEED_B);
    }
    return this.roll(w);
  }

  /**
   * The same as `hash(wordsOf(text, form))`, without making a string per word: the words are cut and
   * hashed in one scan of the prepared text (tests/overlap/ngram-hash.test.ts holds the two equal).
   */
  hashText(text: string, form: WordForm = "NFKC"): number {
    const t = wordText(text, form);
    const table = wordTable();
    const len = t.length;
    this.room(len);
    let w = 0;
    let i = 0;
    while (i < len) {
      // Skip separators.
      let c = t.charCodeAt(i);
      let units = 1;
      if (c >= 0xd800 && c <= 0xdbff && i + 1 < len) {
        const d = t.charCodeAt(i + 1);
        if (d >= 0xdc00 && d <= 0xdfff) {
          if (isWordCodePoint(((c - 0xd800) << 10) + (d - 0xdc00) + 0x10000)) units = 2;
          else {
            i += 2;
            continue;
          }
        } else {
          i++;
          continue;
        }
      } else if (table[c] === 0) {
        i++;
        continue;
      }
      // A word starts at i; fold its code units two at a time, as hashWord does.
      const start = i;
      let a = SEED_A;
      let b = SEED_B;
      let pending = -1;
      for (;;) {
        for (let u = 0; u < units; u++) {
          const cu = t.charCodeAt(i + u);
          if (pending < 0) pending = cu;
          else {
            const k = pending | (cu << 16);
            a = step(a, k);
            b = step(b, k);
            pending = -1;
          }
        }
        i += units;
        if (i >= len) break;
        c = t.charCodeAt(i);
        if (c >= 0xd800 && c <= 0xdbff && i + 1 < len) {
          const d = t.charCodeAt(i + 1);
          if (d >= 0xdc00 && d <= 0xdfff && isWordCodePoint(((c - 0xd800) << 10) + (d - 0xdc00) + 0x10000)) units = 2;
          else break;
        } else if (table[c] === 1) units = 1;
        else break;
      }
      if (pending >= 0) {
        a = step(a, pending);
        b = step(b, pending);
      }
      const n = i - start;
      this.wa[w] = fmix32(a ^ n);
      this.wb[w] = fmix32(b ^ n);
      w++;
    }
    return this.roll(w);
  }

  /** Room for `words` word values and as many n-grams. */
  private room(words: number): void {
    if (this.wa.length < words) {
      this.wa = new Uint32Array(words + 1024);
      this.wb = new Uint32Array(words + 1024);
    }
    if (this.hi.length < words) {
      this.hi = new Uint32Array(words + 1024);
      this.lo = new Uint32Array(words + 1024);
    }
  }

  /** The n-gram hashes of the word values wa/wb[0, w). */
  private roll(w: number): number {
    const n = this.n;
    const count = w >= n ? w - n + 1 : 0;
    if (count === 0) return 0;
    const { wa, wb, hi, lo, topA, topB } = this;
    let a = 0;
    let b = 0;
    for (let j = 0; j < n - 1; j++) {
      a = (Math.imul(a, BASE_A) + wa[j]) | 0;
      b = (Math.imul(b, BASE_B) + wb[j]) | 0;
    }
    const na = n;
    const nb = Math.imul(n, C2);
    for (let s = 0; s < count; s++) {
      a = (Math.imul(a, BASE_A) + wa[s + n - 1]) | 0;
      b = (Math.imul(b, BASE_B) + wb[s + n - 1]) | 0;
      hi[s] = fmix32(a ^ na);
      lo[s] = fmix32(b ^ nb);
      a = (a - Math.imul(wa[s], topA)) | 0;
      b = (b - Math.imul(wb[s], topB)) | 0;
    }
    return count;
  }
}
