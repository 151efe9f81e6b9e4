// N-gram repetition rules at their Gopher thresholds (table A1), on documents of exact word counts.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { WordGrams, duplicateNgramShare, duplicateNgrams, topNgramShare, topNgrams } from "../../src/filter/ngrams.js";
import { distinctWords, verdict } from "./docs.js";

/** N distinct five-letter words whose last k words repeat the first k: one k-gram occurs twice. */
function withRepeat(n: number, k: number): string {
  const w = distinctWords(n);
  for (let i = 0; i < k; i++) w[n - k + i] = w[i];
  return w.join(" ");
}

describe("top_ngrams (most frequent 2-, 3-, 4-gram: ≤ 0.20, 0.18, 0.16 of characters)", () => {
  it("2-grams: passes 4 of 20 words covered, fails 4 of 19", () => {
    expect(verdict(topNgrams, withRepeat(20, 2))).toBeUndefined();
    expect(verdict(topNgrams, withRepeat(19, 2))).toEqual({ n: 2, share: 0.2105, max: 0.2 });
  });
  it("3-grams: passes 6 of 34 words, fails 6 of 33", () => {
    expect(verdict(topNgrams, withRepeat(34, 3))).toBeUndefined();
    expect(verdict(topNgrams, withRepeat(33, 3))).toEqual({ n: 3, share: 0.1818, max: 0.18 });
  });
  it("4-grams: passes 8 of 50 words, fails 8 of 49", () => {
    expect(verdict(topNgrams, withRepeat(50, 4))).toBeUndefined();
    expect(verdict(topNgrams, withRepeat(49, 4))).toEqual({ n: 4, share: 0.1633, max: 0.16 });
  });
  it("counts overlapping occurrences once and compares words case-insensitively", () => {
    const g = new WordGrams("door door door door".split(" "));
    expect(topNgramShare(g, 2)).toBe(1);
    expect(topNgramShare(new WordGrams("Door fault door FAULT".split(" ")), 2)).toBe(1);
  });
  it("treats an n-gram seen once as no repetition, so short texts pass", () => {
    expect(verdict(topNgrams, "Pantograph lowered.")).toBeUndefined();
    expect(verdict(topNgrams, "Brake pads replaced on car 4711.")).toBeUndefined();
  });
});

describe("duplicate_ngrams (characters in repeated 5- to 10-grams: ≤ 0.15 … 0.10)", () => {
  it("5-grams: passes 5 repeated words of 34, fails 5 of 33", () => {
    expect(verdict(duplicateNgrams, withRepeat(34, 5))).toBeUndefined();
    expect(verdict(duplicateNgrams, withRepeat(33, 5))).toEqual({ n: 5, share: 0.1515, max: 0.15 });
  });
  it("10-grams: passes 10 repeated words of 100, fails 10 of 99", () => {
    expect(verdict(duplicateNgrams, withRepeat(100, 10))).toBeUndefined();
    expect(verdict(duplicateNgrams, withRepeat(99, 10))).toEqual({ n: 10, share: 0.101, max: 0.1 });
  });
  it("counts the repeats, not the first occurrence, and each character once", () => {
    // Said three times: two thirds are repeats. Said twice: half.
    const thrice = "a b c d e a b c d e a b c d e".split(" ");
    expect(duplicateNgramShare(new WordGrams(thrice), 5)).toBeCloseTo(2 / 3, 12);
    expect(duplicateNgramShare(new WordGrams(thrice.slice(0, 10)), 5)).toBe(0.5);
    expect(duplicateNgramShare(new WordGrams(distinctWords(30)), 5)).toBe(0);
    // Overlapping repeats of one word: every word after the first n-gram's start is covered once.
    expect(duplicateNgramShare(new WordGrams("door door door door door door".split(" ")), 5)).toBeCloseTo(5 / 6, 12);
  });
  it("shares are fractions of word characters, spaces not counted", () => {
    // "ab ab" twice over 2-grams: every word covered regardless of spacing.
    expect(topNgramShare(new WordGrams(["ab", "cd", "ab", "cd"]), 2)).toBe(1);
  });
  it("agrees with a direct count over joined strings (the integer ids are exact)", () => {
    // Reference: n-grams as space-joined strings; a position whose n-gram was seen before covers its words.
    const reference = (words: string[], n: number) => {
      const keys = words.slice(0, Math.max(0, words.length - n + 1)).map((_, i) => words.slice(i, i + n).join(" ").toLowerCase());
      const seen = new Set<string>();
      const covered = new Array(words.length).fill(false);
      keys.forEach((k, i) => {
        if (seen.has(k)) for (let j = i; j < i + n; j++) covered[j] = true;
        seen.add(k);
      });
      const total = words.reduce((a, w) => a + [...w].length, 0);
      return total === 0 ? 0 : words.reduce((a, w, i) => a + (covered[i] ? [...w].length : 0), 0) / total;
    };
    fc.assert(
      fc.property(fc.array(fc.constantFrom("tram", "Tram", "door", "car", "road", "4711", "ü", "🚋"), { maxLength: 80 }), fc.integer({ min: 1, max: 10 }), (words, n) => {
        expect(duplicateNgramShare(new WordGrams(words), n)).toBeCloseTo(reference(words, n), 12);
      }),
    );
  });

  it("never reports a share outside [0, 1]", () => {
    fc.assert(
      fc.property(fc.array(fc.constantFrom("tram", "door", "car", "road", "4711"), { maxLength: 60 }), fc.integer({ min: 1, max: 6 }), (words, n) => {
        const g = new WordGrams(words);
        for (const x of [topNgramShare(g, n), duplicateNgramShare(g, n)]) {
          expect(x).toBeGreaterThanOrEqual(0);
          expect(x).toBeLessThanOrEqual(1);
        }
      }),
    );
  });
});
