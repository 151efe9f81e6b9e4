// Bad input through the real CLI: quarantined with file, line and error, or a one-line error and exit code.
import { describe, expect, it } from "vitest";
import { existsSync, mkdirSync, readFileSync, writeFileSync } from "node:fs";
import { gzipSync, gunzipSync } from "node:zlib";
import { join } from "node:path";
import { siftpack, tempDir } from "./cli.js";

const ticket = (id: number, body: string) => JSON.stringify({ ticket_id: `T-${id}`, depot: "Quayside", body });
const words = (n: number) => `Door sensor on car ${n} replaced after the fault was traced to a loose connector.`;

/** A small corpus with one of each kind of bad record, and a pipeline over it. */
function brokenCorpus(maxBad: number): string {
  const dir = tempDir("bad");
  mkdirSync(join(dir, "data"));
  const good = Array.from({ length: 6 }, (_, i) => ticket(i + 1, words(i + 1)));
  const jsonl = Buffer.concat([
    Buffer.from(good.slice(0, 2).join("\n") + "\n"),
    Buffer.from('{"ticket_id": "T-90", "body": "truncated\n'), // line 3: malformed JSON
    Buffer.from('{"ticket_id": "T-91", "depot": "Quayside", "body": "bad byte \xff here"}\n', "latin1"), // line 4: invalid UTF-8
    Buffer.from(JSON.stringify({ ticket_id: "T-92", depot: "Quayside" }) + "\n"), // line 5: no body
    Buffer.from(good.slice(2).join("\n") + "\n"),
  ]);
  writeFileSync(join(dir, "data/a.jsonl"), jsonl);
  writeFileSync(join(dir, "data/b.jsonl.gz"), gzipSync(Buffer.from(good.map((g) => g.replace(/T-/, "T-B")).join("\n") + "\n")));
  writeFileSync(join(dir, "data/empty.jsonl"), "");
  writeFileSync(join(dir, "notes.csv"), `note_id,depot,body\nN1,Quayside,"${words(7)}"\nN2,Quayside,"${words(8)}",extra\nN3,Northfold,"${words(9)}"\n`);
  writeFileSync(
    join(dir, "p.yaml"),
    `siftpack: 1
max_bad_fraction: ${maxBad}
sources:
  - { name: tickets, files: "data/*.jsonl*", format: jsonl, text: body, id: ticket_id, meta: [depot] }
  - { name: notes, files: notes.csv, format: csv, text: body, id: note_id, meta: [depot] }
stages:
  - normalize: {}
  - tokenize: {}
  - pack: { length: 32 }
output: { dir: out }
`,
  );
  return dir;
}

describe("bad records are quarantined, counted, and the build goes on", () => {
  const dir = brokenCorpus(0.5);
  const r = siftpack(["run", join(dir, "p.yaml")]);
  const q = () =>
    readFileSync(join(dir, "out/quarantine.jsonl"), "utf8")
      .trim()
      .split("\n")
      .map((l) => JSON.parse(l));

  it("exits 0 with only the quarantine to show for it", () => {
    expect(r.stderr).toBe("");
    expect(r.code).toBe(0);
  });

  it("names file, line and error for each bad record", () => {
    const entries = q().map((e) => `${e.source} ${e.file}:${e.line}: ${e.error}`);
    expect(entries).toEqual([
      expect.stringMatching(/^tickets data\/a\.jsonl:3: malformed JSON/),
      expect.stringMatching(/^tickets data\/a\.jsonl:4: invalid UTF-8/),
      expect.stringMatching(/^tickets data\/a\.jsonl:5: field "body" is missing/),
      expect.stringMatching(/^tickets data\/empty\.jsonl:0: empty file/),
      expect.stringMatching(/^notes notes\.csv:2: .*expected 3 fields, got 4/),
    ]);
  });

  it("counts them in the manifest and the ledger", () => {
    const m = JSON.parse(readFileSync(join(dir, "out/manifest.json"), "utf8"));
    expect(m.records).toMatchObject({ read: 19, kept: 14, dropped: 0, quarantined: 5 });
    expect(m.records.by_source.tickets).toMatchObject({ read: 16, kept: 12, dropped: 0, quarantined: 4 });
    expect(m.records.by_source.notes).toMatchObject({ read: 3, kept: 2, dropped: 0, quarantined: 1 });
    const ledger = gunzipSync(readFileSync(join(dir, "out/ledger.jsonl.gz"))).toString().trim().split("\n").map((l) => JSON.parse(l));
    expect(ledger.filter((l) => l.fate === "quarantined").map((l) => `${l.file}:${l.line}`)).toEqual(q().map((e) => `${e.file}:${e.line}`));
  });
});

