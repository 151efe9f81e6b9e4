// On real text (the paragraphs of /usr/share/common-licenses, GPT-2 tokens): best-fit pads less than single and cuts only documents longer than a row.
import { readdirSync, readFileSync, statSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { loadEncoding } from "../../src/tokenizer/index.js";
import { tokenizeText } from "../../src/stages/tokenize.js";
import { options, packAll, type Row } from "./rows.js";

// Source of the text: Debian's base-files licence texts, present on every Debian system.
const LICENSES = "/usr/share/common-licenses";
const enc = loadEncoding("gpt2");
const paragraphs = readdirSync(LICENSES)
  .sort()
  .map((f) => join(LICENSES, f))
  .filter((p) => statSync(p).isFile())
  .flatMap((p) => readFileSync(p, "utf8").split(/\n[ \t]*\n/))
  .map((p) => p.trim())
  .filter((p) => p.length > 0);
const docs = paragraphs.map((p) => [...tokenizeText(enc, p, { encoding: "gpt2", eos: true, bos: false })]);

function padding(rows: Row[]): number {
  return rows.reduce((a, r) => a + r.segments.filter((s) => s === 0).length, 0);
}

/** Decoded text of every segment of every row. */
function segmentTexts(rows: Row[]): string[] {
  const out: string[] = [];
  for (const r of rows) {
    let start = 0;
    for (let i = 1; i <= r.segments.length; i++) {
      if (i === r.segments.length || r.segments[i] !== r.segments[start]) {
        if (r.segments[start] !== 0) out.push(enc.decode(r.tokens.slice(start, i)));
        start = i;
      }
    }
  }
  return out;
}

describe("packing license paragraphs", () => {
  it("has a spread of paragraph lengths to pack", () => {
    expect(docs.length).toBeGreaterThan(500);
    const lens = docs.map((d) => d.length);
    expect(Math.min(...lens)).toBeLessThan(16);
    expect(Math.max(...lens)).toBeGreaterThan(256);
  });

  for (const length of [64, 128, 256, 1024]) {
    it(`length ${length}: best-fit pads less than single, keeps every document ≤ length whole, and loses no more targets than concat`, () => {
      const pack = (strategy: string) => packAll(options({ length, strategy, shuffle: false }), docs, undefined, enc.eosId);
      const bf = pack("best-fit");
      const single = pack("single");
      const concat = pack("concat");
      const tokens = docs.reduce((a, d) => a + d.length, 0);
      for (const p of [bf, single, concat]) expect(p.rows.length * length - padding(p.rows)).toBe(tokens);

      expect(padding(bf.rows)).toBeLessThan(padding(single.rows));
      const long = docs.filter((d) => d.length > length);
      expect(bf.stats.cut_documents).toBe(long.length);
      expect(bf.stats.targets_lost_to_cuts).toBe(long.reduce((a, d) => a + Math.ceil(d.length / length) - 1, 0));
      expect(concat.stats.targets_lost_to_cuts).toBeGreaterThanOrEqual(bf.stats.targets_lost_to_cuts);

      // Decode what was packed: every paragraph that fits a row is one whole segment (text + end-of-text).
      const whole = new Map<string, number>();
      for (const t of segmentTexts(bf.rows)) whole.set(t, (whole.get(t) ?? 0) + 1);
      for (const [k, p] of paragraphs.entries()) {
        if (docs[k].length > length) continue;
        const key = p + "<|endoftext|>";
        const n = whole.get(key) ?? 0;
        expect(n, `paragraph ${k} is not one whole segment`).toBeGreaterThan(0);
        whole.set(key, n - 1);
      }
    });
  }
});
