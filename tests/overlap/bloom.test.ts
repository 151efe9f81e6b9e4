// The blocked Bloom filter never forgets a key, and its reported false-positive rate matches what it does.
import { describe, expect, it } from "vitest";
import { BlockedBloom } from "../../src/overlap/bloom.js";
import { TrainSet } from "../../src/overlap/train-set.js";

/** A small seeded generator (mulberry32) so the test is the same on every run. */
function rng(seed: number): () => number {
  return () => {
    seed = (seed + 0x6d2b79f5) | 0;
    let t = Math.imul(seed ^ (seed >>> 15), 1 | seed);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    return (t ^ (t >>> 14)) >>> 0;
  };
}

describe("BlockedBloom", () => {
  it("has no false negatives, and the measured rate predicts the false positives on absent keys", () => {
    const next = rng(1);
    const bloom = new BlockedBloom(16, 5); // 65 536 bits
    const keys: [number, number][] = [];
    for (let i = 0; i < 9000; i++) keys.push([next(), next()]);
    for (const [hi, lo] of keys) bloom.add(hi, lo);
    for (const [hi, lo] of keys) expect(bloom.has(hi, lo)).toBe(true);
    const predicted = bloom.falsePositiveRate();
    let fp = 0;
    const trials = 200_000;
    for (let i = 0; i < trials; i++) if (bloom.has(next(), next())) fp++;
    const observed = fp / trials;
    // About 7 bits per key and 5 hashes: a rate near 3 %, which 200 000 trials pin down to about ±2 % of itself.
    expect(Math.abs(observed - predicted) / predicted).toBeLessThan(0.08);
    // Blocking costs a little accuracy: the rate lies just above the unblocked filter's (1 − e^(−kn/m))^k
    // (Bloom 1970; from memory), here 3.02 %.
    const unblocked = Math.pow(1 - Math.exp((-5 * 9000) / 65536), 5);
    expect(predicted).toBeGreaterThan(unblocked);
    expect(predicted).toBeLessThan(1.2 * unblocked);
  });

  it("reports 0 when empty", () => {
    expect(new BlockedBloom(10, 7).falsePositiveRate()).toBe(0);
  });
});

describe("TrainSet", () => {
  it("is exact up to its limit, then a filter that still finds every key added before or after the switch", () => {
    const next = rng(2);
    const set = new TrainSet({ exactKeys: 100, log2Bits: 14, hashes: 7 });
    const keys: [number, number][] = [];
    for (let i = 0; i < 100; i++) keys.push([next(), next()]);
    for (const [hi, lo] of keys) set.add(hi, lo);
    expect(set.describe()).toEqual({ kind: "exact", keys: 100 });
    for (let i = 0; i < 300; i++) keys.push([next(), next()]);
    for (const [hi, lo] of keys.slice(100)) set.add(hi, lo);
    const d = set.describe();
    expect(d.kind).toBe("bloom");
    for (const [hi, lo] of keys) expect(set.has(hi, lo)).toBe(true);
    if (d.kind === "bloom") {
      expect(d.bits).toBe(16384);
      expect(d.false_positive_rate).toBeGreaterThan(0);
      expect(d.false_positive_rate).toBeLessThan(0.01);
    }
  });
});
