// decontaminate: planted protected passages are found in long training documents; 12 shared words are not.
import { beforeAll, describe, expect, it } from "vitest";
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import decontaminate, { decontaminateOptions } from "../../src/stages/decontaminate.js";
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

const PASSAGE_A =
  "When a wheel locks under braking and slides along the rail, the small patch of steel in contact heats and cools so quickly that it hardens into a flat spot on the tread.";
const PASSAGE_B = "Planners know that dwell times at busy stops stretch in wet weather, and that one late car soon gathers a queue of others behind it.";
const wordsA = PASSAGE_A.replace(/[,.]/g, "").split(" ");
const wordsB = PASSAGE_B.replace(/[,.]/g, "").split(" ");

/** A long document of filler words (none of them in the passages) with `planted` inserted in the middle. */
function longDoc(planted: string): string {
  const filler = ["ticket", "closed", "depot", "shunter", "logged", "inspection", "overhead", "isolation", "yard", "crew"];
  const words = Array.from({ length: 2000 }, (_, i) => filler[(i * 7 + (i >> 3)) % filler.length]);
  return [...words.slice(0, 1000), planted, ...words.slice(1000)].join(" ");
}

let base: string;
beforeAll(() => {
  base = mkdtempSync(join(tmpdir(), "siftpack-decon-"));
  mkdirSync(join(base, "protected"));
  // Two passages separated by a blank line (with trailing spaces, still blank), and a short third one.
  writeFileSync(join(base, "protected", "eval.txt"), `${PASSAGE_A}\n   \n${PASSAGE_B}\n\nToo short to match.\n`);
});

interface Run {
  out: DocRecord[];
  drops: { id: string; reason: string; detail: any }[];
  counts: Record<string, number>;
  files: string[];
  warnings: any[];
  workDir: string;
}

async function runStage(records: DocRecord[], options: Record<string, unknown>): Promise<Run> {
  const issues: any[] = [];
  const o = decontaminateOptions.check(options, [], issues);
  expect(issues).toEqual([]);
  const workDir = mkdtempSync(join(tmpdir(), "siftpack-decon-work-"));
  const run: Run = { out: [], drops: [], counts: {}, files: [], warnings: [], workDir };
  const ctx: StageContext = {
    seed: 0,
    drop: (r, reason, detail) => run.drops.push({ id: r.id, reason, detail }),
    log: { info() {}, debug() {}, error() {}, warn: (obj: any) => run.warnings.push(obj) },
    workDir,
    addOutputFile: (f) => run.files.push(f),
    count: (name, n = 1) => (run.counts[name] = (run.counts[name] ?? 0) + n),
  };
  async function* from() {
    yield* records;
  }
  const stage = await decontaminate.create(o, { baseDir: base });
  for await (const r of stage(from(), ctx)) run.out.push(r);
  return run;
}

const rec = (id: string, text: string, split?: string): DocRecord => ({ id, source: "tickets", text, meta: {}, origin: { file: "t.jsonl", line: 1 }, seq: 0, ...(split ? { split } : {}) });

