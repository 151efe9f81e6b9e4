// The split stage on record streams: stability when records are added, group integrity, clusters, min_docs.
import { beforeAll, describe, expect, it } from "vitest";
import fc from "fast-check";
import split, { splitOptions } from "../../src/stages/split.js";
import { loadHasher } from "../../src/lib/hash.js";
import type { DocRecord, StageContext } from "../../src/types.js";
import { formOf, type StageDefinition, type GatherContext } from "../../src/stages/stage.js";

/** The `gather` step of a stage of form `unit`. */
function gatherOf<O>(def: StageDefinition<O>, o: O): (summaries: unknown[], o: O, ctx: GatherContext) => void | Promise<void> {
  const f = formOf(def, o);
  if (f.kind !== "unit") throw new Error(`${def.name} is not of form unit`);
  return f.gather;
}

beforeAll(loadHasher);

interface Run {
  out: DocRecord[];
  warnings: { obj: any; msg?: string }[];
  counts: Record<string, number>;
}

/**
 * As a build's task plan runs it: one instance per input file (`cuts` are the files' first records),
 * each handing a summary to `gather`, which makes the whole-stream checks once.
 */
async function runSplitPerFile(records: DocRecord[], options: unknown, cuts: number[], seed = 7): Promise<Run> {
  const o = splitOptions.check(options, [], []);
  const warnings: Run["warnings"] = [];
  const counts: Record<string, number> = {};
  const summaries: unknown[] = [];
  const log = { info() {}, debug() {}, error() {}, warn: (obj: any, msg?: string) => warnings.push({ obj, msg }) };
  const count = (name: string, n = 1) => (counts[name] = (counts[name] ?? 0) + n);
  const stage = await split.create(o, { baseDir: ".", perFile: true });
  const bounds = [0, ...cuts.filter((c) => c > 0 && c < records.length).sort((a, b) => a - b), records.length];
  const out: DocRecord[] = [];
  for (let f = 0; f + 1 < bounds.length; f++) {
    async function* file() {
      yield* records.slice(bounds[f], bounds[f + 1]);
    }
    const ctx: StageContext = { seed, drop: () => {}, log, workDir: "/nonexistent", addOutputFile() {}, count, summarize: (v) => summaries.push(v) };
    for await (const r of stage(file(), ctx)) out.push(r);
  }
  await gatherOf(split, o)(summaries, o, { seed, baseDir: ".", log, count, workDir: "/nonexistent", addOutputFile() {} });
  return { out, warnings, counts };
}

async function runSplit(records: DocRecord[], options: unknown, seed = 7): Promise<Run> {
  const issues: any[] = [];
  const o = splitOptions.check(options, [], issues);
  expect(issues).toEqual([]);
  const warnings: Run["warnings"] = [];
  const counts: Record<string, number> = {};
  const ctx: StageContext = {
    seed,
    drop: () => {
      throw new Error("split drops nothing");
    },
    log: { info() {}, debug() {}, error() {}, warn: (obj: any, msg?: string) => warnings.push({ obj, msg }) },
    workDir: "/nonexistent",
    addOutputFile() {},
    count: (name, n = 1) => (counts[name] = (counts[name] ?? 0) + n),
  };
  async function* from() {
    yield* records;
  }
  const stage = await split.create(o, { baseDir: "." });
  const out: DocRecord[] = [];
  for await (const r of stage(from(), ctx)) out.push(r);
  return { out, warnings, counts };
}

const rec = (id: string, meta: Record<string, unknown> = {}, cluster?: string): DocRecord => ({
  id,
  source: "s",
  text: `text of ${id}`,
  meta,
  origin: { file: "f", line: 1 },
  seq: 0,
  ...(cluster ? { cluster } : {}),
});

/** Records with unique ids; some carry a depot, some a near-duplicate cluster. */
const records = (minLength: number) =>
  fc.uniqueArray(
    fc.record({ id: fc.string({ minLength: 1, maxLength: 8 }), depot: fc.option(fc.constantFrom("a", "b", "c", "d", "e", "f", "g", "h")), cluster: fc.option(fc.constantFrom("k1", "k2", "k3", "k4")) }),
    { selector: (r) => r.id, minLength, maxLength: 150 },
  ).map((rs) => rs.map((r) => rec(r.id, r.depot === null ? {} : { depot: r.depot }, r.cluster ?? undefined)));

const splitsOf = (run: Run) => new Map(run.out.map((r) => [r.id, r.split]));

