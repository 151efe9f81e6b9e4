// The merge-list encoder's two merge loops (rescan, heap for long pieces) give the same parts on the same bytes.
import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { MergeBpeEncoder, PretokenCounter, tokenizerFromJson, tokenizerJson, trainBpe } from "../../src/tokenizer/index.js";

function trained(): MergeBpeEncoder {
  const c = new PretokenCounter();
  c.add(readFileSync("/usr/share/common-licenses/GPL-3", "utf8"));
  // Runs of letters and spaces so that long single-class pieces have merges to apply.
  c.add("aaaaaaaa bbbbbbbb abababab        \n\n\n\n ".repeat(5));
  return tokenizerFromJson(JSON.parse(tokenizerJson(trainBpe(c.counts, { vocabSize: 1500, minFrequency: 2, specialTokens: ["<|endoftext|>"] }))), "t", "t");
}

/** Deterministic xorshift32, so a failure names a reproducible case. */
function rng(seed: number): () => number {
  let x = seed;
  return () => {
    x ^= x << 13;
    x ^= x >>> 17;
    x ^= x << 5;
    return (x >>> 0) / 4294967296;
  };
}

describe("MergeBpeEncoder merge loops", () => {
  const enc = trained();
  const utf8 = new TextEncoder();

  it("heap and rescan agree on 400 random pieces of 1-300 bytes from the license's letters and on long runs", () => {
    const next = rng(12345);
    const alphabet = "etaoinshrdlu ab\n";
    for (let k = 0; k < 400; k++) {
      const len = 1 + Math.floor(next() * 300);
      let s = "";
      for (let i = 0; i < len; i++) s += alphabet[Math.floor(next() * alphabet.length)];
      const bytes = utf8.encode(s);
      expect(enc.mergeBytes(bytes, "heap"), s).toEqual(enc.mergeBytes(bytes, "scan"));
    }
    for (const s of ["a".repeat(999), " ".repeat(500), "ab".repeat(400), "the".repeat(300)]) {
      const bytes = utf8.encode(s);
      const parts = enc.mergeBytes(bytes, "heap");
      expect(parts).toEqual(enc.mergeBytes(bytes, "scan"));
      expect(parts.length).toBeLessThan(bytes.length / 2); // merges did apply
      expect(enc.decode(parts)).toBe(s);
    }
  });

  it("encodes a 200 KB single-class piece quickly (the heap, not the quadratic rescan)", () => {
    const s = "ab".repeat(100_000);
    const t0 = Date.now();
    const ids = enc.encode(s);
    expect(Date.now() - t0).toBeLessThan(3000);
    expect(enc.decode(ids)).toBe(s);
  });
});
