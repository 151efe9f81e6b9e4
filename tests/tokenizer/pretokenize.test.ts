// The hand-written scanners split text exactly as the translated pattern regexes do, and the translation is faithful.

import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { SiftpackError } from "../../src/errors.js";
import { CL100K_PATTERN, ENCODING_SPECS, GPT2_PATTERN, O200K_PATTERN } from "../../src/tokenizer/encodings.js";
import { compilePattern, translate } from "../../src/tokenizer/pattern.js";
import { type Pretokenizer, splitPieces } from "../../src/tokenizer/pretokenize.js";
import { scanCl100k } from "../../src/tokenizer/scan-cl100k.js";
import type { Scanner } from "../../src/tokenizer/scan-common.js";
import { scanGpt2 } from "../../src/tokenizer/scan-gpt2.js";
import { scanO200k } from "../../src/tokenizer/scan-o200k.js";
import { classTable } from "../../src/tokenizer/unicode-classes.js";

const SCANNED: Array<[string, string, Scanner]> = [
  ["gpt2", GPT2_PATTERN, scanGpt2],
  ["cl100k", CL100K_PATTERN, scanCl100k],
  ["o200k", O200K_PATTERN, scanO200k],
];

function byScanner(scan: Scanner): Pretokenizer {
  return { kind: "scanner", scan, classes: classTable() };
}
function byRegex(pattern: string): Pretokenizer {
  return { kind: "regex", regex: compilePattern(pattern) };
}

// One or two characters of every class and every character the patterns name literally.
const ALPHABET = [
  "a", "s", "t", "r", "e", "v", "m", "l", "d", "x", "S", "T", "R", "E", "V", "M", "L", "D", "X", "ſ", "K",
  "ǅ", "ᾈ", "ʰ", "ー", "ª", "º", "中", "あ", "ß", "Ж", "ж", "\u0301", "\u093f", "\u20dd",
  "0", "9", "١", "Ⅻ", "½", "'", "/", "!", ".", "-", "😀", "\u{1f3fd}", "\u200d", "\ud800", "\udc00",
  " ", "\t", "\n", "\r", "\u000b", "\u0085", "\u00a0", "\u2028", "\u3000", "\ufeff", "\u200b",
  "\u{10d50}", "\u{10d40}", "\u0c5c", "\u{323b0}", "\u1acf",
];
const WORDS = ["'s", "'S", "'ſ", "'re", "'RE", "'ll", "'Ll", "'ve", "'m", "'d", "  ", "\r\n", "\n\n", " \n ", "//", "123", "1234", "Hello", "HELLO", "亚洲AV", "e\u0301"];
const textArb = fc
  .array(fc.oneof({ weight: 6, arbitrary: fc.constantFrom(...ALPHABET) }, { weight: 2, arbitrary: fc.constantFrom(...WORDS) }, { weight: 1, arbitrary: fc.string({ unit: "binary", maxLength: 2 }) }), { maxLength: 40 })
  .map((a) => a.join(""));

describe.each(SCANNED)("%s scanner", (_name, pattern, scan) => {
  it("splits exactly as the translated regex (generated strings)", () => {
    const scanner = byScanner(scan);
    const regex = byRegex(pattern);
    fc.assert(
      fc.property(textArb, (s) => {
        expect(splitPieces(s, scanner)).toEqual(splitPieces(s, regex));
      }),
      { numRuns: 3000 },
    );
  });

  it("splits exactly as the translated regex (long runs)", () => {
    const scanner = byScanner(scan);
    const regex = byRegex(pattern);
    const runs = fc
      .tuple(fc.constantFrom(...ALPHABET, ...WORDS), fc.constantFrom(...ALPHABET, ...WORDS), fc.integer({ min: 1, max: 50 }), textArb)
      .map(([a, b, n, tail]) => (a + b).repeat(n) + tail);
    fc.assert(
      fc.property(runs, (s) => {
        expect(splitPieces(s, scanner)).toEqual(splitPieces(s, regex));
      }),
      { numRuns: 500 },
    );
  });

  it("covers the whole text, piece after piece", () => {
    const scanner = byScanner(scan);
    fc.assert(
      fc.property(textArb, (s) => {
        const pieces = splitPieces(s, scanner);
        expect(pieces.join("")).toBe(s);
        for (const p of pieces) expect(p.length).toBeGreaterThan(0);
      }),
      { numRuns: 500 },
    );
  });
});

