// A JSONL file larger than pack.group_mb is packed in several groups, each an equal share of the
// file's rows: the bytes must not depend on how the file is cut into parts (cluster.unit_mb, whose
// cuts fall inside the groups), on the task count, nor on a local run's task threads; every row
// reaches the ledger once, in input order, and the counts of a decision applied while packing are
// those of packing the file in one group.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { mkdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { gunzipSync } from "node:zlib";
import { join } from "node:path";
import { outputFiles, siftpack, tempDir } from "./cli.js";

const LINES = 600;
const BAD_LINE = 333;

/** Invented tram-depot yard log lines, seeded; every 40th repeats an earlier one (exact duplicates), one line is cut off. */
function yardLog(): string {
  let s = 1234;
  const rnd = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
  const pick = <T>(a: readonly T[]) => a[Math.floor(rnd() * a.length)];
  const roads = ["road 1", "road 2", "road 4", "the wash road", "the lathe road", "the sanding siding"];
  const moves = ["stabled", "moved for cleaning", "held for the wheel lathe", "coupled to the shunter", "released to service", "parked with its pantograph down"];
  const notes = ["no faults found", "a door sensor to check", "graffiti on the cab end", "the saloon heater weak", "a flat spot on axle 2", "the horn quiet"];
  const texts: string[] = [];
  const lines: string[] = [];
  for (let n = 1; n <= LINES; n++) {
    const text = n % 40 === 0 ? texts[n - 21] : `Entry ${n}: car ${3100 + Math.floor(rnd() * 60)} ${pick(moves)} on ${pick(roads)}, ${pick(notes)}. ${pick(moves)} again after the ${pick(["early", "late", "night"])} shift.`;
    texts.push(text);
    lines.push(n === BAD_LINE ? `{"text": "Entry ${n}: car 3120 moved to ro` : JSON.stringify({ text, shift: `s${n % 11}` }));
  }
  return lines.join("\n") + "\n";
}

let dir: string;
let size: number;
beforeAll(() => {
  dir = tempDir("row-groups");
  mkdirSync(join(dir, "data"));
  writeFileSync(join(dir, "data/yard.jsonl"), yardLog());
  size = readFileSync(join(dir, "data/yard.jsonl")).length;
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Five groups' worth: group_mb is a fifth of the file. Dedup after tokenize: its decisions are applied as the pack phase reads. */
function pipeline(name: string, o: { groupMb: number; unitMb: number; tasks?: number }): string {
  mkdirSync(join(dir, name), { recursive: true });
  const file = join(dir, name, "p.yaml");
  writeFileSync(
    file,
    `siftpack: 1
seed: 3
sources: [{ name: yard, files: ../data/yard.jsonl, format: jsonl, meta: [shift] }]
stages:
  - normalize: {}
  - split: { by: shift, holdout: { val: 0.2 } }
  - tokenize: { encoding: gpt2 }
  - dedup: { method: exact }
  - pack: { length: 64, strategy: best-fit, group_mb: ${o.groupMb} }
output: { dir: out, shard_blocks: 40 }
cluster: { unit_mb: ${o.unitMb}, tasks: ${o.tasks ?? 8} }
`,
  );
  return file;
}

function build(name: string, o: { groupMb: number; unitMb: number; workers?: number; env?: Record<string, string> }) {
  const file = pipeline(name, o);
  const r = siftpack(["run", file, "--workers", String(o.workers ?? 1), "--no-cache", "--json", "--quiet"], { env: o.env });
  expect(r.code, r.stderr).toBe(0);
  const out = join(dir, name, "out");
  return { out, manifest: JSON.parse(readFileSync(join(out, "manifest.json"), "utf8")), files: outputFiles(out) };
}

const groupMb = () => size / 5 / 1e6;

describe("a large JSONL file packed in groups of its rows", () => {
  let ref: ReturnType<typeof build>;
  beforeAll(() => {
    // One part (unit_mb above the file's size), five groups.
    ref = build("ref", { groupMb: groupMb(), unitMb: 1 });
  }, 120_000);

  it("packs five groups, each row once in the ledger, in input order", () => {
    const groups = new Set(ref.manifest.files.filter((f: { path: string }) => f.path.endsWith(".tokens.npy")).map((f: { path: string }) => f.path.split("/")[1].split("-")[0]));
    expect(groups.size).toBe(5);
    const ledger = gunzipSync(readFileSync(join(ref.out, "ledger.jsonl.gz"))).toString("utf8").trim().split("\n").map((l) => JSON.parse(l));
    expect(ledger.map((l: { line: number }) => l.line)).toEqual(Array.from({ length: LINES }, (_, k) => k + 1));
    expect(ledger[BAD_LINE - 1].fate).toBe("quarantined");
    expect(ledger.filter((l: { reason?: string }) => l.reason === "duplicate").length).toBe(LINES / 40);
  });

  it("counts what one group counts: records and stage counters (no row is seen by two groups)", () => {
    const one = build("one-group", { groupMb: 1, unitMb: 1 });
    expect(ref.manifest.records).toEqual(one.manifest.records);
    expect(ref.manifest.stage_counts).toEqual(one.manifest.stage_counts);
    expect(ref.manifest.splits.train.documents).toBe(one.manifest.splits.train.documents);
  }, 120_000);

  it("gives the same bytes with the file in parts whose cuts fall inside the groups", () => {
    const parts = build("parts", { groupMb: groupMb(), unitMb: size / 7 / 1e6 });
    expect(parts.files).toEqual(ref.files);
  }, 120_000);

  it("gives the same bytes with the tasks of each phase side by side in task threads", () => {
    const side = build("threads", { groupMb: groupMb(), unitMb: size / 7 / 1e6, workers: 2, env: { SIFTPACK_TASK_THREADS_FROM_MB: "0" } });
    expect(side.files).toEqual(ref.files);
  }, 120_000);

  it("gives the same bytes as a 3-task plan run task by task", () => {
    const file = pipeline("t3", { groupMb: groupMb(), unitMb: size / 4 / 1e6, tasks: 3 });
    const plan = JSON.parse(siftpack(["plan", file, "--tasks", "--json"]).stdout);
    for (const ph of plan.phases)
      for (let i = 0; i < ph.tasks; i++) {
        const r = siftpack(["task", file, "--phase", ph.name, "--index", String(i), "--workers", "1", "--quiet"]);
        expect(r.code, `${ph.name} ${i}: ${r.stderr}`).toBe(0);
      }
    expect(outputFiles(join(dir, "t3", "out"))).toEqual(ref.files);
  }, 300_000);
});
