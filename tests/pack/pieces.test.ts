// Property test: every strategy, shuffled or not, hands each row's document pieces to the sink in
// segment order, each naming the document it was given with (`add(doc, ref)`) and where in it the
// piece starts; this is what the origins index beside each shard is written from.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { createPacker, STRATEGIES } from "../../src/stages/pack.js";
import type { RowPiece } from "../../src/pack/packer.js";
import { segmentRuns } from "../../src/pack/segment-runs.js";
import { options } from "./rows.js";

const scenario = fc.record({
  lens: fc.array(fc.integer({ min: 0, max: 70 }), { maxLength: 40 }),
  length: fc.integer({ min: 2, max: 33 }),
  strategy: fc.constantFrom(...STRATEGIES),
  bufferDocs: fc.integer({ min: 1, max: 12 }),
  shuffle: fc.boolean(),
  window: fc.integer({ min: 1, max: 9 }),
  seed: fc.integer({ min: 0, max: 2 ** 32 - 1 }),
});

describe("row pieces", () => {
  it("name, for every segment of every row, its document and the offset of its first token", () => {
    fc.assert(
      fc.property(scenario, (s) => {
        const o = options({ length: s.length, strategy: s.strategy, ...(s.strategy === "best-fit" ? { buffer_docs: s.bufferDocs } : {}), shuffle: s.shuffle, shuffle_window: s.window });
        // Token ids unique across documents, so each token tells its document and position.
        let next = 1;
        const where = new Map<number, { doc: string; at: number }>();
        const docs = s.lens.map((n, d) => Uint32Array.from({ length: n }, (_, at) => (where.set(next, { doc: `doc-${d}`, at }), next++)));
        const rows: { tokens: number[]; segments: number[]; pieces: readonly RowPiece[] }[] = [];
        const p = createPacker(o, 0, (t, seg, pieces) => rows.push({ tokens: [...t], segments: [...seg], pieces }), { seed: s.seed, split: "train" });
        docs.forEach((d, i) => p.add(d, `doc-${i}`));
        p.finish();
        const covered = new Map<string, number>();
        for (const row of rows) {
          const runs = segmentRuns(row.segments).filter((r) => r.segment !== 0);
          expect(row.pieces.length).toBe(runs.length);
          runs.forEach((run, k) => {
            const first = where.get(row.tokens[run.start])!;
            expect(row.pieces[k]).toEqual({ doc: first.doc, offset: first.at });
            for (let i = run.start; i < run.end; i++) expect(where.get(row.tokens[i])).toEqual({ doc: first.doc, at: first.at + i - run.start });
            covered.set(first.doc, (covered.get(first.doc) ?? 0) + run.end - run.start);
          });
        }
        s.lens.forEach((n, d) => expect(covered.get(`doc-${d}`) ?? 0).toBe(n));
      }),
      { numRuns: 300 },
    );
  });
});
