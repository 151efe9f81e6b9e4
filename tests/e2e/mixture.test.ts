// The mixture by token budget as a user meets it: the demo's run summary, stats and manifest; NumPy's
// count of each source's tokens in the train shards against the manifest and the ledger; the same
// bytes for any task count, worker count and part size; `plan`'s estimate; the warnings and errors.
import { beforeAll, describe, expect, it } from "vitest";
import { mkdirSync, readFileSync, writeFileSync } from "node:fs";
import { gunzipSync } from "node:zlib";
import { join } from "node:path";
import { createHash } from "node:crypto";
import { outputFiles, python, ROOT, siftpack, tempDir } from "./cli.js";
import type { MixtureEntry } from "../../src/engine/mixture.js";

/** The demo pipeline with absolute input paths, edited by `edit`, as dir/p.yaml. */
function demoWith(dir: string, edit: (text: string) => string = (t) => t): string {
  const text = edit(readFileSync(join(ROOT, "pipelines/demo.yaml"), "utf8").replaceAll("../sample-data/", join(ROOT, "sample-data") + "/"));
  writeFileSync(join(dir, "p.yaml"), text);
  return join(dir, "p.yaml");
}

/** Every file of a build (but build-info.json) by path, as a SHA-256 of its bytes: a short diff when they differ. */
const digests = (dir: string) => Object.fromEntries(Object.entries(outputFiles(dir)).map(([k, v]) => [k, createHash("sha256").update(v).digest("hex")]));

const ledgerOf = (out: string) =>
  gunzipSync(readFileSync(join(out, "ledger.jsonl.gz")))
    .toString("utf8")
    .split("\n")
    .filter(Boolean)
    .map((l) => JSON.parse(l));

// NumPy (Debian's python3-numpy) reads the segment ids of every train shard; each run of one
// non-zero segment id is a document piece, which the shard's origins index names by source.
const TOKENS_PER_SOURCE = `import json, sys, numpy as np
d = sys.argv[1]; m = json.load(open(d + "/manifest.json"))
per = {}
for sh in m["splits"]["train"]["shards"]:
    seg = np.load(d + "/" + sh["segments"], mmap_mode="r")
    lines = [json.loads(l) for l in open(d + "/" + sh["origins"])]
    by = {(l["row"], l["segment"]): l["source"] for l in lines}
    for r in range(seg.shape[0]):
        row = np.asarray(seg[r], dtype=np.int64)
        for s in np.unique(row[row != 0]):
            src = by[(r, int(s))]
            per[src] = per.get(src, 0) + int((row == s).sum())
print(json.dumps(per))`;

