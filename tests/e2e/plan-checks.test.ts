// `plan` checks everything a run needs before it reads a record, and lists every problem at once;
// `run` makes the same checks first, and a run that fails leaves no half-written .<out>.partial.
import { describe, expect, it } from "vitest";
import { existsSync, mkdirSync, readFileSync, writeFileSync } from "node:fs";
import { gzipSync } from "node:zlib";
import { join } from "node:path";
import { siftpack, tempDir } from "./cli.js";

/** Invented manual pages as JSONL: a page name and one section of text per line. */
function pages(n: number): string {
  const names = ["door-drive(8)", "pantograph(8)", "sander(5)", "saloon-heater(5)"];
  return Array.from({ length: n }, (_, i) => JSON.stringify({ page: names[i % 4], body: `Section ${i + 1} of the ${names[i % 4]} page: isolate the car, check the unit and log the reading in the depot book.` })).join("\n") + "\n";
}

/** A project with pages/manual.jsonl, a protected file and a pipeline file made of `lines`. */
function project(lines: string[]): string {
  const dir = tempDir("plan-checks");
  mkdirSync(join(dir, "pages"));
  mkdirSync(join(dir, "eval"));
  writeFileSync(join(dir, "pages/manual.jsonl"), pages(40));
  writeFileSync(join(dir, "eval/held.txt"), "The pantograph must be lowered before anyone climbs onto the roof of the car.\n");
  writeFileSync(join(dir, "p.yaml"), lines.join("\n") + "\n");
  return dir;
}

const GOOD = [
  "siftpack: 1",
  "sources:",
  "  - { name: manual, files: pages/*.jsonl, format: jsonl, text: body, meta: [page] }",
  "stages:",
  "  - split: { by: page, holdout: { val: 0.2, test: 0.2 } }",
  "  - decontaminate: { against: [eval/held.txt] }",
  "  - tokenize: {}",
  "  - pack: { length: 64 }",
  "output: { dir: out }",
];

