// The dedup stage end to end on generated records: drops and ledger details, clusters.jsonl, keep rules, marking, spilling, short texts.
import { readFileSync, existsSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import dedup from "../../src/stages/dedup.js";
import split from "../../src/stages/split.js";
import { STAGES } from "../../src/stages/index.js";
import { loadHasher } from "../../src/lib/hash.js";
import { generated, leftovers, rec, resolve, runStage } from "./harness.js";

const MH = { method: "minhash", workers: 1 };
const corpus = generated(60, 2, 1); // 180 records: 60 families of 3, one word replaced per copy (J ≈ 0.85–0.95)

describe("minhash dedup stage", () => {
  it("keeps the first of each near-duplicate family, drops the rest with reason near-duplicate and the kept id", async () => {
    const run = await runStage(dedup, MH, corpus.records);
    const fam = (id: string) => corpus.family[corpus.records.findIndex((r) => r.id === id)];
    // Every family of three collapses to its first member in input order.
    const firstOf = new Map<number, string>();
    for (const r of corpus.records) if (!firstOf.has(fam(r.id))) firstOf.set(fam(r.id), r.id);
    expect(run.kept.map((r) => r.id)).toEqual([...firstOf.values()].sort((a, b) => Number(a.split(":")[1]) - Number(b.split(":")[1])).map(String));
    expect(run.drops).toHaveLength(120);
    expect(run.counts).toEqual({ "dedup:near-duplicate-clusters": 60, "dedup:near-duplicates-dropped": 120 });
    for (const d of run.drops) {
      expect(d.reason).toBe("near-duplicate");
      expect(d.detail!.of).toBe(firstOf.get(fam(d.record.id)));
      expect(d.detail!.of_source).toBe(corpus.records.find((r) => r.id === d.detail!.of)!.source);
      // Similarity to the kept record: clusters are joined transitively, so a member may be below the threshold to it.
      expect(d.detail!.similarity).toBeGreaterThan(0.5);
    }
    // Records pass through whole and in input order.
    const byId = new Map(corpus.records.map((r) => [r.id, r]));
    for (const r of run.kept) expect(r).toEqual(byId.get(r.id));
    expect(run.kept.map((r) => r.seq)).toEqual([...run.kept.map((r) => r.seq)].sort((a, b) => a - b));
    expect(leftovers(run)).toEqual([]);
  });

  it("writes clusters.jsonl: every cluster once, in order of its first member, members in input order, the kept one marked", async () => {
    const run = await runStage(dedup, MH, corpus.records);
    expect(run.files).toEqual(["clusters.jsonl"]);
    expect(run.clusters).toHaveLength(60);
    const order = (id: string) => corpus.records.findIndex((r) => r.id === id);
    const firsts = run.clusters.map((c) => order(c.members[0].id));
    expect(firsts).toEqual([...firsts].sort((a, b) => a - b));
    for (const c of run.clusters) {
      expect(c.size).toBe(3);
      expect(c.basis).toBe("minhash");
      const seqs = c.members.map((m: any) => order(m.id));
      expect(seqs).toEqual([...seqs].sort((a, b) => a - b));
      const kept = c.members.filter((m: any) => m.kept);
      expect(kept).toHaveLength(1);
      expect(kept[0]).toMatchObject({ id: c.kept.id, source: c.kept.source, similarity: 1 });
      expect(c.cluster).toBe(`${c.kept.source}/${c.kept.id}`);
      for (const m of c.members) expect(m.similarity).toBeGreaterThan(0.6);
    }
    // Deterministic: the same input gives the same bytes.
    const again = await runStage(dedup, MH, corpus.records);
    expect(readFileSync(join(again.workDir, "clusters.jsonl"), "utf8")).toBe(readFileSync(join(run.workDir, "clusters.jsonl"), "utf8"));
  });

  it("keeps the longest text, or the record of the first source in the priority list", async () => {
    const longest = await runStage(dedup, { ...MH, keep: "longest" }, corpus.records);
    for (const c of longest.clusters) {
      const len = (id: string) => corpus.records.find((r) => r.id === id)!.text.length;
      const max = Math.max(...c.members.map((m: any) => len(m.id)));
      const keptAt = c.members.findIndex((m: any) => m.kept);
      expect(len(c.kept.id)).toBe(max);
      // Ties go to the first in input order.
      expect(c.members.findIndex((m: any) => len(m.id) === max)).toBe(keptAt);
    }
    const prio = await runStage(dedup, { ...MH, keep: "source-priority", sources: ["manuals", "tickets"] }, corpus.records);
    for (const c of prio.clusters) {
      const hasManual = c.members.some((m: any) => m.source === "manuals");
      expect(c.kept.source).toBe(hasManual ? "manuals" : "tickets");
      const firstOfSource = c.members.find((m: any) => m.source === c.kept.source);
      expect(firstOfSource.id).toBe(c.kept.id);
    }
  });

  it("with action: mark keeps every record and tags each cluster's records, so split keeps a cluster in one split", async () => {
    const run = await runStage(dedup, { ...MH, action: "mark" }, corpus.records);
    expect(run.drops).toEqual([]);
    expect(run.kept).toHaveLength(corpus.records.length);
    const byCluster = new Map<string, number[]>();
    run.kept.forEach((r, i) => {
      expect(r.cluster).toBeDefined();
      byCluster.set(r.cluster!, [...(byCluster.get(r.cluster!) ?? []), corpus.family[i]]);
    });
    expect(byCluster.size).toBe(60);
    for (const families of byCluster.values()) expect(new Set(families).size).toBe(1);
    // Through the split stage: records of a cluster land in one split.
    await loadHasher();
    const splitter = await split.create(resolve(split as any, { holdout: { val: 0.3, test: 0.3 } }));
    const seen = new Map<string, string>();
    const quiet = () => undefined;
    const ctx = { seed: 7, drop: quiet, count: quiet, log: { info: quiet, warn: quiet, error: quiet, debug: quiet }, workDir: run.workDir, addOutputFile: quiet };
    async function* input() {
      yield* run.kept;
    }
    const splits = new Set<string>();
    for await (const r of splitter(input(), ctx as any)) {
      expect(seen.get(r.cluster!) ?? r.split).toBe(r.split);
      seen.set(r.cluster!, r.split!);
      splits.add(r.split!);
    }
    expect(splits.size).toBe(3);
  });

  it("gives the same result when bucket entries spill to disk under a 1 MB budget", async () => {
    // 6000 records: 84,000 bucket entries of 8 bytes, more than the half of a 1 MB budget the buckets get
    // (records and signatures always live in files).
    const big = generated(2000, 2, 1, 3);
    const inMemory = await runStage(dedup, MH, big.records);
    const spilled = await runStage(dedup, { ...MH, memory_mb: 1 }, big.records);
    expect(spilled.logged.find((l) => l.method === "minhash").spilled_bucket_runs).toBeGreaterThan(0);
    expect(inMemory.logged.find((l) => l.method === "minhash").spilled_bucket_runs).toBe(0);
    expect(spilled.kept).toEqual(inMemory.kept);
    expect(spilled.drops.map((d) => [d.record.id, d.detail])).toEqual(inMemory.drops.map((d) => [d.record.id, d.detail]));
    expect(spilled.clusters).toEqual(inMemory.clusters);
    expect(leftovers(spilled)).toEqual([]);
  });

  it("matches texts shorter than one shingle only to their exact duplicates, and lists them with basis exact", async () => {
    const long = "the door of car two does not close fully at the depot gate today";
    const records = [rec(0, "Door stuck."), rec(1, "door STUCK"), rec(2, "Door stuck again."), rec(3, long), rec(4, "Door stuck"), rec(5, "")];
    const run = await runStage(dedup, MH, records);
    expect(run.kept.map((r) => r.id)).toEqual(["s:0", "s:2", "s:3", "s:5"]);
    expect(run.drops.map((d) => [d.record.id, d.detail!.of, d.detail!.similarity])).toEqual([
      ["s:1", "s:0", 1],
      ["s:4", "s:0", 1],
    ]);
    expect(run.clusters).toEqual([
      {
        cluster: "s/s:0",
        size: 3,
        basis: "exact",
        kept: { source: "s", id: "s:0" },
        members: [
          { source: "s", id: "s:0", similarity: 1, kept: true },
          { source: "s", id: "s:1", similarity: 1 },
          { source: "s", id: "s:4", similarity: 1 },
        ],
      },
    ]);
  });

  it("confirms candidates by exact Jaccard when asked, and reports it", async () => {
    const run = await runStage(dedup, { ...MH, confirm: "exact" }, corpus.records);
    expect(run.drops).toHaveLength(120);
    for (const c of run.clusters) for (const m of c.members) expect(m.jaccard).toBeGreaterThanOrEqual(m.kept ? 1 : 0.5);
  });

  it("handles an empty input and names a second clusters file clusters-2.jsonl", async () => {
    const run = await runStage(dedup, MH, []);
    expect(run.kept).toEqual([]);
    expect(run.files).toEqual(["clusters.jsonl"]);
    expect(readFileSync(join(run.workDir, "clusters.jsonl"), "utf8")).toBe("");
    const second = await runStage(dedup, MH, corpus.records.slice(0, 9), 7, run.workDir);
    expect(second.files).toEqual(["clusters-2.jsonl"]);
    expect(existsSync(join(run.workDir, "clusters-2.jsonl"))).toBe(true);
  });

  it("leaves exact dedup as it was: same text dropped as duplicate of the first", async () => {
    await loadHasher();
    const run = await runStage(dedup, { method: "exact" }, [rec(0, "a b c"), rec(1, "a b c"), rec(2, "a b d")]);
    expect(run.kept.map((r) => r.id)).toEqual(["s:0", "s:2"]);
    expect(run.drops.map((d) => [d.record.id, d.reason, d.detail!.of])).toEqual([["s:1", "duplicate", "s:0"]]);
    expect(run.files).toEqual([]);
  });

  it("explains its banding for plan, and nothing for exact", () => {
    expect(STAGES.dedup.explain!(resolve(dedup, { method: "exact" }))).toEqual({});
    expect(STAGES.dedup.explain!(resolve(dedup, { method: "minhash" }))).toMatchObject({ steps: "collect per unit, buckets per partition, clusters once", bands: 14, rows: 9 });
    expect(STAGES.dedup.explain!(resolve(dedup, { method: "minhash", bands: 16 }))).toMatchObject({ bands: 16, rows: 8 });
  });
});
