// A tokenizer trained by siftpack, saved as tokenizer.json, gives the same ids in a general-purpose tokenizer library.
//
// Reference library: @huggingface/tokenizers (Tokenizers.js, a pure JavaScript implementation of
// the JSON tokenizer-file format), loaded from its CommonJS build because its package lists an ES
// module file it does not ship.

import { readFileSync, readdirSync, statSync } from "node:fs";
import { createRequire } from "node:module";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { PretokenCounter, tokenizerFromJson, tokenizerJson, trainBpe } from "../../src/tokenizer/index.js";

interface RefTokenizer {
  encode(text: string, options: { add_special_tokens: boolean }): { ids: number[] };
  decode(ids: number[]): string;
}
const { Tokenizer } = createRequire(import.meta.url)("@huggingface/tokenizers") as { Tokenizer: new (json: object, config: object) => RefTokenizer };

const LICENSES = "/usr/share/common-licenses";

function paragraphs(): string[] {
  const out: string[] = [];
  for (const f of readdirSync(LICENSES).sort()) {
    const p = join(LICENSES, f);
    if (!statSync(p).isFile()) continue;
    for (const para of readFileSync(p, "utf8").split(/\n\s*\n/)) if (para.trim().length > 0) out.push(para);
  }
  return out;
}

describe("trained tokenizer in the reference library", () => {
  const paras = paragraphs();
  // Train on the even paragraphs, compare on all: odd ones hold words the vocabulary never saw.
  const counter = new PretokenCounter();
  paras.forEach((p, i) => (i % 2 === 0 ? counter.add(p) : undefined));
  const model = trainBpe(counter.counts, { vocabSize: 2000, minFrequency: 2, specialTokens: ["<|endoftext|>"] });
  const json = tokenizerJson(model);
  const ours = tokenizerFromJson(JSON.parse(json), "trained", "trained");
  const ref = new Tokenizer(JSON.parse(json), {});

  it("has the requested size and the eos id first", () => {
    expect(paras.length).toBeGreaterThan(500);
    expect(ours.vocabSize).toBe(2000);
    expect(ours.eosId).toBe(0);
  });

  it("gives the library's ids on every paragraph of the license texts, and decodes back", () => {
    let mismatches = 0;
    let tokens = 0;
    let bytes = 0;
    for (const p of paras) {
      const a = ours.encode(p);
      const b = ref.encode(p, { add_special_tokens: false }).ids;
      if (JSON.stringify(a) !== JSON.stringify(b)) mismatches++;
      expect(ours.decode(a)).toBe(p);
      tokens += a.length;
      bytes += Buffer.byteLength(p);
    }
    expect(mismatches).toBe(0);
    // A 2000-id vocabulary trained on half this English text compresses it well beyond bytes.
    expect(bytes / tokens).toBeGreaterThan(3);
  });
});
