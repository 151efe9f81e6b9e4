// `siftpack init` on sections of manual pages: it proposes the page field as split.by, says why, and
// the build it proposes keeps every page in one split.
import { describe, expect, it } from "vitest";
import { mkdirSync, readFileSync, writeFileSync } from "node:fs";
import { gunzipSync } from "node:zlib";
import { join } from "node:path";
import { parse } from "yaml";
import { siftpack, tempDir } from "./cli.js";

const UNITS = ["door-drive", "pantograph", "sander", "saloon-heater", "wiper", "horn", "coupler", "bogie", "axle-box", "headlamp"];
const PAGES = Array.from({ length: 80 }, (_, i) => `${UNITS[i % UNITS.length]}-${Math.floor(i / UNITS.length) + 1}(8)`);
const SECTIONS = ["NAME", "CHECKS", "FAULTS", "NOTES"];

describe("siftpack init proposes a group", () => {
  it("splits manual page sections by page, explains it, and the build keeps each page in one split", () => {
    const dir = tempDir("init-group");
    mkdirSync(join(dir, "man"));
    const rows = PAGES.flatMap((page, p) =>
      SECTIONS.map((section, s) => ({ page, section, text: `${section} of ${page}: isolate car ${4700 + p}, check the unit by the book (step ${s + 1}), and log the reading with the time of the shift.` })),
    );
    writeFileSync(join(dir, "man/pages.jsonl"), rows.map((r) => JSON.stringify(r)).join("\n") + "\n");
    const r = siftpack(["init", "man/pages.jsonl", "--out", "man.yaml"], { cwd: dir });
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toContain("split by page: records of one page stay in one split, so held-out text shares no page with training text");
    const text = readFileSync(join(dir, "man.yaml"), "utf8");
    expect(text).toMatch(/# by: page keeps all records of one page in one split \(80 values in the sample, 4\.0 records each on average\)\./);
    expect(text).toMatch(/^ {2}- split: \{ by: page, holdout: \{ val: 0\.\d+, test: 0\.\d+ \} \}/m);
    const pipeline = parse(text);
    expect(pipeline.sources[0].meta).toContain("page");
    // No id field: the comment says how records are named instead.
    expect(text).toContain('records are named by file and line ("pages:<file>:<line>")');

    const run = siftpack(["run", "man.yaml"], { cwd: dir });
    expect(run.code, run.stderr).toBe(0);
    const ledger = gunzipSync(readFileSync(join(dir, "build/man/ledger.jsonl.gz"))).toString("utf8").trim().split("\n").map((l) => JSON.parse(l));
    const splitOf = new Map<string, Set<string>>();
    for (const l of ledger.filter((x) => x.fate === "kept")) {
      const page = rows[l.line - 1].page;
      splitOf.set(page, (splitOf.get(page) ?? new Set()).add(l.split));
    }
    expect(splitOf.size).toBeGreaterThan(40);
    for (const [page, splits] of splitOf) expect(splits.size, page).toBe(1);
    expect(new Set([...splitOf.values()].flatMap((s) => [...s])).size).toBeGreaterThan(1);
  });
});
