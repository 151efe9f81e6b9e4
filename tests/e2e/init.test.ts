// `siftpack init` on JSONL, CSV and Parquet samples: the right text field, a file `plan` accepts, nothing overwritten without --force.
import { beforeAll, describe, expect, it } from "vitest";
import { mkdirSync, readFileSync, writeFileSync } from "node:fs";
import { gzipSync } from "node:zlib";
import { join } from "node:path";
import { parse } from "yaml";
import { parquetWriteBuffer } from "hyparquet-writer";
import { siftpack, tempDir } from "./cli.js";

const DEPOTS = ["Harrow Lane", "Quayside", "Northfold", "Eastgate"];
const FAULTS = ["door slow to close", "pantograph strip worn", "sander nozzle blocked", "saloon heater silent", "brake pad squeal"];
let dir: string;

/** Invented tram depot records: a short summary, a long free-text body, an id and some grouping fields. */
function records(n: number, idPrefix: string) {
  return Array.from({ length: n }, (_, i) => ({
    id: `${idPrefix}-${String(i + 1).padStart(4, "0")}`,
    summary: FAULTS[i % FAULTS.length],
    body: `Car ${4700 + (i % 90)} at ${DEPOTS[i % 4]}: ${FAULTS[i % FAULTS.length]} reported on shift ${i % 3}. Fitter checked the unit, replaced worn parts where needed and ran a functional test before release ${i}.`,
    depot: DEPOTS[i % 4],
    shift: i % 3,
  }));
}

beforeAll(() => {
  dir = tempDir("init");
  mkdirSync(join(dir, "data/tickets"), { recursive: true });
  mkdirSync(join(dir, "data/notes"), { recursive: true });
  mkdirSync(join(dir, "data/faults"), { recursive: true });
  // JSONL (gzip), the text under "details" and the id under "ticket_ref"
  const tickets = records(300, "T").map((r) => ({ ticket_ref: r.id, subject: r.summary, details: r.body, depot: r.depot }));
  for (const [k, part] of [[0, tickets.slice(0, 150)], [1, tickets.slice(150)]] as const) writeFileSync(join(dir, `data/tickets/part-${k}.jsonl.gz`), gzipSync(part.map((t) => JSON.stringify(t)).join("\n") + "\n"));
  // CSV, with a quoted multi-line text column "note_text" that is not the last column
  const notes = records(120, "N");
  const q = (s: string) => `"${s.replace(/"/g, '""')}"`;
  writeFileSync(join(dir, "data/notes/shift-notes.csv"), "note_no,note_text,depot,shift\n" + notes.map((r, i) => [i + 1, q(r.body.replace(". ", ".\n")), q(r.depot), r.shift].join(",")).join("\n") + "\n");
  // Parquet, the text column "description"
  const faults = records(200, "F");
  const parquet = parquetWriteBuffer({
    columnData: [
      { name: "fault_id", data: faults.map((f) => f.id), type: "STRING" },
      { name: "title", data: faults.map((f) => f.summary), type: "STRING" },
      { name: "description", data: faults.map((f) => f.body), type: "STRING" },
      { name: "depot", data: faults.map((f) => f.depot), type: "STRING" },
      { name: "year", data: faults.map((_, i) => BigInt(2025 + (i % 2))), type: "INT64" },
    ],
  });
  writeFileSync(join(dir, "data/faults/faults.parquet"), Buffer.from(parquet));
});

function source(file: string, name: string): Record<string, unknown> {
  const p = parse(readFileSync(join(dir, file), "utf8"));
  const s = p.sources.find((x: { name: string }) => x.name === name);
  expect(s, `source ${name} in ${file}`).toBeDefined();
  return s;
}

