// A large JSONL file read in parts (cluster.unit_mb) builds what reading it whole builds: same
// build hash, same ledger line for line, for a whole-stream stage (tokenizer training), MinHash
// with exact confirmation over near-duplicates planted in different parts, and a library stage of
// form `whole` that must see every record in input order with its file-wide row and line.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { mkdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { gunzipSync } from "node:zlib";
import { join } from "node:path";
import { defineStage, loadPipeline, runPipeline, schema, STAGES } from "../../src/index.js";
import type { DocRecord } from "../../src/types.js";
import { unitsOf } from "../../src/engine/unit-io.js";
import { siftpack, tempDir } from "./cli.js";

const LINES = 400;
/** About 20 KB a part: the ~90 KB file is cut into several. */
const UNIT_MB = 0.02;
const BAD_LINE = 205;
/** Planted across parts: exact copies (later line, earlier line) and copies with their last word changed. */
const COPIES: [number, number][] = [[377, 12]];
const NEAR: [number, number][] = [
  [330, 30],
  [390, 150],
];

/** A small seeded generator, so the notes are the same on every run. */
function prng(seed: number): () => number {
  let s = seed >>> 0;
  return () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
}

/** The invented notes of a tram depot's fitters, one JSON line each; one line malformed, some copied. */
function notes(): string {
  const rnd = prng(4711);
  const pick = <T>(a: readonly T[]) => a[Math.floor(rnd() * a.length)];
  const parts = ["door", "brake", "bogie", "sander", "horn", "wiper", "pantograph", "coupler", "wheelset", "axle box", "cab heater", "headlamp", "step plate", "mirror"];
  const faults = ["sticks when cold", "squeals at low speed", "was found loose", "shows uneven wear", "trips the breaker", "leaks grease", "rattles over the points", "fails the morning test"];
  const acts = ["Replaced", "Adjusted", "Cleaned and greased", "Tightened", "Swapped with a spare", "Logged for the day shift", "Inspected with the foreman"];
  const depots = ["Kestrel Street", "Millrace Yard", "Upper Fenwick"];
  const texts: string[] = [];
  const lines: string[] = [];
  for (let n = 1; n <= LINES; n++) {
    const car = 4700 + Math.floor(rnd() * 40);
    const depot = pick(depots);
    const sentences = Array.from({ length: 2 + Math.floor(rnd() * 2) }, () => `${pick(acts)} the ${pick(parts)} on car ${car}, which ${pick(faults)}.`);
    let text = `Note ${n} from ${depot}: ${sentences.join(" ")}`;
    const copy = COPIES.find(([at]) => at === n);
    const near = NEAR.find(([at]) => at === n);
    // The last word changed: one word shingle of about forty differs, far above the 0.8 threshold.
    if (copy) text = texts[copy[1] - 1];
    if (near) text = texts[near[1] - 1].replace(/\S+$/, "again.");
    texts.push(text);
    lines.push(n === BAD_LINE ? `{"text": "Note ${n} from ${depot}: cut off in the expo` : JSON.stringify({ text, car, depot }));
  }
  return lines.join("\n") + "\n";
}

interface LedgerLine {
  source: string;
  id?: string;
  file: string;
  line: number;
  fate: "kept" | "dropped" | "quarantined";
  reason?: string;
  detail?: Record<string, unknown>;
}

/** A default id: source, file and the line in the whole file, whichever part read it. */
const idOf = (line: number) => `t:notes.jsonl:${line}`;

let dir: string;
let offsets: number[]; // byte offset of each line's start, by 1-based line

