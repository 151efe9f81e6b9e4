// Input lost to a file that cannot be read to its end (a cut .gz, a cut .zst, a corrupt Parquet row group),
// through the real CLI: by default the run fails with one line naming the source and file; with
// accept_truncated the readable rows are built and the loss is counted apart from the records.
//
// Files are cut by this test: gzip by node:zlib, zstd by Debian's zstd tool, Parquet written by the
// hyparquet-writer package (a general-purpose writer) and damaged inside its second row group. A read
// error in the middle of an uncompressed file cannot be made portably (it needs a failing disk or a
// device mapper), so it is covered by the reader tests only (tests/sources/truncated-rows.test.ts).
import { describe, expect, it } from "vitest";
import { spawnSync } from "node:child_process";
import { mkdirSync, readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { gunzipSync, gzipSync, constants as zlibConstants } from "node:zlib";
import { parquetWriteBuffer } from "hyparquet-writer";
import { parquetMetadata } from "hyparquet";
import { siftpack, tempDir } from "./cli.js";

const DEPOTS = ["Harrow Lane", "Quayside", "Northfold"];
/** Service tickets of an invented tram depot. */
const tickets = (n: number) =>
  Array.from({ length: n }, (_, i) => ({
    ticket_id: `HL-${String(i + 1).padStart(5, "0")}`,
    depot: DEPOTS[i % 3],
    body: `Tram ${4700 + (i % 61)} in for service: ${["brake pads worn", "door 3 slow to close", "sander empty", "wiper blade split"][i % 4]} on road ${1 + (i % 7)}, ticket ${i * 7919 % 100003}.`,
  }));
const jsonl = (n: number) => Buffer.from(tickets(n).map((t) => JSON.stringify(t)).join("\n") + "\n");

/** A pipeline over `files` in a fresh directory (which `make` fills); returns the directory. */
function corpus(files: string, format: string, make: (dir: string) => void): string {
  const dir = tempDir("truncated");
  mkdirSync(join(dir, "tickets"));
  make(dir);
  const pipeline = (accept: boolean, out: string) => `siftpack: 1
sources:
  - { name: tickets, files: "${files}", format: ${format}, text: body, id: ticket_id, meta: [depot]${accept ? ", accept_truncated: true" : ""} }
stages:
  - normalize: {}
  - tokenize: {}
  - pack: { length: 64 }
output: { dir: ${out} }
`;
  writeFileSync(join(dir, "p.yaml"), pipeline(false, "out-default"));
  writeFileSync(join(dir, "accept.yaml"), pipeline(true, "out"));
  return dir;
}

function ledgerOf(dir: string): any[] {
  return gunzipSync(readFileSync(join(dir, "out/ledger.jsonl.gz")))
    .toString()
    .trim()
    .split("\n")
    .map((l) => JSON.parse(l));
}

/** The checks every kind of truncation gets; `rows` the rows the file should have given, when known up front. */
function checkTruncated(name: string, dir: string, file: string, facts: { rows?: number; rowsLost?: number; bytes: boolean }) {
  describe(name, () => {
    it("fails the run by default: exit 1, one line naming source, file, rows read and the option", () => {
      const r = siftpack(["run", join(dir, "p.yaml")]);
      expect(r.code).toBe(1);
      expect(r.stderr.endsWith("\n")).toBe(true);
      expect(r.stderr.trim().split("\n")).toHaveLength(1);
      expect(r.stderr).toMatch(new RegExp(`^siftpack: error: source "tickets": ${file.replace(/\./g, "\\.")} is truncated \\(.+\\) after \\d+ rows?, .*set accept_truncated: true on the source to build from what could be read\\n$`));
      if (facts.rows !== undefined) expect(r.stderr).toContain(` after ${facts.rows} rows`);
      if (facts.rowsLost !== undefined) expect(r.stderr).toContain(`, ${facts.rowsLost} rows lost`);
      if (facts.bytes) expect(r.stderr).toMatch(/, \d+ of \d+ bytes read;/);
    });

    describe("with accept_truncated: true", () => {
      const r = siftpack(["run", join(dir, "accept.yaml")]);

      it("builds from what could be read, with a warning naming the file and the count in the summary", () => {
        expect(r.code).toBe(0);
        expect(r.stderr).toContain(`${file} is truncated`);
        expect(r.stderr).toContain("accept_truncated");
        expect(r.stdout).toMatch(/; 1 truncated input file/);
      });

      it("writes one truncated ledger line after the file's last row, not counted as a record", () => {
        const ledger = ledgerOf(dir);
        const cut = ledger.filter((l) => l.fate === "truncated");
        expect(cut).toHaveLength(1);
        const rows = ledger.filter((l) => l.file === file && l.fate !== "truncated");
        expect(cut[0]).toMatchObject({ source: "tickets", file, fate: "truncated", rows_read: rows.length, error: expect.any(String) });
        if (facts.rows !== undefined) expect(cut[0].rows_read).toBe(facts.rows);
        expect(cut[0].rows_read).toBeGreaterThan(0);
        if (facts.rowsLost !== undefined) expect(cut[0].rows_lost).toBe(facts.rowsLost);
        if (facts.bytes) {
          expect(cut[0].size).toBeGreaterThan(0);
          expect(cut[0].bytes_read).toBeLessThanOrEqual(cut[0].size);
        }
        // After the file's last row: every line of the file comes before it.
        const at = ledger.indexOf(cut[0]);
        expect(ledger.slice(at + 1).some((l) => l.file === file)).toBe(false);
        const fates = (f: string) => ledger.filter((l) => l.fate === f).length;
        const m = JSON.parse(readFileSync(join(dir, "out/manifest.json"), "utf8"));
        expect(m.records.kept + m.records.dropped + m.records.quarantined).toBe(m.records.read);
        expect(m.records.read).toBe(ledger.length - 1);
        expect({ kept: fates("kept"), dropped: fates("dropped"), quarantined: fates("quarantined") }).toEqual({ kept: m.records.kept, dropped: m.records.dropped, quarantined: m.records.quarantined });
        expect(m.records.truncated_files).toBe(1);
        expect(m.records.rows_lost).toBe(facts.rowsLost ?? 0);
      });

      it("passes siftpack verify", () => {
        const v = siftpack(["verify", join(dir, "out")]);
        expect(v.stderr).toBe("");
        expect(v.code).toBe(0);
      });
    });
  });
}

describe("truncated input", () => {
  {
    // 3,000 tickets gzipped, the file cut in the middle; the rows readable are what a forgiving
    // decompression (sync flush, no error at the end) gives as whole lines.
    const gz = gzipSync(jsonl(3000));
    const cut = gz.subarray(0, Math.floor(gz.length / 2));
    const readable = gunzipSync(cut, { finishFlush: zlibConstants.Z_SYNC_FLUSH });
    const rows = readable.toString("latin1").split("\n").length - 1;
    const dir = corpus("tickets/*.jsonl.gz", "jsonl", (d) => writeFileSync(join(d, "tickets/2026-03.jsonl.gz"), cut));
    checkTruncated("a .jsonl.gz cut in the middle", dir, "tickets/2026-03.jsonl.gz", { rows, bytes: true });
  }
  {
    const z = spawnSync("zstd", ["-q", "-c"], { input: jsonl(3000), maxBuffer: 1 << 26 });
    if (z.error) throw new Error(`the zstd tool is needed for this test (Debian package zstd): ${z.error.message}`);
    const dir = corpus("tickets/*.jsonl.zst", "jsonl", (d) => writeFileSync(join(d, "tickets/2026-04.jsonl.zst"), z.stdout.subarray(0, Math.floor(z.stdout.length / 2))));
    checkTruncated("a .jsonl.zst cut in the middle", dir, "tickets/2026-04.jsonl.zst", { bytes: true });
  }
  {
    // 1,500 tickets in row groups of 500; the second group's first page is overwritten past its header.
    const rows = tickets(1500);
    const buf = Buffer.from(
      parquetWriteBuffer({
        columnData: [
          { name: "ticket_id", data: rows.map((t) => t.ticket_id), type: "STRING" },
          { name: "depot", data: rows.map((t) => t.depot), type: "STRING" },
          { name: "body", data: rows.map((t) => t.body), type: "STRING" },
        ],
        codec: "GZIP",
        compressors: { GZIP: (b: Uint8Array) => new Uint8Array(gzipSync(b)) },
        rowGroupSize: 500,
      }),
    );
    const meta = parquetMetadata(buf.buffer.slice(buf.byteOffset, buf.byteOffset + buf.byteLength));
    const page = Number(meta.row_groups[1].columns[0].meta_data!.data_page_offset);
    buf.fill(0x00, page + 40, page + 120);
    const dir = corpus("tickets/*.parquet", "parquet", (d) => writeFileSync(join(d, "tickets/2026-05.parquet"), buf));
    checkTruncated("a Parquet file with a corrupt row group", dir, "tickets/2026-05.parquet", { rows: 1000, rowsLost: 500, bytes: false });
  }
});
