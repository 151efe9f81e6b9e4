// The template: markers split into text and special tokens, checked against a tokenizer's specials,
// and a conversation whose text was changed without its turns refused rather than rendered wrongly.
import { describe, expect, it } from "vitest";
import { CompiledTemplate, markerParts, unknownSpecials } from "../../src/chat/template.js";
import { TokenBuffer, loadEncoding } from "../../src/tokenizer/index.js";
import { charEncoder, conversation, template } from "./helpers.js";

const T = template({
  begin: "[[<|ask|>]]",
  roles: { tech: { before: "Q: ", after: "\n" }, desk: { before: "A: ", after: "\n[[<|endoftext|>]]" } },
  train_on: "desk",
});

describe("template", () => {
  it("splits a marker into plain text and special-token names", () => {
    expect(markerParts("\n[[<|endoftext|>]]x[[y]]")).toEqual([{ text: "\n" }, { special: "<|endoftext|>" }, { text: "x" }, { special: "y" }]);
    expect(markerParts("")).toEqual([]);
  });

  it("names the special tokens a tokenizer does not have, at their place in the template", () => {
    expect(unknownSpecials(T, ["<|endoftext|>"], ["t"])).toEqual([{ path: ["t", "begin"], message: "[[<|ask|>]] is not a special token of the tokenizer (it has <|endoftext|>)" }]);
    expect(unknownSpecials(T, ["<|endoftext|>", "<|ask|>"], ["t"])).toEqual([]);
  });

  it("renders for people as the ids decode, and a special token's name in the text stays text", () => {
    const enc = loadEncoding("gpt2");
    const t = new CompiledTemplate(template({ roles: { tech: { before: "Q: " }, desk: { before: "\nA: ", after: "[[<|endoftext|>]]" } }, train_on: ["desk"] }));
    const c = conversation([["tech", "What is <|endoftext|>?"], ["desk", "A token."]]);
    const { tokens, layout } = t.encode(enc, c, false, false, new TokenBuffer());
    expect(enc.decode(tokens)).toBe(t.render(enc, c));
    expect(enc.decode(tokens)).toBe("Q: What is <|endoftext|>?\nA: A token.<|endoftext|>");
    // Only the closing marker is the special id: the question's spelling of it is ordinary text.
    expect([...tokens].filter((id) => id === enc.eosId)).toHaveLength(1);
    expect(enc.decode(tokens.subarray(layout[5], layout[6]))).toBe("A token.<|endoftext|>");
  });

  it("refuses a conversation whose text no longer matches its turns", () => {
    const c = { ...conversation([["tech", "hi"], ["desk", "yo"]]) };
    c.text = "hi\nyo!";
    expect(() => new CompiledTemplate(T).encode(charEncoder(), c, false, false, new TokenBuffer())).toThrow(/no longer matches its turns/);
  });
});
