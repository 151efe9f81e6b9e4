// Hand-computed rows, positions, target masks and cu_seqlens for each strategy on three short documents, length 8.
import { describe, expect, it } from "vitest";
import { cuSeqlensOf, positionsOf, targetMaskOf } from "../../src/output/shard-writer.js";
import { options, packAll, type Row } from "./rows.js";

// EOS = pad = 50. A has 5 tokens, B 6, C 3 (each ends in EOS); rows of 8.
const A = [11, 12, 13, 14, 50];
const B = [21, 22, 23, 24, 25, 50];
const C = [31, 32, 50];

function arrays(rows: Row[]) {
  const seg = Uint32Array.from(rows.flatMap((r) => r.segments));
  const cu = cuSeqlensOf(seg, 8);
  return { positions: [...positionsOf(seg, 8)], target: [...targetMaskOf(seg, 8)], cu_seqlens: [...cu.lens], cu_offsets: [...cu.offsets] };
}

describe("worked example: A(5) B(6) C(3), length 8", () => {
  it("concat: back to back, B is cut at the row edge and its first token in row 2 is not a target", () => {
    const { rows, stats } = packAll(options({ length: 8, strategy: "concat", shuffle: false }), [A, B, C], undefined, 50);
    expect(rows).toEqual([
      { tokens: [11, 12, 13, 14, 50, 21, 22, 23], segments: [1, 1, 1, 1, 1, 2, 2, 2] },
      { tokens: [24, 25, 50, 31, 32, 50, 50, 50], segments: [1, 1, 1, 2, 2, 2, 0, 0] },
    ]);
    expect(arrays(rows)).toEqual({
      positions: [0, 1, 2, 3, 4, 0, 1, 2, /**/ 0, 1, 2, 0, 1, 2, 0, 0],
      target: [0, 1, 1, 1, 1, 0, 1, 1, /**/ 0, 1, 1, 0, 1, 1, 0, 0],
      cu_seqlens: [0, 5, 8, /**/ 0, 3, 6],
      cu_offsets: [0, 3, 6],
    });
    // 14 real tokens in 4 pieces → 10 targets; 2 padding; B cut once: token 24 lost its target, 24 25 50 continue.
    expect(stats).toMatchObject({ documents: 3, cut_documents: 1, targets_lost_to_cuts: 1, continuation_tokens: 3 });
  });

  it("best-fit: B (longest) opens row 1, A opens row 2, C fits the 3 left in row 2 exactly; nothing is cut", () => {
    const { rows, stats } = packAll(options({ length: 8, strategy: "best-fit", shuffle: false }), [A, B, C], undefined, 50);
    expect(rows).toEqual([
      { tokens: [21, 22, 23, 24, 25, 50, 50, 50], segments: [1, 1, 1, 1, 1, 1, 0, 0] },
      { tokens: [11, 12, 13, 14, 50, 31, 32, 50], segments: [1, 1, 1, 1, 1, 2, 2, 2] },
    ]);
    expect(arrays(rows)).toEqual({
      positions: [0, 1, 2, 3, 4, 5, 0, 0, /**/ 0, 1, 2, 3, 4, 0, 1, 2],
      target: [0, 1, 1, 1, 1, 1, 0, 0, /**/ 0, 1, 1, 1, 1, 0, 1, 1],
      cu_seqlens: [0, 6, /**/ 0, 5, 8],
      cu_offsets: [0, 2, 5],
    });
    // Same 2 rows and 2 padding tokens as concat, but 11 targets instead of 10.
    expect(stats).toMatchObject({ documents: 3, cut_documents: 0, targets_lost_to_cuts: 0, continuation_tokens: 0 });
  });

  it("single: one document per row, padded", () => {
    const { rows, stats } = packAll(options({ length: 8, strategy: "single", shuffle: false }), [A, B, C], undefined, 50);
    expect(rows).toEqual([
      { tokens: [11, 12, 13, 14, 50, 50, 50, 50], segments: [1, 1, 1, 1, 1, 0, 0, 0] },
      { tokens: [21, 22, 23, 24, 25, 50, 50, 50], segments: [1, 1, 1, 1, 1, 1, 0, 0] },
      { tokens: [31, 32, 50, 50, 50, 50, 50, 50], segments: [1, 1, 1, 0, 0, 0, 0, 0] },
    ]);
    expect(arrays(rows)).toEqual({
      positions: [0, 1, 2, 3, 4, 0, 0, 0, /**/ 0, 1, 2, 3, 4, 5, 0, 0, /**/ 0, 1, 2, 0, 0, 0, 0, 0],
      target: [0, 1, 1, 1, 1, 0, 0, 0, /**/ 0, 1, 1, 1, 1, 1, 0, 0, /**/ 0, 1, 1, 0, 0, 0, 0, 0],
      cu_seqlens: [0, 5, /**/ 0, 6, /**/ 0, 3],
      cu_offsets: [0, 2, 4, 6],
    });
    expect(stats).toMatchObject({ documents: 3, cut_documents: 0, targets_lost_to_cuts: 0 });
  });

  it("best-fit cuts a document longer than the row into full chunks and packs the remainder like any document", () => {
    // D has 19 tokens: chunks of 8, 8 and 3. E (4 tokens) then joins the 3-token remainder's row.
    const D = Array.from({ length: 19 }, (_, i) => 100 + i);
    const E = [61, 62, 63, 50];
    const { rows, stats } = packAll(options({ length: 8, strategy: "best-fit", shuffle: false }), [D, E], undefined, 50);
    // Order by length: chunk 1 (8) → row 1, chunk 2 (8) → row 2, E (4) → row 3, remainder (3) → row 3 (free 4).
    expect(rows).toEqual([
      { tokens: [100, 101, 102, 103, 104, 105, 106, 107], segments: [1, 1, 1, 1, 1, 1, 1, 1] },
      { tokens: [108, 109, 110, 111, 112, 113, 114, 115], segments: [1, 1, 1, 1, 1, 1, 1, 1] },
      { tokens: [116, 117, 118, 61, 62, 63, 50, 50], segments: [1, 1, 1, 2, 2, 2, 2, 0] },
    ]);
    expect(stats).toMatchObject({ documents: 2, cut_documents: 1, targets_lost_to_cuts: 2, continuation_tokens: 11 });
    expect(stats.length_histogram).toEqual([
      { min: 4, max: 7, documents: 1 },
      { min: 8, max: 15, documents: 0 },
      { min: 16, max: 31, documents: 1 },
    ]);
  });

  it("best-fit breaks ties by the lowest row index: two rows with equal room, the earlier one gets the piece", () => {
    // P, Q (6 each) open rows 1 and 2, both with 2 free; R (2) goes to row 1, S (2) then to row 2.
    const P = [1, 1, 1, 1, 1, 50];
    const Q = [2, 2, 2, 2, 2, 50];
    const { rows } = packAll(options({ length: 8, strategy: "best-fit", shuffle: false }), [P, Q, [3, 50], [4, 50]], undefined, 50);
    expect(rows.map((r) => r.tokens)).toEqual([
      [1, 1, 1, 1, 1, 50, 3, 50],
      [2, 2, 2, 2, 2, 50, 4, 50],
    ]);
  });
});