describe("the demo's mixture", () => {
  let out: string;
  let pipelineFile: string;
  let run: ReturnType<typeof siftpack>;
  let m: MixtureEntry;
  let manifest: any;
  beforeAll(() => {
    const dir = tempDir("mixture");
    out = join(dir, "out");
    pipelineFile = demoWith(dir);
    run = siftpack(["run", pipelineFile, "--out", out]);
    expect(run.code, run.stderr).toBe(0);
    manifest = JSON.parse(readFileSync(join(out, "manifest.json"), "utf8"));
    m = manifest.mixture;
  });

  it("reaches each source's tokens asked and the budget to the token (the crossing record's copy taken in part)", () => {
    const asked = { tickets: 0.5, manuals: 0.3, notes: 0.2 } as Record<string, number>;
    expect(m.train_tokens).toBe(40000);
    expect(m.budget_from).toBe("asked");
    for (const s of m.sources) {
      expect(s.share).toBe(asked[s.source]);
      // 40000 × the share is a whole number of tokens for every share here.
      expect(s.tokens_used).toBe(Math.round(asked[s.source] * 40000));
      expect(s.achieved_share).toBeCloseTo(s.tokens_used / m.tokens_used, 5);
      expect(s.epochs).toBeCloseTo(s.tokens_used / s.tokens_available, 3);
    }
    expect(m.tokens_used).toBe(40000);
    // Document tokens entering train are what the split holds.
    expect(manifest.splits.train.tokens).toBe(m.tokens_used);
    // The demo repeats manuals and notes and subsamples tickets.
    const by = Object.fromEntries(m.sources.map((s) => [s.source, s]));
    expect(by.manuals.epochs).toBeGreaterThan(1);
    expect(by.notes.epochs).toBeGreaterThan(1);
    expect(by.tickets.epochs).toBeLessThan(1);
  });

  it("NumPy's count of each source's tokens in the train shards agrees with the manifest and the ledger", () => {
    const numpy = JSON.parse(python(TOKENS_PER_SOURCE, [out])) as Record<string, number>;
    const ledger: Record<string, number> = {};
    for (const l of ledgerOf(out)) if (l.fate === "kept" && l.split === "train") ledger[l.source] = (ledger[l.source] ?? 0) + l.tokens * (l.copies ?? 1) + (l.part_tokens ?? 0);
    const manifestCounts = Object.fromEntries(m.sources.map((s) => [s.source, s.tokens_used]));
    expect(numpy).toEqual(manifestCounts);
    expect(ledger).toEqual(manifestCounts);
    // Subsampled records are ledgered as such and never reach a split.
    const subsampled = ledgerOf(out).filter((l) => l.reason === "subsampled");
    expect(subsampled.length).toBe(manifest.records.by_reason.subsampled);
    expect(new Set(subsampled.map((l) => l.source))).toEqual(new Set(["tickets"]));
  });

  it("shows asked and achieved shares, tokens and epochs in the run summary and in stats", () => {
    const row = (s: MixtureEntry["sources"][number]) => new RegExp(`^  ${s.source} +${(100 * s.share).toFixed(1)}% +${(100 * s.achieved_share).toFixed(1)}% +${s.tokens_available} +${s.tokens_used} +${s.epochs.toFixed(2)}$`, "m");
    expect(run.stdout).toMatch(/^mixture: train budget 40000 document tokens \(asked\), \d+ used$/m);
    const stats = siftpack(["stats", out]);
    expect(stats.code).toBe(0);
    for (const s of m.sources) {
      expect(run.stdout).toMatch(row(s));
      expect(stats.stdout).toMatch(row(s));
    }
    expect(JSON.parse(siftpack(["stats", out, "--json"]).stdout).mixture).toEqual(m);
    // run --json gives the same entry (here from the build in place, which is up to date).
    const again = JSON.parse(siftpack(["run", pipelineFile, "--out", out, "--json", "--quiet"]).stdout);
    expect(again.up_to_date).toBe(true);
    expect(again.mixture).toEqual(m);
  });

  it("builds the same bytes with one task and one worker as with the default tasks", () => {
    const dir = tempDir("mixture-tasks");
    const p = demoWith(dir, (t) => t + "cluster: { tasks: 3 }\n");
    const r = siftpack(["run", p, "--out", join(dir, "out"), "--workers", "1", "--quiet"]);
    expect(r.code, r.stderr).toBe(0);
    expect(digests(join(dir, "out"))).toEqual(digests(out));
  });

  it("plan estimates each source's train tokens and the factor before a build, and says it is an estimate", () => {
    const dir = tempDir("mixture-plan");
    const r = siftpack(["plan", demoWith(dir)]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/^# mixture estimate \(before the stages run: filtering and dedup will lower every figure\): train tokens per source = input bytes \/ sampled bytes per token \(gpt2\) × 0\.8 \(train's fraction of the split\)$/m);
    for (const s of ["tickets", "notes", "manuals"]) expect(r.stdout).toMatch(new RegExp(`^#   ${s} +\\d+ +\\d+ records in \\d+ of \\d+ files +[\\d.]+ +\\d+ +[\\d.]+% +\\d+ +[\\d.]+$`, "m"));
    const json = JSON.parse(siftpack(["plan", join(dir, "p.yaml"), "--json"]).stdout);
    const est = json.mixture_estimate;
    expect(est.train_tokens).toBe(40000);
    // The estimate is before filtering and dedup: above the build's tokens, and within a factor of two of them here.
    for (const s of est.sources) {
      const built = m.sources.find((x) => x.source === s.source)!;
      expect(s.train_tokens).toBeGreaterThan(built.tokens_available * 0.5);
      expect(s.train_tokens).toBeLessThan(built.tokens_available * 2);
      expect(s.epochs).toBeCloseTo(s.tokens_asked / s.train_tokens, 2);
    }
  });
});

describe("mixture warnings and errors", () => {
  it("warns above four epochs in the log and the summary, citing the finding", () => {
    const dir = tempDir("mixture-warn");
    const p = demoWith(dir, (t) => t.replace("train_tokens: 40000", "train_tokens: 120000"));
    const r = siftpack(["run", p, "--out", join(dir, "out")]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/^WARNING: source "notes" is seen [\d.]+ times \(epochs\) in train, more than 4: returns from repeated data fall off after about four epochs \(Muennighoff et al\. 2023, "Scaling Data-Constrained Language Models"\)/m);
    expect(r.stderr).toMatch(/"msg":"source \\"notes\\" is seen/);
  });

  it("fails a budget above max_epochs with the figures, and builds nothing", () => {
    const dir = tempDir("mixture-max");
    const p = demoWith(dir, (t) => t.replace("train_tokens: 40000", "train_tokens: 120000\n  max_epochs: 4"));
    const r = siftpack(["run", p, "--out", join(dir, "out")]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/^siftpack: error: .*p\.yaml: a train budget of 120000 tokens needs more than max_epochs 4 of "notes", "manuals": "notes" has \d+ train tokens for a share of 0\.2 \(24000 tokens\), [\d.]+ epochs; "manuals" has \d+ train tokens/);
    expect(r.stderr).not.toMatch(/\n\s+at /);
  });

  it("plan lists a misspelt source, a missing share and a weight beside a mixture with the other problems", () => {
    const dir = tempDir("mixture-keys");
    const p = demoWith(dir, (t) => t.replace("shares: { tickets: 0.5,", "shares: { tikets: 0.5,").replace("    format: text\n", "    format: text\n    weight: 2\n").replace("../build/demo", "out"));
    const r = siftpack(["plan", p]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/p\.yaml: 3 problems in the pipeline file/);
    expect(r.stderr).toMatch(/sources\[2\]\.weight: source "manuals" has a weight and the pipeline has a mixture; use one/);
    expect(r.stderr).toMatch(/mixture\.shares\.tikets: mixture\.shares names source "tikets", which is not a source \(did you mean "tickets"\?\); the sources are "tickets", "notes", "manuals"/);
    expect(r.stderr).toMatch(/mixture\.shares: mixture\.shares gives no share to "tickets"/);
  });

  it("refuses shares that do not sum to 1", () => {
    const dir = tempDir("mixture-sum");
    const p = demoWith(dir, (t) => t.replace("notes: 0.2", "notes: 0.4"));
    const r = siftpack(["plan", p]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/mixture\.shares: mixture\.shares sum to 1\.2, not 1; the shares are fractions of the train tokens$/m);
  });
});

describe("a mixture planned from the read phase (no pass before packing), a large file read in parts", () => {
  // Invented fitter notes, one JSON line each with default ids (file and line), and a second source.
  const make = (dir: string) => {
    mkdirSync(join(dir, "data"));
    const parts = ["door", "brake", "bogie", "sander", "pantograph", "coupler"];
    const lines = Array.from({ length: 400 }, (_, n) => JSON.stringify({ text: `Note ${n}: the ${parts[n % 6]} on car ${4700 + (n % 37)} was ${"checked and ".repeat(1 + (n % 9))}signed off.` }));
    writeFileSync(join(dir, "data/notes.jsonl"), lines.join("\n") + "\n");
    writeFileSync(join(dir, "data/manual.txt"), "Depot manual: how the sander hopper is filled, checked and sealed before the morning run.\n".repeat(30));
    // The same file name in a folder of its own: the manifest names the pipeline file.
    return (name: string, cluster: string) => {
      mkdirSync(join(dir, name));
      writeFileSync(
        join(dir, name, "p.yaml"),
        `siftpack: 1\nsources:\n  - { name: notes, files: ../data/notes.jsonl, format: jsonl }\n  - { name: manual, files: ../data/manual.txt, format: text }\n` +
          `mixture: { train_tokens: 9000, shares: { notes: 0.7, manual: 0.3 } }\nstages:\n  - tokenize: { encoding: gpt2, eos: true }\n  - pack: { length: 64 }\noutput: { dir: out }\n${cluster}`,
      );
      return join(dir, name, "p.yaml");
    };
  };

  it("builds the same bytes read whole or in parts, with any task count", () => {
    const dir = tempDir("mixture-parts");
    const pipeline = make(dir);
    const whole = siftpack(["run", pipeline("whole", ""), "--quiet"]);
    expect(whole.code, whole.stderr).toBe(0);
    const parts = siftpack(["run", pipeline("parts", "cluster: { tasks: 3, unit_mb: 0.01 }\n"), "--workers", "1", "--quiet"]);
    expect(parts.code, parts.stderr).toBe(0);
    expect(digests(join(dir, "parts/out"))).toEqual(digests(join(dir, "whole/out")));
    const m = JSON.parse(readFileSync(join(dir, "whole/out/manifest.json"), "utf8")).mixture as MixtureEntry;
    const notes = m.sources.find((s) => s.source === "notes")!;
    expect(notes.epochs).toBeLessThan(1);
    expect(ledgerOf(join(dir, "whole/out")).filter((l) => l.reason === "subsampled").length).toBe(400 - notes.extra_documents);
    const numpy = JSON.parse(python(TOKENS_PER_SOURCE, [join(dir, "whole/out")]));
    expect(numpy).toEqual(Object.fromEntries(m.sources.map((s) => [s.source, s.tokens_used])));
  });
});
