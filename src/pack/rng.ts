// A small seeded random number generator for row shuffling: xoshiro128** with a seed derived from (seed, label).
import { fmix32 } from "../lib/fmix32.js";

/**
 * One 32-bit seed from the pipeline seed and a label (the split name), so each split gets its own
 * reproducible stream: FNV-1a over the label's UTF-16 code units, mixed with the seed.
 */
export function seedFor(seed: number, label: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < label.length; i++) h = Math.imul(h ^ label.charCodeAt(i), 0x01000193);
  return fmix32((h ^ fmix32(seed >>> 0)) >>> 0);
}

/**
 * xoshiro128** (Blackman and Vigna, "Scrambled linear pseudorandom number generators", 2018):
 * 128 bits of state, fast in 32-bit integer arithmetic, and good statistical quality for
 * non-cryptographic use. Written out here so the sequence never depends on a library's version.
 */
export class Rng {
  private a: number;
  private b: number;
  private c: number;
  private d: number;

  constructor(seed: number) {
    // Four well-mixed words from one seed; the all-zero state (which would stay zero) cannot occur
    // because fmix32 is a bijection and the four inputs differ.
    this.a = fmix32(seed + 0x9e3779b9);
    this.b = fmix32(seed + 0x3c6ef372);
    this.c = fmix32(seed + 0xdaa66d2b);
    this.d = fmix32(seed + 0x78dde6e4);
  }

  /** The next 32-bit unsigned value. */
  next(): number {
    const result = Math.imul(rotl(Math.imul(this.b, 5), 7), 9) >>> 0;
    const t = this.b << 9;
    this.c ^= this.a;
    this.d ^= this.b;
    this.b ^= this.c;
    this.a ^= this.d;
    this.c ^= t;
    this.d = rotl(this.d, 11);
    return result;
  }

  /** A uniform integer in [0, n), 1 ≤ n ≤ 2^32, without modulo bias (rejection of the top remainder). */
  below(n: number): number {
    const limit = 2 ** 32 - (2 ** 32 % n);
    for (;;) {
      const x = this.next();
      if (x < limit) return x % n;
    }
  }
}

function rotl(x: number, k: number): number {
  return ((x << k) | (x >>> (32 - k))) >>> 0;
}
