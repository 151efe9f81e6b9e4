// Worker threads: the same bytes for any number of workers, and a failing stage names its record;
// likewise with a phase's tasks side by side in task threads (SIFTPACK_TASK_THREADS_FROM_MB=0 makes
// a small input use them).
import { describe, expect, it } from "vitest";
import { mkdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { demoCopy, outputFiles, siftpack, tempDir } from "./cli.js";

function generatedCorpus(): string {
  const dir = tempDir("gen");
  mkdirSync(join(dir, "data"));
  let s = 42;
  const rand = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
  const words = "tram depot brake pantograph door sensor wheel flat bogie axle inverter fault cleared replaced inspected road yard shift night crew signal points heater"
    .split(" ");
  for (let f = 0; f < 3; f++) {
    const lines: string[] = [];
    for (let i = 0; i < 1500; i++) {
      const n = 3 + Math.floor(rand() * 120);
      const text = Array.from({ length: n }, () => words[Math.floor(rand() * words.length)]).join(" ") + ".";
      lines.push(JSON.stringify({ id: `g${f}-${i}`, group: `d${i % 9}`, text: rand() < 0.05 ? "dup text that repeats across files" : text }));
    }
    writeFileSync(join(dir, `data/part-${f}.jsonl`), lines.join("\n") + "\n");
  }
  writeFileSync(
    join(dir, "p.yaml"),
    `siftpack: 1
seed: 5
sources: [{ name: gen, files: "data/*.jsonl", format: jsonl, id: id, meta: [group] }]
stages:
  - normalize: {}
  - filter: { min_words: 4 }
  - dedup: {}
  - split: { by: group, holdout: { val: 0.2, test: 0.2 } }
  - tokenize: { encoding: cl100k_base }
  - pack: { length: 128, strategy: best-fit }
output: { dir: out, shard_blocks: 50 }
`,
  );
  return dir;
}

describe("worker threads", () => {
  it("give identical bytes for 1, 2 and 3 workers on a generated corpus", () => {
    const builds = [1, 2, 3].map((w) => {
      const dir = generatedCorpus();
      const r = siftpack(["run", join(dir, "p.yaml"), "--workers", String(w), "--no-cache"]);
      expect(r.stderr).toBe("");
      expect(r.code).toBe(0);
      return outputFiles(join(dir, "out"));
    });
    expect(Object.keys(builds[0]).length).toBeGreaterThan(10);
    expect(builds[1]).toEqual(builds[0]);
    expect(builds[2]).toEqual(builds[0]);
  });

  it("give identical bytes for 1 and 2 workers on the demo", () => {
    const [a, b] = [1, 2].map((w) => {
      const dir = demoCopy();
      expect(siftpack(["run", join(dir, "pipelines/demo.yaml"), "--workers", String(w)]).code).toBe(0);
      return outputFiles(join(dir, "build/demo"));
    });
    expect(b).toEqual(a);
  });

  it("a stage that throws in a worker fails the run naming the record, without hanging", () => {
    const dir = generatedCorpus();
    const r = siftpack(["run", join(dir, "p.yaml"), "--workers", "2"], { env: { SIFTPACK_FAIL_ON_RECORD: "g1-700" } });
    expect(r.code).toBe(1);
    expect(r.stderr).toBe(`siftpack: error: a stage failed on record "g1-700" (source gen, data/part-1.jsonl:701): injected failure on record g1-700\n`);
  });

  it("tasks side by side in task threads give the bytes of one task per phase", () => {
    const [a, b] = [1, 2].map((w) => {
      const dir = generatedCorpus();
      const r = siftpack(["run", join(dir, "p.yaml"), "--workers", String(w), "--no-cache", "--json"], { env: { SIFTPACK_TASK_THREADS_FROM_MB: "0", SIFTPACK_LOG: "debug" } });
      expect(r.code, r.stderr).toBe(0);
      // The plan: one task per phase with one worker, two per worker with two (tasks 0–3 of the read phase ran).
      expect(r.stderr).toContain(w === 1 ? `"phase":"read","task":0,"tasks":1` : `"phase":"read","task":3,"tasks":4`);
      return outputFiles(join(dir, "out"));
    });
    expect(b).toEqual(a);
  });

  it("a stage that throws in a task thread fails the run naming the record, as with one task", () => {
    const dir = generatedCorpus();
    const r = siftpack(["run", join(dir, "p.yaml"), "--workers", "2"], { env: { SIFTPACK_FAIL_ON_RECORD: "g1-700", SIFTPACK_TASK_THREADS_FROM_MB: "0" } });
    expect(r.code).toBe(1);
    expect(r.stderr).toBe(`siftpack: error: a stage failed on record "g1-700" (source gen, data/part-1.jsonl:701): injected failure on record g1-700\n`);
  });
});
