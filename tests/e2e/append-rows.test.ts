// Rows appended to a large JSONL file: its parts before the end keep their cache entries (a part is
// known by its own bytes), only the last part and the new ones are read again, and the build is the
// bytes of a clean build of the longer file.
import { describe, expect, it } from "vitest";
import { appendFileSync, mkdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { outputFiles, siftpack, tempDir } from "./cli.js";

/** Invented depot wash-plant log lines, seeded. */
function washLog(from: number, to: number): string {
  let s = 77 + from;
  const rnd = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
  const pick = <T>(a: readonly T[]) => a[Math.floor(rnd() * a.length)];
  const lines: string[] = [];
  for (let n = from; n < to; n++)
    lines.push(JSON.stringify({ text: `Wash ${n}: car ${2200 + Math.floor(rnd() * 50)} went through the ${pick(["north", "south"])} wash ${pick(["twice", "once", "with the brush raised"])}; ${pick(["the roof was left dusty", "water pressure was low", "no remarks", "a wiper was bent back"])}.`, bay: `b${n % 5}` }));
  return lines.join("\n") + "\n";
}

describe("rows appended to a large JSONL file", () => {
  it("reread only the file's last part and the new ones, and build what a clean build of the longer file builds", () => {
    const dir = tempDir("append");
    mkdirSync(join(dir, "data"));
    const file = join(dir, "data/wash.jsonl");
    writeFileSync(file, washLog(0, 800));
    const pipeline = (out: string) =>
      `siftpack: 1\nsources: [{ name: wash, files: data/wash.jsonl, format: jsonl, meta: [bay] }]\nstages:\n  - normalize: {}\n  - split: { by: bay, holdout: { val: 0.2 } }\n  - tokenize: { encoding: gpt2 }\n  - pack: { length: 64 }\noutput: { dir: ${out} }\ncluster: { unit_mb: 0.02 }\n`;
    writeFileSync(join(dir, "p.yaml"), pipeline("out"));
    const first = siftpack(["run", join(dir, "p.yaml"), "--json", "--quiet"]);
    expect(first.code, first.stderr).toBe(0);
    const parts = JSON.parse(first.stdout).cache.read.computed as number;
    expect(parts).toBeGreaterThan(3);
    appendFileSync(file, washLog(800, 900));
    const again = siftpack(["run", join(dir, "p.yaml"), "--json", "--quiet"]);
    expect(again.code, again.stderr).toBe(0);
    const read = JSON.parse(again.stdout).cache.read as { reused: number; computed: number };
    // Every part but the last is reused; the last and the appended rows' parts are read.
    expect(read.reused).toBe(parts - 1);
    expect(read.computed).toBeGreaterThanOrEqual(1);
    const clean = siftpack(["run", join(dir, "p.yaml"), "--out", join(dir, "clean"), "--no-cache", "--quiet"]);
    expect(clean.code, clean.stderr).toBe(0);
    expect(outputFiles(join(dir, "out"))).toEqual(outputFiles(join(dir, "clean")));
  });
});
