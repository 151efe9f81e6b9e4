// The two BPE merge loops agree, long pieces match the reference, and the piece cache stays bounded.
//
// Reference: tiktoken npm package, WASM build of OpenAI's tiktoken (encode_ordinary).

import fc from "fast-check";
import cl100kRanks from "js-tiktoken/ranks/cl100k_base";
import gpt2Ranks from "js-tiktoken/ranks/gpt2";
import o200kRanks from "js-tiktoken/ranks/o200k_base";
import { get_encoding } from "tiktoken";
import { describe, expect, it } from "vitest";
import { BytePairEncoder, HEAP_THRESHOLD } from "../../src/tokenizer/bpe.js";
import { loadEncoding } from "../../src/tokenizer/index.js";
import { PieceCache } from "../../src/tokenizer/piece-cache.js";
import { RankTable } from "../../src/tokenizer/ranks.js";
import { TokenBuffer } from "../../src/tokenizer/token-buffer.js";

const tables: Array<[string, RankTable]> = [
  ["gpt2", new RankTable(gpt2Ranks.bpe_ranks)],
  ["cl100k_base", new RankTable(cl100kRanks.bpe_ranks)],
  ["o200k_base", new RankTable(o200kRanks.bpe_ranks)],
];

// Inputs that make many equal-rank pairs (ties) and long merge chains, plus arbitrary bytes.
const repetitive = fc
  .tuple(fc.constantFrom("a", "ab", " ", "  x", "0", "12", "é", "😀", "'", "\n", "the ", "ﬀ"), fc.integer({ min: 1, max: 400 }))
  .map(([u, n]) => new TextEncoder().encode(u.repeat(n)));
const utf8Text = fc.string({ unit: "grapheme", minLength: 1, maxLength: 300 }).map((s) => new TextEncoder().encode(s));
const rawBytes = fc.uint8Array({ minLength: 1, maxLength: 400 });

describe.each(tables)("%s merge loops", (_name, table) => {
  it("rescan and heap give the same ids", () => {
    fc.assert(
      fc.property(fc.oneof(repetitive, utf8Text, rawBytes), (bytes) => {
        // A fresh encoder per case: scratch space sized by an earlier, longer input could hide
        // an undersized buffer.
        const bpe = new BytePairEncoder(table);
        expect(bpe.mergeBytes(bytes, "heap")).toEqual(bpe.mergeBytes(bytes, "scan"));
      }),
      { numRuns: 400 },
    );
  });

  it("cover the input bytes exactly", () => {
    const bpe = new BytePairEncoder(table);
    fc.assert(
      fc.property(rawBytes, (bytes) => {
        const ids = bpe.mergeBytes(bytes);
        const joined = Buffer.concat(ids.map((id) => Buffer.from(table.bytesOf(id))));
        expect(Buffer.compare(joined, Buffer.from(bytes))).toBe(0);
      }),
      { numRuns: 200 },
    );
  });
});

describe("long pieces (heap merge) against the reference", () => {
  const letters = "qwertyuiopasdfghjklzxcvbnm";
  let seed = 12345;
  const random = (): number => ((seed = (Math.imul(seed, 1103515245) + 12345) >>> 0) / 2 ** 32);
  const randomWord = Array.from({ length: 5000 }, () => letters[Math.floor(random() * letters.length)]).join("");
  const CASES = [
    "a".repeat(5000),
    "ab".repeat(2500),
    " ".repeat(4000) + "x",
    "\n".repeat(3000),
    "1".repeat(3000),
    "é".repeat(2000),
    "😀".repeat(1000),
    randomWord,
    "x" + "=".repeat(3000) + "y",
  ];
  for (const name of ["gpt2", "cl100k_base", "o200k_base"] as const) {
    it(name, () => {
      const enc = loadEncoding(name);
      const ref = get_encoding(name);
      try {
        for (const text of CASES) {
          expect(text.length).toBeGreaterThan(HEAP_THRESHOLD);
          expect(enc.encode(text), text.slice(0, 10)).toEqual(Array.from(ref.encode_ordinary(text)));
        }
      } finally {
        ref.free();
      }
    });
  }
});

