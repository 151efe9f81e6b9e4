// BPE training: the merge order and tie rule on a hand-checked example, and byte-identical output for the same input.
import { describe, expect, it } from "vitest";
import { PretokenCounter, tokenizerFromJson, tokenizerJson, trainBpe } from "../../src/tokenizer/index.js";

const opts = { vocabSize: 1000, minFrequency: 2, specialTokens: ["<|endoftext|>"] };

function mergesOf(text: string, o = opts): string[] {
  const c = new PretokenCounter();
  c.add(text);
  const m = trainBpe(c.counts, o);
  const s = (id: number) => Buffer.from(m.tokens[id] as Uint8Array).toString("latin1");
  return m.merges.map(([a, b, r]) => `${s(a)}+${s(b)}=${s(r)}`);
}

describe("trainBpe", () => {
  it('"aaab aaab": most frequent pair first, ties to the smaller left bytes, stops below min_frequency', () => {
    // Pre-tokens "aaab" and " aaab". Counted by hand: (a,a) 4, (a,b) 2, ( ,a) 1 → merge aa.
    // Then (aa,a) 2 and (a,b) 2 tie; "a" < "aa" so a+b goes first. Then aa+ab (2); ( ,aaab) has 1 < 2.
    expect(mergesOf("aaab aaab")).toEqual(["a+a=aa", "a+b=ab", "aa+ab=aaab"]);
    expect(mergesOf("aaab aaab", { ...opts, minFrequency: 1 })).toEqual(["a+a=aa", "a+b=ab", "aa+ab=aaab", " +aaab= aaab"]);
  });

  it("breaks a tie of equal left tokens by the right token's bytes", () => {
    // "xb xa": pairs (x,b) 1, ( ,x) 1, (x,a) 1 → " " (0x20) < "x" first; then (x,a) before (x,b).
    expect(mergesOf("xb xa", { ...opts, minFrequency: 1 })).toEqual([" +x= x", " x+a= xa", "x+b=xb"]);
  });

  it("stops at vocab_size ids, special tokens first, then the 256 bytes", () => {
    const c = new PretokenCounter();
    c.add("the cat sat on the mat with the hat ".repeat(20));
    const m = trainBpe(c.counts, { vocabSize: 260, minFrequency: 1, specialTokens: ["<|endoftext|>", "<|pad|>"] });
    expect(m.tokens.length).toBe(260);
    expect(m.specialTokens).toEqual({ "<|endoftext|>": 0, "<|pad|>": 1 });
    expect(Array.from(m.tokens[2 + 0x61] as Uint8Array)).toEqual([0x61]);
    expect(m.merges.length).toBe(2);
  });

  it("gives a byte-identical tokenizer.json for the same input, whatever order the texts came in", () => {
    const texts = ["Packed blocks of tokens.", "Tokens are packed into blocks;", "blocks, tokens, packing", "packing tokens into blocks"];
    const run = (order: string[]) => {
      const c = new PretokenCounter();
      for (let k = 0; k < 5; k++) for (const t of order) c.add(t);
      return tokenizerJson(trainBpe(c.counts, { vocabSize: 300, minFrequency: 2, specialTokens: ["<|endoftext|>"] }));
    };
    const a = run(texts);
    expect(run(texts)).toBe(a);
    expect(run([...texts].reverse())).toBe(a);
    const enc = tokenizerFromJson(JSON.parse(a), "t", "t");
    expect(enc.decode(enc.encode("packing blocks"))).toBe("packing blocks");
    expect(enc.encode(" tokens").length).toBe(1);
  });
});
