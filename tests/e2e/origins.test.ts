// The origins index beside every shard: checked with NumPy against the segment ids in the shards,
// against the ledger (every kept record's tokens, copy by copy), and as `inspect` prints it.
import { beforeAll, describe, expect, it } from "vitest";
import { readFileSync, rmSync, writeFileSync } from "node:fs";
import { gunzipSync } from "node:zlib";
import { join } from "node:path";
import { python, ROOT, siftpack, tempDir, demoVariant } from "./cli.js";
import type { Manifest } from "../../src/output/manifest.js";
import type { OriginLine } from "../../src/pack/origins.js";

/** The demo pipeline with another pack line, in a folder of its own. */
const variant = (name: string, packLine: string) => demoVariant(tempDir(name), "pack", packLine);

function build(pipeline: string, name: string): string {
  const out = join(tempDir(name), "out");
  const r = siftpack(["run", pipeline, "--out", out, "--quiet"]);
  expect(r.stderr).toBe("");
  expect(r.code).toBe(0);
  return out;
}

// NumPy (Debian's python3-numpy) reads the segment ids; each row's runs of one non-zero segment id
// must be the index's lines for that row, in order, with the same token ranges.
const NUMPY_CHECK = `import json, sys, numpy as np
d = sys.argv[1]; m = json.load(open(d + "/manifest.json"))
out = {"rows": 0, "pieces": 0, "problems": [], "docs": {}}
for split, s in m["splits"].items():
    for sh in s["shards"]:
        seg = np.load(d + "/" + sh["segments"], mmap_mode="r")
        lines = [json.loads(l) for l in open(d + "/" + sh["origins"])]
        by_row = {}
        for l in lines: by_row.setdefault(l["row"], []).append(l)
        for r in range(seg.shape[0]):
            row = np.asarray(seg[r], dtype=np.int64)
            edges = np.flatnonzero(np.diff(row)) + 1
            starts = np.concatenate(([0], edges)); ends = np.concatenate((edges, [row.size]))
            runs = [[int(row[a]), int(a), int(b)] for a, b in zip(starts, ends) if row[a] != 0]
            got = [[l["segment"], l["start"], l["end"]] for l in by_row.pop(r, [])]
            if got != runs: out["problems"].append(f"{sh['origins']} row {r}: index {got}, shard {runs}")
            out["rows"] += 1; out["pieces"] += len(runs)
        if by_row: out["problems"].append(f"{sh['origins']}: lines for rows {sorted(by_row)} past the shard's {seg.shape[0]} rows")
        for l in lines:
            key = json.dumps([split, l["source"], l["id"], l.get("copy", 0)], separators=(",", ":"), ensure_ascii=False)
            out["docs"].setdefault(key, []).append([l["offset"], l["end"] - l["start"], l["file"], l["line"]])
print(json.dumps(out))`;

interface Kept {
  source: string;
  id: string;
  file: string;
  line: number;
  split: string;
  tokens: number;
  copies?: number;
  /** A mixture's part copy: one more copy of the record's first that many tokens. */
  part_tokens?: number;
}

/** Checks a build's index with NumPy and against its ledger; returns the numbers of rows and pieces. */
function checkIndex(dir: string): { rows: number; pieces: number } {
  const got = JSON.parse(python(NUMPY_CHECK, [dir])) as { rows: number; pieces: number; problems: string[]; docs: Record<string, [number, number, string, number][]> };
  expect(got.problems).toEqual([]);
  const kept = gunzipSync(readFileSync(join(dir, "ledger.jsonl.gz")))
    .toString("utf8")
    .split("\n")
    .filter((l) => l.includes('"fate":"kept"'))
    .map((l) => JSON.parse(l) as Kept);
  // Every kept record with tokens is in the index once per copy (a part copy last, covering its part
  // only), its pieces covering its tokens from 0 without gap or overlap, each naming the record's file
  // and line as the ledger does.
  const expected = new Set<string>();
  for (const k of kept) {
    if (k.tokens === 0) continue;
    const whole = k.copies ?? 1;
    for (let c = 0; c < whole + (k.part_tokens ? 1 : 0); c++) {
      const key = JSON.stringify([k.split, k.source, k.id, c]);
      expected.add(key);
      const pieces = (got.docs[key] ?? []).sort((a, b) => a[0] - b[0]);
      expect(pieces.length, key).toBeGreaterThan(0);
      let at = 0;
      for (const [offset, length, file, line] of pieces) {
        expect([key, offset, file, line]).toEqual([key, at, k.file, k.line]);
        at += length;
      }
      expect([key, at]).toEqual([key, c < whole ? k.tokens : k.part_tokens]);
    }
  }
  expect(Object.keys(got.docs).sort()).toEqual([...expected].sort());
  return { rows: got.rows, pieces: got.pieces };
}

