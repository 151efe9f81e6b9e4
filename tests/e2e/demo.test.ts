// The demo pipeline end to end through the real CLI; NumPy reads what we wrote.
import { beforeAll, describe, expect, it } from "vitest";
import { readFileSync, writeFileSync, cpSync } from "node:fs";
import { gunzipSync } from "node:zlib";
import { join } from "node:path";
import { ledgerLines as ledger, python, siftpack, tempDir } from "./cli.js";
import type { Manifest } from "../../src/output/manifest.js";

let out: string;
let manifest: Manifest;
let runStdout: string;

beforeAll(() => {
  out = join(tempDir("demo"), "demo");
  const r = siftpack(["run", "pipelines/demo.yaml", "--out", out]);
  expect(r.stderr).toBe("");
  expect(r.code).toBe(0);
  runStdout = r.stdout;
  manifest = JSON.parse(readFileSync(join(out, "manifest.json"), "utf8"));
});

describe("demo build", () => {
  it("prints a summary with every split", () => {
    expect(runStdout).toMatch(/^built .*demo/);
    for (const s of ["train", "val", "test"]) expect(runStdout).toMatch(new RegExp(`^${s}\\s+\\d+`, "m"));
  });

  it("accounts for every input record in the ledger: kept + dropped + quarantined = read, per source", () => {
    const lines = ledger(out);
    const r = manifest.records;
    expect(lines.length).toBe(r.read);
    expect(r.kept + r.dropped + r.quarantined).toBe(r.read);
    for (const [name, s] of Object.entries(r.by_source)) {
      const mine = lines.filter((l) => l.source === name);
      expect(mine.length).toBe(s.read);
      expect(s.kept + s.dropped + s.quarantined).toBe(s.read);
      expect(mine.filter((l) => l.fate === "kept").length).toBe(s.kept);
      expect(mine.filter((l) => l.fate === "dropped").length).toBe(s.dropped);
      expect(mine.filter((l) => l.fate === "quarantined").length).toBe(s.quarantined);
    }
    // The demo has deliberate duplicates, junk and one malformed line; each stage had work.
    expect(r.by_reason.duplicate).toBeGreaterThan(0);
    expect(r.by_reason["filter:min_words"]).toBeGreaterThan(0);
    expect(r.quarantined).toBeGreaterThan(0);
    const quarantine = readFileSync(join(out, "quarantine.jsonl"), "utf8").trim().split("\n");
    expect(quarantine.length).toBe(r.quarantined);
    // kept documents per split equal the manifest's documents (train counts repeats by the mixture, and its part copies)
    for (const [split, s] of Object.entries(manifest.splits))
      expect(lines.filter((l) => l.fate === "kept" && l.split === split).reduce((a, l) => a + (l.copies ?? 1) + (l.part_tokens ? 1 : 0), 0)).toBe(s.documents);
    // one part copy per source the mixture takes a share of that is not a whole number of its documents
    expect(lines.filter((l) => l.part_tokens).length).toBe(3);
    // the demo mixture: tickets are subsampled, manuals and notes repeated in train
    expect(lines.filter((l) => l.reason === "subsampled").every((l) => l.source === "tickets")).toBe(true);
    expect(r.by_reason.subsampled).toBeGreaterThan(0);
    expect(lines.some((l) => l.source === "manuals" && l.copies === 2)).toBe(true);
    expect(lines.some((l) => l.source === "notes" && l.copies === 2)).toBe(true);
  });

  it("never puts one depot in two splits", () => {
    const lines = ledger(out).filter((l) => l.fate === "kept" && l.source !== "manuals");
    const depotOf = new Map<string, string>();
    const tickets = gunzipSync(readFileSync("sample-data/tickets/tickets-2025.jsonl.gz")).toString() + gunzipSync(readFileSync("sample-data/tickets/tickets-2026.jsonl.gz")).toString();
    for (const l of tickets.split("\n")) {
      try {
        const o = JSON.parse(l);
        depotOf.set(o.ticket_id, o.depot);
      } catch {}
    }
    const splitOfDepot = new Map<string, string>();
    for (const l of lines.filter((x) => x.source === "tickets")) {
      const depot = depotOf.get(l.id)!;
      expect(splitOfDepot.get(depot) ?? l.split).toBe(l.split);
      splitOfDepot.set(depot, l.split);
    }
  });

  it("NumPy opens every .npy with mmap and sees the manifest's shapes and dtypes", () => {
    const files = Object.values(manifest.splits).flatMap((s) => s.shards.flatMap((sh) => [sh.tokens, sh.segments, sh.positions!, sh.target_mask!]));
    // Reference: NumPy's own .npy reader (numpy.load), not siftpack code.
    const got = JSON.parse(
      python(
        `import json, sys, numpy as np
d = sys.argv[1]
print(json.dumps({f: [list(a.shape), str(a.dtype)] for f in sys.argv[2:] for a in [np.load(d + "/" + f, mmap_mode="r")]}))`,
        [out, ...files],
      ),
    );
    for (const [split, s] of Object.entries(manifest.splits)) {
      for (const sh of s.shards) {
        expect(got[sh.tokens]).toEqual([[sh.blocks, manifest.length], manifest.dtype]);
        expect(got[sh.segments]).toEqual([[sh.blocks, manifest.length], manifest.segments_dtype]);
        expect(got[sh.target_mask!]).toEqual([[sh.blocks, manifest.length], "uint8"]);
      }
      expect(s.shards.reduce((a, sh) => a + sh.blocks, 0)).toBe(s.blocks);
    }
  });

  it("NumPy rebuilds the target mask, positions and token counts from segments and agrees with ours", () => {
    const report = JSON.parse(
      python(
        `import json, sys, numpy as np
d = sys.argv[1]; m = json.load(open(d + "/manifest.json"))
res = {}
for name, s in m["splits"].items():
    tok = pad = tgt = 0; ok = True
    for sh in s["shards"]:
        seg = np.load(d + "/" + sh["segments"], mmap_mode="r").astype(np.int64)
        tm = np.load(d + "/" + sh["target_mask"], mmap_mode="r")
        pos = np.load(d + "/" + sh["positions"], mmap_mode="r").astype(np.int64)
        target = np.zeros(seg.shape, dtype=bool)
        target[:, 1:] = (seg[:, 1:] != 0) & (seg[:, 1:] == seg[:, :-1])
        ok &= bool((target == (tm == 1)).all())
        start = np.ones(seg.shape, dtype=bool); start[:, 1:] = seg[:, 1:] != seg[:, :-1]
        idx = np.arange(seg.shape[1])[None, :].repeat(seg.shape[0], 0)
        last_start = np.maximum.accumulate(np.where(start, idx, 0), axis=1)
        ok &= bool(((idx - last_start)[seg != 0] == pos[seg != 0]).all())
        # dense attention mask of the first row: causal and same document
        s0 = seg[0]; L = len(s0)
        attend = np.tril(np.ones((L, L), dtype=bool)) & (s0[:, None] == s0[None, :]) & (s0[:, None] != 0)
        ok &= bool(attend.sum() == sum(int(c) * (int(c) + 1) // 2 for c in np.unique(s0[s0 != 0], return_counts=True)[1]))
        tok += int((seg != 0).sum()); pad += int((seg == 0).sum()); tgt += int(target.sum())
    res[name] = [tok, pad, tgt, ok]
print(json.dumps(res))`,
        [out],
      ),
    );
    for (const [split, s] of Object.entries(manifest.splits)) expect(report[split]).toEqual([s.tokens, s.padding_tokens, s.target_tokens, true]);
  });

  it("stats prints the splits; --json is machine-readable", () => {
    const r = siftpack(["stats", out]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/^train\s+\d+\s+\d+/m);
    const j = JSON.parse(siftpack(["stats", out, "--json"]).stdout);
    expect(j.splits.train.blocks).toBe(manifest.splits.train.blocks);
  });

  it("rebuilds byte for byte", () => {
    const again = join(tempDir("demo2"), "demo");
    expect(siftpack(["run", "pipelines/demo.yaml", "--out", again]).code).toBe(0);
    const m2: Manifest = JSON.parse(readFileSync(join(again, "manifest.json"), "utf8"));
    expect(m2.build_hash).toBe(manifest.build_hash);
    expect(readFileSync(join(again, "manifest.json"), "utf8")).toBe(readFileSync(join(out, "manifest.json"), "utf8"));
  });

  it("verify passes, then names a shard with one changed byte and exits 1", () => {
    const ok = siftpack(["verify", out]);
    expect(ok.code).toBe(0);
    expect(ok.stdout).toMatch(/^ok: \d+ files match/);
    const copy = join(tempDir("tamper"), "demo");
    cpSync(out, copy, { recursive: true });
    const shard = join(copy, manifest.splits.train.shards[0].tokens);
    const bytes = readFileSync(shard);
    bytes[bytes.length - 3] ^= 0x01;
    writeFileSync(shard, bytes);
    const bad = siftpack(["verify", copy]);
    expect(bad.code).toBe(1);
    expect(bad.stderr).toContain(`${manifest.splits.train.shards[0].tokens}: xxh64`);
    expect(bad.stderr).not.toMatch(/\bat .*\.js:\d+/);
  });
});
