// Default ids depend only on a record's own file and line: adding, removing or renaming other files
// moves no record to another split, whether files are read whole or in parts (cluster.unit_mb).
import { afterAll, describe, expect, it } from "vitest";
import fc from "fast-check";
import { mkdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { gunzipSync } from "node:zlib";
import { loadPipeline, runPipeline } from "../../src/index.js";
import { tempDir } from "./cli.js";

const quiet = { info() {}, warn() {}, error() {}, debug() {} };
const made: string[] = [];
afterAll(() => {
  for (const d of made) rmSync(d, { recursive: true, force: true });
});

const WORDS = ["door", "brake", "sander", "pantograph", "bogie", "coupler", "wiper", "horn", "axle", "heater", "mirror", "step"];

/** A file of the corpus: JSONL lines (source "tickets") or one text page (source "pages"). */
interface CorpusFile {
  path: string;
  content: string;
}

/** 2 kB a line: a file of more than five lines is cut into parts at the smallest unit_mb (0.01). */
const PAD = "-".repeat(2000);

/** `lines` invented fitter notes, each unique (the file's name and line are in it). */
function jsonlFile(name: string, lines: number, seed: number): CorpusFile {
  const rows = Array.from({ length: lines }, (_, i) => JSON.stringify({ body: `Note ${name} ${i + 1}: ${WORDS[(seed + i) % WORDS.length]} on car ${4700 + ((seed * 7 + i) % 60)} checked at Harrow Lane, ${WORDS[(seed + 3 * i) % WORDS.length]} adjusted.`, pad: PAD }));
  return { path: `d/${name}.jsonl`, content: rows.join("\n") + "\n" };
}

function textFile(name: string, seed: number): CorpusFile {
  return { path: `t/${name}.txt`, content: `Manual page ${name}: ${WORDS[seed % WORDS.length]} service for the depot fleet, step ${seed}.\n` };
}

type FileSpec = { kind: "jsonl"; name: string; lines: number; seed: number } | { kind: "text"; name: string; seed: number };
const fileArb: fc.Arbitrary<FileSpec> = fc.oneof(
  fc.record({ kind: fc.constant("jsonl" as const), name: fc.stringMatching(/^[a-z0-9]{1,6}$/), lines: fc.integer({ min: 1, max: 12 }), seed: fc.nat(1000) }),
  fc.record({ kind: fc.constant("text" as const), name: fc.stringMatching(/^[a-z0-9]{1,6}$/), seed: fc.nat(1000) }),
);
const toFile = (f: FileSpec): CorpusFile => (f.kind === "jsonl" ? jsonlFile(f.name, f.lines, f.seed) : textFile(f.name, f.seed));
const uniquePaths = (files: CorpusFile[]) => [...new Map(files.map((f) => [f.path, f])).values()];

interface Fate {
  id: string;
  split: string;
}

/** Builds `files` (always at least one of each source) and returns source/file/line → id and split of every kept record. */
async function build(files: CorpusFile[], unitMb: number): Promise<Map<string, Fate>> {
  const dir = tempDir("stable-ids");
  made.push(dir);
  const all = uniquePaths([...files, { path: "d/zz-anchor.jsonl", content: '{"body":"Anchor note: every tram stabled by midnight."}\n' }, { path: "t/zz-anchor.txt", content: "Anchor page: the depot gate code.\n" }]);
  for (const f of all) {
    mkdirSync(dirname(join(dir, f.path)), { recursive: true });
    writeFileSync(join(dir, f.path), f.content);
  }
  writeFileSync(
    join(dir, "p.yaml"),
    [
      "siftpack: 1",
      "seed: 3",
      "sources:",
      "  - { name: tickets, files: d/*.jsonl, format: jsonl, text: body }",
      "  - { name: pages, files: t/*.txt, format: text }",
      "stages:",
      "  - split: { holdout: { val: 0.3, test: 0.3 } }",
      "  - tokenize: {}",
      "  - pack: { length: 16 }",
      "output: { dir: out }",
      `cluster: { unit_mb: ${unitMb} }`,
    ].join("\n") + "\n",
  );
  await runPipeline(await loadPipeline(join(dir, "p.yaml")), { log: quiet, workers: 1 });
  const out = new Map<string, Fate>();
  const ledger = gunzipSync(readFileSync(join(dir, "out/ledger.jsonl.gz"))).toString("utf8").trim().split("\n");
  for (const line of ledger) {
    const l = JSON.parse(line) as { source: string; id: string; file: string; line: number; fate: string; split: string };
    expect(l.fate).toBe("kept");
    out.set(`${l.source}\u0000${l.file}\u0000${l.line}`, { id: l.id, split: l.split });
  }
  return out;
}

describe("default ids", () => {
  it("are named by the record's file (below the pattern's folder) and line; a text file by its file alone", async () => {
    const fates = await build([jsonlFile("a", 2, 1), textFile("p", 2)], 1024);
    expect([...fates.values()].map((f) => f.id).sort()).toEqual(["pages:p.txt", "pages:zz-anchor.txt", "tickets:a.jsonl:1", "tickets:a.jsonl:2", "tickets:zz-anchor.jsonl:1"]);
  });

  it("do not change, nor does any record's split, when other files are added, removed or renamed, or a file is read in parts", async () => {
    await fc.assert(
      fc.asyncProperty(
        fc.array(fileArb, { minLength: 1, maxLength: 4 }),
        fc.array(fileArb, { minLength: 0, maxLength: 3 }),
        fc.array(fc.boolean(), { minLength: 4, maxLength: 4 }),
        fc.constantFrom(1024, 0.01),
        async (before, added, keep, unitMb) => {
          const old = uniquePaths(before.map(toFile));
          // Some files removed, others added (a file both removed and added under another name is a rename).
          const kept = old.filter((_, i) => keep[i]);
          const now = uniquePaths([...kept, ...added.map(toFile)]);
          const a = await build(old, 1024);
          const b = await build(now, unitMb);
          const ids = [...b.values()].map((f) => f.id);
          expect(new Set(ids).size).toBe(ids.length);
          for (const f of kept) {
            if (now.find((n) => n.path === f.path)?.content !== f.content) continue; // the same name, other content: an edited file
            for (const [key, fate] of a) if (key.split("\u0000")[1] === f.path) expect(b.get(key), key).toEqual(fate);
          }
        },
      ),
      { numRuns: 8 },
    );
  }, 120_000);
});
