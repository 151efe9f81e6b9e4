// The units the rules count: words, code points, non-blank lines, paragraphs.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { codePoints, contentLines, countWords, paragraphs, splitWords } from "../../src/filter/units.js";

describe("text units", () => {
  it("splits words exactly as countWords counts them", () => {
    fc.assert(
      fc.property(fc.array(fc.constantFrom("car", " ", "\t", "\n", "\u00a0", "\u3000", "\u2009", "4711", "é", "🚋", ",")).map((p) => p.join("")), (text) => {
        const words = splitWords(text);
        expect(words.length).toBe(countWords(text));
        for (const w of words) expect(w).not.toMatch(/[ \t\n\u00a0\u3000\u2009]/);
      }),
    );
  });
  it("counts code points, a surrogate pair once", () => {
    expect(codePoints("tram 🚋")).toBe(6);
    expect(codePoints("\udc00x")).toBe(2); // a lone low surrogate is one code point
  });
  it("lists non-blank lines without trailing spaces, and paragraphs between blank lines", () => {
    expect(contentLines("a  \n\n   \nb\r\n c")).toEqual(["a", "b", " c"]);
    expect(paragraphs("one\ntwo\n\n\n  three  \n \nfour\n\n")).toEqual(["one\ntwo", "three", "four"]);
  });
});
