// Hashing on worker threads gives the same overlap figures for any number of them (uses the compiled dist/: `npm test` builds first).
import { existsSync } from "node:fs";
import { fileURLToPath } from "node:url";
import { beforeAll, describe, expect, it } from "vitest";
import { loadHasher } from "../../src/lib/hash.js";
import { overlapSteps } from "../../src/analysis/overlap-steps.js";
import type { AnalysisSteps } from "../../src/analysis/steps.js";
import type { DocRecord } from "../../src/types.js";
import { contextOf, runOnePass, runSteps } from "./steps-harness.js";

beforeAll(loadHasher);

// Worker threads need compiled JavaScript (the .ts sources vitest runs cannot be loaded by a worker),
// so this test drives the steps built into dist/ by `npm run build`.
const compiled = new URL("../../dist/analysis/overlap-steps.js", import.meta.url);

/** A seeded corpus of depot tickets: many batches of 256 texts, train and held-out interleaved, with copies and near copies. */
function corpus(n: number): DocRecord[] {
  let s = 4242;
  const next = () => (s = (Math.imul(s, 1103515245) + 12345) >>> 0) / 2 ** 32;
  const words = ["tram", "depot", "bogie", "brake", "sander", "door", "points", "wheel", "axle", "coupler", "horn", "cab", "shed", "replaced", "checked", "worn", "loose", "night", "fitter", "lamp"];
  const texts: string[] = [];
  return Array.from({ length: n }, (_, i) => {
    let text: string;
    const r = next();
    if (i > 0 && r < 0.15) text = texts[Math.floor(next() * i)];
    else if (i > 0 && r < 0.35) {
      const w = texts[Math.floor(next() * i)].split(" ");
      w[Math.floor(next() * w.length)] = words[Math.floor(next() * words.length)];
      text = w.join(" ");
    } else text = Array.from({ length: 4 + Math.floor(next() * 20) }, () => words[Math.floor(next() * words.length)]).join(" ");
    texts.push(text);
    const split = next() < 0.7 ? "train" : next() < 0.5 ? "val" : "test";
    return { id: `T-${i}`, source: "tickets", split, text, meta: {}, origin: { file: "t", line: i + 1 }, seq: i, tokens: Uint32Array.from(text.split(" "), (w) => words.indexOf(w)) };
  });
}

describe("worker threads", () => {
  it("give the one-pass figures for 1, 2 and 3 hashing threads, as in-thread from the sources does", async () => {
    if (!existsSync(fileURLToPath(compiled))) throw new Error("dist/analysis/overlap-steps.js is missing: run `npm run build` first (npm test does)");
    const built = (await import(compiled.href)).overlapSteps as AnalysisSteps;
    const ctx = contextOf({ seed: 5, ngram: 3, nearDuplicates: true, permutations: 64, threshold: 0.7, vocab: 260 });
    const records = corpus(1500);
    const want = (await runOnePass(ctx, records)).overlap;
    const cuts = [400, 1100];
    for (const threads of [1, 2, 3]) {
      const run = await runSteps(built, ctx, records, cuts, 3, { threads });
      expect(run.debugged.find((l) => l.step === "collect")?.hashing_threads).toBe(threads);
      expect(run.figures).toEqual(want);
    }
    expect((await runSteps(overlapSteps, ctx, records, cuts, 3, { threads: 3 })).figures).toEqual(want);
    // Something to find: copies and near copies between every pair of splits.
    const f = want as { pairs: { exact_duplicates: number; near_duplicate_pairs: number }[] };
    expect(f.pairs.every((p) => p.exact_duplicates > 0 && p.near_duplicate_pairs > 0)).toBe(true);
  });
});
