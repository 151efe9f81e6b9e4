// Record frames: what a phase writes is what the next one reads, for any record, in memory and
// through a file read in chunks (frames across chunk ends, texts larger than the read buffer).
import { describe, expect, it } from "vitest";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import fc from "fast-check";
import { FrameWriter, decodeFrames, readEnd, readEvents, type UnitEvent } from "../../src/cache/record-events.js";

const text = fc.string({ unit: "grapheme", maxLength: 200 });
const record = fc.record(
  {
    id: text,
    source: fc.string({ maxLength: 10 }),
    text,
    meta: fc.dictionary(fc.string({ maxLength: 5 }), fc.oneof(fc.string({ maxLength: 5 }), fc.integer())),
    origin: fc.record({ file: text, line: fc.nat() }),
    seq: fc.nat(),
    split: fc.constantFrom("train", "val"),
    cluster: fc.string({ maxLength: 8 }),
    // Ids past 0xffff (cl100k, o200k) make a record's ids four bytes each.
    tokens: fc.array(fc.oneof(fc.nat(0xffff), fc.nat(300_000)), { maxLength: 50 }).map((a) => Uint32Array.from(a)),
  },
  { requiredKeys: ["id", "source", "text", "meta", "origin", "seq"] },
);
const event: fc.Arbitrary<UnitEvent> = fc.oneof(
  record.map((r) => ({ k: "rec" as const, r })),
  fc.record({ k: fc.constant("drop" as const), i: fc.nat(), id: text, source: text, file: text, line: fc.nat(), reason: text, detail: fc.option(fc.dictionary(fc.string({ maxLength: 4 }), fc.integer()), { nil: undefined }) }).map((d) => {
    if (d.detail === undefined) delete d.detail;
    return d;
  }),
  fc.record({ k: fc.constant("bad" as const), i: fc.nat(), entry: fc.record({ source: text, file: text, line: fc.nat(), error: text }) }),
);

function writeAll(events: UnitEvent[], end: Extract<UnitEvent, { k: "end" }>): Buffer {
  const w = new FrameWriter(16);
  for (const e of events) w.event(e);
  w.event(end);
  return w.take();
}

function tmpFile(bytes: Uint8Array): string {
  const path = join(mkdtempSync(join(tmpdir(), "siftpack-frames-")), "u.bin");
  writeFileSync(path, bytes);
  return path;
}

async function readAll(path: string): Promise<UnitEvent[]> {
  const out: UnitEvent[] = [];
  for await (const e of readEvents(path)) out.push(e);
  return out;
}

describe("record frames", () => {
  it("give back every event as written, in memory and from a file, and the end frame from the file's last bytes", async () => {
    await fc.assert(
      fc.asyncProperty(fc.array(event, { maxLength: 30 }), fc.nat(1000), async (events, rows) => {
        const end = { k: "end" as const, rows, records: events.length, counts: { kept: events.length } };
        const bytes = writeAll(events, end);
        expect([...decodeFrames(bytes)]).toEqual([...events, end]);
        const path = tmpFile(bytes);
        expect(await readAll(path)).toEqual([...events, end]);
        expect(await readEnd(path)).toEqual(end);
        // Left undecoded: the text's length (and, asked for "utf8", its bytes), all else as written.
        for (const mode of [false, "utf8"] as const) {
          const got: UnitEvent[] = [];
          for await (const e of readEvents(path, { text: mode })) got.push(e);
          const want = [...events, end].map((e) => {
            if (e.k !== "rec") return e;
            const utf8 = Buffer.from(e.r.text, "utf8");
            return { k: "rec", r: { ...e.r, text: "", textBytes: utf8.length, ...(mode === "utf8" ? { utf8 } : {}) } };
          });
          expect(got).toEqual(want);
        }
        // Bare: a record's numbering and names only; from a row on: earlier records passed over, other events kept.
        const from = Math.floor(rows / 2);
        const bare: UnitEvent[] = [];
        for await (const e of readEvents(path, { bare: true, fromSeq: from })) bare.push(e);
        const wantBare = [...events, end].flatMap((e): UnitEvent[] => {
          if (e.k !== "rec") return [e];
          if (e.r.seq < from) return [];
          const { id, source, origin, seq } = e.r;
          return [{ k: "rec", r: { id, source, text: "", textBytes: Buffer.byteLength(e.r.text, "utf8"), meta: {}, origin, seq } }];
        });
        expect(bare).toEqual(wantBare);
      }),
      { numRuns: 60 },
    );
  });

  it("reads texts larger than the read buffer and frames that cross its end", async () => {
    // 4 MiB is the reader's first buffer: a 9 MB text must grow it, the small frames around it land across its end.
    const big = "tram depot note ✓ ".repeat(500_000);
    const events: UnitEvent[] = [];
    for (let i = 0; i < 3000; i++) events.push({ k: "rec", r: { id: `n${i}`, source: "notes", text: `note ${i} é`.repeat(i % 50), meta: {}, origin: { file: "a.jsonl", line: i + 1 }, seq: i } });
    events.splice(1500, 0, { k: "rec", r: { id: "big", source: "notes", text: big, meta: { bay: 4 }, origin: { file: "a.jsonl", line: 9999 }, seq: 1500, tokens: Uint32Array.from({ length: 70_000 }, (_, j) => (j * 7919) % 100_000) } });
    const end = { k: "end" as const, rows: 3001, records: 3001, counts: {} };
    const got = await readAll(tmpFile(writeAll(events, end)));
    expect(got.length).toBe(3002);
    expect(got).toEqual([...events, end]);
  });

  it("names a file that ends inside a frame, and finds no end frame in a file cut short", async () => {
    const bytes = writeAll([{ k: "bad", i: 0, entry: { source: "s", file: "f", line: 1, error: "not JSON" } }], { k: "end", rows: 1, records: 0, counts: {} });
    const cut = tmpFile(bytes.subarray(0, bytes.length - 12));
    await expect(readAll(cut)).rejects.toThrow(/ends inside a frame/);
    expect(await readEnd(cut)).toBeUndefined();
  });
});