describe("literal splits", () => {
  // Worked by hand from the patterns.
  const CASES: Array<[string, string, string[]]> = [
    ["gpt2", "Hello world's  x\n\n", ["Hello", " world", "'s", " ", " x", "\n\n"]],
    ["gpt2", "I'M 12345!!  ", ["I", "'", "M", " 12345", "!!", "  "]],
    ["cl100k", "I'M 12345!!\n\n  x", ["I", "'M", " ", "123", "45", "!!\n\n", " ", " x"]],
    ["cl100k", "\tfoo  \n bar", ["\tfoo", "  \n", " bar"]],
    // U* gives back characters until W+ can match, so the Lo before "AV" ends the first piece.
    ["o200k", "HelloWORLD's 中A亚洲AV", ["Hello", "WORLD's", " 中A亚洲", "AV"]],
    ["o200k", "a.\n//b", ["a", ".\n//", "b"]],
    ["o200k", "x\u0085\u0085y\ufeffz", ["x", "\u0085", "\u0085y", "\ufeffz"]],
  ];
  for (const [name, text, pieces] of CASES) {
    it(`${name}: ${JSON.stringify(text)}`, () => {
      const [, pattern, scan] = SCANNED.find(([n]) => n === name) as [string, string, Scanner];
      expect(splitPieces(text, byScanner(scan))).toEqual(pieces);
      expect(splitPieces(text, byRegex(pattern))).toEqual(pieces);
    });
  }
});

describe("pattern translation", () => {
  it("our patterns are js-tiktoken's, with (?i:...) kept as the reference writes it", async () => {
    for (const spec of ENCODING_SPECS) {
      const file = (await import(spec.ranksModule)) as { default: { pat_str: string } };
      const expanded = spec.pattern.replaceAll("(?i:'s|'t|'re|'ve|'m|'ll|'d)", "('s|'S|'t|'T|'re|'rE|'Re|'RE|'ve|'vE|'Ve|'VE|'m|'M|'ll|'lL|'Ll|'LL|'d|'D)");
      expect(expanded, spec.name).toBe(file.default.pat_str);
    }
  });

  it("agrees with the host's native \\p classes where Unicode versions and \\s agree", () => {
    // Characters whose classes are the same in every recent Unicode version and JavaScript's \s.
    const stable = fc
      .array(fc.constantFrom(...ALPHABET.filter((c) => !["\u0085", "\ufeff", "ſ", "\u0c5c", "\u{323b0}", "\u1acf"].includes(c)), ...WORDS.filter((w) => !w.includes("ſ"))), { maxLength: 30 })
      .map((a) => a.join(""));
    for (const pattern of [GPT2_PATTERN, CL100K_PATTERN, O200K_PATTERN]) {
      const native = new RegExp(pattern.replaceAll("(?i:'s|'t|'re|'ve|'m|'ll|'d)", "(?:'[sS]|'[tT]|'[rR][eE]|'[vV][eE]|'[mM]|'[lL][lL]|'[dD])"), "gu");
      const ours = compilePattern(pattern);
      fc.assert(
        fc.property(stable, (s) => {
          expect(s.match(ours) ?? []).toEqual(s.match(native) ?? []);
        }),
        { numRuns: 500 },
      );
    }
  });

  it("spells out White_Space, not JavaScript's \\s", () => {
    const re = new RegExp("^" + translate(String.raw`\s`) + "$", "u");
    expect(re.test("\u0085")).toBe(true);
    expect(re.test("\ufeff")).toBe(false);
    expect(re.test(" ")).toBe(true);
    expect(new RegExp("^" + translate(String.raw`\S`) + "$", "u").test("\ufeff")).toBe(true);
  });

  it("expands case-insensitive groups with Unicode's extra folds", () => {
    const re = new RegExp("^" + translate("(?i:'s|'k)") + "$", "u");
    for (const ok of ["'s", "'S", "'ſ", "'k", "'K", "'\u212a"]) expect(re.test(ok), ok).toBe(true);
    expect(re.test("'x")).toBe(false);
  });

  it("rejects constructs it cannot translate", () => {
    for (const bad of [String.raw`\p{Sc}`, String.raw`[\S]`, "(?i:a.b)", "[abc", "(?i:'s", "abc\\"]) {
      expect(() => translate(bad), bad).toThrow(SiftpackError);
    }
  });
});
