// Loading tokenizer files: a hand-written file in the JSON tokenizer-file format, both merge spellings, Split + ByteLevel, and refusals.
//
// Reference library: @huggingface/tokenizers (Tokenizers.js), which reads the same format.

import { mkdtempSync, writeFileSync } from "node:fs";
import { createRequire } from "node:module";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { SiftpackError } from "../../src/errors.js";
import { CL100K_PATTERN } from "../../src/tokenizer/encodings.js";
import { BYTE_TO_CHAR, loadTokenizerFile, tokenizerFromJson } from "../../src/tokenizer/index.js";

interface RefTokenizer {
  encode(text: string, options: { add_special_tokens: boolean }): { ids: number[] };
}
const { Tokenizer } = createRequire(import.meta.url)("@huggingface/tokenizers") as { Tokenizer: new (json: object, config: object) => RefTokenizer };

/**
 * 256 byte tokens at ids 100..355 (not 0..255: ids need not follow bytes), then merges whose
 * results have ids in *reverse* merge order, and "<|endoftext|>" as an added token at id 7.
 */
function handFile(mergeStyle: "pairs" | "strings", preTokenizer: object = { type: "ByteLevel", add_prefix_space: false, trim_offsets: true, use_regex: true }): object {
  const vocab: Record<string, number> = {};
  BYTE_TO_CHAR.forEach((c, b) => (vocab[c] = 100 + b));
  const merges: [string, string][] = [
    ["Ġ", "t"],
    ["h", "e"],
    ["Ġt", "he"],
    ["a", "b"],
    ["ab", "c"],
    ["b", "c"],
    ["a", "bc"], // "abc" again, by another split: lower priority than ab+c
  ];
  const results = ["Ġt", "he", "Ġthe", "ab", "abc", "bc"];
  results.forEach((t, i) => (vocab[t] = 1000 - i));
  return {
    version: "1.0",
    added_tokens: [{ id: 7, content: "<|endoftext|>", special: true }],
    normalizer: null,
    pre_tokenizer: preTokenizer,
    post_processor: null, // the reference library requires these two keys; siftpack ignores them
    decoder: { type: "ByteLevel" },
    model: { type: "BPE", vocab, merges: mergeStyle === "pairs" ? merges : merges.map(([a, b]) => `${a} ${b}`) },
  };
}

describe("tokenizer files", () => {
  it("merges by merge rank, not by id, and agrees with the reference library", () => {
    for (const style of ["pairs", "strings"] as const) {
      const json = handFile(style);
      const enc = tokenizerFromJson(json, "hand.json", "hand");
      // " the": Ġ+t, then h+e, then Ġt+he → "Ġthe", id 1000 - 2 in the table above.
      expect(enc.encode(" the")).toEqual([998]);
      // "bcabc": b+c has rank 5, a+b rank 3: "abc" forms as (ab)+c; the leading "bc" stays.
      expect(enc.encode("bcabc")).toEqual([995, 996]);
      expect(enc.eosId).toBe(7);
      expect(enc.vocabSize).toBe(1001);
      expect(enc.decode([998, 7])).toBe(" the<|endoftext|>");
      const ref = new Tokenizer(json, {});
      for (const t of [" the", "bcabc", "the abc, then théâtre\n\n  x"]) expect(enc.encode(t)).toEqual(ref.encode(t, { add_special_tokens: false }).ids);
    }
  });

  it("reads a Sequence of Split (cl100k pattern) and ByteLevel like the reference library", () => {
    const pre = {
      type: "Sequence",
      pretokenizers: [
        { type: "Split", pattern: { Regex: CL100K_PATTERN }, behavior: "Isolated", invert: false },
        { type: "ByteLevel", add_prefix_space: false, trim_offsets: true, use_regex: false },
      ],
    };
    const json = handFile("pairs", pre);
    const enc = tokenizerFromJson(json, "seq.json", "seq");
    const ref = new Tokenizer(json, {});
    for (const t of ["It's 12345 the abc!!\n\n", "THE'S them  \t x"]) expect(enc.encode(t)).toEqual(ref.encode(t, { add_special_tokens: false }).ids);
  });

  it("loads from a path; eos_token picks another added token", () => {
    const dir = mkdtempSync(join(tmpdir(), "sp-tok-"));
    const json = handFile("pairs") as { added_tokens: object[] };
    json.added_tokens.push({ id: 8, content: "</s>", special: true });
    writeFileSync(join(dir, "tokenizer.json"), JSON.stringify(json));
    expect(loadTokenizerFile(join(dir, "tokenizer.json"), { eosToken: "</s>" }).eosId).toBe(8);
    expect(loadTokenizerFile(join(dir, "tokenizer.json")).name).toMatch(/^tokenizer\.json@[0-9a-f]{16}$/);
  });

  it("refuses other model types, pre-tokenizers and a missing eos token, naming the file", () => {
    const refuse = (mutate: (j: any) => void): string => {
      const j = handFile("pairs") as any;
      mutate(j);
      try {
        tokenizerFromJson(j, "x/tokenizer.json", "x");
      } catch (err) {
        expect(err).toBeInstanceOf(SiftpackError);
        expect((err as SiftpackError).code).toBe("SP_TOKENIZER");
        return (err as Error).message;
      }
      throw new Error("not refused");
    };
    expect(refuse((j) => (j.model.type = "WordPiece"))).toBe('tokenizer file x/tokenizer.json: unsupported model type "WordPiece"; only byte-level "BPE" is supported');
    expect(refuse((j) => (j.model = { type: "Unigram", vocab: [] }))).toMatch(/unsupported model type "Unigram"/);
    expect(refuse((j) => (j.pre_tokenizer = { type: "Metaspace", replacement: "▁" }))).toBe(
      'tokenizer file x/tokenizer.json: unsupported pre_tokenizer of type "Metaspace"; expected ByteLevel or Split',
    );
    expect(refuse((j) => (j.pre_tokenizer = { type: "Whitespace" }))).toMatch(/unsupported pre_tokenizer of type "Whitespace"/);
    expect(refuse((j) => (j.normalizer = { type: "NFC" }))).toMatch(/unsupported normalizer of type "NFC"/);
    expect(refuse((j) => (j.added_tokens = []))).toMatch(/no added token "<\|endoftext\|>" to end documents with/);
    expect(refuse((j) => delete j.model.vocab["Ġ"])).toMatch(/merge 0 \["Ġ","t"\] uses a token missing from the vocab/);
  });
});
