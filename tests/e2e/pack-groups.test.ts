// Packing groups: the demo's input files packed in several groups (pack.group_mb small), built by
// `siftpack run` and as a 3-task plan, must give the same bytes; shards are numbered by group, the
// ledger's gzip members read as one stream (in Python too), and a shuffled split lists its shards
// in a seeded order while a held-out split keeps group order.
import { describe, expect, it, beforeAll } from "vitest";
import { readFileSync } from "node:fs";
import { gunzipSync } from "node:zlib";
import { join } from "node:path";
import { demoCopy, demoPipelineWith, outputFiles, python, siftpack } from "./cli.js";

/** A copy of the demo pipeline with small packing groups (and `tasks` per phase). */
const pipelineWith = (dir: string, name: string, tasks: number) =>
  demoPipelineWith(dir, name, tasks, (base) => {
    base.stages.find((s: Record<string, unknown>) => "pack" in s).pack.group_mb = 0.03;
  });

describe("packing groups", () => {
  let dir: string;
  let manifest: any;
  beforeAll(() => {
    dir = demoCopy();
    const r = siftpack(["run", pipelineWith(dir, "local", 1), "--quiet"], { cwd: dir });
    expect(r.code, r.stderr).toBe(0);
    manifest = JSON.parse(readFileSync(join(dir, "build/local/manifest.json"), "utf8"));
  }, 120_000);

  it("packs in several groups, shards numbered by group", () => {
    const groups = new Set(manifest.files.filter((f: { path: string }) => f.path.endsWith(".tokens.npy")).map((f: { path: string }) => f.path.split("/")[1].split("-")[0]));
    expect(groups.size).toBeGreaterThan(2);
    // Held-out documents are packed once each: the split's documents equal the ledger's kept records of it.
    for (const split of ["val", "test"]) expect(manifest.splits[split].documents).toBe(manifest.records.by_split[split]);
    // The blocks of every split are the sum of its shards'.
    for (const s of Object.values(manifest.splits) as { blocks: number; shards: { blocks: number }[] }[]) expect(s.shards.reduce((a, x) => a + x.blocks, 0)).toBe(s.blocks);
  });

  it("joins the groups' ledgers into one gzip stream that Node and Python read whole, in input order", () => {
    const lines = gunzipSync(readFileSync(join(dir, "build/local/ledger.jsonl.gz"))).toString("utf8").trim().split("\n");
    expect(lines).toHaveLength(manifest.records.read);
    // Python's gzip module reads concatenated members as one file (RFC 1952, 2.2).
    expect(Number(python("import gzip, sys\nprint(sum(1 for _ in gzip.open(sys.argv[1], 'rt')))", [join(dir, "build/local/ledger.jsonl.gz")]).trim())).toBe(lines.length);
  });

  it("lists a shuffled split's shards in a seeded order across groups, and a held-out split's in group order", () => {
    const order = (split: string) => manifest.splits[split].shards.map((s: { tokens: string }) => s.tokens);
    const train = order("train");
    expect([...train].sort()).not.toEqual(train);
    const val = order("val");
    expect([...val].sort()).toEqual(val);
  });

  it("a group's shard failing to be written (while one task packs the next group) fails the build in one line; the next run gives the same bytes", () => {
    // One task packs every group; the first file written is group 0's first shard, at the group's end.
    const file = pipelineWith(dir, "failed", 1);
    const failed = siftpack(["run", file, "--workers", "1", "--no-cache", "--quiet"], { cwd: dir, env: { SIFTPACK_CRASH_AT: "write:1:throw" } });
    expect(failed.code).toBe(1);
    expect(failed.stderr.trim().split("\n")).toEqual(["siftpack: internal error: injected failure at write:1 (set SIFTPACK_DEBUG=1 for the stack; please report it)"]);
    const again = siftpack(["run", file, "--workers", "1", "--quiet"], { cwd: dir });
    expect(again.code, again.stderr).toBe(0);
    const local = outputFiles(join(dir, "build/local"));
    const built = outputFiles(join(dir, "build/failed"));
    expect(Object.keys(built).sort()).toEqual(Object.keys(local).sort());
    for (const f of Object.keys(local)) expect(built[f], f).toBe(local[f]);
  }, 120_000);

  it("a 3-task plan as separate processes gives the same bytes", () => {
    const file = pipelineWith(dir, "t3", 3);
    const plan = JSON.parse(siftpack(["plan", file, "--tasks", "--json"], { cwd: dir }).stdout);
    expect(plan.phases.find((p: { name: string }) => p.name === "pack").tasks).toBe(3);
    for (const ph of plan.phases)
      for (let i = 0; i < ph.tasks; i++) {
        const r = siftpack(["task", file, "--phase", ph.name, "--index", String(i), "--workers", "1", "--quiet"], { cwd: dir });
        expect(r.code, `${ph.name} ${i}: ${r.stderr}`).toBe(0);
      }
    const local = outputFiles(join(dir, "build/local"));
    const built = outputFiles(join(dir, "build/t3"));
    expect(Object.keys(built).sort()).toEqual(Object.keys(local).sort());
    for (const f of Object.keys(local)) expect(built[f], f).toBe(local[f]);
  }, 300_000);
});
