// `inspect` on real builds of the demo, and the best-fit and single strategies end to end, checked with NumPy and the reference tokenizer.
import { beforeAll, describe, expect, it } from "vitest";
import { readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { get_encoding } from "tiktoken";
import { python, ROOT, siftpack, tempDir, demoVariant } from "./cli.js";
import type { Manifest } from "../../src/output/manifest.js";

let demo: string;
let bestFit: string;
let single: string;
const manifests: Record<string, Manifest> = {};

/** The demo pipeline with another pack line, in a folder of its own. */
const variant = (name: string, packLine: string) => demoVariant(tempDir(name), "pack", packLine);

function build(pipeline: string, name: string): string {
  const out = join(tempDir(name), "out");
  const r = siftpack(["run", pipeline, "--out", out]);
  expect(r.stderr).toBe("");
  expect(r.code).toBe(0);
  manifests[out] = JSON.parse(readFileSync(join(out, "manifest.json"), "utf8"));
  return out;
}

beforeAll(() => {
  demo = build(join(ROOT, "pipelines/demo.yaml"), "insp-demo");
  bestFit = build(variant("bf", "{ length: 512, strategy: best-fit, emit: [positions, target_mask, cu_seqlens] }"), "insp-bf");
  single = build(variant("single", "{ length: 512, strategy: single }"), "insp-single");
});

// Reference decoder: the tiktoken npm package (WASM build of OpenAI's tiktoken).
const gpt2 = get_encoding("gpt2");
const refDecode = (ids: number[]) => new TextDecoder().decode(gpt2.decode(Uint32Array.from(ids)));

/** Rows as NumPy reads them from the shards (mmap, then one row). */
function numpyRow(dir: string, split: string, block: number): { tokens: number[]; segments: number[] } {
  return JSON.parse(
    python(
      `import json, sys, numpy as np
d, split, b = sys.argv[1], sys.argv[2], int(sys.argv[3]); m = json.load(open(d + "/manifest.json"))
for sh in m["splits"][split]["shards"]:
    if b < sh["blocks"]:
        print(json.dumps({"tokens": np.load(d + "/" + sh["tokens"], mmap_mode="r")[b].tolist(), "segments": np.load(d + "/" + sh["segments"], mmap_mode="r")[b].tolist()})); break
    b -= sh["blocks"]`,
      [dir, split, String(block)],
    ),
  );
}

describe("siftpack inspect", () => {
  it("prints a block's pieces between boundary lines; ids, segments and texts agree with NumPy and the reference decoder", () => {
    for (const [dir, split, block] of [
      [demo, "train", 0],
      [demo, "train", manifests[demo].splits.train.blocks - 1],
      [demo, "val", 3],
      [bestFit, "test", 1],
    ] as const) {
      const r = siftpack(["inspect", dir, "--split", split, "--block", String(block), "--json"]);
      expect(r.code).toBe(0);
      const j = JSON.parse(r.stdout);
      const np = numpyRow(dir, split, block);
      expect(j.tokens).toEqual(np.tokens);
      expect(j.segments).toEqual(np.segments);
      expect(j.pieces.map((p: any) => [p.start, p.end])).toEqual(runs(np.segments));
      for (const p of j.pieces) if (p.segment !== 0) expect(p.text).toBe(refDecode(np.tokens.slice(p.start, p.end)));
      const text = siftpack(["inspect", dir, "--split", split, "--block", String(block)]);
      expect(text.code).toBe(0);
      expect(text.stdout).toMatch(new RegExp(`^${split} block ${block} of ${manifests[dir].splits[split].blocks} `));
      const boundaries = text.stdout.split("\n").filter((l) => l.startsWith("┌─ "));
      expect(boundaries.length).toBe(j.pieces.length);
      for (const p of j.pieces.filter((x: any) => x.segment !== 0)) expect(text.stdout).toContain(`│ ${p.text.split("\n")[0]}`);
    }
  });

  it("--ids prints every token with its segment, position and target", () => {
    const r = siftpack(["inspect", demo, "--split", "train", "--block", "2", "--ids"]);
    expect(r.code).toBe(0);
    const lines = r.stdout.split("\n");
    const head = lines.findIndex((l) => l.startsWith("index  segment  position  target  id"));
    const rows = lines.slice(head + 1).filter(Boolean).map((l) => l.split(/\s+/));
    const np = numpyRow(demo, "train", 2);
    expect(rows.length).toBe(manifests[demo].length);
    rows.forEach((c, i) => {
      expect(Number(c[0])).toBe(i);
      expect(c[1]).toBe(np.segments[i] === 0 ? "pad" : String(np.segments[i]));
      expect(Number(c[4])).toBe(np.tokens[i]);
      expect(c[3] === "yes").toBe(i > 0 && np.segments[i] !== 0 && np.segments[i] === np.segments[i - 1]);
    });
  });

  it("exits 2 naming the valid range for a bad --split or --block", () => {
    const blocks = manifests[demo].splits.train.blocks;
    const cases: [string[], string][] = [
      [["--split", "dev", "--block", "0"], `siftpack: error: --split "dev": ${demo} has no such split; splits: train, val, test\n`],
      [["--split", "train", "--block", String(blocks)], `siftpack: error: --block ${blocks} is out of range for split "train": valid blocks are 0–${blocks - 1}\n`],
      [["--split", "train", "--block", "-1"], `siftpack: error: --block -1 is out of range for split "train": valid blocks are 0–${blocks - 1}\n`],
      [["--split", "train", "--block", "1.5"], `siftpack: error: --block 1.5 is out of range for split "train": valid blocks are 0–${blocks - 1}\n`],
      [["--split", "train", "--block", "0", "--mask", "m.gif"], `siftpack: error: --mask: name the picture file .svg or .png (got "m.gif")\n`],
    ];
    for (const [args, message] of cases) {
      const r = siftpack(["inspect", demo, ...args]);
      expect(r.code).toBe(2);
      expect(r.stderr).toBe(message);
      expect(r.stdout).toBe("");
    }
    expect(siftpack(["inspect", demo, "--split", "train"]).code).toBe(2);
  });

  it("--mask draws one causal triangle per piece (SVG, read by Python's XML parser) and a PNG whose pixels NumPy's mask reproduces", () => {
    const dir = tempDir("insp-mask");
    const block = 5;
    expect(siftpack(["inspect", demo, "--split", "train", "--block", String(block), "--mask", join(dir, "m.svg")]).stdout).toContain(`mask picture: ${join(dir, "m.svg")}`);
    expect(siftpack(["inspect", demo, "--split", "train", "--block", String(block), "--mask", join(dir, "m.png")]).code).toBe(0);
    const np = numpyRow(demo, "train", block);
    // Reference: xml.etree parses the SVG; NumPy builds causal ∧ same-document from the segments .npy.
    const got = JSON.parse(
      python(
        `import json, re, sys, zlib, struct, xml.etree.ElementTree as ET, numpy as np
d, block = sys.argv[1], int(sys.argv[3])
paths = ET.parse(d + "/m.svg").getroot().findall(".//{http://www.w3.org/2000/svg}path")
boxes = []
for p in paths:
    pts = [tuple(map(float, q.split())) for q in re.findall(r"[ML]([^MLZ]+)", p.get("d"))]
    xs, ys = [x for x, _ in pts], [y for _, y in pts]
    boxes.append([min(xs), max(xs), min(ys), max(ys)])
seg = np.array(json.loads(sys.argv[2]), dtype=np.int64); L = len(seg)
b = open(d + "/m.png", "rb").read(); at, idat = 8, b""
while at < len(b):
    n, = struct.unpack(">I", b[at:at+4]); t = b[at+4:at+8]
    if t == b"IHDR": w, h = struct.unpack(">II", b[at+8:at+16])
    if t == b"IDAT": idat += b[at+8:at+8+n]
    at += 12 + n
img = np.frombuffer(zlib.decompress(idat), dtype=np.uint8).reshape(h, 1 + 3 * w)[:, 1:].reshape(h, w, 3)
s = 800 // L
painted = (img[12:12 + L * s:s, 12:12 + L * s:s] != 255).any(axis=2)
attend = np.tril(np.ones((L, L), dtype=bool)) & (seg[:, None] == seg[None, :]) & (seg[:, None] != 0)
print(json.dumps({"boxes": boxes, "png_matches": bool((painted == attend).all()), "allowed": int(attend.sum())}))`,
        [dir, JSON.stringify(np.segments), String(block)],
      ),
    );
    const pieces = runs(np.segments).filter(([s]) => np.segments[s] !== 0);
    expect(got.boxes).toEqual(pieces.map(([s, e]) => [s, e, s, e]));
    expect(got.png_matches).toBe(true);
    expect(got.allowed).toBe(pieces.reduce((a, [s, e]) => a + ((e - s) * (e - s + 1)) / 2, 0));
  });
});

describe("best-fit and single on the demo", () => {
  it("NumPy rebuilds attention (from segments and from cu_seqlens), targets and positions, and finds cuts only in documents longer than a block", () => {
    const report = JSON.parse(
      python(
        `import json, sys, numpy as np
d = sys.argv[1]; m = json.load(open(d + "/manifest.json")); L = m["length"]; eos = m["tokenizer"]["eos_id"]
res = {}
for name, s in m["splits"].items():
    ok = True; pieces = no_eos = no_eos_short = part_ends = 0
    for sh in s["shards"]:
        part = {(o["row"], o["segment"]) for o in map(json.loads, open(d + "/" + sh["origins"])) if "part" in o}
        tok = np.load(d + "/" + sh["tokens"], mmap_mode="r").astype(np.int64)
        seg = np.load(d + "/" + sh["segments"], mmap_mode="r").astype(np.int64)
        tm = np.load(d + "/" + sh["target_mask"], mmap_mode="r")
        pos = np.load(d + "/" + sh["positions"], mmap_mode="r").astype(np.int64)
        cu = np.load(d + "/" + sh["cu_seqlens"], mmap_mode="r"); off = np.load(d + "/" + sh["cu_offsets"], mmap_mode="r")
        target = np.zeros(seg.shape, dtype=bool); target[:, 1:] = (seg[:, 1:] != 0) & (seg[:, 1:] == seg[:, :-1])
        ok &= bool((target == (tm == 1)).all())
        idx = np.arange(L)
        for r in range(seg.shape[0]):
            s_ = seg[r]
            attend = np.tril(np.ones((L, L), dtype=bool)) & (s_[:, None] == s_[None, :]) & (s_[:, None] != 0)
            # what a variable-length attention kernel builds from cu_seqlens: causal blocks [c_k, c_k+1)
            c = cu[off[r]:off[r + 1]]; doc = np.full(L, -1)
            for k in range(len(c) - 1): doc[c[k]:c[k + 1]] = k
            from_cu = np.tril(np.ones((L, L), dtype=bool)) & (doc[:, None] == doc[None, :]) & (doc[:, None] >= 0)
            ok &= bool((attend == from_cu).all())
            starts = np.flatnonzero((s_ != 0) & np.r_[True, s_[1:] != s_[:-1]])
            ends = np.r_[starts[1:], np.count_nonzero(s_)]
            ok &= bool((pos[r][s_ != 0] == np.concatenate([np.arange(e - b) for b, e in zip(starts, ends)])).all())
            for b, e in zip(starts, ends):
                pieces += 1
                # A mixture's part copy ends where its share does, not at end-of-text.
                if (r, int(s_[b])) in part and tok[r, e - 1] != eos and e - b != L:
                    part_ends += 1
                elif tok[r, e - 1] != eos:
                    no_eos += 1
                    no_eos_short += int(e - b != L)
    res[name] = {"ok": ok, "pieces": pieces, "cut_here": no_eos, "cut_short": no_eos_short, "part_ends": part_ends}
print(json.dumps(res))`,
        [bestFit],
      ),
    );
    const m = manifests[bestFit];
    expect(m.strategy).toBe("best-fit");
    for (const [name, s] of Object.entries(m.splits)) {
      // Every piece that does not end in end-of-text is a full block-length chunk of a long document.
      // The mixture's part copies (one per source, in train) end where their share does.
      expect(report[name]).toEqual({ ok: true, pieces: s.documents + s.targets_lost_to_cuts, cut_here: s.targets_lost_to_cuts, cut_short: 0, part_ends: name === "train" ? 3 : 0 });
    }
  });

  it("best-fit pads less than single and cuts fewer documents than concat; stats and plan show the new counts", () => {
    const [d, b, s] = [manifests[demo], manifests[bestFit], manifests[single]];
    for (const split of Object.keys(d.splits)) {
      expect(b.splits[split].padding_tokens).toBeLessThan(s.splits[split].padding_tokens);
      expect(b.splits[split].cut_documents).toBeLessThanOrEqual(d.splits[split].cut_documents);
      expect(b.splits[split].target_tokens).toBeGreaterThanOrEqual(d.splits[split].target_tokens);
      expect(b.splits[split].tokens).toBe(d.splits[split].tokens);
      // single and best-fit cut exactly the same (long) documents, into the same chunks.
      expect(b.splits[split].targets_lost_to_cuts).toBe(s.splits[split].targets_lost_to_cuts);
    }
    const j = JSON.parse(siftpack(["stats", bestFit, "--json"]).stdout);
    expect(j.strategy).toBe("best-fit");
    expect(Object.keys(j.splits.train)).toEqual(expect.arrayContaining(["padding_fraction", "cut_documents", "targets_lost_to_cuts", "continuation_tokens", "length_histogram"]));
    expect(j.splits.train.length_histogram.reduce((a: number, x: any) => a + x.documents, 0)).toBe(b.splits.train.documents);
    const text = siftpack(["stats", bestFit]).stdout;
    expect(text).toMatch(/^split\s+documents\s+blocks\s+tokens\s+targets\s+padding\s+padding %\s+cut docs\s+lost targets\s+continuation\s+shards$/m);
    expect(text).toMatch(/^tokens\s+train\s+val\s+test$/m);
    const plan = siftpack(["plan", variant("bf-plan", "{ length: 512, strategy: best-fit }")]);
    expect(plan.stdout).toMatch(/buffer_docs: 10000/);
    expect(plan.stdout).toMatch(/shuffle:\n\s+- train/);
  });

  it("rebuilds byte for byte (the shuffle is seeded), and shuffle: false changes only the row order", () => {
    const again = build(variant("bf2", "{ length: 512, strategy: best-fit, emit: [positions, target_mask, cu_seqlens] }"), "insp-bf2");
    expect(manifests[again].build_hash).toBe(manifests[bestFit].build_hash);
    const plain = build(variant("bf3", "{ length: 512, strategy: best-fit, emit: [positions, target_mask, cu_seqlens], shuffle: false }"), "insp-bf3");
    const rowsOf = (dir: string) =>
      JSON.parse(python(`import json, sys, numpy as np\nm = json.load(open(sys.argv[1] + "/manifest.json"))\nprint(json.dumps([",".join(map(str, r)) for sh in m["splits"]["train"]["shards"] for r in np.load(sys.argv[1] + "/" + sh["tokens"]).tolist()]))`, [dir])) as string[];
    const [shuffled, ordered] = [rowsOf(bestFit), rowsOf(plain)];
    expect(shuffled).not.toEqual(ordered);
    expect([...shuffled].sort()).toEqual([...ordered].sort());
    // Held-out splits are not shuffled by default: identical files either way.
    expect(manifests[plain].files.filter((f) => f.path.startsWith("val/"))).toEqual(manifests[bestFit].files.filter((f) => f.path.startsWith("val/")));
  });
});

/** [start, end) of each maximal run of equal segment values (padding included). */
function runs(seg: number[]): [number, number][] {
  const out: [number, number][] = [];
  for (let i = 0; i < seg.length; i++) {
    if (i === 0 || seg[i] !== seg[i - 1]) out.push([i, i + 1]);
    else out[out.length - 1][1] = i + 1;
  }
  return out;
}