describe("decontaminate", () => {
  it("drops a long training document holding 13 words of a protected passage, whatever their case and punctuation", async () => {
    const planted = "WHEN a Wheel locks — under braking, and slides along the rail; the SMALL";
    const run = await runStage([rec("long", longDoc(planted), "train"), rec("clean", longDoc(""), "train")], { against: "protected/*.txt" });
    expect(run.out.map((r) => r.id)).toEqual(["clean"]);
    expect(run.drops).toEqual([{ id: "long", reason: "decontaminated", detail: { ngram: wordsA.slice(0, 13).join(" ").toLowerCase(), file: "protected/eval.txt" } }]);
  });

  it("keeps a document sharing only 12 consecutive words, or 13 that run across two passages", async () => {
    const twelve = wordsA.slice(5, 17).join(" ");
    const across = [...wordsA.slice(-6), ...wordsB.slice(0, 7)].join(" ");
    const run = await runStage([rec("twelve", longDoc(twelve), "train"), rec("across", longDoc(across), "train")], { against: ["protected/eval.txt"] });
    expect(run.drops).toEqual([]);
    expect(run.out.map((r) => r.id)).toEqual(["twelve", "across"]);
    // The same 12 words and the protected 13th are found: the boundary is exactly at n = 13.
    const thirteen = wordsA.slice(5, 18).join(" ");
    expect((await runStage([rec("thirteen", longDoc(thirteen))], { against: ["protected/eval.txt"] })).drops).toHaveLength(1);
  });

  it("checks training records only (split train or unset); held-out records pass untouched", async () => {
    const text = longDoc(PASSAGE_B);
    const run = await runStage([rec("v", text, "val"), rec("t", text, "test"), rec("u", text), rec("tr", text, "train")], { against: "protected/eval.txt" });
    expect(run.out.map((r) => r.id)).toEqual(["v", "t"]);
    expect(run.drops.map((d) => d.id)).toEqual(["u", "tr"]);
    expect(run.counts).toEqual({ "decontaminate:checked": 2 });
  });

  it("with action mark keeps the record, tags it, counts it and lists it in decontaminate.json", async () => {
    const run = await runStage([rec("m", longDoc(PASSAGE_A), "train"), rec("ok", "nothing to see here", "train")], { against: "protected/eval.txt", action: "mark" });
    expect(run.drops).toEqual([]);
    expect(run.out[0].meta.contaminated).toEqual({ ngram: wordsA.slice(0, 13).join(" ").toLowerCase(), file: "protected/eval.txt" });
    expect(run.out[1].meta.contaminated).toBeUndefined();
    expect(run.counts["decontaminate:marked"]).toBe(1);
    expect(run.files).toEqual(["decontaminate.json"]);
    const report = JSON.parse(readFileSync(join(run.workDir, "decontaminate.json"), "utf8"));
    expect(report).toMatchObject({ ngram: 13, action: "mark", checked: 2, matches: [{ source: "tickets", id: "m", file: "protected/eval.txt" }] });
    expect(report.files).toEqual([expect.objectContaining({ path: "protected/eval.txt", passages: 3, short_passages: 1, ngrams: wordsA.length - 12 + wordsB.length - 12 })]);
    // The short third passage cannot be matched, and the log says so.
    expect(run.warnings).toEqual([expect.objectContaining({ file: "protected/eval.txt", short_passages: 1 })]);
  });

  it("names a pattern that matches nothing", async () => {
    const o = decontaminateOptions.check({ against: ["protected/*.txt", "missing/*.txt"] }, [], []);
    await expect(decontaminate.create(o, { baseDir: base })).rejects.toThrow(`decontaminate: no file matches "missing/*.txt" (relative to ${base})`);
  });

  it("validates its options with the pipeline file's messages", () => {
    const issues: any[] = [];
    decontaminateOptions.check({ against: [], ngram: 0, action: "remove", form: "NFKC" }, ["stages", 4, "decontaminate"], issues);
    expect(issues.map((i) => `${i.path.join(".")}: ${i.message}`)).toMatchInlineSnapshot(`
      [
        "stages.4.decontaminate.against: expected a non-empty list",
        "stages.4.decontaminate.ngram: expected an integer from 1 to 64, got number 0",
        "stages.4.decontaminate.action: expected one of drop | mark, got "remove"",
      ]
    `);
    const filled = decontaminateOptions.check({ against: "p.txt" }, [], []);
    expect(filled).toEqual({ against: ["p.txt"], ngram: 13, action: "drop", form: "NFKC" });
  });

  it("per file with gather (a build's task plan) writes the report of one stream", async () => {
    const planted = wordsB.slice(2, 16).join(" ");
    const rs = [rec("a", longDoc(planted), "train"), rec("b", longDoc(""), "train"), rec("c", longDoc(planted), "val"), rec("d", longDoc(wordsA.slice(0, 14).join(" ")))];
    for (const action of ["drop", "mark"]) {
      const whole = await runStage(rs.map((r) => ({ ...r, meta: {} })), { against: "protected/*.txt", action });
      const o = decontaminateOptions.check({ against: "protected/*.txt", action }, [], []);
      const workDir = mkdtempSync(join(tmpdir(), "siftpack-decon-files-"));
      const summaries: unknown[] = [];
      const files: string[] = [];
      const counts: Record<string, number> = {};
      const count = (name: string, n = 1) => (counts[name] = (counts[name] ?? 0) + n);
      const log = { info() {}, debug() {}, error() {}, warn() {} };
      const stage = await decontaminate.create(o, { baseDir: base, perFile: true });
      // Three files: [a], [b, c], [d].
      for (const file of [rs.slice(0, 1), rs.slice(1, 3), rs.slice(3)]) {
        async function* from() {
          yield* file.map((r) => ({ ...r, meta: {} }));
        }
        const ctx: StageContext = { seed: 0, drop() {}, log, workDir, addOutputFile: (f) => files.push(f), count, summarize: (v) => summaries.push(v) };
        for await (const _ of stage(from(), ctx));
      }
      expect(files).toEqual([]);
      await gatherOf(decontaminate, o)(summaries, o, { seed: 0, baseDir: base, log, count, workDir, addOutputFile: (f) => files.push(f) });
      expect(files).toEqual(whole.files);
      expect(counts).toEqual(whole.counts);
      expect(readFileSync(join(workDir, files[0]), "utf8")).toBe(readFileSync(join(whole.workDir, whole.files[0]), "utf8"));
      expect(JSON.parse(readFileSync(join(workDir, files[0]), "utf8")).matches.map((m: { id: string }) => m.id)).toEqual(["a", "d"]);
    }
  });
});