describe("siftpack init", () => {
  it("proposes JSONL (gzip) with the longest text field, the id and the metadata; plan accepts it", () => {
    const r = siftpack(["init", "data/tickets/part-0.jsonl.gz", "data/tickets/part-1.jsonl.gz", "--out", "tickets.yaml"], { cwd: dir });
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/^tickets: 2 files \(jsonl, gzip\), 300 rows sampled/m);
    expect(r.stdout).toContain("wrote tickets.yaml");
    expect(source("tickets.yaml", "tickets")).toEqual({ name: "tickets", files: "data/tickets/*.jsonl.gz", format: "jsonl", text: "details", id: "ticket_ref", meta: ["subject", "depot"] });
    const plan = siftpack(["plan", "tickets.yaml"], { cwd: dir });
    expect(plan.code, plan.stderr).toBe(0);
    expect(plan.stdout).toMatch(/tickets: 2 files/);
  });

  it("proposes CSV with a multi-line text column, and writes comments that explain the choices", () => {
    const r = siftpack(["init", "data/notes/shift-notes.csv", "--out", "notes.yaml"], { cwd: dir });
    expect(r.code, r.stderr).toBe(0);
    expect(source("notes.yaml", "shift-notes")).toMatchObject({ format: "csv", text: "note_text", id: "note_no", meta: ["depot", "shift"] });
    const text = readFileSync(join(dir, "notes.yaml"), "utf8");
    expect(text).toMatch(/text: note_text +# the longest string field on average: \d+ characters/);
    expect(text).toMatch(/^ {2}- split: \{ holdout: \{ val: 0\.1, test: 0\.1 \} \} +# held-out shares: about 12 of the 120 records each/m);
    expect(siftpack(["plan", "notes.yaml"], { cwd: dir }).code).toBe(0);
  });

  it("proposes Parquet with its text column; plan accepts it", () => {
    const r = siftpack(["init", "data/faults/faults.parquet", "--out", "faults.yaml"], { cwd: dir });
    expect(r.code, r.stderr).toBe(0);
    expect(source("faults.yaml", "faults")).toMatchObject({ format: "parquet", text: "description", id: "fault_id", meta: ["title", "depot", "year"] });
    expect(siftpack(["plan", "faults.yaml"], { cwd: dir }).code).toBe(0);
  });

  it("proposes all three as one pipeline that builds", () => {
    const r = siftpack(["init", "data/tickets/part-0.jsonl.gz", "data/tickets/part-1.jsonl.gz", "data/notes/shift-notes.csv", "data/faults/faults.parquet", "--out", "all.yaml"], { cwd: dir });
    expect(r.code, r.stderr).toBe(0);
    const run = siftpack(["run", "all.yaml"], { cwd: dir });
    expect(run.code, run.stderr).toBe(0);
    expect(run.stdout).toMatch(/records: 620 read/);
    const m = JSON.parse(readFileSync(join(dir, "build/all/manifest.json"), "utf8"));
    expect(parse(readFileSync(join(dir, "all.yaml"), "utf8")).sources.map((s: { name: string }) => s.name)).toEqual(["tickets", "shift-notes", "faults"]);
    expect(Object.keys(m.records.by_source).sort()).toEqual(["faults", "shift-notes", "tickets"]);
    expect(m.records.quarantined).toBe(0);
  });

  it("never overwrites a file without --force", () => {
    writeFileSync(join(dir, "mine.yaml"), "# my own pipeline\n");
    const r = siftpack(["init", "data/notes/shift-notes.csv", "--out", "mine.yaml"], { cwd: dir });
    expect(r.code).toBe(2);
    expect(r.stderr).toContain("mine.yaml exists; pass --force to replace it");
    expect(readFileSync(join(dir, "mine.yaml"), "utf8")).toBe("# my own pipeline\n");
    const forced = siftpack(["init", "data/notes/shift-notes.csv", "--out", "mine.yaml", "--force"], { cwd: dir });
    expect(forced.code, forced.stderr).toBe(0);
    expect(readFileSync(join(dir, "mine.yaml"), "utf8")).toMatch(/^# Pipeline proposed by `siftpack init`/);
  });

  it("explains files it cannot use", () => {
    writeFileSync(join(dir, "hidden.jsonl"), gzipSync('{"body":"x"}\n'));
    const r = siftpack(["init", "hidden.jsonl", "--out", "-"], { cwd: dir });
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/rename it to end in \.gz/);
    const missing = siftpack(["init", "nope.csv", "--out", "-"], { cwd: dir });
    expect(missing.code).toBe(1);
    expect(missing.stderr).toMatch(/cannot read "nope\.csv": no such file or directory/);
  });
});
