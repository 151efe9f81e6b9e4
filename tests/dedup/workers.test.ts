// Signing in worker threads gives the same result for any number of them (uses the compiled dist/: `npm test` builds first).
import { existsSync } from "node:fs";
import { fileURLToPath } from "node:url";
import { describe, expect, it } from "vitest";
import dedupSource from "../../src/stages/dedup.js";
import { generated, runStage, type DedupDefinition, type StageRun } from "./harness.js";

// Worker threads need compiled JavaScript (the .ts sources vitest runs cannot be loaded by a worker),
// so this test drives the stage built into dist/ by `npm run build`.
const compiled = new URL("../../dist/stages/dedup.js", import.meta.url);

const summary = (run: StageRun) => ({
  kept: run.kept.map((r) => r.id),
  drops: run.drops.map((d) => [d.record.id, d.reason, d.detail]),
  clusters: run.clusters,
});

describe("worker threads", () => {
  it("give identical drops and clusters for 1, 2 and 3 signing threads, and in-thread from the sources", async () => {
    if (!existsSync(fileURLToPath(compiled))) throw new Error("dist/stages/dedup.js is missing: run `npm run build` first (npm test does)");
    const def = (await import(compiled.href)).default as DedupDefinition;
    // Enough records for many batches (256 texts each), so that batches finish out of order.
    const { records } = generated(700, 2, 1, 5);
    const runs = [];
    for (const workers of [1, 2, 3]) {
      const run = await runStage(def, { method: "minhash", workers }, records);
      expect(run.debugged.find((l) => l.step === "sign").signing_threads).toBe(workers);
      runs.push(summary(run));
    }
    const inThread = summary(await runStage(dedupSource, { method: "minhash", workers: 4 }, records));
    expect(runs[0].drops.length).toBeGreaterThan(1000);
    expect(runs[1]).toEqual(runs[0]);
    expect(runs[2]).toEqual(runs[0]);
    expect(inThread).toEqual(runs[0]);
  });
});