describe("errors that stop the run", () => {
  it("too many bad records: exit 1 naming the fraction and the quarantine file", () => {
    const dir = brokenCorpus(0.1);
    const r = siftpack(["run", join(dir, "p.yaml")]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/^siftpack: error: 5 of 19 input records \(26\.3 %\) were quarantined, more than max_bad_fraction 0\.1; see .*quarantine\.jsonl\n$/);
    expect(existsSync(join(dir, "out/manifest.json"))).toBe(false);
    // The file it names is there after the run (the run's .partial folder is not), one line per bad record.
    const named = /see (.*quarantine\.jsonl)\n$/.exec(r.stderr)![1];
    expect(readFileSync(named, "utf8").trim().split("\n")).toHaveLength(5);
  });

  it("a missing input: one line, exit 1", () => {
    const dir = brokenCorpus(0.5);
    writeFileSync(join(dir, "p.yaml"), readFileSync(join(dir, "p.yaml"), "utf8").replace("notes.csv", "missing/*.csv"));
    const r = siftpack(["run", join(dir, "p.yaml")]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/^siftpack: error: source "notes": no file matches "missing\/\*\.csv".*\n$/);
  });

  it("an output directory that cannot be created: one line, exit 1", () => {
    const dir = brokenCorpus(0.5);
    writeFileSync(join(dir, "blocker"), "a file where a directory should be");
    const r = siftpack(["run", join(dir, "p.yaml"), "--out", join(dir, "blocker/out")]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/^siftpack: error: cannot create output directory .*blocker\/out: a path component is not a directory\n$/);
  });

  it("refuses to replace a directory that is not a siftpack output", () => {
    const dir = brokenCorpus(0.5);
    mkdirSync(join(dir, "precious"));
    writeFileSync(join(dir, "precious/notes.txt"), "keep me");
    const r = siftpack(["run", join(dir, "p.yaml"), "--out", join(dir, "precious")]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/refusing to replace .*precious: it is not empty and holds no manifest\.json/);
    expect(readFileSync(join(dir, "precious/notes.txt"), "utf8")).toBe("keep me");
  });

  it("a wrong pipeline file: every problem, exit 2", () => {
    const dir = tempDir("badpipe");
    writeFileSync(join(dir, "p.yaml"), "siftpack: 1\nsources: []\nstages:\n  - tokenise: {}\noutput: { dir: out, shards: 3 }\n");
    const r = siftpack(["plan", join(dir, "p.yaml")]);
    expect(r.code).toBe(2);
    const lines = r.stderr.trim().split("\n");
    expect(lines[0]).toMatch(/^siftpack: error: .*p\.yaml: \d+ problems in the pipeline file$/);
    expect(r.stderr).toContain(`did you mean "tokenize"?`);
    expect(r.stderr).toMatch(/p\.yaml:5:\d+: output\.shards: unknown key "shards" \(did you mean "shard_blocks"\?\)/);
    expect(r.stderr).toMatch(/sources: expected a non-empty list/);
  });

  it("a wrong command line: exit 2; a missing pipeline file: exit 2", () => {
    expect(siftpack(["frobnicate"]).code).toBe(2);
    const r = siftpack(["plan", "/nonexistent/p.yaml"]);
    expect(r.code).toBe(2);
    expect(r.stderr).toBe("siftpack: error: /nonexistent/p.yaml: cannot read the pipeline file: no such file or directory\n");
  });

  it("plan prints the resolved plan with defaults and exits 0", () => {
    const r = siftpack(["plan", "pipelines/demo.yaml"]);
    expect(r.code).toBe(0);
    expect(r.stdout).toContain("max_blank_lines: 1");
    expect(r.stdout).toMatch(/# {3}tickets: 2 files/);
  });
});