let demo: string;
let concat: string;
beforeAll(() => {
  demo = build(join(ROOT, "pipelines/demo.yaml"), "orig-demo");
  // Short rows, every split shuffled: many cut documents whose pieces land in shuffled rows.
  concat = build(variant("orig-concat", "{ length: 128, strategy: concat, shuffle: true, shuffle_window: 16 }"), "orig-concat");
});

describe("the origins index", () => {
  it("lines up with the segment ids of every shard (NumPy) and covers every kept record's tokens, copies included (demo, best-fit)", () => {
    const { rows, pieces } = checkIndex(demo);
    const m: Manifest = JSON.parse(readFileSync(join(demo, "manifest.json"), "utf8"));
    expect(rows).toBe(Object.values(m.splits).reduce((a, s) => a + s.blocks, 0));
    expect(pieces).toBeGreaterThan(rows);
    // Listed per shard and checksummed, so verify covers it.
    for (const s of Object.values(m.splits)) for (const sh of s.shards) expect(m.files.some((f) => f.path === sh.origins)).toBe(true);
    expect(m.format).toBe("siftpack/2");
  });

  it("does the same for concat with every split shuffled, where most documents are cut", () => {
    const { pieces } = checkIndex(concat);
    const m: Manifest = JSON.parse(readFileSync(join(concat, "manifest.json"), "utf8"));
    expect(pieces).toBeGreaterThan(Object.values(m.splits).reduce((a, s) => a + s.documents, 0));
  });

  it("is checked by verify: an edited line is named", () => {
    const m: Manifest = JSON.parse(readFileSync(join(concat, "manifest.json"), "utf8"));
    const rel = m.splits.val.shards[0].origins!;
    const dir = join(tempDir("orig-edit"), "out");
    siftpack(["run", variant("orig-edit-p", "{ length: 128, strategy: concat, shuffle: true, shuffle_window: 16 }"), "--out", dir, "--quiet"]);
    const path = join(dir, rel);
    writeFileSync(path, readFileSync(path, "utf8").replace('"line":', '"line":1'));
    const v = siftpack(["verify", dir]);
    expect(v.code).toBe(1);
    expect(v.stderr).toContain(rel);
  });

  it("is what inspect prints: the record of every piece, in text and JSON", () => {
    const m: Manifest = JSON.parse(readFileSync(join(concat, "manifest.json"), "utf8"));
    const sh = m.splits.test.shards[0];
    const lines = readFileSync(join(concat, sh.origins!), "utf8").trim().split("\n").map((l) => JSON.parse(l) as OriginLine);
    const row = lines.find((l) => l.offset > 0)!.row; // a row that starts with a continuation
    const json = siftpack(["inspect", concat, "--split", "test", "--block", String(row), "--json"]);
    expect(json.code).toBe(0);
    const want = lines.filter((l) => l.row === row);
    expect(JSON.parse(json.stdout).origins).toEqual(want);
    const text = siftpack(["inspect", concat, "--split", "test", "--block", String(row)]);
    expect(text.code).toBe(0);
    for (const o of want) {
      const boundary = `┌─ segment ${o.segment} · tokens ${o.start}–${o.end - 1} (${o.end - o.start})`;
      const from = `│ ◆ ${o.source} ${JSON.stringify(o.id)} · ${o.file} line ${o.line}${o.offset > 0 ? ` · from the document's token ${o.offset}` : ""}\n`;
      expect(text.stdout).toContain(boundary);
      expect(text.stdout).toContain(from);
    }
  });

  it("a build from before the index (siftpack/1) is still inspected, saying so, and replaced by the next run", () => {
    const pipeline = variant("orig-old-p", "{ length: 128, strategy: concat, shuffle: true, shuffle_window: 16 }");
    const dir = join(tempDir("orig-old"), "out");
    expect(siftpack(["run", pipeline, "--out", dir, "--quiet"]).code).toBe(0);
    // What siftpack/1 wrote: the same build without the index files.
    const m: Manifest = JSON.parse(readFileSync(join(dir, "manifest.json"), "utf8"));
    for (const s of Object.values(m.splits))
      for (const sh of s.shards) {
        rmSync(join(dir, sh.origins!));
        delete sh.origins;
      }
    m.files = m.files.filter((f) => !f.path.endsWith(".origins.jsonl"));
    writeFileSync(join(dir, "manifest.json"), JSON.stringify({ ...m, format: "siftpack/1" }, null, 2));
    const old = siftpack(["inspect", dir, "--split", "val", "--block", "0"]);
    expect(old.code).toBe(0);
    expect(old.stdout).toContain(`(no origins index: ${dir} was built before siftpack/2; rebuild to see which record each piece came from)`);
    expect(old.stdout).not.toContain("◆");
    const again = siftpack(["run", pipeline, "--out", dir, "--quiet"]);
    expect(again.stderr).toBe("");
    expect(again.code).toBe(0);
    expect(JSON.parse(readFileSync(join(dir, "manifest.json"), "utf8")).format).toBe("siftpack/2");
  });
});
