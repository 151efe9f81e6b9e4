// The demo with a group split and a protected file, end to end: decontamination, `siftpack overlap`, and NumPy/Python second opinions.
import { beforeAll, describe, expect, it } from "vitest";
import { readFileSync, writeFileSync } from "node:fs";
import { gunzipSync } from "node:zlib";
import { join } from "node:path";
import { ROOT, python, siftpack, tempDir } from "./cli.js";

/** The lines this test puts in place of the demo's split stage. */
const STAGES = [
  "  - split: { by: depot, holdout: { val: 0.1, test: 0.1 }, min_docs: 20 }",
  `  - decontaminate: { against: [${ROOT}/sample-data/protected/eval-passages.txt], ngram: 13 }`,
];

let dir: string;
let out: string;
let manifest: any;
let ledger: any[];

beforeAll(() => {
  dir = tempDir("overlap");
  // The demo pipeline with absolute input paths, its split (and any decontaminate) replaced by ours before tokenize.
  const demo = readFileSync(join(ROOT, "pipelines/demo.yaml"), "utf8").replaceAll("../sample-data/", `${ROOT}/sample-data/`);
  // Also without the demo's line stripping and its mixture (the `mixture:` block, to the next
  // top-level key): the Python second opinion below recomputes from the source files' own text,
  // each kept record counted once.
  const withoutMixture = demo.replace(/^mixture:.*\n(?:[ #].*\n)*/m, "");
  const lines = withoutMixture.split("\n").filter((l) => !/^\s*- (split|decontaminate|strip_repeated_lines):/.test(l) && !/^\s*weight:/.test(l));
  lines.splice(lines.findIndex((l) => /^\s*- tokenize:/.test(l)), 0, ...STAGES);
  writeFileSync(join(dir, "demo.yaml"), lines.join("\n"));
  out = join(dir, "out");
  const r = siftpack(["run", join(dir, "demo.yaml"), "--out", out]);
  expect(r.stderr).toBe("");
  expect(r.code).toBe(0);
  manifest = JSON.parse(readFileSync(join(out, "manifest.json"), "utf8"));
  ledger = gunzipSync(readFileSync(join(out, "ledger.jsonl.gz"))).toString("utf8").split("\n").filter(Boolean).map((l) => JSON.parse(l));
});

describe("demo with decontamination and a group split", () => {
  it("drops exactly the ticket with the planted protected passage, naming the n-gram and the file", () => {
    const dropped = ledger.filter((l) => l.reason === "decontaminated");
    expect(dropped.map((l) => l.id)).toEqual(["T-2026-0197"]); // sample-data/README.md §6
    expect(dropped[0].detail.file).toMatch(/sample-data\/protected\/eval-passages\.txt$/);
    const passage2 = readFileSync(join(ROOT, "sample-data/protected/eval-passages.txt"), "utf8").split(/\n\s*\n/)[1].toLowerCase();
    expect(dropped[0].detail.ngram.split(" ")).toHaveLength(13);
    expect(passage2.replace(/[^a-z0-9]+/g, " ")).toContain(dropped[0].detail.ngram);
    expect(manifest.files.map((f: any) => f.path)).toContain("decontaminate.json");
  });

  it("puts every depot in one split and every split over min_docs", () => {
    const depotOf = new Map<string, string>();
    for (const f of ["tickets-2025.jsonl.gz", "tickets-2026.jsonl.gz"])
      for (const l of gunzipSync(readFileSync(join(ROOT, "sample-data/tickets", f))).toString().split("\n")) {
        try {
          const o = JSON.parse(l);
          depotOf.set(o.ticket_id, o.depot);
        } catch {}
      }
    const splitOf = new Map<string, string>();
    for (const l of ledger.filter((x) => x.fate === "kept" && x.source === "tickets")) {
      const d = depotOf.get(l.id)!;
      expect(splitOf.get(d) ?? l.split).toBe(l.split);
      splitOf.set(d, l.split);
    }
    expect(new Set(splitOf.values())).toEqual(new Set(["train", "val", "test"]));
    expect(manifest.stage_counts["split:below-min-docs"]).toBeUndefined();
  });

  it("Python recomputes the 13-gram figures from the source files and the ledger's splits", () => {
    // Second opinion written independently in Python: NFKC, Unicode format characters removed, lower-case,
    // words = [^\W_]+ (letters and digits; the demo text has no combining marks), 13-grams as tuples in sets.
    const got = JSON.parse(
      python(
        `import csv, gzip, io, json, os, re, sys, unicodedata
root, ledger_path, base = sys.argv[1], sys.argv[2], sys.argv[3]
texts = {}
for f in ["tickets-2025.jsonl.gz", "tickets-2026.jsonl.gz"]:
    for line in gzip.open(os.path.join(root, "sample-data/tickets", f), "rt", encoding="utf-8"):
        try: o = json.loads(line)
        except ValueError: continue
        if "body" in o: texts[("tickets", o["ticket_id"])] = o["body"]
with open(os.path.join(root, "sample-data/notes/shift-notes.csv"), newline="", encoding="utf-8") as fh:
    for row in csv.DictReader(fh): texts[("notes", row["note_id"])] = row["body"]
def words(t):
    t = unicodedata.normalize("NFKC", t)
    t = "".join(c for c in t if unicodedata.category(c) != "Cf").lower()
    return re.findall(r"[^\\W_]+", t)
def grams(t, n=13):
    w = words(t); return [tuple(w[i:i + n]) for i in range(len(w) - n + 1)]
docs = {}
for line in gzip.open(ledger_path, "rt"):
    l = json.loads(line)
    if l["fate"] != "kept": continue
    t = open(os.path.join(base, l["file"]), encoding="utf-8").read() if l["source"] == "manuals" else texts[(l["source"], l["id"])]
    docs.setdefault(l["split"], []).append(grams(t))
out = {}
for a, b in [("train", "val"), ("train", "test"), ("val", "test")]:
    ref = set(g for d in docs[a] for g in d)
    seen = [[g in ref for g in d] for d in docs[b]]
    out[a + "/" + b] = dict(documents=len(docs[b]), ngram_documents=sum(any(s) for s in seen), ngrams=sum(len(s) for s in seen), ngrams_seen=sum(sum(s) for s in seen))
print(json.dumps(out))`,
        [ROOT, join(out, "ledger.jsonl.gz"), dir],
      ),
    );
    for (const p of manifest.overlap.pairs) {
      const { documents, ngram_documents, ngrams, ngrams_seen } = p;
      expect({ documents, ngram_documents, ngrams, ngrams_seen }).toEqual(got[`${p.reference}/${p.held_out}`]);
    }
    expect(manifest.overlap.ngram).toBe(13);
  });

  it("NumPy recomputes the unigram figures from the shards", () => {
    // Second opinion: token counts per split read from the .npy shards (segments ≠ 0), then Jensen–Shannon
    // (½ KL(P‖M) + ½ KL(Q‖M), base 2), the add-one cross-entropy and the entropy written out in NumPy.
    const got = JSON.parse(
      python(
        `import json, sys, numpy as np
d = sys.argv[1]; m = json.load(open(d + "/manifest.json")); V = m["tokenizer"]["vocab_size"]
c = {}
for name, s in m["splits"].items():
    acc = np.zeros(V, np.float64)
    for sh in s["shards"]:
        t = np.load(d + "/" + sh["tokens"]).astype(np.int64); g = np.load(d + "/" + sh["segments"])
        acc += np.bincount(t[g != 0], minlength=V)
    c[name] = acc
kl = lambda x, y: float(np.sum(x[x > 0] * np.log2(x[x > 0] / y[x > 0])))
out = {}
for a, b in [("train", "val"), ("train", "test"), ("val", "test")]:
    p, q = c[a] / c[a].sum(), c[b] / c[b].sum(); mid = (p + q) / 2
    ce = -float(np.sum(c[b] * np.log2((c[a] + 1) / (c[a].sum() + V)))) / c[b].sum()
    h = -float(np.sum(q[q > 0] * np.log2(q[q > 0])))
    out[a + "/" + b] = [0.5 * kl(p, mid) + 0.5 * kl(q, mid), ce, h]
print(json.dumps(out))`,
        [out],
      ),
    );
    for (const p of manifest.overlap.pairs) {
      const [js, ce, h] = got[`${p.reference}/${p.held_out}`];
      // The manifest keeps 6 significant digits.
      expect(Math.abs(p.jensen_shannon_bits - js)).toBeLessThan(1e-5 * js);
      expect(Math.abs(p.cross_entropy_bits - ce)).toBeLessThan(1e-5 * ce);
      expect(Math.abs(p.entropy_bits - h)).toBeLessThan(1e-5 * h);
    }
  });
});

describe("siftpack overlap", () => {
  it("prints one row per pair of splits; --json gives the manifest's figures", () => {
    const r = siftpack(["overlap", out]);
    expect(r.code).toBe(0);
    expect(r.stderr).toBe("");
    for (const [a, b] of [["train", "val"], ["train", "test"], ["val", "test"]]) expect(r.stdout).toMatch(new RegExp(`^${a}\\s+${b}\\s+\\d+`, "m"));
    expect(r.stdout).toContain("word 13-grams");
    expect(r.stdout).toContain("settings from the pipeline's minhash dedup stage");
    const j = siftpack(["overlap", out, "--json", "--ngram", "13"]);
    expect(j.code).toBe(0);
    expect(JSON.parse(j.stdout)).toEqual(manifest.overlap);
  });

  it("--ngram other than the build's n is a usage error that says what the build computed", () => {
    const r = siftpack(["overlap", out, "--ngram", "8"]);
    expect(r.code).toBe(2);
    expect(r.stdout).toBe("");
    expect(r.stderr).toContain("--ngram 8: this build computed the overlap with n = 13");
  });

  it("--max-ngram-overlap exits 1 naming every pair above the rate, 0 when none is", () => {
    const worst = Math.max(...manifest.overlap.pairs.map((p: any) => p.ngram_fraction));
    expect(worst).toBeGreaterThan(0);
    expect(siftpack(["overlap", out, "--max-ngram-overlap", String(worst)]).code).toBe(0);
    const r = siftpack(["overlap", out, "--max-ngram-overlap", String(worst / 2)]);
    expect(r.code).toBe(1);
    expect(r.stdout).toMatch(/^train\s+val/m); // the figures are still printed
    const over = manifest.overlap.pairs.filter((p: any) => p.ngram_fraction > worst / 2);
    expect(r.stderr).toContain(`above --max-ngram-overlap ${worst / 2} in ${over.length} of 3 split pairs`);
    for (const p of over) expect(r.stderr).toContain(`${p.held_out} against ${p.reference}: ${p.ngrams_seen} of ${p.ngrams} 13-grams`);
    expect(siftpack(["overlap", out, "--max-ngram-overlap", "1.5"]).code).toBe(2);
  });

  it("says so when a manifest has no overlap figures", () => {
    const old = tempDir("overlap-old");
    const m = { ...manifest };
    delete m.overlap;
    writeFileSync(join(old, "manifest.json"), JSON.stringify(m));
    const r = siftpack(["overlap", old]);
    expect(r.code).toBe(1);
    expect(r.stderr).toContain("the manifest has no overlap figures");
  });

  it("takes the MinHash dedup stage's signatures for the near-duplicate figure, and gets the figures of signing again", () => {
    // Near copies marked, not removed, and a low threshold, so that some pairs fall in different
    // splits (depots) and the figure is not 0.
    const text = readFileSync(join(dir, "demo.yaml"), "utf8").replace(/- dedup: \{ method: minhash, threshold: 0\.8 \}/, "- dedup: { method: minhash, action: mark, threshold: 0.3 }");
    expect(text).toContain("action: mark, threshold: 0.3");
    writeFileSync(join(dir, "demo-taken.yaml"), text);
    // A second normalize after it leaves the (already normalized) texts as they are, but the figure
    // can no longer take the stage's signatures: it signs every text again.
    writeFileSync(join(dir, "demo-signed.yaml"), text.replace(/^(\s*- dedup: \{ method: minhash.*\n)/m, "$1  - normalize: { form: NFKC }\n"));
    const build = (name: string) => {
      const r = siftpack(["run", join(dir, `demo-${name}.yaml`), "--out", join(dir, `out-${name}`), "--no-cache"], { env: { SIFTPACK_LOG: "debug" } });
      expect(r.code, r.stderr).toBe(0);
      const taken = r.stderr.split("\n").flatMap((l) => (l.includes('"group packed"') ? [JSON.parse(l).signatures_taken as number | undefined] : []));
      return { taken, manifest: JSON.parse(readFileSync(join(dir, `out-${name}/manifest.json`), "utf8")) };
    };
    const taken = build("taken");
    const signed = build("signed");
    // Every kept record's signature was taken in the one, none in the other.
    expect(taken.taken.reduce((a: number, n) => a + (n ?? 0), 0)).toBe(taken.manifest.records.kept);
    expect(signed.taken.length).toBeGreaterThan(0);
    expect(signed.taken.every((n) => n === undefined)).toBe(true);
    expect(signed.manifest.records.kept).toBe(taken.manifest.records.kept);
    expect(taken.manifest.overlap.pairs.some((p: { near_duplicate_documents: number }) => p.near_duplicate_documents > 0)).toBe(true);
    expect(taken.manifest.overlap).toEqual(signed.manifest.overlap);
  }, 120_000);

  it("follows the pipeline's overlap settings: another n, near-duplicates off, or no figures at all", () => {
    const text = readFileSync(join(dir, "demo.yaml"), "utf8");
    writeFileSync(join(dir, "demo-8.yaml"), text + "\noverlap: { ngram: 8, near_duplicates: false }\n");
    expect(siftpack(["run", join(dir, "demo-8.yaml"), "--out", join(dir, "out-8")]).code).toBe(0);
    const m8 = JSON.parse(readFileSync(join(dir, "out-8/manifest.json"), "utf8"));
    expect(m8.overlap.ngram).toBe(8);
    expect(m8.overlap.near_duplicates.unavailable).toMatch(/switched off/);
    // shorter n-grams are shared more often than 13-grams
    expect(m8.overlap.pairs[0].ngram_fraction).toBeGreaterThan(manifest.overlap.pairs[0].ngram_fraction);
    writeFileSync(join(dir, "demo-off.yaml"), text + "\noverlap: false\n");
    expect(siftpack(["run", join(dir, "demo-off.yaml"), "--out", join(dir, "out-off")]).code).toBe(0);
    expect(JSON.parse(readFileSync(join(dir, "out-off/manifest.json"), "utf8")).overlap).toBeUndefined();
    const r = siftpack(["overlap", join(dir, "out-off")]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/no overlap figures \(the build had no held-out split, or "overlap: false"/);
  });
});
