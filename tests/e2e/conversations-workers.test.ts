// Conversations through every way the engine cuts the work: worker threads, task threads, JSONL
// files read in parts, and a second run from the cache give the bytes of one plain run.
import { describe, expect, it } from "vitest";
import { mkdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { outputFiles, siftpack, tempDir } from "./cli.js";

function generatedConversations(unitMb?: number): string {
  const dir = tempDir("conv-gen");
  mkdirSync(join(dir, "data"));
  let s = 11;
  const rand = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
  const words = "tram depot brake pantograph door sensor wheel bogie axle inverter fault cleared replaced inspected road yard shift heater".split(" ");
  const say = (n: number) => Array.from({ length: n }, () => words[Math.floor(rand() * words.length)]).join(" ") + ".";
  for (let f = 0; f < 3; f++) {
    const lines: string[] = [];
    for (let i = 0; i < 800; i++) {
      const turns = 2 * (1 + Math.floor(rand() * 4));
      const messages = Array.from({ length: turns }, (_, k) => ({ who: k % 2 ? "desk" : "tech", says: say(2 + Math.floor(rand() * 40)) }));
      lines.push(JSON.stringify({ id: `c${f}-${i}`, depot: `d${i % 7}`, messages }));
    }
    writeFileSync(join(dir, `data/part-${f}.jsonl`), lines.join("\n") + "\n");
  }
  writeFileSync(
    join(dir, "p.yaml"),
    `siftpack: 1
seed: 5
sources: [{ name: gen, files: "data/*.jsonl", format: jsonl, id: id, meta: [depot], turns: { field: messages, role: who, text: says, roles: [tech, desk] } }]
stages:
  - normalize: {}
  - filter: { min_words: 4 }
  - dedup: {}
  - split: { by: depot, holdout: { val: 0.2 } }
  - tokenize: { encoding: cl100k_base, template: { roles: { tech: { before: "[[<|fim_prefix|>]]" }, desk: { before: "[[<|fim_middle|>]]", after: "[[<|endoftext|>]]" } }, train_on: [desk] } }
  - pack: { length: 128, strategy: best-fit, emit: [target_mask], group_mb: 0.2 }
output: { dir: out, shard_blocks: 50 }
${unitMb ? `cluster: { unit_mb: ${unitMb} }\n` : ""}`,
  );
  return dir;
}

function build(dir: string, args: string[], env: Record<string, string> = {}): Record<string, string> {
  const r = siftpack(["run", join(dir, "p.yaml"), ...args], { env });
  expect(r.stderr).toBe("");
  expect(r.code).toBe(0);
  return outputFiles(join(dir, "out"));
}

describe("conversations and the build engine", () => {
  it("give the same bytes for 1 and 2 workers, task threads, files read in parts, and a run from the cache", () => {
    const plain = build(generatedConversations(), ["--workers", "1", "--no-cache"]);
    expect(Object.keys(plain).filter((p) => p.endsWith(".target_mask.npy")).length).toBeGreaterThan(1);
    expect(build(generatedConversations(), ["--workers", "2", "--no-cache"])).toEqual(plain);
    expect(build(generatedConversations(), ["--workers", "2", "--no-cache"], { SIFTPACK_TASK_THREADS_FROM_MB: "0" })).toEqual(plain);
    // Parts change the plan (and so the pipeline's resolved form): compare the shards only.
    const shards = (o: Record<string, string>) => Object.fromEntries(Object.entries(o).filter(([p]) => p.endsWith(".npy") || p.endsWith(".origins.jsonl")));
    expect(shards(build(generatedConversations(0.05), ["--workers", "2", "--no-cache"]))).toEqual(shards(plain));
    const cached = generatedConversations();
    build(cached, ["--workers", "2"]);
    expect(build(cached, ["--workers", "2", "--force"])).toEqual(plain);
  });
});
