// The help-desk demo end to end through the real CLI: conversations rendered by the template, packed
// whole or cut at turn edges, and a target mask that NumPy rebuilds and that holds exactly the
// help-desk's answers with their closing markers.
import { beforeAll, describe, expect, it } from "vitest";
import { readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { ledgerLines as ledger, python, ROOT, siftpack, tempDir } from "./cli.js";
import { loadEncoding } from "../../src/tokenizer/index.js";
import type { Manifest } from "../../src/output/manifest.js";

let out: string;
let manifest: Manifest;

function build(pipeline: string, dir: string): string {
  const o = join(dir, "out");
  const r = siftpack(["run", pipeline, "--out", o, "--quiet"]);
  expect(r.stderr).toBe("");
  expect(r.code).toBe(0);
  return o;
}

/** The help-desk pipeline with its source path made absolute and `edit` applied to its text, in a folder of its own. */
function variant(name: string, edit: (text: string) => string): string {
  const dir = tempDir(name);
  const text = readFileSync(join(ROOT, "pipelines/helpdesk.yaml"), "utf8").replaceAll("../sample-data/", `${ROOT}/sample-data/`);
  const file = join(dir, "helpdesk.yaml");
  writeFileSync(file, edit(text));
  return file;
}

beforeAll(() => {
  out = build("pipelines/helpdesk.yaml", tempDir("helpdesk"));
  manifest = JSON.parse(readFileSync(join(out, "manifest.json"), "utf8"));
});

// NumPy (Debian's python3-numpy) reads the shards: the target mask is rebuilt from the segment ids
// (same non-zero segment as the token before) and the origins index's trained ranges, and each
// conversation's target token ids are gathered in document order.
const NUMPY_CHECK = `import json, sys, numpy as np
d = sys.argv[1]; m = json.load(open(d + "/manifest.json"))
out = {"problems": [], "targets": {}, "target_tokens": 0}
for split, s in m["splits"].items():
    for sh in s["shards"]:
        tok = np.load(d + "/" + sh["tokens"]); seg = np.load(d + "/" + sh["segments"]).astype(np.int64)
        mask = np.load(d + "/" + sh["target_mask"])
        learn = np.ones(seg.shape, dtype=bool)
        lines = [json.loads(l) for l in open(d + "/" + sh["origins"])]
        for l in lines:
            if "trained" not in l: continue
            learn[l["row"], l["start"]:l["end"]] = False
            for a, b in l["trained"]: learn[l["row"], a:b] = True
        same = np.zeros(seg.shape, dtype=bool)
        same[:, 1:] = (seg[:, 1:] == seg[:, :-1]) & (seg[:, 1:] != 0)
        rebuilt = (same & learn).astype(np.uint8)
        if not np.array_equal(rebuilt, mask): out["problems"].append(sh["target_mask"] + ": differs from the rebuilt mask at " + str(np.argwhere(rebuilt != mask)[:5].tolist()))
        out["target_tokens"] += int(mask.sum())
        for l in lines:
            row = l["row"]
            for i in range(l["start"], l["end"]):
                if mask[row, i]: out["targets"].setdefault(l["id"], []).append([l["offset"] + i - l["start"], int(tok[row, i])])
for k in out["targets"]: out["targets"][k] = [t for _, t in sorted(out["targets"][k])]
print(json.dumps(out))`;

describe("help-desk conversations, end to end", () => {
  it("accounts for every conversation: three malformed ones quarantined with their lines, a copy and a contaminated answer dropped", () => {
    const r = manifest.records;
    expect(r).toMatchObject({ read: 47, quarantined: 3, dropped: 2 });
    expect(r.by_reason).toMatchObject({ duplicate: 1, decontaminated: 1 });
    const q = readFileSync(join(out, "quarantine.jsonl"), "utf8").trim().split("\n").map((l) => JSON.parse(l));
    expect(q.map((e) => [e.line, e.error])).toEqual([
      [44, 'turn 1 of "messages": unknown role "driver" (the source\'s roles are technician, helpdesk)'],
      [45, 'field "messages" is an empty list of turns'],
      [46, 'turn 2 of "messages" has no "value"'],
    ]);
    expect(ledger(out)).toHaveLength(47);
    // The copy is found by exact dedup on the conversation; the contact details in HD-0042's question are redacted.
    const dropped = ledger(out).filter((l) => l.fate === "dropped");
    expect(dropped[0]).toMatchObject({ id: "HD-0043", reason: "duplicate", detail: { of: "HD-0004" } });
    // HD-0047's answer quotes a protected passage: decontaminate checks every turn and drops the conversation.
    expect(dropped[1]).toMatchObject({ id: "HD-0047", reason: "decontaminated" });
    expect(manifest.stage_counts).toMatchObject({ "redact:email": 1, "redact:phone": 1 });
  });

  it("NumPy rebuilds the mask; the targets of each conversation decode to exactly its answers and their closing markers", () => {
    const got = JSON.parse(python(NUMPY_CHECK, [out])) as { problems: string[]; targets: Record<string, number[]>; target_tokens: number };
    expect(got.problems).toEqual([]);
    const enc = loadEncoding("gpt2");
    const rows = readFileSync(join(ROOT, "sample-data/helpdesk/helpdesk.jsonl"), "utf8").trim().split("\n").map((l) => JSON.parse(l));
    const kept = ledger(out).filter((l) => l.fate === "kept");
    expect(kept.length).toBe(42);
    for (const k of kept) {
      const conv = rows.find((x) => x.conv_id === k.id)!;
      const answers = conv.messages.filter((m: any) => m.from === "helpdesk").map((m: any) => m.value + "\n<|endoftext|>");
      const ids = got.targets[k.id];
      // Every trained turn starts after its "### Help-desk:" marker, so no target is lost to a segment start.
      expect(enc.decode(ids)).toBe(answers.join(""));
      // The closing marker's end-of-text is the special id, never text spelling it.
      expect(ids.filter((t) => t === enc.eosId).length).toBe(answers.length);
    }
    const splits = Object.values(manifest.splits);
    expect(splits.reduce((a, s) => a + s.target_tokens, 0)).toBe(got.target_tokens);
  });

  it("counts the conversations in the manifest: tokens per role, trained share, the long one cut at a turn edge", () => {
    const c = Object.values(manifest.splits).map((s) => s.conversations!);
    const sum = (f: (x: (typeof c)[number]) => number) => c.reduce((a, x) => a + f(x), 0);
    expect(sum((x) => x.conversations)).toBe(42);
    expect(sum((x) => x.cut_at_turns)).toBe(1);
    expect(sum((x) => x.dropped)).toBe(0);
    for (const [name, s] of Object.entries(manifest.splits)) {
      const x = s.conversations!;
      expect(Object.values(x.tokens_by_role).reduce((a, n) => a + n, 0), name).toBe(x.tokens);
      expect(x.tokens, name).toBe(s.tokens);
      // Here no trained token is the first of a piece, so every trained token is a target, and the cut lost none.
      expect(x.trained_tokens, name).toBe(s.target_tokens);
      expect(s.targets_lost_to_cuts, name).toBe(0);
      expect(x.min_turns).toBeGreaterThanOrEqual(2);
      // The per-source token statistics count a conversation's trained tokens as its targets too.
      expect((manifest as any).token_stats[name].by_source.helpdesk.target_tokens, name).toBe(s.target_tokens);
    }
  });

  it("run and stats print the conversations per split", () => {
    const r = siftpack(["stats", out]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/^split\s+conversations\s+turns\s+min-max turns\s+technician tokens\s+helpdesk tokens/m);
    expect(r.stdout).toMatch(new RegExp(`^train\\s+${manifest.splits.train.conversations!.conversations}\\s`, "m"));
  });

  it("plan shows a conversation as the template renders it, the trained part marked", () => {
    const r = siftpack(["plan", "pipelines/helpdesk.yaml"]);
    expect(r.code).toBe(0);
    expect(r.stdout).toContain(["#     template_example: |-", "#       ### Technician:", "#       <technician text>", "#       ### Help-desk:", "#       ⟦<helpdesk text>", "#       <|endoftext|>⟧"].join("\n"));
  });

  it("inspect marks the trained tokens", () => {
    const r = siftpack(["inspect", out, "--split", "train", "--block", "0"]);
    expect(r.code).toBe(0);
    expect(r.stdout).toContain("the tokens trained on (targets) are between ⟦ and ⟧");
    expect(r.stdout).toMatch(/### Help-desk:\n│ ⟦[^⟧]+<\|endoftext\|>⟧/);
    expect(r.stdout).not.toMatch(/⟦### Technician/);
  });

  it("the report has a conversations section whose every figure is the manifest's", () => {
    const file = join(tempDir("helpdesk-report"), "report.html");
    const r = siftpack(["report", out, "--out", file]);
    expect(r.code).toBe(0);
    const html = readFileSync(file, "utf8");
    const section = html.slice(html.indexOf('id="conversations"'));
    const figs = [...section.slice(0, section.indexOf("</section>")).matchAll(/data-fig="([^"]+)" data-value="([^"]*)"/g)];
    expect(figs.length).toBeGreaterThan(10);
    const unescape = (x: string) => x.replace(/&quot;/g, '"').replace(/&amp;/g, "&");
    for (const [, path, value] of figs) {
      const at = (JSON.parse(unescape(path)) as (string | number)[]).reduce((o: any, k) => o?.[k], manifest);
      expect(String(at), path).toBe(unescape(value));
    }
  });

  it("long_conversations: drop leaves the long one out with a ledger reason", () => {
    const o = build(variant("helpdesk-drop", (t) => t.replace("strategy: best-fit,", "strategy: best-fit, long_conversations: drop,")), tempDir("helpdesk-drop"));
    const dropped = ledger(o).filter((l) => l.reason === "conversation-too-long");
    expect(dropped.map((l) => l.id)).toEqual(["HD-0041"]);
    const m = JSON.parse(readFileSync(join(o, "manifest.json"), "utf8")) as Manifest;
    expect(Object.values(m.splits).reduce((a, s) => a + s.conversations!.dropped, 0)).toBe(1);
  });

  it("a template naming a special token the tokenizer lacks is a pipeline error at its place in the file", () => {
    const file = variant("helpdesk-special", (t) => t.replace('after: "\\n[[<|endoftext|>]]"', 'after: "[[<|end_of_answer|>]]"'));
    const r = siftpack(["run", file, "--out", join(tempDir("helpdesk-special"), "out")]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/helpdesk\.yaml:\d+:\d+: stages\[6\]\.tokenize\.template\.roles\.helpdesk\.after: \[\[<\|end_of_answer\|>\]\] is not a special token of the tokenizer \(it has <\|endoftext\|>\)/);
    expect(r.stderr).not.toMatch(/\n\s+at /);
  });
});
