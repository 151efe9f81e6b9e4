// Ids equal the reference's on adversarial generated strings, and decode(encode(s)) === s.
//
// Reference: tiktoken npm package, WASM build of OpenAI's tiktoken (encode_ordinary).

import fc from "fast-check";
import { get_encoding, type TiktokenEncoding } from "tiktoken";
import { afterAll, describe, expect, it } from "vitest";
import { ENCODINGS, loadEncoding } from "../../src/tokenizer/index.js";

// Fragments chosen to hit every branch of the three patterns: each character class (Lu, Lt, Ll,
// Lm, Lo, marks, numbers), every White_Space character and look-alikes that are not White_Space,
// contractions in every case (and the long s that case-insensitive matching accepts), CR/LF and
// "/", emoji sequences, lone surrogates, special-token strings, and characters whose class
// differs between Unicode versions (Unicode 16 letters; Unicode 17 letters, digits and marks,
// which the reference does not know). The last line holds o200k_base tokens that its own pattern
// splits (so correct pre-tokenization never yields them; a wrong split would), and Lo + Lu pairs.
const FRAGMENTS = [
  "a", "z", "s", "x", "A", "Z", "S", "Ω", "Ж", "ж", "ß", "İ", "ı", "ǅ", "ᾈ", "ʰ", "ー", "中", "文", "あ", "א", "ก", "\u0e31",
  "\u0301", "e\u0301", "\u0915\u093f", "नमस्ते", "\u20dd", "0", "7", "١", "٢", "Ⅻ", "½", "²", "𝟙",
  " ", "  ", "\t", "\n", "\r", "\r\n", "\n\n", "\u000b", "\u000c", "\u0085", "\u00a0", "\u1680", "\u2003", "\u2028", "\u2029",
  "\u202f", "\u205f", "\u3000", "\ufeff", "\u200b", "\u180e", "\u001c", "\u001f",
  "'", "''", "'s", "'S", "'ſ", "ſ", "K", "'t", "'T", "'re", "'RE", "'rE", "'Re", "'ve", "'VE", "'m", "'M", "'ll", "'LL", "'lL", "'d", "'D",
  "!", "?", ".", ",", "-", "/", "//", "/\n", "€", "$", "@", "#", "_", "~", "(", ")", "\u0000",
  "😀", "👍🏽", "👨‍👩‍👧", "🇺🇸", "\ud800", "\udfff", "\udc00a", "\ufffd",
  "<|endoftext|>", "<|fim_prefix|>", "<|endofprompt|>", "<|",
  "\u{10d50}", "\u{10d40}", "\u0c5c", "\u{323b0}", "\u{11de0}", "\u1acf", "\u{1e6e3}", "\u{e0001}", "\u{f0000}",
  "hello", "Hello", "HELLO", "hELLO", "don", "x1", "1x", "123", "12345", "3.14", "http://x.y/z", "ÀÉÎ", "Straße", "ǅungla",
  " I'", "\n//", "\r\n//", "\n///", "\n\n//", " 亚洲AV", "无码AV", " 天天中彩票APP", "ºC", "ªA", "中A",
];

const fragment = fc.constantFrom(...FRAGMENTS);
const fragments = fc.array(fragment, { maxLength: 40 }).map((a) => a.join(""));
const runs = fc
  .tuple(fragment, fc.constantFrom(" ", "\n", "\t", "\r\n", "1", "a", "A", "'", "😀", "é", "\u00a0", "x ", "\u0301", "/"), fc.integer({ min: 1, max: 300 }), fragment)
  .map(([pre, unit, n, post]) => pre + unit.repeat(n) + post);

const ARBITRARIES: Array<[string, fc.Arbitrary<string>]> = [
  ["fragment mixes", fragments],
  ["long runs", runs],
  ["grapheme strings", fc.string({ unit: "grapheme", maxLength: 60 })],
  ["any code point (binary)", fc.string({ unit: "binary", maxLength: 60 })],
  ["binary ASCII/Latin-1", fc.string({ unit: "binary-ascii", maxLength: 80 })],
  ["mixed fragments and code points", fc.array(fc.oneof(fragment, fc.string({ unit: "binary", maxLength: 3 })), { maxLength: 30 }).map((a) => a.join(""))],
];

const NUM_RUNS = 250;

/** No unpaired surrogate: such strings survive a UTF-8 round trip. */
function isWellFormed(s: string): boolean {
  return !/[\ud800-\udfff]/u.test(s);
}

const refs = new Map<string, ReturnType<typeof get_encoding>>();
afterAll(() => {
  for (const r of refs.values()) r.free();
});

describe.each([...ENCODINGS])("%s", (name) => {
  const enc = loadEncoding(name);
  let ref = refs.get(name);
  if (ref === undefined) {
    ref = get_encoding(name as TiktokenEncoding);
    refs.set(name, ref);
  }
  const theirs = (s: string): number[] => Array.from(ref.encode_ordinary(s));

  for (const [label, arb] of ARBITRARIES) {
    it(`ids equal the reference: ${label}`, () => {
      fc.assert(
        fc.property(arb, (s) => {
          expect(enc.encode(s)).toEqual(theirs(s));
        }),
        { numRuns: NUM_RUNS },
      );
    });
  }

  it("ids equal the reference through the regex pre-tokenizer", () => {
    const viaRegex = loadEncoding(name, { pretokenizer: "regex" });
    fc.assert(
      fc.property(fc.oneof(fragments, runs), (s) => {
        expect(viaRegex.encode(s)).toEqual(theirs(s));
      }),
      { numRuns: NUM_RUNS },
    );
  });

  it("decode(encode(s)) === s for well-formed strings", () => {
    fc.assert(
      fc.property(fc.oneof(fragments, runs, fc.string({ unit: "grapheme", maxLength: 60 }), fc.string({ unit: "binary", maxLength: 60 })), (s) => {
        fc.pre(isWellFormed(s));
        expect(enc.decode(enc.encode(s))).toBe(s);
      }),
      { numRuns: NUM_RUNS },
    );
  });

  it("lone surrogates encode as U+FFFD does", () => {
    expect(enc.encode("a\ud800b")).toEqual(enc.encode("a\ufffdb"));
    expect(enc.encode("a\ud800b")).toEqual(theirs("a\ud800b"));
    expect(enc.decode(enc.encode("x\udc00"))).toBe("x\ufffd");
  });
});
