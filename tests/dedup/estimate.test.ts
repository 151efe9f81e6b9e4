// The signature's Jaccard estimate against exact Jaccard on generated set pairs over a range of similarities.
import { describe, expect, it } from "vitest";
import { MinhashSigner, estimateJaccard } from "../../src/dedup/signature.js";
import { xxh32 } from "../../src/dedup/xxh32.js";

/** A small seeded generator (LCG, Numerical Recipes constants), so every run draws the same pairs. */
function lcg(seed: number) {
  let s = seed >>> 0;
  return () => (s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32;
}

/** Shingle hashes of the integers [from, from + count): XXH32 of each one's 4 bytes, as shingles are hashed. */
function hashed(ids: number[]): Uint32Array {
  const b = new Uint8Array(4);
  const v = new DataView(b.buffer);
  return Uint32Array.from(ids, (id) => {
    v.setUint32(0, id, true);
    return xxh32(b, 0, 4, 99);
  });
}

interface Pair {
  a: Uint32Array;
  b: Uint32Array;
  J: number;
  union: number;
}

/** n set pairs with Jaccard drawn from [lo, hi] and union sizes log-uniform in [10, 5000]. */
function pairs(n: number, seed: number, lo = 0.05, hi = 0.95): Pair[] {
  const rnd = lcg(seed);
  const out: Pair[] = [];
  let next = 0;
  for (let t = 0; t < n; t++) {
    const union = Math.round(10 * 500 ** rnd());
    const both = Math.round((lo + (hi - lo) * rnd()) * union);
    const onlyA = Math.floor((union - both) * rnd());
    const ids = Array.from({ length: union }, () => next++);
    const a = ids.slice(0, both + onlyA);
    const b = [...ids.slice(0, both), ...ids.slice(both + onlyA)];
    out.push({ a: hashed(a), b: hashed(b), J: both / union, union });
  }
  return out;
}

function estimate(signer: MinhashSigner, p: Pair): number {
  const k = signer.k;
  const sa = new Uint32Array(k);
  const sb = new Uint32Array(k);
  signer.sign(p.a, p.a.length, sa, 0);
  signer.sign(p.b, p.b.length, sb, 0);
  return estimateJaccard(sa, 0, sb, 0, k);
}

describe("MinHash estimate vs exact Jaccard", () => {
  // A k-value MinHash estimate has standard error √(J(1−J)/k) (A. Z. Broder, "On the resemblance and
  // containment of documents", 1997; from memory): every estimate must fall within 4 of them.
  for (const k of [64, 128, 256]) {
    it(`stays within 4 standard errors √(J(1−J)/k) at k = ${k}, on 300 pairs with J from 0.05 to 0.95`, () => {
      const signer = new MinhashSigner(k, 7);
      let worst = 0;
      let bias = 0;
      let variance = 0;
      const ps = pairs(300, k);
      for (const p of ps) {
        const e = estimate(signer, p);
        const se = Math.sqrt((p.J * (1 - p.J)) / k);
        worst = Math.max(worst, Math.abs(e - p.J) / se);
        bias += e - p.J;
        variance += (p.J * (1 - p.J)) / k;
      }
      expect(worst).toBeLessThanOrEqual(4);
      // Unbiased: the mean error is within 4 standard errors of the mean.
      expect(Math.abs(bias / ps.length)).toBeLessThanOrEqual((4 * Math.sqrt(variance)) / ps.length);
    });
  }

  it("is 1 for equal sets and 0 for disjoint ones, whatever their size", () => {
    const signer = new MinhashSigner(128, 7);
    for (const n of [1, 2, 5, 50, 127, 128, 129, 1000, 20000]) {
      const ids = Array.from({ length: n }, (_, i) => i);
      const a = hashed(ids);
      const shuffled = hashed([...ids].reverse());
      const disjoint = hashed(ids.map((i) => i + 1_000_000));
      expect(estimate(signer, { a, b: shuffled, J: 1, union: n })).toBe(1);
      expect(estimate(signer, { a, b: disjoint, J: 0, union: 2 * n })).toBe(0);
    }
  });

  it("ignores repeated shingles (a signature is of the set)", () => {
    const signer = new MinhashSigner(128, 7);
    const a = hashed([1, 2, 3, 4, 5, 6, 7]);
    const b = hashed([7, 1, 1, 2, 3, 3, 3, 4, 5, 6, 6]);
    expect(estimate(signer, { a, b, J: 1, union: 7 })).toBe(1);
  });

  it("gives the same signature for the same seed and a different one for another seed", () => {
    const a = hashed(Array.from({ length: 300 }, (_, i) => i));
    const sig = (seed: number) => {
      const out = new Uint32Array(128);
      new MinhashSigner(128, seed).sign(a, a.length, out, 0);
      return Array.from(out);
    };
    expect(sig(7)).toEqual(sig(7));
    const other = sig(8);
    expect(other.filter((v, j) => v === sig(7)[j]).length).toBeLessThan(10);
  });

  it("fills every position even for a single shingle", () => {
    const out = new Uint32Array(128).fill(0);
    new MinhashSigner(128, 7).sign(hashed([42]), 1, out, 0);
    // Rounds 0..k−1 place the one shingle at random, rounds k..2k−1 fill the rest: no position is left at its initial value.
    expect(out.every((v) => v !== 0xffffffff)).toBe(true);
  });
});
