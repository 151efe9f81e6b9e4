// Near-duplicate clusters in the report: the largest ones, size buckets, the messages when there are none, and excerpts.
import { afterAll, describe, expect, it } from "vitest";
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { gzipSync } from "node:zlib";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { clustersSection, readClusters, sizeBuckets } from "../../src/report/clusters.js";
import { excerpts, refKey, shorten } from "../../src/report/excerpts.js";
import { defaultStages, manifestFixture } from "./fixture.js";

const dirs: string[] = [];
function dir(): string {
  const d = mkdtempSync(join(tmpdir(), "siftpack-report-"));
  dirs.push(d);
  return d;
}
afterAll(() => dirs.forEach((d) => rmSync(d, { recursive: true, force: true })));

const cluster = (id: string, size: number) =>
  JSON.stringify({ cluster: `tickets/${id}`, size, basis: "minhash", kept: { source: "tickets", id }, members: Array.from({ length: size }, (_, i) => ({ source: "tickets", id: i === 0 ? id : `${id}-${i}`, similarity: i === 0 ? 1 : 0.9 - i / 100, ...(i === 0 ? { kept: true } : {}) })) });

describe("readClusters", () => {
  it("keeps the largest clusters, ties in file order, and counts every size", async () => {
    const d = dir();
    const sizes = [2, 5, 3, 5, 2, 7, 3, 5];
    writeFileSync(join(d, "clusters.jsonl"), sizes.map((s, i) => cluster(`T-${i}`, s)).join("\n") + "\n");
    const state = await readClusters(d, manifestFixture(), 4);
    if (!state.ran || state.missing) throw new Error("expected clusters");
    expect(state.summary.largest.map((c) => c.kept.id)).toEqual(["T-5", "T-1", "T-3", "T-7"]);
    expect(state.summary.clusters).toBe(8);
    expect(state.summary.records).toBe(32);
    expect(Object.fromEntries(state.summary.sizes)).toEqual({ 2: 2, 3: 2, 5: 3, 7: 1 });
  });

  it("says whether the stage ran and whether its file is there", async () => {
    const d = dir();
    const noMinhash = manifestFixture(defaultStages().filter((s) => s.options.method !== "minhash"));
    expect(await readClusters(d, noMinhash)).toEqual({ ran: false });
    expect(await readClusters(d, manifestFixture())).toEqual({ ran: true, missing: true });
    const m = manifestFixture();
    expect(clustersSection(m, { ran: false }, new Map())).toContain("No near-duplicate stage ran");
    expect(clustersSection(m, { ran: true, missing: true }, new Map())).toContain("clusters.jsonl is missing");
    writeFileSync(join(d, "clusters.jsonl"), "");
    const empty = await readClusters(d, m);
    expect(clustersSection(m, empty, new Map())).toContain("found no clusters");
  });
});

describe("sizeBuckets", () => {
  it("shows every size from 2 when the largest is small", () => {
    expect(sizeBuckets(new Map([[2, 3], [5, 1]])).map((b) => [b.label, b.clusters])).toEqual([["2", 3], ["3", 0], ["4", 0], ["5", 1]]);
  });
  it("groups large sizes in power-of-two ranges that add up", () => {
    const sizes = new Map([[2, 10], [3, 4], [17, 1], [40, 2], [300, 1]]);
    const b = sizeBuckets(sizes);
    expect(b[0]).toMatchObject({ label: "2–3", clusters: 14 });
    expect(b.reduce((a, x) => a + x.clusters, 0)).toBe(18);
    expect(b[b.length - 1].hi).toBeGreaterThanOrEqual(300);
  });
});

describe("excerpts", () => {
  function build(redact: boolean) {
    const base = dir();
    const out = dir();
    const rows = [
      { ticket_id: "T-1", body: "Door   fault on car 4711.\nReport from ops.lead@tram-depot.example, please call back." },
      { ticket_id: "T-2", body: "Pantograph carbon strips measured at 17 mm; " + "worn evenly ".repeat(40) },
    ];
    const input = rows.map((r) => JSON.stringify(r)).join("\n") + "\n";
    writeFileSync(join(base, "tickets.jsonl"), input);
    writeFileSync(join(out, "build-info.json"), JSON.stringify({ base_dir: base }));
    const ledger = [
      { source: "tickets", id: "T-1", file: "tickets.jsonl", line: 1, fate: "kept", split: "train" },
      { source: "tickets", id: "T-2", file: "tickets.jsonl", line: 2, fate: "kept", split: "val" },
    ];
    writeFileSync(join(out, "ledger.jsonl.gz"), gzipSync(ledger.map((l) => JSON.stringify(l)).join("\n") + "\n"));
    const stages = [{ name: "normalize", options: { form: "NFKC", newlines: true, trailing_spaces: true, control_chars: true, zero_width: true, max_blank_lines: 1, trim: true } }, ...(redact ? [{ name: "redact", options: { kinds: ["email", "phone", "ip", "card"] } }] : []), ...defaultStages()];
    const m = manifestFixture(stages);
    (m.pipeline.resolved as { sources: unknown[] }).sources = [{ name: "tickets", files: "tickets.jsonl", format: "jsonl", text: "body", id: "ticket_id", meta: [], weight: 1 }];
    m.inputs = [{ source: "tickets", path: "tickets.jsonl", size: Buffer.byteLength(input), xxh64: "0" }];
    return { base, out, m };
  }

  it("quotes records from their input line, redacted as the pipeline redacts, shortened", async () => {
    const { out, m } = build(true);
    const got = await excerpts(out, m, [{ source: "tickets", id: "T-1" }, { source: "tickets", id: "T-2" }, { source: "tickets", id: "T-9" }], { max: 80, deadline: Date.now() + 10_000 });
    expect(got.get(refKey({ source: "tickets", id: "T-1" }))).toEqual({ text: "Door fault on car 4711. Report from <EMAIL>, please call back." });
    const long = got.get(refKey({ source: "tickets", id: "T-2" })) as { text: string };
    expect(long.text.length).toBeLessThanOrEqual(82);
    expect(long.text).toMatch(/^Pantograph carbon strips .* …$/);
    expect(got.get(refKey({ source: "tickets", id: "T-9" }))).toEqual({ missing: "not in the ledger" });
  });

  it("without a redact stage quotes the normalized text; says why for a changed input or a missing build-info.json", async () => {
    const { base, out, m } = build(false);
    const ref = { source: "tickets", id: "T-1" };
    expect((await excerpts(out, m, [ref], { max: 200, deadline: Date.now() + 10_000 })).get(refKey(ref))).toEqual({ text: "Door fault on car 4711. Report from ops.lead@tram-depot.example, please call back." });
    writeFileSync(join(base, "tickets.jsonl"), "{}\n");
    expect((await excerpts(out, m, [ref], { max: 200, deadline: Date.now() + 10_000 })).get(refKey(ref))).toEqual({ missing: "tickets.jsonl has changed since the build" });
    rmSync(join(out, "build-info.json"));
    expect((await excerpts(out, m, [ref], { max: 200, deadline: Date.now() + 10_000 })).get(refKey(ref))).toMatchObject({ missing: expect.stringContaining("build-info.json") });
  });

  it("shortens at a word boundary", () => {
    expect(shorten("  a  b\n\nc ", 100)).toBe("a b c");
    expect(shorten("wheel profile gauge reading", 16)).toBe("wheel profile …");
    // A space too early would lose most of the room: the word is cut instead.
    expect(shorten("car pantographs-inspected", 16)).toBe("car pantographs- …");
  });
});
