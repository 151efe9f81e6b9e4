// Near-duplicate pairs across splits: the spill to disk and back gives what comparing all pairs gives.
import { describe, expect, it } from "vitest";
import { mkdtempSync, readdirSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { NearDupCounter } from "../../src/overlap/near-dups.js";
import { BatchSigner } from "../../src/dedup/signer.js";
import { estimateJaccard } from "../../src/dedup/signature.js";

const params = { shingle: { kind: "word" as const, ngram: 3, lowercase: true }, permutations: 64, bands: 8, rows: 8, seed: 3 };
const threshold = 0.7;

/** A seeded corpus: 300 train documents of 40 words; held-out ones are copies of some with 1–3 words changed, or unrelated. */
function corpus(): { split: string; text: string }[] {
  let s = 12345;
  const next = () => (s = (Math.imul(s, 1103515245) + 12345) >>> 0) / 2 ** 32;
  const vocab = Array.from({ length: 400 }, (_, i) => `w${i}`);
  const text = () => Array.from({ length: 40 }, () => vocab[Math.floor(next() * vocab.length)]);
  const train = Array.from({ length: 300 }, text);
  const out: { split: string; text: string }[] = train.map((w) => ({ split: "train", text: w.join(" ") }));
  for (let i = 0; i < 60; i++) {
    const base = i % 3 === 0 ? text() : [...train[Math.floor(next() * train.length)]];
    const changes = 1 + Math.floor(next() * 3);
    for (let c = 0; c < changes; c++) base[Math.floor(next() * base.length)] = "zz" + c;
    // Held-out documents arrive interleaved with train ones, before and after their originals.
    out.splice(Math.floor(next() * out.length), 0, { split: i % 2 ? "val" : "test", text: base.join(" ") });
    // Every tenth val document also has a near copy in test.
    if (i % 10 === 1) out.push({ split: "test", text: [...base.slice(0, 39), "yy"].join(" ") });
  }
  return out;
}

/** Every (reference, held-out) pair compared directly: LSH candidate (a shared band) and estimate ≥ threshold. */
function bruteForce(docs: { split: string; text: string }[], a: string, b: string) {
  const signer = new BatchSigner(params);
  const res = signer.sign(docs.map((d) => d.text));
  const { permutations: k, bands } = params;
  let pairs = 0;
  const hit = new Set<number>();
  docs.forEach((x, i) => {
    if (x.split !== a) return;
    docs.forEach((y, j) => {
      if (y.split !== b) return;
      let band = false;
      for (let t = 0; t < bands; t++) if (res.bandKeys[i * bands + t] === res.bandKeys[j * bands + t]) band = true;
      if (band && estimateJaccard(res.signatures, i * k, res.signatures, j * k, k) >= threshold) {
        pairs++;
        hit.add(j);
      }
    });
  });
  return { pairs, documents: hit.size };
}

describe("NearDupCounter", () => {
  const docs = corpus();
  const pairs: [string, string][] = [
    ["train", "val"],
    ["train", "test"],
    ["val", "test"],
  ];
  const expected = pairs.map(([a, b]) => bruteForce(docs, a, b));

  it.each([
    ["in memory", 1 << 22],
    ["spilled in 4 KiB writes", 4096],
    ["spilled one part at a time", 64],
  ])("finds the same pairs as comparing all of them (%s)", (_name, buffer) => {
    const dir = mkdtempSync(join(tmpdir(), "siftpack-neardup-"));
    const c = new NearDupCounter(params, threshold, dir, buffer);
    for (const d of docs) c.add(d.split, d.text);
    const got = c.finish(pairs);
    expect(pairs.map(([a, b]) => got.get(`${a}\u0000${b}`))).toEqual(expected);
    expect(readdirSync(dir)).toEqual([]); // the spill is removed
  });

  it("the corpus has near-duplicates between every pair of splits to find", () => {
    expect(expected[0].pairs).toBeGreaterThan(5);
    expect(expected[1].pairs).toBeGreaterThan(5);
    expect(expected[2].pairs).toBeGreaterThan(2);
  });
});
