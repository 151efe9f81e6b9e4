// Shingles: word and character n-grams, one XXH32 each, lower-casing, spacing, short texts; exact Jaccard.
import { beforeAll, describe, expect, it } from "vitest";
import fc from "fast-check";
import xxhash from "xxhash-wasm";
import { Shingler, jaccard, shingleSet } from "../../src/dedup/shingles.js";
import { deriveSeed } from "../../src/dedup/xxh32.js";

const word = (ngram = 3, lowercase = true) => new Shingler({ kind: "word", ngram, lowercase }, 7);
const char = (ngram = 4, lowercase = true) => new Shingler({ kind: "char", ngram, lowercase }, 7);
const hashes = (sh: Shingler, text: string) => Array.from(sh.hashes.subarray(0, sh.shingle(text)));

let ref: Awaited<ReturnType<typeof xxhash>>;
beforeAll(async () => {
  ref = await xxhash();
});

describe("word shingles", () => {
  it("hash each word's UTF-8 bytes with XXH32, then each n-gram's word hashes", () => {
    // Recomputed here with xxhash-wasm from the definition: words are runs of letters and digits.
    const text = "Brake pad worn — replaced, café door 12B!";
    const words = ["brake", "pad", "worn", "replaced", "café", "door", "12b"];
    const enc = new TextEncoder();
    const wh = words.map((w) => ref.h32Raw(enc.encode(w), deriveSeed(7, 1)));
    const expected = [];
    for (let i = 0; i + 3 <= wh.length; i++) expected.push(ref.h32Raw(new Uint8Array(Uint32Array.from(wh.slice(i, i + 3)).buffer), deriveSeed(7, 2)));
    expect(hashes(word(), text)).toEqual(expected);
  });

  it("ignore case (when asked), spacing and punctuation between words", () => {
    const a = hashes(word(), "The pantograph  carbon strip\nis worn.");
    expect(hashes(word(), "the Pantograph carbon-strip is worn")).toEqual(a);
    expect(hashes(word(3, false), "the Pantograph carbon-strip is worn")).not.toEqual(hashes(word(3, false), "The pantograph carbon strip is worn"));
  });

  it("keep non-Latin letters in words and treat typographic punctuation as separators", () => {
    expect(hashes(word(2), "Тормоз «исправен»")).toEqual(hashes(word(2), "тормоз исправен"));
    expect(hashes(word(2), "Tür\u00a0geprüft")).toEqual(hashes(word(2), "tür geprüft"));
    expect(hashes(word(2), "vägen…klar")).toEqual(hashes(word(2), "vägen klar"));
  });

  it("give a text with fewer words than n no shingle but a fingerprint of its words", () => {
    const sh = word(5);
    expect(sh.shingle("Door fault, line 4")).toBe(0);
    expect(sh.short).toBe(true);
    const key = [sh.keyA, sh.keyB];
    sh.shingle("door FAULT line 4.");
    expect([sh.keyA, sh.keyB]).toEqual(key);
    sh.shingle("door fault line 5");
    expect([sh.keyA, sh.keyB]).not.toEqual(key);
    // Without any word the fingerprint is of the (lower-cased) text itself.
    sh.shingle("!!!");
    const bang = [sh.keyA, sh.keyB];
    sh.shingle("???");
    expect([sh.keyA, sh.keyB]).not.toEqual(bang);
    expect(sh.shingle("one two three four five")).toBe(1);
    expect(sh.short).toBe(false);
  });

  it("count n − words + 1 shingles for any text", () => {
    fc.assert(
      fc.property(fc.array(fc.stringMatching(/^[a-z0-9]{1,8}$/), { maxLength: 50 }), fc.array(fc.constantFrom(" ", ", ", "\n", " - ", "\t"), { minLength: 50, maxLength: 50 }), (words, seps) => {
        const text = words.map((w, i) => w + seps[i]).join("");
        expect(word(3).shingle(text)).toBe(Math.max(0, words.length - 2));
      }),
    );
  });
});

describe("character shingles", () => {
  it("hash each window of n code points of the text with whitespace runs made one space", () => {
    const sh = char(3);
    const text = "  Ab\t\n cé ";
    // Normalized: "ab cé" → windows "ab ", "b c", " cé".
    const enc = new TextEncoder();
    const expected = ["ab ", "b c", " cé"].map((w) => ref.h32Raw(enc.encode(w), deriveSeed(7, 2)));
    expect(hashes(sh, text)).toEqual(expected);
    expect(sh.shingle("ab")).toBe(0);
    expect(sh.short).toBe(true);
  });

  it("count code points, not bytes or UTF-16 units", () => {
    expect(char(2).shingle("a😀é")).toBe(2);
  });
});

describe("exact Jaccard", () => {
  it("is |A ∩ B| / |A ∪ B| of the distinct shingles", () => {
    const sh = word(1);
    const a = shingleSet(sh, "a b c d a b");
    const b = shingleSet(sh, "c d e f");
    expect(a.length).toBe(4);
    expect(jaccard(a, b)).toBeCloseTo(2 / 6, 12);
    expect(jaccard(a, a)).toBe(1);
    expect(jaccard(new Uint32Array(0), new Uint32Array(0))).toBe(1);
  });

  it("matches a Set-based computation on random word lists", () => {
    fc.assert(
      fc.property(fc.array(fc.constantFrom("tram", "door", "brake", "pad", "line", "fault", "ok"), { maxLength: 30 }), fc.array(fc.constantFrom("tram", "door", "brake", "pad", "depot", "ok"), { maxLength: 30 }), (wa, wb) => {
        const sh = word(1);
        const A = new Set(wa);
        const B = new Set(wb);
        const both = [...A].filter((w) => B.has(w)).length;
        const union = A.size + B.size - both;
        expect(jaccard(shingleSet(sh, wa.join(" ")), shingleSet(sh, wb.join(" ")))).toBeCloseTo(union === 0 ? 1 : both / union, 12);
      }),
    );
  });
});
