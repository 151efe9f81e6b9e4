// 64-bit hashes of word n-grams, as two 32-bit halves (hi, lo), computed without allocating per n-gram.
//
// Each word is hashed once into two independent 32-bit values (two seeds); an n-gram's halves are the
// n word values folded in order with the body and finalizer steps of MurmurHash3's 32-bit variant
// (multiply by 0xcc9e2d51, rotate 15, multiply by 0x1b873593, rotate 13, ×5 + 0xe6546b64; finalizer
// with 0x85ebca6b and 0xc2b2ae35 — constants from memory of A. Appleby's public-domain code). The
// result is only compared with other results of this file, never with an outside implementation, so
// what matters is that unequal n-grams rarely collide: tests/overlap/ngram-hash.test.ts checks that
// on a million distinct n-grams. Two texts with a 64-bit hash in common share the n-gram except with
// probability about (number of pairs compared) / 2^64.
import { fmix32 } from "../lib/fmix32.js";

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

/** A word's UTF-16 code units, two at a time, folded from `seed`. */
function hashWord(word: string, seed: number): number {
  let h = seed;
  const n = word.length;
  let i = 0;
  for (; i + 1 < n; i += 2) h = step(h, word.charCodeAt(i) | (word.charCodeAt(i + 1) << 16));
  if (i < n) h = step(h, word.charCodeAt(i));
  return fmix32(h ^ n);
}

/** Hashes the n-grams of word lists into reused buffers: `hi[i], lo[i]` is the n-gram starting at word i. */
export class NgramHasher {
  hi = new Uint32Array(1024);
  lo = new Uint32Array(1024);
  private wa = new Uint32Array(1024);
  private wb = new Uint32Array(1024);

  constructor(readonly n: number) {
    if (!Number.isInteger(n) || n < 1) throw new RangeError(`ngram must be a positive integer, got ${n}`);
  }

  /** Number of n-grams of `words` (0 when there are fewer than n words); their hashes are in hi/lo[0, count). */
  hash(words: readonly string[]): number {
    const w = words.length;
    const count = w >= this.n ? w - this.n + 1 : 0;
    if (this.wa.length < w) {
      this.wa = new Uint32Array(w + 1024);
      this.wb = new Uint32Array(w + 1024);
    }
    if (this.hi.length < count) {
      this.hi = new Uint32Array(count + 1024);
      this.lo = new Uint32Array(count + 1024);
    }
    if (count === 0) return 0;
    const wa = this.wa;
    const wb = this.wb;
    for (let i = 0; i < w; i++) {
      wa[i] = hashWord(words[i], SEED_A);
      wb[i] = hashWord(words[i], SEED_B);
    }
    const n = this.n;
    for (let s = 0; s < count; s++) {
      let a = SEED_B ^ n;
      let b = SEED_A ^ n;
      for (let j = 0; j < n; j++) {
        a = step(a, wa[s + j]);
        b = step(b, wb[s + j]);
      }
      this.hi[s] = fmix32(a ^ n);
      this.lo[s] = fmix32(b ^ Math.imul(n, C2));
    }
    return count;
  }
}