describe("piece cache", () => {
  it("never holds more than its limit and keeps answers right after clearing", () => {
    const table = tables[0][1];
    const cached = new BytePairEncoder(table, 50);
    const out = new TokenBuffer();
    for (let round = 0; round < 3; round++) {
      for (let i = 0; i < 400; i++) {
        const piece = ` word${i}x`;
        out.clear();
        cached.encodePiece(piece, 0, piece.length, out);
        expect(cached.cacheSize).toBeLessThanOrEqual(50);
        expect(Array.from(out.view())).toEqual(cached.mergeBytes(new TextEncoder().encode(piece)));
      }
    }
  });

  it("answers a repeated piece from the cache with the same ids", () => {
    const bpe = new BytePairEncoder(tables[0][1]);
    const out = new TokenBuffer();
    const text = "xx unbelievablenesses yy";
    bpe.encodePiece(text, 2, 21, out);
    const first = Array.from(out.view());
    expect(bpe.cacheSize).toBe(1);
    out.clear();
    bpe.encodePiece(text, 2, 21, out);
    expect(Array.from(out.view())).toEqual(first);
    expect(bpe.cacheSize).toBe(1);
    expect(first.length).toBeGreaterThan(1);
  });
});

describe("PieceCache", () => {
  it("finds exactly the pieces it holds, by position in any text", () => {
    fc.assert(
      fc.property(fc.uniqueArray(fc.string({ unit: "binary", minLength: 1, maxLength: 8 }), { minLength: 1, maxLength: 30 }), fc.integer({ min: 1, max: 40 }), (keys, limit) => {
        const cache = new PieceCache(limit);
        const held = new Map<string, number[]>();
        keys.forEach((key, i) => {
          if (cache.size === limit) held.clear(); // the cache drops everything when full
          const text = `<${key}>`;
          const ids = Int32Array.from([i, i + 1000, i + 2000].slice(0, (i % 3) + 1));
          cache.add(text, 1, 1 + key.length, PieceCache.hash(text, 1, 1 + key.length), ids, ids.length);
          held.set(key, Array.from(ids));
          expect(cache.size).toBeLessThanOrEqual(limit);
        });
        for (const key of keys) {
          const text = `..${key}`;
          const out = new TokenBuffer();
          const found = cache.emit(text, 2, text.length, PieceCache.hash(text, 2, text.length), out);
          expect(found, JSON.stringify(key)).toBe(held.has(key));
          expect(Array.from(out.view())).toEqual(held.get(key) ?? []);
        }
      }),
      { numRuns: 300 },
    );
  });

  it("tells apart different pieces whose hashes collide", () => {
    // Birthday search: among 300k scrambled keys some 32-bit hashes repeat (deterministic).
    const seen = new Map<number, string>();
    let pair: [string, string] | undefined;
    for (let i = 0; i < 300_000 && pair === undefined; i++) {
      const key = "w" + (Math.imul(i, 2654435761) >>> 0).toString(36);
      const h = PieceCache.hash(key, 0, key.length);
      const other = seen.get(h);
      if (other !== undefined && other.length === key.length) pair = [other, key];
      else seen.set(h, key);
    }
    expect(pair).toBeDefined();
    const [a, b] = pair as [string, string];
    const cache = new PieceCache(10);
    cache.add(a, 0, a.length, PieceCache.hash(a, 0, a.length), Int32Array.of(1), 1);
    const out = new TokenBuffer();
    expect(cache.emit(b, 0, b.length, PieceCache.hash(b, 0, b.length), out)).toBe(false);
    cache.add(b, 0, b.length, PieceCache.hash(b, 0, b.length), Int32Array.of(2), 1);
    expect(cache.emit(a, 0, a.length, PieceCache.hash(a, 0, a.length), out)).toBe(true);
    expect(cache.emit(b, 0, b.length, PieceCache.hash(b, 0, b.length), out)).toBe(true);
    expect(Array.from(out.view())).toEqual([1, 2]);
  });
});
