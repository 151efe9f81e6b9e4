// Explicit ids must be unique across a source's units: a record whose id an earlier file (or an
// earlier part of the same file) already used is quarantined naming the id, whatever the task count.
import { describe, expect, it } from "vitest";
import { mkdirSync, readFileSync, writeFileSync } from "node:fs";
import { gunzipSync } from "node:zlib";
import { join } from "node:path";
import { siftpack, tempDir } from "./cli.js";

/** Depot work orders: `n` lines of about 120 bytes with ids W-<from>…. */
const orders = (from: number, n: number) =>
  Array.from({ length: n }, (_, k) => JSON.stringify({ id: `W-${from + k}`, text: `Work order ${from + k}: check the pantograph of car ${(from + k) % 40} and log the wear of its carbon strip.` })).join("\n") + "\n";

function project(extra: string): string {
  const dir = tempDir("ids");
  mkdirSync(join(dir, "d"));
  // b.jsonl repeats W-3 (from a.jsonl); a.jsonl itself repeats W-20 at line 201, about 22 kB later
  // (another part when cut every 10 kB).
  writeFileSync(join(dir, "d/a.jsonl"), orders(1, 200) + orders(20, 1));
  writeFileSync(join(dir, "d/b.jsonl"), orders(500, 5) + orders(3, 1));
  writeFileSync(join(dir, "p.yaml"), `siftpack: 1\nsources: [{ name: w, files: d/*.jsonl, format: jsonl, id: id }]\nstages:\n  - tokenize: {}\n  - pack: { length: 64 }\noutput: { dir: out }\nmax_bad_fraction: 0.5\n${extra}`);
  return dir;
}

function ledger(dir: string): { fate: string; line: number; file: string; error?: string }[] {
  return gunzipSync(readFileSync(join(dir, "out/ledger.jsonl.gz"))).toString("utf8").trim().split("\n").map((l) => JSON.parse(l));
}

describe("explicit ids across units", () => {
  for (const [name, extra] of [
    ["whole files", ""],
    ["a file cut in parts", "cluster: { unit_mb: 0.01 }\n"],
  ] as const) {
    it(`quarantines a repeated id of an earlier unit (${name})`, () => {
      const dir = project(extra);
      const r = siftpack(["run", join(dir, "p.yaml"), "--json"]);
      expect(r.code, r.stderr).toBe(0);
      const lines = ledger(dir);
      expect(lines).toHaveLength(207);
      const quarantined = lines.filter((l) => l.fate === "quarantined");
      expect(quarantined.map((l) => [l.file, l.line, l.error])).toEqual([
        // Within one unit the reader itself says so; across units the ids phase does, in the same words when the first is in an earlier part of the same file.
        ["d/a.jsonl", 201, 'duplicate id "W-20"'],
        ["d/b.jsonl", 6, 'duplicate id "W-3" (also in an earlier file of the source)'],
      ]);
    });
  }
});
