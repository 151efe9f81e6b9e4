// Published encodings re-expressed as tokenizer files (vocab + merges) load in ours and give the reference's ids.
//
// A rank table lists tokens only; the merge that makes token t is found by running BPE over t's
// bytes with the ranks below t's, which leaves exactly two parts (the usual conversion of such
// tables, from memory). With merges in rank order the merge-list encoder must reproduce the
// reference. Reference: the tiktoken npm package (encode_ordinary); the gpt2 file also goes
// through @huggingface/tokenizers (Tokenizers.js).

import { readFileSync, readdirSync, statSync } from "node:fs";
import { createRequire } from "node:module";
import { join } from "node:path";
import { get_encoding } from "tiktoken";
import { describe, expect, it } from "vitest";
import { CL100K_PATTERN } from "../../src/tokenizer/encodings.js";
import { bytesToToken, tokenizerFromJson } from "../../src/tokenizer/index.js";
import { NO_RANK, RankTable } from "../../src/tokenizer/ranks.js";

const require = createRequire(import.meta.url);
const { Tokenizer } = require("@huggingface/tokenizers") as { Tokenizer: new (json: object, config: object) => { encode(t: string, o: { add_special_tokens: boolean }): { ids: number[] } } };

/** Merges of a rank table in rank order, as [left, right] file-form tokens. */
function mergesOf(table: RankTable): [string, string][] {
  const out: [string, string][] = [];
  for (let r = 0; r <= table.maxRank; r++) {
    const len = table.byteLength(r);
    if (len < 2) continue;
    const bytes = table.bytesOf(r);
    let parts: Uint8Array[] = Array.from(bytes, (b) => Uint8Array.of(b));
    while (parts.length > 2) {
      let best = NO_RANK;
      let at = -1;
      for (let k = 0; k + 1 < parts.length; k++) {
        const joined = Buffer.concat([parts[k], parts[k + 1]]);
        const q = table.get(joined, 0, joined.length);
        if (q !== NO_RANK && q < r && (best === NO_RANK || q < best)) {
          best = q;
          at = k;
        }
      }
      if (at < 0) throw new Error(`rank ${r} cannot be built from lower ranks`);
      parts = [...parts.slice(0, at), Buffer.concat([parts[at], parts[at + 1]]), ...parts.slice(at + 2)];
    }
    out.push([bytesToToken(parts[0]), bytesToToken(parts[1])]);
  }
  return out;
}

function tokenizerFileOf(encoding: string, preTokenizer: object): object {
  const file = require(`js-tiktoken/ranks/${encoding}`) as { bpe_ranks: string; special_tokens: Record<string, number> };
  const table = new RankTable(file.bpe_ranks);
  const vocab: Record<string, number> = {};
  for (let r = 0; r <= table.maxRank; r++) if (table.has(r)) vocab[bytesToToken(table.bytesOf(r))] = r;
  return {
    added_tokens: Object.entries(file.special_tokens).map(([content, id]) => ({ id, content, special: true })),
    normalizer: null,
    pre_tokenizer: preTokenizer,
    post_processor: null,
    decoder: { type: "ByteLevel" },
    model: { type: "BPE", vocab, merges: mergesOf(table) },
  };
}

function licenseParagraphs(): string[] {
  const dir = "/usr/share/common-licenses";
  return readdirSync(dir)
    .sort()
    .filter((f) => statSync(join(dir, f)).isFile())
    .flatMap((f) => readFileSync(join(dir, f), "utf8").split(/\n\s*\n/))
    .filter((p) => p.trim().length > 0);
}

describe("published encodings as tokenizer files", () => {
  const paras = licenseParagraphs();
  const sample = [...paras.filter((_, i) => i % 4 === 0), "naïve café — 東京 😀 ' s   \t\n\n  x"];

  it("gpt2 (ByteLevel pre-tokenizer): the reference's ids, in ours and in the reference library", () => {
    const json = tokenizerFileOf("gpt2", { type: "ByteLevel", add_prefix_space: false, trim_offsets: true, use_regex: true });
    const ours = tokenizerFromJson(json, "gpt2.json", "gpt2-file");
    const lib = new Tokenizer(json, {});
    const ref = get_encoding("gpt2");
    expect(ours.vocabSize).toBe(50257);
    let bad = 0;
    for (const t of sample) {
      const want = Array.from(ref.encode_ordinary(t));
      if (JSON.stringify(ours.encode(t)) !== JSON.stringify(want)) bad++;
      if (JSON.stringify(lib.encode(t, { add_special_tokens: false }).ids) !== JSON.stringify(want)) bad++;
    }
    ref.free();
    expect(sample.length).toBeGreaterThan(100);
    expect(bad).toBe(0);
  }, 60_000);

  it("cl100k_base (Split with its pattern, then ByteLevel without regex): the reference's ids", () => {
    const json = tokenizerFileOf("cl100k_base", {
      type: "Sequence",
      pretokenizers: [
        { type: "Split", pattern: { Regex: CL100K_PATTERN }, behavior: "Isolated", invert: false },
        { type: "ByteLevel", add_prefix_space: false, trim_offsets: true, use_regex: false },
      ],
    });
    const ours = tokenizerFromJson(json, "cl100k.json", "cl100k-file");
    const ref = get_encoding("cl100k_base");
    let bad = 0;
    for (const t of sample) if (JSON.stringify(ours.encode(t)) !== JSON.stringify(Array.from(ref.encode_ordinary(t)))) bad++;
    ref.free();
    expect(bad).toBe(0);
  }, 60_000);
});
