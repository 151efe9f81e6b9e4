// The whole page from a manifest: self-contained, every tagged figure equal to the manifest's, the stats figures embedded.
import { afterAll, describe, expect, it } from "vitest";
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { buildReport } from "../../src/report/build.js";
import { statsFigures } from "../../src/report/figures.js";
import { manifestFixture } from "./fixture.js";

const dirs: string[] = [];
afterAll(() => dirs.forEach((d) => rmSync(d, { recursive: true, force: true })));

async function report(m = manifestFixture()): Promise<string> {
  const d = mkdtempSync(join(tmpdir(), "siftpack-page-"));
  dirs.push(d);
  writeFileSync(join(d, "manifest.json"), JSON.stringify(m));
  return buildReport(d, "build/depot");
}

function at(obj: unknown, path: (string | number)[]): unknown {
  return path.reduce<unknown>((o, k) => (o as Record<string | number, unknown>)?.[k], obj);
}

const unescape = (s: string) => s.replace(/&quot;/g, '"').replace(/&lt;/g, "<").replace(/&gt;/g, ">").replace(/&amp;/g, "&");

describe("report page", () => {
  it("is one self-contained file: no scripts to run, no external URL, a policy that forbids fetching", async () => {
    const html = await report();
    expect(html.startsWith("<!doctype html>")).toBe(true);
    expect(html).toContain(`content="default-src 'none'; style-src 'unsafe-inline'; img-src data:"`);
    expect(html).not.toMatch(/<script(?![^>]*type="application\/json")/);
    expect(html).not.toMatch(/(src|href)="(?!#)/);
    expect(html).not.toMatch(/https?:\/\/(?!www\.w3\.org\/2000\/svg)/);
    expect(html).not.toMatch(/@import|@font-face|url\(/);
  });

  it("shows every tagged figure exactly as the manifest holds it", async () => {
    const m = manifestFixture();
    const html = await report(m);
    const tags = [...html.matchAll(/data-fig="([^"]+)" data-value="([^"]*)"/g)];
    expect(tags.length).toBeGreaterThan(60);
    for (const [, path, value] of tags) {
      const p = JSON.parse(unescape(path));
      expect(String(at(m, p)), JSON.stringify(p)).toBe(unescape(value));
    }
    const paths = new Set(tags.map((t) => unescape(t[1])));
    for (const reason of Object.keys(m.records.by_reason)) expect(paths).toContain(JSON.stringify(["records", "by_reason", reason]));
    for (const s of Object.keys(m.splits)) for (const k of ["documents", "blocks", "tokens", "padding_tokens", "cut_documents"]) expect(paths).toContain(JSON.stringify(["splits", s, k]));
  });

  it("embeds the figures `stats --json` prints", async () => {
    const m = manifestFixture();
    const html = await report(m);
    const json = /<script type="application\/json" id="figures">(.*?)<\/script>/s.exec(html)![1];
    expect(JSON.parse(json)).toEqual(JSON.parse(JSON.stringify(statsFigures(m))));
  });

  it("says what is missing instead of drawing nothing", async () => {
    const m = manifestFixture();
    delete (m as Record<string, unknown>).overlap;
    const html = await report(m);
    expect(html).toContain("Overlap between splits was not computed");
    expect(html).toContain("clusters.jsonl is missing");
    expect(html).toContain("No block could be read to draw an attention mask");
  });

  it("is the same for the same build", async () => {
    expect(await report()).toBe(await report());
  });
});

describe("statsFigures", () => {
  it("derives padding_fraction for manifests written before it existed, and counts shards", () => {
    const m = manifestFixture();
    delete (m.splits.train as Partial<typeof m.splits.train>).padding_fraction;
    const f = statsFigures(m);
    expect(f.splits.train.padding_fraction).toBeCloseTo(40 / (10 * 64), 12);
    expect(f.splits.train.shards).toBe(1);
  });
});
