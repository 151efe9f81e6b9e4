// The stage on real text against brute force: exact Jaccard over all pairs of copyright-file paragraphs.
import { beforeAll, describe, expect, it } from "vitest";
import dedup from "../../src/stages/dedup.js";
import { Shingler, jaccard, shingleSet } from "../../src/dedup/shingles.js";
import { copyrightParagraphs } from "./copyright-corpus.js";
import { rec, runStage, type StageRun } from "./harness.js";

// Brute force: exact Jaccard of every pair of paragraphs over the same shingles the stage uses
// (word 5-grams, lower-cased), computed here, nothing stored.
const paras = copyrightParagraphs();
const records = paras.map((p, i) => rec(i, p.text, "copyright", p.name));
let run: StageRun;
let sets: Uint32Array[];

beforeAll(async () => {
  run = await runStage(dedup, { method: "minhash", workers: 1, bands: 2 }, records);
  const sh = new Shingler({ kind: "word", ngram: 5, lowercase: true }, 7);
  sets = paras.map((p) => shingleSet(sh, p.text));
});

describe("minhash dedup on /usr/share/doc/*/copyright paragraphs", () => {
  it("finds at least 95 % of the pairs at J ≥ 0.9 and removes nothing without a true neighbour at J ≥ 0.6", () => {
    const cluster = new Map<string, string>();
    for (const r of run.kept) cluster.set(r.id, r.id);
    for (const d of run.drops) {
      expect(d.reason).toBe("near-duplicate");
      cluster.set(d.record.id, d.detail!.of as string);
    }
    const dropped = new Set(run.drops.map((d) => d.record.id));
    const hasNeighbour = new Set<string>();
    let pairs = 0;
    let found = 0;
    let partial = 0;
    let partialFound = 0;
    for (let i = 0; i < sets.length; i++) {
      for (let j = i + 1; j < sets.length; j++) {
        const J = jaccard(sets[i], sets[j]);
        if (J >= 0.6) {
          hasNeighbour.add(records[i].id);
          hasNeighbour.add(records[j].id);
        }
        if (J < 0.9) continue;
        const same = cluster.get(records[i].id) === cluster.get(records[j].id);
        pairs++;
        if (same) found++;
        if (J < 1) {
          partial++;
          if (same) partialFound++;
        }
      }
    }
    const lonely = [...dropped].filter((id) => !hasNeighbour.has(id));
    console.log(
      `copyright paragraphs: ${records.length} records, ${run.drops.length} removed; pairs at J ≥ 0.9: ${pairs}, found ${found} (${((100 * found) / pairs).toFixed(2)} %); ` +
        `of them 0.9 ≤ J < 1: ${partial}, found ${partialFound} (${((100 * partialFound) / partial).toFixed(2)} %); removed without a neighbour at J ≥ 0.6: ${lonely.length}`,
    );
    expect(pairs).toBeGreaterThan(100);
    expect(partial).toBeGreaterThan(50);
    expect(found / pairs).toBeGreaterThanOrEqual(0.95);
    expect(partialFound / partial).toBeGreaterThanOrEqual(0.95);
    expect(lonely).toEqual([]);
  });
});