describe("split stage", () => {
  it("stability: adding 10 % new records anywhere in the stream moves no old record to another split", async () => {
    await fc.assert(
      fc.asyncProperty(records(10), fc.constantFrom(undefined, "depot"), fc.integer({ min: 0, max: 2 ** 32 - 1 }), fc.infiniteStream(fc.nat()), async (old, by, seed, positions) => {
        const before = splitsOf(await runSplit(old, { by, holdout: { val: 0.2, test: 0.2 } }, seed));
        const extra = old.slice(0, Math.ceil(old.length / 10)).map((r, i) => rec(`${r.id}\u0001new${i}`, { depot: "new-" + (i % 3) }));
        const grown = old.map((r) => ({ ...r, split: undefined }));
        const pos = positions[Symbol.iterator]();
        for (const r of extra) grown.splice(pos.next().value % (grown.length + 1), 0, r);
        const after = splitsOf(await runSplit(grown, { by, holdout: { val: 0.2, test: 0.2 } }, seed));
        for (const [id, s] of before) expect(after.get(id)).toBe(s);
      }),
      { numRuns: 60 },
    );
  });

  it("assigns the same splits whatever the order of the stream", async () => {
    await fc.assert(
      fc.asyncProperty(records(1), fc.infiniteStream(fc.nat()), async (rs, rand) => {
        const a = splitsOf(await runSplit(rs, { by: "depot" }));
        const it = rand[Symbol.iterator]();
        const shuffled = rs.map((r) => ({ ...r, split: undefined })).sort(() => (it.next().value % 3) - 1);
        expect(splitsOf(await runSplit(shuffled, { by: "depot" }))).toEqual(a);
      }),
      { numRuns: 30 },
    );
  });

  it("group split: no by value appears in two splits, even when clusters span depots", async () => {
    await fc.assert(
      fc.asyncProperty(records(1), fc.integer({ min: 0, max: 1000 }), async (rs, seed) => {
        const run = await runSplit(rs, { by: "depot", holdout: { val: 0.3, test: 0.3 } }, seed);
        const splitOfDepot = new Map<unknown, string>();
        for (const r of run.out) {
          const d = r.meta.depot;
          if (d === undefined) continue;
          expect(splitOfDepot.get(d) ?? r.split).toBe(r.split);
          splitOfDepot.set(d, r.split!);
        }
        // A cluster found in two splits is counted and warned about, never silently.
        const clusterSplits = new Map<string, Set<string>>();
        for (const r of run.out) if (r.cluster) clusterSplits.set(r.cluster, (clusterSplits.get(r.cluster) ?? new Set()).add(r.split!));
        const across = [...clusterSplits.values()].filter((s) => s.size > 1).length;
        expect(run.counts["split:clusters-across-splits"] ?? 0).toBe(across);
        expect(run.warnings.length > 0).toBe(across > 0);
      }),
      { numRuns: 80 },
    );
  });

  it("keeps a marked cluster in one split when the records have no group value", async () => {
    const rs = Array.from({ length: 400 }, (_, i) => rec(`r${i}`, {}, i % 2 ? `cluster-${i % 40}` : undefined));
    const run = await runSplit(rs, { holdout: { val: 0.3, test: 0.3 } });
    const byCluster = new Map<string, Set<string>>();
    for (const r of run.out) if (r.cluster) byCluster.set(r.cluster, (byCluster.get(r.cluster) ?? new Set()).add(r.split!));
    expect(byCluster.size).toBe(20);
    for (const s of byCluster.values()) expect(s.size).toBe(1);
    // …while the clusters themselves land in different splits.
    expect(new Set([...byCluster.values()].map((s) => [...s][0])).size).toBeGreaterThan(1);
    expect(run.counts["split:clusters-across-splits"]).toBeUndefined();
  });

  it("min_docs: warns at the end of the stream and counts when a held-out split is smaller", async () => {
    const rs = Array.from({ length: 200 }, (_, i) => rec(`r${i}`));
    const run = await runSplit(rs, { holdout: { val: 0.05, test: 0 }, min_docs: 50 });
    const val = run.out.filter((r) => r.split === "val").length;
    expect(val).toBeGreaterThan(0);
    expect(val).toBeLessThan(50);
    expect(run.counts).toMatchObject({ "split:train": 200 - val, "split:val": val, "split:test": 0, "split:below-min-docs": 1 });
    // test has fraction 0: an empty test split is what was asked for, so only val is warned about.
    expect(run.warnings).toEqual([{ obj: expect.objectContaining({ split: "val", documents: val, min_docs: 50 }), msg: `held-out split "val" has fewer documents than min_docs` }]);
    const fine = await runSplit(rs, { holdout: { val: 0.05, test: 0 }, min_docs: val });
    expect(fine.warnings).toEqual([]);
    expect(fine.counts["split:below-min-docs"]).toBeUndefined();
  });

  it("rejects a negative or fractional min_docs", () => {
    const issues: any[] = [];
    splitOptions.check({ min_docs: -1 }, ["split"], issues);
    splitOptions.check({ min_docs: 1.5 }, ["split"], issues);
    expect(issues.map((i) => i.message)).toEqual(["expected an integer ≥ 0, got number -1", "expected an integer ≥ 0, got number 1.5"]);
  });

  it("per file with gather (a build's task plan) gives the splits, counts and warnings of one stream", async () => {
    await fc.assert(
      fc.asyncProperty(records(1), fc.constantFrom(undefined, "depot"), fc.array(fc.nat({ max: 150 }), { maxLength: 6 }), fc.integer({ min: 0, max: 1000 }), async (rs, by, cuts, seed) => {
        const options = { by, holdout: { val: 0.3, test: 0.2 }, min_docs: 20 };
        const whole = await runSplit(rs, options, seed);
        const perFile = await runSplitPerFile(rs, options, cuts, seed);
        expect(perFile.out.map((r) => r.split)).toEqual(whole.out.map((r) => r.split));
        expect(perFile.counts).toEqual(whole.counts);
        expect(perFile.warnings.map((w) => [w.msg, w.obj.split ?? w.obj.clusters])).toEqual(whole.warnings.map((w) => [w.msg, w.obj.split ?? w.obj.clusters]));
      }),
      { numRuns: 60 },
    );
  });
});
