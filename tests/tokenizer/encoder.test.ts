// Worked examples per encoding and the Encoder API contract (loading, specials, decode, TokenBuffer).

import { describe, expect, it } from "vitest";
import { SiftpackError } from "../../src/errors.js";
import { ENCODINGS, TokenBuffer, loadEncoding } from "../../src/tokenizer/index.js";

// Ids written out literally. "hello world" / "Hello world" for gpt2, cl100k_base and o200k_base and
// "<|endoftext|>" as plain text for gpt2 and cl100k_base were written from memory; the rest were
// read off the reference. All of them were confirmed against tiktoken (the npm package, the WASM
// build of OpenAI's tiktoken) with encode_ordinary.
const EXAMPLES: Record<string, Array<[string, number[]]>> = {
  gpt2: [
    ["hello world", [31373, 995]],
    ["Hello world", [15496, 995]],
    ["<|endoftext|>", [27, 91, 437, 1659, 5239, 91, 29]],
    ["    x = 1", [220, 220, 220, 2124, 796, 352]],
    ["It's 2024!", [1026, 338, 48609, 0]],
    ["naïve café", [2616, 38776, 40304]],
  ],
  r50k_base: [["hello world", [31373, 995]]],
  p50k_base: [
    ["hello world", [31373, 995]],
    // p50k adds whitespace-run tokens: three spaces are one id here, three ids in gpt2.
    ["    x = 1", [50258, 2124, 796, 352]],
  ],
  cl100k_base: [
    ["hello world", [15339, 1917]],
    ["Hello world", [9906, 1917]],
    ["<|endoftext|>", [27, 91, 8862, 728, 428, 91, 29]],
    ["    x = 1", [262, 865, 284, 220, 16]],
    ["It's 2024!", [2181, 596, 220, 2366, 19, 0]],
    ["naïve café", [3458, 38672, 588, 53050]],
  ],
  o200k_base: [
    ["hello world", [24912, 2375]],
    ["Hello world", [13225, 2375]],
    ["<|endoftext|>", [27, 91, 419, 1440, 919, 91, 29]],
    ["    x = 1", [271, 1215, 314, 220, 16]],
    ["It's 2024!", [15834, 220, 1323, 19, 0]],
    ["naïve café", [1503, 9954, 737, 30469]],
  ],
};

const SIZES: Record<string, { vocabSize: number; eosId: number }> = {
  gpt2: { vocabSize: 50257, eosId: 50256 },
  r50k_base: { vocabSize: 50257, eosId: 50256 },
  p50k_base: { vocabSize: 50281, eosId: 50256 },
  cl100k_base: { vocabSize: 100277, eosId: 100257 },
  o200k_base: { vocabSize: 200019, eosId: 199999 },
};

describe("worked examples", () => {
  it("lists exactly the encodings with examples", () => {
    expect([...ENCODINGS].sort()).toEqual(Object.keys(EXAMPLES).sort());
  });

  for (const [name, cases] of Object.entries(EXAMPLES)) {
    for (const pretokenizer of ["scanner", "regex"] as const) {
      it(`${name} (${pretokenizer})`, () => {
        const enc = loadEncoding(name, { pretokenizer });
        for (const [text, ids] of cases) {
          expect(enc.encode(text), text).toEqual(ids);
          expect(enc.decode(ids)).toBe(text);
        }
      });
    }
  }
});

