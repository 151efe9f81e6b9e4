// Word splitting and n-gram hashing: what counts as the same n-gram, and that distinct n-grams do not collide.
import { describe, expect, it } from "vitest";
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
});
