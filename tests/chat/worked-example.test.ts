// Two short conversations packed into one block of 16, every array written out by hand.
import { describe, expect, it } from "vitest";
import { conversation, packConversations, template } from "./helpers.js";
import { options } from "../pack/rows.js";

// One token per character (id = its code); <|ask|> = 1, <|answer|> = 2, <|endoftext|> = 0 (also padding).
const T = template({
  roles: { tech: { before: "[[<|ask|>]]" }, desk: { before: "[[<|answer|>]]", after: "[[<|endoftext|>]]" } },
  train_on: ["desk"],
});

// A: tech "hi", desk "yo"   → <ask> h i <answer> y o <eos>          (7 tokens; trained: y o <eos>)
// B: tech "ok", desk "sure" → <ask> o k <answer> s u r e <eos>      (9 tokens; trained: s u r e <eos>)
const A = conversation([["tech", "hi"], ["desk", "yo"]]);
const B = conversation([["tech", "ok"], ["desk", "sure"]]);

describe("worked example: two conversations, length 16, best-fit", () => {
  it("B (longest) opens the block, A fills the 7 left; only the desk's text and closing marker are targets", () => {
    const { rows } = packConversations(T, [A, B], options({ length: 16, strategy: "best-fit", shuffle: false }));
    expect(rows).toHaveLength(1);
    const [r] = rows;
    //                 <ask> h    i    <ans> y    o    <eos> | <ask> o    k    <ans> s    u    r    e    <eos>
    expect(r.tokens).toEqual([1, 104, 105, 2, 121, 111, 0, /**/ 1, 111, 107, 2, 115, 117, 114, 101, 0]);
    expect(r.segments).toEqual([1, 1, 1, 1, 1, 1, 1, /**/ 2, 2, 2, 2, 2, 2, 2, 2, 2]);
    expect(r.positions).toEqual([0, 1, 2, 3, 4, 5, 6, /**/ 0, 1, 2, 3, 4, 5, 6, 7, 8]);
    // The segment rule alone would give 1 everywhere but 0 and 7; the role rule keeps the desk's tokens.
    expect(r.target).toEqual([0, 0, 0, 0, 1, 1, 1, /**/ 0, 0, 0, 0, 1, 1, 1, 1, 1]);
    expect(r.pieces).toEqual([
      { doc: 0, offset: 0 },
      { doc: 1, offset: 0 },
    ]);
  });

  it("single: one conversation per block, the same targets, padding never a target", () => {
    const { rows } = packConversations(T, [A, B], options({ length: 16, strategy: "single", shuffle: false }));
    expect(rows.map((r) => r.target)).toEqual([
      [0, 0, 0, 0, 1, 1, 1, 0, 0, 0, 0, 0, 0, 0, 0, 0],
      [0, 0, 0, 0, 1, 1, 1, 1, 1, 0, 0, 0, 0, 0, 0, 0],
    ]);
    expect(rows[0].segments).toEqual([1, 1, 1, 1, 1, 1, 1, 0, 0, 0, 0, 0, 0, 0, 0, 0]);
  });

  it("a conversation longer than the block is cut at a turn edge, never inside a turn", () => {
    // C: A's two turns twice → 14 tokens; in blocks of 8 it is cut where its second question starts.
    const C = conversation([["tech", "hi"], ["desk", "yo"], ["tech", "hi"], ["desk", "yo"]]);
    const { rows } = packConversations(T, [C], options({ length: 8, strategy: "best-fit", shuffle: false }));
    expect(rows.map((r) => r.tokens)).toEqual([
      [1, 104, 105, 2, 121, 111, 0, 0],
      [1, 104, 105, 2, 121, 111, 0, 0],
    ]);
    expect(rows.map((r) => r.pieces)).toEqual([[{ doc: 0, offset: 0 }], [{ doc: 0, offset: 7 }]]);
    expect(rows.map((r) => r.target)).toEqual([
      [0, 0, 0, 0, 1, 1, 1, 0],
      [0, 0, 0, 0, 1, 1, 1, 0],
    ]);
  });

  it("a cut prefers the start of a question, so an answer stays in the block of the question it answers", () => {
    // D: tech "hi", desk "yo", tech "hi", desk "yo", desk "ok" → 18 tokens; its turns start at 3, 7, 10 and 14.
    // The last edge within 16 tokens is 14, which would leave the last answer alone; 7 starts a question.
    const D = conversation([["tech", "hi"], ["desk", "yo"], ["tech", "hi"], ["desk", "yo"], ["desk", "ok"]]);
    const { rows } = packConversations(T, [D], options({ length: 16, strategy: "single", shuffle: false }));
    expect(rows.map((r) => r.pieces)).toEqual([[{ doc: 0, offset: 0 }], [{ doc: 0, offset: 7 }]]);
    expect(rows[1].tokens.slice(0, 11)).toEqual([1, 104, 105, 2, 121, 111, 0, 2, 111, 107, 0]);
    expect(rows[1].target.slice(0, 11)).toEqual([0, 0, 0, 0, 1, 1, 1, 0, 1, 1, 1]);
  });
});