describe("Encoder", () => {
  for (const name of Object.keys(SIZES)) {
    it(`${name}: sizes and <|endoftext|>`, () => {
      const enc = loadEncoding(name);
      expect(enc.name).toBe(name);
      expect(enc.vocabSize).toBe(SIZES[name].vocabSize);
      expect(enc.eosId).toBe(SIZES[name].eosId);
      expect(enc.specialTokens["<|endoftext|>"]).toBe(enc.eosId);
      // Special tokens in text are ordinary text: never their special id.
      const ids = enc.encode("a<|endoftext|>b");
      expect(ids).not.toContain(enc.eosId);
      expect(enc.decode(ids)).toBe("a<|endoftext|>b");
      // ...but special ids decode to their strings.
      expect(enc.decode([...enc.encode("x"), enc.eosId])).toBe("x<|endoftext|>");
      for (const id of ids) expect(id).toBeLessThan(enc.vocabSize);
    });
  }

  it("caches encoders per name", () => {
    expect(loadEncoding("gpt2")).toBe(loadEncoding("gpt2"));
    expect(loadEncoding("gpt2", { pretokenizer: "regex" })).not.toBe(loadEncoding("gpt2"));
  });

  it("rejects unknown encodings with SP_TOKENIZER, listing the known ones", () => {
    let caught: unknown;
    try {
      loadEncoding("gpt5_base");
    } catch (err) {
      caught = err;
    }
    expect(caught).toBeInstanceOf(SiftpackError);
    const e = caught as SiftpackError;
    expect(e.code).toBe("SP_TOKENIZER");
    for (const name of ENCODINGS) expect(e.message).toContain(name);
  });

  it("rejects unknown ids when decoding", () => {
    const enc = loadEncoding("gpt2");
    expect(() => enc.decode([50257])).toThrow(SiftpackError);
    expect(() => enc.decode([-1])).toThrow(/unknown token id -1/);
    expect(() => enc.decode([1.5])).toThrow(SiftpackError);
    // p50k_base has no id 50256 in its ranks but does as a special token; 50257 is ordinary.
    const p50k = loadEncoding("p50k_base");
    expect(p50k.decode([50256, 50257])).toBe("<|endoftext|>  ");
  });

  it("decodes partial UTF-8 to U+FFFD and keeps a leading byte order mark", () => {
    const enc = loadEncoding("gpt2");
    const ids = enc.encode("😀");
    expect(ids.length).toBeGreaterThan(1);
    expect(enc.decode(ids.slice(0, 1))).toBe("\ufffd");
    expect(enc.decode(enc.encode("\ufeffhi"))).toBe("\ufeffhi");
    expect(enc.decode([])).toBe("");
    expect(enc.encode("")).toEqual([]);
  });

  it("encodeInto appends to a TokenBuffer and agrees with encode", () => {
    const enc = loadEncoding("cl100k_base");
    const buf = new TokenBuffer(16);
    const a = "The quick brown fox jumps over the lazy dog. ".repeat(20);
    const b = "Zweiter Absatz: über Größe und Maß.";
    expect(enc.encodeInto(a, buf)).toBe(enc.encode(a).length);
    const n = enc.encodeInto(b, buf);
    expect(n).toBe(enc.encode(b).length);
    expect(Array.from(buf.view())).toEqual([...enc.encode(a), ...enc.encode(b)]);
    const copy = buf.toArray();
    buf.clear();
    expect(buf.length).toBe(0);
    expect(copy.length).toBe(enc.encode(a).length + n);
  });
});

describe("TokenBuffer", () => {
  it("grows past its capacity and copies on toArray", () => {
    const buf = new TokenBuffer(16);
    const expected: number[] = [];
    for (let i = 0; i < 40; i++) {
      buf.push(i);
      expected.push(i);
    }
    buf.pushAll(Uint32Array.from({ length: 100 }, (_, i) => 1000 + i));
    for (let i = 0; i < 100; i++) expected.push(1000 + i);
    buf.pushFrom(Uint32Array.of(7, 8, 9, 10), 1, 2);
    expected.push(8, 9);
    expect(buf.length).toBe(expected.length);
    expect(Array.from(buf.view())).toEqual(expected);
    const copy = buf.toArray();
    buf.clear();
    buf.push(99);
    expect(copy[0]).toBe(0);
    expect(Array.from(buf.view())).toEqual([99]);
  });
});