describe("plan checks everything a run needs", () => {
  it("accepts a good pipeline and lists its inputs", () => {
    const dir = project(GOOD);
    const r = siftpack(["plan", join(dir, "p.yaml")]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/#   manual: 1 file \(pages\/manual\.jsonl\)/);
  });

  it("lists a schema typo, a split.by typo, a missing protected file and a missing source in one go (exit 2)", () => {
    const dir = project([
      "siftpack: 1",
      "sources:",
      "  - { name: manual, files: pages/*.jsonl, format: jsonl, text: body, meta: [page] }",
      "  - { name: extra, files: more/*.txt, format: text }",
      "stages:",
      "  - split: { by: pages, holdout: { val: 0.2, test: 0.2 } }",
      "  - decontaminate: { against: [eval/held-out.txt] }",
      "  - tokenize: {}",
      "  - pack: { length: 64 }",
      "output: { dir: out, shard_block: 64 }",
    ]);
    const r = siftpack(["plan", join(dir, "p.yaml")]);
    expect(r.code).toBe(2);
    const lines = r.stderr.trim().split("\n");
    expect(lines[0]).toMatch(/^siftpack: error: .*p\.yaml: 4 problems: 2 in the pipeline file, 2 with the files it names$/);
    expect(lines.slice(1).map((l) => l.replace(/^ {2}.*p\.yaml:/, "p.yaml:"))).toEqual([
      'p.yaml:10:21: output.shard_block: unknown key "shard_block" (did you mean "shard_blocks"?); allowed: dir, shard_blocks',
      'p.yaml:6:18: stages[0].split.by: split.by is "pages" but no source lists it in meta (did you mean "page"?); records without it are split by id',
      'p.yaml:4:27: sources[1].files: source "extra": no file matches "more/*.txt"',
      `p.yaml:7:32: stages[1].decontaminate.against[0]: decontaminate: no file matches "eval/held-out.txt" (relative to ${dir})`,
    ]);
    // run says the same before it writes anything beside the output.
    const run = siftpack(["run", join(dir, "p.yaml")]);
    expect(run.code).toBe(2);
    expect(run.stderr).toBe(r.stderr);
    expect(existsSync(join(dir, ".out.partial"))).toBe(false);
    expect(existsSync(join(dir, ".out.cache"))).toBe(false);
  });

  it("exits 1 when only files are missing or unreadable, naming each (a cut protected .gz among them)", () => {
    const dir = project(GOOD.map((l) => l.replace("against: [eval/held.txt]", "against: [eval/held.txt, eval/cut.txt.gz]").replace("pages/*.jsonl", "page/*.jsonl")));
    const gz = gzipSync("The brake test is done with the car empty.\n".repeat(200));
    writeFileSync(join(dir, "eval/cut.txt.gz"), gz.subarray(0, gz.length - 20));
    const r = siftpack(["plan", join(dir, "p.yaml")]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/p\.yaml: 2 problems with the files it names\n/);
    expect(r.stderr).toMatch(/p\.yaml:3:\d+: sources\[0\]\.files: source "manual": no file matches "page\/\*\.jsonl"\n/);
    expect(r.stderr).toMatch(/p\.yaml:6:\d+: stages\[1\]\.decontaminate\.against\[1\]: decontaminate: cannot read protected file eval\/cut\.txt\.gz: corrupt gzip data: unexpected end of file\n/);
  });

  it("names a tokenizer file that is not one, and an output folder that is not a build", () => {
    const dir = project(GOOD.map((l) => l.replace("tokenize: {}", "tokenize: { tokenizer: tok.json }")));
    writeFileSync(join(dir, "tok.json"), '{"model": {"type": "BPE", "vocab": {}}');
    mkdirSync(join(dir, "out"));
    writeFileSync(join(dir, "out/timetable.txt"), "mine");
    const r = siftpack(["plan", join(dir, "p.yaml")]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/p\.yaml: 2 problems: 1 in the pipeline file, 1 with the files it names\n/);
    expect(r.stderr).toMatch(/stages\[2\]\.tokenize\.tokenizer: .*tok\.json/);
    expect(r.stderr).toMatch(/output\.dir: refusing to replace .*out: it is not empty and holds no manifest\.json/);
  });
});

describe("plan reads the first row of each input file", () => {
  it("warns when it would be quarantined (the wrong text field), and still exits 0", () => {
    const dir = project(GOOD.map((l) => l.replace("text: body", "text: content")));
    const r = siftpack(["plan", join(dir, "p.yaml")]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/^# warning: source "manual": pages\/manual\.jsonl:1: field "content" is missing \(the first row; a run quarantines every row like it\)$/m);
    expect(JSON.parse(siftpack(["plan", join(dir, "p.yaml"), "--json"]).stdout).warnings).toHaveLength(1);
    // The good pipeline has none.
    const good = project(GOOD);
    expect(siftpack(["plan", join(good, "p.yaml")]).stdout).not.toContain("# warning");
  });
});

describe("a failed run", () => {
  it("with a missing protected file stops before it writes anything: no .partial folder", () => {
    const dir = project(GOOD.map((l) => l.replace("eval/held.txt", "eval/gone.txt")));
    const r = siftpack(["run", join(dir, "p.yaml")]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/^siftpack: error: decontaminate: no file matches "eval\/gone\.txt"/);
    expect(existsSync(join(dir, ".out.partial"))).toBe(false);
    expect(existsSync(join(dir, "out"))).toBe(false);
  });

  it("that fails while reading (a cut .gz input) removes its .partial folder and keeps the cache", () => {
    const dir = project(GOOD.map((l) => l.replace("pages/*.jsonl", "pages/*.jsonl*")));
    const gz = gzipSync(pages(400));
    writeFileSync(join(dir, "pages/more.jsonl.gz"), gz.subarray(0, gz.length - 30));
    const r = siftpack(["run", join(dir, "p.yaml")]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/pages\/more\.jsonl\.gz is truncated/);
    expect(existsSync(join(dir, ".out.partial"))).toBe(false);
    expect(existsSync(join(dir, ".out.run"))).toBe(false);
    // The file read in full before the failure is in the cache, for the next run.
    expect(existsSync(join(dir, ".out.cache"))).toBe(true);
    expect(readFileSync(join(dir, "p.yaml"), "utf8")).toContain("pages/*.jsonl*");
  });
});
