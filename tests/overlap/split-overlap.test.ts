// Overlap figures: a three-document example worked by hand, and a brute-force comparison on random corpora in any order.
import { beforeAll, describe, expect, it } from "vitest";
import fc from "fast-check";
import { mkdtempSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { loadHasher } from "../../src/lib/hash.js";
import { SplitOverlap, type OverlapParams, type PairFigures } from "../../src/overlap/split-overlap.js";
import { wordsOf } from "../../src/overlap/words.js";

beforeAll(loadHasher);
const tmp = () => mkdtempSync(join(tmpdir(), "siftpack-overlap-"));

const nearDup = {
  signer: { shingle: { kind: "word" as const, ngram: 2, lowercase: true }, permutations: 128, bands: 16, rows: 8, seed: 7 },
  threshold: 0.8,
  basis: "test",
};

interface Doc {
  split: string;
  text: string;
  tokens: number[];
}

function run(docs: Doc[], p: Partial<OverlapParams> = {}) {
  const o = new SplitOverlap({ ngram: 3, form: "NFKC", vocabSize: 4, nearDup, tmpDir: tmp(), ...p });
  for (const d of docs) o.add(d.split, d.text, Uint32Array.from(d.tokens));
  return o.finish();
}

const pair = (pairs: PairFigures[], a: string, b: string) => pairs.find((x) => x.reference === a && x.held_out === b)!;

describe("three documents, worked by hand (n = 3)", () => {
  const train = { split: "train", text: "The brake pad was worn down", tokens: [0, 0, 1] };
  const val = { split: "val", text: "Brake pad was worn, replaced it.", tokens: [1, 2] };
  const test = { split: "test", text: "The brake pad was worn down", tokens: [0, 0, 1] };
  // Trigrams. train: [the brake pad] [brake pad was] [pad was worn] [was worn down].
  //           val:   [brake pad was] [pad was worn] [was worn replaced] [worn replaced it]: 2 of 4 in train.
  //           test:  the same text as train: 4 of 4 in train, an exact duplicate; 2 of 4 in val.
  const orders = [
    [train, val, test],
    [train, test, val],
    [val, train, test],
    [val, test, train],
    [test, train, val],
    [test, val, train],
  ];

  it.each(orders.map((o, i) => [i, o] as const))("gives the hand-computed figures in order %i", (_i, docs) => {
    const f = run(docs);
    expect(f.pairs.map((p) => `${p.reference}/${p.held_out}`)).toEqual(["train/val", "train/test", "val/test"]);
    expect(pair(f.pairs, "train", "val")).toMatchObject({ documents: 1, exact_duplicates: 0, ngram_documents: 1, ngrams: 4, ngrams_seen: 2, ngram_fraction: 0.5, near_duplicate_pairs: 0 });
    expect(pair(f.pairs, "train", "test")).toMatchObject({ documents: 1, exact_duplicates: 1, ngram_documents: 1, ngrams: 4, ngrams_seen: 4, ngram_fraction: 1, near_duplicate_pairs: 1, near_duplicate_documents: 1 });
    expect(pair(f.pairs, "val", "test")).toMatchObject({ exact_duplicates: 0, ngram_documents: 1, ngrams_seen: 2, ngram_fraction: 0.5, near_duplicate_pairs: 0 });

    // Unigrams: train P = (2/3, 1/3, 0, 0), val Q = (0, 1/2, 1/2, 0), test = train. M(P, Q) = (1/3, 5/12, 1/4, 0).
    const jsTrainVal = 0.5 * ((2 / 3) * Math.log2(2) + (1 / 3) * Math.log2(4 / 5)) + 0.5 * (0.5 * Math.log2(6 / 5) + 0.5 * Math.log2(2));
    expect(pair(f.pairs, "train", "val").jensen_shannon_bits).toBeCloseTo(jsTrainVal, 5);
    expect(pair(f.pairs, "train", "test").jensen_shannon_bits).toBe(0);
    expect(pair(f.pairs, "val", "test").jensen_shannon_bits).toBeCloseTo(jsTrainVal, 5);
    // Add-one over V = 4. Train model (3/7, 2/7, 1/7, 1/7); val model (1/6, 2/6, 2/6, 1/6).
    expect(pair(f.pairs, "train", "val").cross_entropy_bits).toBeCloseTo(-0.5 * (Math.log2(2 / 7) + Math.log2(1 / 7)), 5);
    expect(pair(f.pairs, "train", "test").cross_entropy_bits).toBeCloseTo(-(2 * Math.log2(3 / 7) + Math.log2(2 / 7)) / 3, 5);
    expect(pair(f.pairs, "val", "test").cross_entropy_bits).toBeCloseTo(-(2 * Math.log2(1 / 6) + Math.log2(2 / 6)) / 3, 5);
    expect(pair(f.pairs, "train", "val").entropy_bits).toBe(1);
    expect(pair(f.pairs, "train", "test").entropy_bits).toBeCloseTo(-(2 / 3) * Math.log2(2 / 3) - (1 / 3) * Math.log2(1 / 3), 5);
    expect(f.unigram).toEqual({ vocab_size: 4, tokens: { train: 3, val: 2, test: 3 } });
    expect(f.train_set).toEqual({ kind: "exact", keys: 5 }); // four trigrams and one text fingerprint
  });

  it("reports near-duplicates as unavailable when told so, and nothing to compare with one split", () => {
    const f = run([train, val], { nearDup: { unavailable: "because" } });
    expect(f.near_duplicates).toEqual({ unavailable: "because" });
    expect(f.pairs[0].near_duplicate_pairs).toBeNull();
    expect(run([train]).pairs).toEqual([]);
  });
});

/** The n-gram figures by brute force: word n-grams as strings in sets. */
function naive(docs: Doc[], n: number, a: string, b: string) {
  const grams = (t: string) => {
    const w = wordsOf(t);
    return Array.from({ length: Math.max(0, w.length - n + 1) }, (_, i) => w.slice(i, i + n).join(" "));
  };
  const ref = new Set(docs.filter((d) => d.split === a).flatMap((d) => grams(d.text)));
  const refTexts = new Set(docs.filter((d) => d.split === a).map((d) => d.text));
  const held = docs.filter((d) => d.split === b);
  const per = held.map((d) => grams(d.text).map((g) => ref.has(g)));
  return {
    documents: held.length,
    short_documents: per.filter((g) => g.length === 0).length,
    exact_duplicates: held.filter((d) => refTexts.has(d.text)).length,
    ngram_documents: per.filter((g) => g.some(Boolean)).length,
    ngrams: per.reduce((s, g) => s + g.length, 0),
    ngrams_seen: per.reduce((s, g) => s + g.filter(Boolean).length, 0),
  };
}

describe("random corpora", () => {
  const word = fc.constantFrom("rail", "wire", "bond", "tram", "car", "Depot", "brake", "pad", "wheel", "flat");
  const doc = fc.record({
    split: fc.constantFrom("train", "train", "train", "val", "test"),
    text: fc.array(word, { minLength: 0, maxLength: 12 }).map((w) => w.join(" ")),
    tokens: fc.array(fc.nat(3), { maxLength: 5 }),
  });

  it("agree with brute force in any arrival order, with an exact train set or a Bloom filter", () => {
    fc.assert(
      fc.property(fc.array(doc, { minLength: 1, maxLength: 25 }), fc.boolean(), (docs, bloom) => {
        const n = 2;
        // A Bloom filter of 2^20 bits for at most a few hundred keys: false positives ~10⁻¹⁸, so the figures must be equal.
        const f = run(docs, { ngram: n, trainLimits: bloom ? { exactKeys: 0, log2Bits: 20, hashes: 7 } : undefined, nearDup: { unavailable: "not tested here" } });
        for (const p of f.pairs) {
          const want = naive(docs, n, p.reference, p.held_out);
          expect(p).toMatchObject(want);
          expect(p.ngram_fraction).toBeCloseTo(want.ngrams ? want.ngrams_seen / want.ngrams : 0, 5);
          expect(p.ngram_document_fraction).toBeCloseTo(want.documents ? want.ngram_documents / want.documents : 0, 5);
        }
        // Every pair of splits present, each once, the earlier split (train first) as the reference.
        const k = new Set(docs.map((d) => d.split)).size;
        expect(f.pairs.length).toBe((k * (k - 1)) / 2);
        expect(f.pairs.every((p) => p.held_out !== "train")).toBe(true);
        if (bloom && docs.some((d) => d.split === "train")) expect(f.train_set.kind).toBe("bloom");
      }),
      { numRuns: 60 },
    );
  });
});