beforeAll(() => {
  dir = tempDir("parts");
  mkdirSync(join(dir, "data"));
  const text = notes();
  writeFileSync(join(dir, "data/notes.jsonl"), text);
  offsets = [NaN, 0];
  for (let at = text.indexOf("\n"); at >= 0 && at < text.length - 1; at = text.indexOf("\n", at + 1)) offsets.push(Buffer.byteLength(text.slice(0, at + 1)));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Writes the pipeline under <dir>/<name>/p.yaml (same depth for every build, so the same input path); returns its path. */
function pipeline(name: string, stages: string, parts: boolean): string {
  mkdirSync(join(dir, name), { recursive: true });
  const file = join(dir, name, "p.yaml");
  writeFileSync(
    file,
    `siftpack: 1\nsources: [{ name: t, files: ../data/notes.jsonl, format: jsonl, meta: [car, depot] }]\nstages:\n${stages}output: { dir: out }\n` + (parts ? `cluster: { unit_mb: ${UNIT_MB} }\n` : ""),
  );
  return file;
}

function ledgerOf(out: string): { raw: string; lines: LedgerLine[] } {
  const raw = gunzipSync(readFileSync(join(out, "ledger.jsonl.gz"))).toString("utf8");
  return { raw, lines: raw.trim().split("\n").map((l) => JSON.parse(l)) };
}

/** Units of work `plan --tasks` announces for a pipeline file. */
function unitsOfWork(file: string): number {
  const r = siftpack(["plan", file, "--tasks"]);
  expect(r.code, r.stderr).toBe(0);
  const m = /^# (\d+) units? of work/m.exec(r.stdout);
  expect(m, r.stdout).not.toBeNull();
  return Number(m![1]);
}

/** Builds the stages twice with the real CLI, whole and in parts; returns both results. */
function buildBoth(name: string, stages: string) {
  const runs = ([false, true] as const).map((parts) => {
    const file = pipeline(`${name}-${parts ? "parts" : "whole"}`, stages, parts);
    const out = join(dir, `${name}-${parts ? "parts" : "whole"}`, "out");
    const r = siftpack(["run", file, "--out", out, "--json", "--quiet"]);
    expect(r.code, r.stderr).toBe(0);
    return { file, out, json: JSON.parse(r.stdout) as { build_hash: string; records: Record<string, unknown> }, ledger: ledgerOf(out) };
  });
  return { whole: runs[0], parts: runs[1] };
}

/** The ledger of the notes file: one line per input line, in order, ids by line, the bad line quarantined. */
function expectLedgerOfNotes(lines: LedgerLine[]): void {
  expect(lines).toHaveLength(LINES);
  lines.forEach((l, k) => {
    const n = k + 1;
    expect(l.line, `ledger line ${n}`).toBe(n);
    expect(l.file).toBe("../data/notes.jsonl");
    if (n === BAD_LINE) expect(l.fate).toBe("quarantined");
    else expect(l.id, `ledger line ${n}`).toBe(idOf(n));
  });
}

describe("a JSONL file read in parts gives the build of reading it whole", () => {
  it("the file is cut into several parts, and the planted copies sit in different parts", () => {
    expect(offsets.length - 1).toBe(LINES);
    const size = readFileSync(join(dir, "data/notes.jsonl")).length;
    expect(size).toBeGreaterThan(60_000);
    expect(size).toBeLessThan(120_000);
    const whole = unitsOfWork(pipeline("plan-whole", "  - tokenize: {}\n  - pack: { length: 64 }\n", false));
    const parts = unitsOfWork(pipeline("plan-parts", "  - tokenize: {}\n  - pack: { length: 64 }\n", true));
    expect(whole).toBe(1);
    expect(parts).toBeGreaterThanOrEqual(3);
    // Parts end after the first newline at or past each multiple of unit_mb: a pair more than two
    // parts' size apart can never share a part.
    for (const [later, earlier] of [...COPIES, ...NEAR]) expect(offsets[later] - offsets[earlier + 1]).toBeGreaterThan(2 * UNIT_MB * 1e6);
  });

  it("tokenizer training (a whole-stream stage) after exact dedup", () => {
    const { whole, parts } = buildBoth("train", "  - dedup: {}\n  - tokenize: { train: { vocab_size: 300 } }\n  - pack: { length: 64 }\n");
    expect(parts.json.build_hash).toBe(whole.json.build_hash);
    expect(parts.ledger.raw).toBe(whole.ledger.raw);
    expect(readFileSync(join(parts.out, "tokenizer.json"), "utf8")).toBe(readFileSync(join(whole.out, "tokenizer.json"), "utf8"));
    expectLedgerOfNotes(parts.ledger.lines);
    // The exact copy, in a later part than its original, is dropped naming it.
    for (const [later, earlier] of COPIES) expect(parts.ledger.lines[later - 1]).toMatchObject({ fate: "dropped", reason: "duplicate", detail: { of: idOf(earlier) } });
    expect(parts.json.records).toMatchObject({ read: LINES, dropped: COPIES.length, quarantined: 1 });
  });

  it("MinHash with exact confirmation finds near-duplicates across parts", () => {
    const { whole, parts } = buildBoth("minhash", "  - dedup: { method: minhash, confirm: exact }\n  - tokenize: {}\n  - pack: { length: 64 }\n");
    expect(parts.json.build_hash).toBe(whole.json.build_hash);
    expect(parts.ledger.raw).toBe(whole.ledger.raw);
    expect(readFileSync(join(parts.out, "clusters.jsonl"), "utf8")).toBe(readFileSync(join(whole.out, "clusters.jsonl"), "utf8"));
    expectLedgerOfNotes(parts.ledger.lines);
    for (const [later, earlier] of [...COPIES, ...NEAR]) expect(parts.ledger.lines[later - 1], `line ${later}`).toMatchObject({ fate: "dropped", reason: "near-duplicate", detail: { of: idOf(earlier) } });
  });

  it("a library stage of form `whole` sees every record in input order, with file-wide rows and lines", async () => {
    type Seen = [id: string, seq: number, file: string, line: number];
    let seen: Seen[] = [];
    STAGES["drop-sevens"] = defineStage({
      name: "drop-sevens",
      summary: "drops every note whose id ends in 7, noting what it saw",
      options: schema.obj({}),
      form: { kind: "whole" },
      create: () =>
        async function* (records: AsyncIterable<DocRecord>, ctx) {
          for await (const r of records) {
            seen.push([r.id, r.seq, r.origin.file, r.origin.line]);
            if (r.id.endsWith("7")) ctx.drop(r, "ends-in-7");
            else yield r;
          }
        },
    });
    const quiet = { info() {}, warn() {}, error() {}, debug() {} };
    try {
      const stages = "  - dedup: {}\n  - drop-sevens: {}\n  - tokenize: {}\n  - pack: { length: 64 }\n";
      const results = [];
      for (const parts of [false, true]) {
        const file = pipeline(`lib-${parts ? "parts" : "whole"}`, stages, parts);
        const p = await loadPipeline(file);
        // The CLI cannot see a library stage, so the units are listed here, as `plan --tasks` lists them.
        expect((await unitsOf(p)).length > 1).toBe(parts);
        seen = [];
        const { manifest, outDir } = await runPipeline(p, { log: quiet, workers: 1 });
        results.push({ seen, manifest, ledger: ledgerOf(outDir) });
      }
      const [whole, parts] = results;
      expect(parts.seen).toEqual(whole.seen);
      // What the stage saw: every line but the bad one and the exact copy, in order, row = line − 1.
      const expected: Seen[] = [];
      for (let n = 1; n <= LINES; n++) if (n !== BAD_LINE && !COPIES.some(([at]) => at === n)) expected.push([idOf(n), n - 1, "../data/notes.jsonl", n]);
      expect(parts.seen).toEqual(expected);
      expect(parts.manifest.build_hash).toBe(whole.manifest.build_hash);
      expect(parts.ledger.raw).toBe(whole.ledger.raw);
      expectLedgerOfNotes(parts.ledger.lines);
      const sevens = expected.filter(([id]) => id.endsWith("7")).map(([, , , line]) => line);
      expect(parts.ledger.lines.filter((l) => l.reason === "ends-in-7").map((l) => l.line)).toEqual(sevens);
      expect(parts.manifest.records).toMatchObject({ read: LINES, quarantined: 1, by_reason: { "ends-in-7": sevens.length, duplicate: COPIES.length } });
    } finally {
      delete STAGES["drop-sevens"];
    }
  });
});
