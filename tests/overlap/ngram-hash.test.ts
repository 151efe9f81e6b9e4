// Word splitting and n-gram hashing: what counts as the same n-gram, and that distinct n-grams do not collide.
import { describe, expect, it } from "vitest";
import { readFileSync } from "node:fs";
import fc from "fast-check";
import { NgramHasher } from "../../src/overlap/ngram-hash.js";
import { wordsOf } from "../../src/overlap/words.js";

function hashes(text: string, n: number): string[] {
  const h = new NgramHasher(n);
  const count = h.hash(wordsOf(text));
  return Array.from({ length: count }, (_, i) => `${h.hi[i]}:${h.lo[i]}`);
}

describe("wordsOf", () => {
  it("cuts at everything but letters, marks and digits, after NFKC, without format characters, lower-cased", () => {
    expect(wordsOf("The Wire, and   the RAIL—returned it!")).toEqual(["the", "wire", "and", "the", "rail", "returned", "it"]);
    // U+FB01 is the fi ligature (NFKC → "fi"); U+FF11 a fullwidth 1; U+200B a zero-width space; U+00AD a soft hyphen.
    expect(wordsOf("\uFB01ve car\u00A0\uFF141 pan\u200Btograph in\u00ADspection")).toEqual(["five", "car", "41", "pantograph", "inspection"]);
    expect(wordsOf("Straße café naïve")).toEqual(["straße", "café", "naïve"]);
    expect(wordsOf("... -- !!")).toEqual([]);
  });
});

describe("NgramHasher", () => {
  it("gives one hash per window, equal for equal n-grams wherever they occur", () => {
    const a = hashes("one two three four five", 3);
    expect(a.length).toBe(3);
    const b = hashes("zero ONE two, three four", 3);
    expect(b[1]).toBe(a[0]); // "one two three"
    expect(b[2]).toBe(a[1]); // "two three four"
    expect(new Set(a).size).toBe(3);
    expect(hashes("one two", 3)).toEqual([]);
  });

  it("depends on the order of the words and on n", () => {
    expect(hashes("a b c", 3)[0]).not.toBe(hashes("c b a", 3)[0]);
    expect(hashes("a b c", 3)[0]).not.toBe(hashes("a b c", 2)[0]);
    // Word boundaries matter: "ab c" is not "a bc".
    expect(hashes("ab c", 2)[0]).not.toBe(hashes("a bc", 2)[0]);
  });

  it("has no collision among 360 000 distinct 2-grams of 600 words", () => {
    const words = Array.from({ length: 600 }, (_, i) => `w${i.toString(36)}${"x".repeat(i % 7)}`);
    const h = new NgramHasher(2);
    const seen = new Set<bigint>();
    for (const a of words) {
      const text = words.flatMap((b) => [a, b]);
      // Every other window is (a, b); the ones in between are (b, a') and are checked in their own turn.
      const count = h.hash(text);
      for (let i = 0; i < count; i += 2) seen.add((BigInt(h.hi[i]) << 32n) | BigInt(h.lo[i]));
    }
    expect(seen.size).toBe(600 * 600);
  });

  it("has no collision among 1 000 000 distinct 3-grams, and each half about as few as a random 32-bit value", () => {
    // All 100³ 3-grams of 100 words. For 10^6 random 32-bit values the expected number of colliding
    // pairs is C(10^6, 2) / 2^32 ≈ 116 (the birthday bound); the polynomial may lose one bit, so a half
    // is allowed up to 4× that, and the 64-bit hash none.
    const words = Array.from({ length: 100 }, (_, i) => `tram${i}`);
    const h = new NgramHasher(3);
    const keys = new BigUint64Array(1e6);
    const his = new Uint32Array(1e6);
    let k = 0;
    for (const a of words)
      for (const b of words)
        for (const c of words) {
          h.hash([a, b, c]);
          keys[k] = (BigInt(h.hi[0]) << 32n) | BigInt(h.lo[0]);
          his[k++] = h.hi[0];
        }
    keys.sort();
    his.sort();
    let same64 = 0;
    let sameHi = 0;
    for (let i = 1; i < k; i++) {
      if (keys[i] === keys[i - 1]) same64++;
      if (his[i] === his[i - 1]) sameHi++;
    }
    expect(same64).toBe(0);
    expect(sameHi).toBeLessThan(4 * 116);
  });
});

describe("NgramHasher.hashText", () => {
  const viaWords = (text: string, n: number) => {
    const h = new NgramHasher(n);
    const count = h.hash(wordsOf(text));
    return [...h.hi.subarray(0, count), ...h.lo.subarray(0, count)];
  };
  const viaText = (text: string, n: number) => {
    const h = new NgramHasher(n);
    const count = h.hashText(text);
    return [...h.hi.subarray(0, count), ...h.lo.subarray(0, count)];
  };

  it("equals hashing the word list, on any text (letters beyond the BMP, lone surrogates, marks, format characters)", () => {
    const pieces = fc.constantFrom("a", "Z", "ß", "é", "e\u0301", "\u200B", "\u00AD", "𝐀", "𐐀", "\uD800", "\uDC00", "9", "٣", "漢", " ", ",", "—", "\uFB01", "Σ", "ΣΑ", "\n", "İ");
    fc.assert(
      fc.property(fc.array(fc.oneof(pieces, fc.string({ unit: "binary" })), { maxLength: 40 }), fc.integer({ min: 1, max: 4 }), (parts, n) => {
        const text = parts.join("");
        expect(viaText(text, n)).toEqual(viaWords(text, n));
      }),
      { numRuns: 2000 },
    );
  });

  it("equals hashing the word list on real text (the licences in /usr/share/common-licenses)", () => {
    // Real text this project did not write, as the README's checks use.
    const text = readFileSync("/usr/share/common-licenses/GPL-3", "utf8");
    expect(viaText(text, 13)).toEqual(viaWords(text, 13));
    expect(viaText(text, 13).length).toBeGreaterThan(10000);
  });
});

