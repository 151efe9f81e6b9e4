// concat packing: a hand-computed example and property tests of the invariants trainers rely on.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { ConcatPacker } from "../../src/stages/pack.js";
import { cuSeqlensOf, positionsOf, targetMaskOf } from "../../src/output/shard-writer.js";

function pack(docs: number[][], length: number, pad = 0) {
  const rows: { tokens: number[]; segments: number[] }[] = [];
  const p = new ConcatPacker(length, pad, (t, s) => rows.push({ tokens: [...t], segments: [...s] }));
  for (const d of docs) p.add(Uint32Array.from(d));
  p.finish();
  return { rows, packer: p };
}

describe("concat packer", () => {
  it("packs three short documents into rows of 8 (worked example)", () => {
    // Documents (EOS = 9 already appended): A = 1 2 9, B = 3 4 5 6 9, C = 7 8 9 9 9 9.
    const { rows, packer } = pack([[1, 2, 9], [3, 4, 5, 6, 9], [7, 8, 9, 9, 9, 9]], 8, 0);
    expect(rows).toEqual([
      { tokens: [1, 2, 9, 3, 4, 5, 6, 9], segments: [1, 1, 1, 2, 2, 2, 2, 2] },
      { tokens: [7, 8, 9, 9, 9, 9, 0, 0], segments: [1, 1, 1, 1, 1, 1, 0, 0] },
    ]);
    expect(packer.documents).toBe(3);
    expect(packer.cutDocuments).toBe(0);
    const seg = Uint32Array.from(rows.flatMap((r) => r.segments));
    expect([...positionsOf(seg, 8)]).toEqual([0, 1, 2, 0, 1, 2, 3, 4, 0, 1, 2, 3, 4, 5, 0, 0]);
    expect([...targetMaskOf(seg, 8)]).toEqual([0, 1, 1, 0, 1, 1, 1, 1, 0, 1, 1, 1, 1, 1, 0, 0]);
    const cu = cuSeqlensOf(seg, 8);
    expect([...cu.lens]).toEqual([0, 3, 8, 0, 6]);
    expect([...cu.offsets]).toEqual([0, 3, 5]);
  });

  it("continues a long document in the next row as segment 1", () => {
    const { rows, packer } = pack([[1, 2, 3], [4, 5, 6, 7, 8, 9, 10]], 4, 0);
    expect(rows.map((r) => r.segments)).toEqual([[1, 1, 1, 2], [1, 1, 1, 1], [1, 1, 0, 0]]);
    expect(rows.map((r) => r.tokens)).toEqual([[1, 2, 3, 4], [5, 6, 7, 8], [9, 10, 0, 0]]);
    expect(packer.cutDocuments).toBe(1);
  });

  it("keeps every token once, in order; masks agree with causal ∧ same-document", () => {
    fc.assert(
      fc.property(fc.array(fc.integer({ min: 1, max: 40 }), { minLength: 0, maxLength: 30 }), fc.integer({ min: 2, max: 33 }), (lens, L) => {
        let next = 1;
        const docs = lens.map((n) => Array.from({ length: n }, () => next++));
        const { rows } = pack(docs, L, 0);
        const flat = rows.flatMap((r) => r.tokens.filter((_, i) => r.segments[i] !== 0));
        expect(flat).toEqual(docs.flat());
        // Only the last row may have padding, and only at its end.
        rows.forEach((r, k) => {
          const firstPad = r.segments.indexOf(0);
          if (firstPad >= 0) {
            expect(k).toBe(rows.length - 1);
            expect(r.segments.slice(firstPad).every((s) => s === 0)).toBe(true);
          }
        });
        // Every row's segments are 1, 2, …, non-decreasing; a target never follows another document.
        for (const r of rows) {
          const seg = Uint32Array.from(r.segments);
          const target = targetMaskOf(seg, L);
          for (let i = 0; i < L; i++) {
            if (i > 0 && seg[i] !== 0) expect(seg[i] - seg[i - 1]).toBeGreaterThanOrEqual(0);
            if (target[i]) expect(seg[i - 1]).toBe(seg[i]);
            // dense mask rule: attend(i, j) iff j ≤ i and seg equal and non-zero
            for (let j = 0; j <= i; j++) {
              const attend = seg[i] !== 0 && seg[i] === seg[j];
              const sameDocContiguous = attend && seg.subarray(j, i + 1).every((s) => s === seg[i]);
              expect(attend).toBe(sameDocContiguous);
            }
          }
          const pos = positionsOf(seg, L);
          const cu = cuSeqlensOf(seg, L);
          const realLens = [...cu.lens].slice(1).map((v, k, a) => v - (k === 0 ? 0 : a[k - 1]));
          expect(realLens.reduce((a, b) => a + b, 0)).toBe(r.segments.filter((s) => s !== 0).length);
          for (let i = 0; i < L; i++) if (seg[i] !== 0 && (i === 0 || seg[i - 1] !== seg[i])) expect(pos[i]).toBe(0);
        }
      }),
      { numRuns: 200 },
    );
  });
});
