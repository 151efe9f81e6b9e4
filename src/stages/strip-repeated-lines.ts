// strip_repeated_lines: removes lines that occur in at least `min_docs` records (boilerplate), in two passes.
//
// Pass 1 reads every record, counts in how many records each distinct line occurs (by a 53-bit
// slice of its XXH64) and spills the records as JSON lines to a temporary file in the build
// directory. Pass 2 reads them back, removes the counted lines and passes the records on; a
// record left with no text is dropped. Memory holds the line counts, not the records.
//
// The counts live in a map of at most `max_lines` entries. When it is full, every line seen in
// only one record so far is forgotten (most lines of a corpus are unique, so this frees most of
// the map); if that frees less than a quarter of it, new lines are no longer admitted. Counts
// can therefore only be too low, never too high: a line is removed only if it really occurred
// in at least `min_docs` records (barring a 53-bit hash collision), while some boilerplate may
// survive when the budget is too small. The manifest reports the pruning (stage_counts).
import { createReadStream, createWriteStream } from "node:fs";
import { rm } from "node:fs/promises";
import { once } from "node:events";
import { join } from "node:path";
import { createInterface } from "node:readline";
import { randomBytes } from "node:crypto";
import { defineStage } from "./stage.js";
import { field, num, obj, type Infer } from "../pipeline/schema.js";
import { loadHasher, xxh64String } from "../lib/hash.js";
import { SiftpackError } from "../errors.js";
import type { DocRecord } from "../types.js";
import { codePoints } from "../filter/units.js";

export const stripRepeatedLinesOptions = obj({
  /** A line found in at least this many records is removed from all of them. */
  min_docs: field(num({ integer: true, min: 2 }), { required: true }),
  /** Shorter lines (in characters, trimmed) are never counted or removed: headings and list marks repeat by design. */
  min_chars: field(num({ integer: true, min: 0 }), { default: 0 }),
  /** The budget of distinct lines counted at once (about 100 bytes of memory each). */
  max_lines: field(num({ integer: true, min: 1000 }), { default: 2_000_000 }),
});
export type StripRepeatedLinesOptions = Infer<typeof stripRepeatedLinesOptions>;

/**
 * The key of a line: trimmed (indentation and trailing spaces do not make boilerplate
 * different), hashed; undefined for lines too short to consider (blank lines always).
 */
export function lineKey(line: string, minChars: number): number | undefined {
  const t = line.trim();
  if (t === "" || (minChars > 0 && codePoints(t) < minChars)) return undefined;
  return Number(xxh64String(t) >> 11n);
}

/** Per-line record counts under a fixed budget of entries (see the header for the policy). */
export class LineCounts {
  private readonly counts = new Map<number, number>();
  /** How many times singletons were forgotten, and whether admission has stopped. */
  prunes = 0;
  closed = false;

  constructor(
    private readonly maxLines: number,
    private readonly minChars = 0,
  ) {}

  /** Counts one record: each distinct non-blank line once. */
  addRecord(text: string): void {
    const seen = new Set<number>();
    for (const line of text.split("\n")) {
      const k = lineKey(line, this.minChars);
      if (k === undefined || seen.has(k)) continue;
      seen.add(k);
      const c = this.counts.get(k);
      if (c !== undefined) this.counts.set(k, c + 1);
      else if (!this.closed) {
        if (this.counts.size >= this.maxLines) this.prune();
        if (!this.closed) this.counts.set(k, 1);
      }
    }
  }

  private prune(): void {
    this.prunes++;
    for (const [k, c] of this.counts) if (c === 1) this.counts.delete(k);
    if (this.counts.size > 0.75 * this.maxLines) this.closed = true;
  }

  count(line: string): number {
    const k = lineKey(line, this.minChars);
    return k === undefined ? 0 : (this.counts.get(k) ?? 0);
  }

  get size(): number {
    return this.counts.size;
  }

  /** Every counted line key with its record count. */
  entries(): IterableIterator<[number, number]> {
    return this.counts.entries();
  }
}

/**
 * The text without the lines counted in at least `minDocs` records, and how many lines went.
 * Blank lines on both sides of a removed line merge into one, and blank lines at either end of
 * a changed text are trimmed, so removal leaves no holes.
 */
export function stripLines(text: string, counts: Pick<LineCounts, "count">, minDocs: number): { text: string; removed: number } {
  const lines = text.split("\n");
  const out: string[] = [];
  let removed = 0;
  let gap = false; // a line was removed since the last kept line
  for (const line of lines) {
    if (line.trim() !== "" && counts.count(line) >= minDocs) {
      removed++;
      gap = true;
      continue;
    }
    const blank = line.trim() === "";
    if (blank && gap && out.length > 0 && out[out.length - 1].trim() === "") continue;
    if (!blank) gap = false;
    out.push(line);
  }
  if (removed === 0) return { text, removed };
  while (out.length > 0 && out[0].trim() === "") out.shift();
  while (out.length > 0 && out[out.length - 1].trim() === "") out.pop();
  return { text: out.join("\n"), removed };
}

/** The fields written to the spill file: the whole record (tokens do not exist yet before tokenize). */
function serialize(r: DocRecord): string {
  if (r.tokens) throw new SiftpackError("SP_PIPELINE_KEY", `"strip_repeated_lines" must come before "tokenize"`);
  return JSON.stringify(r) + "\n";
}

export default defineStage({
  name: "strip_repeated_lines",
  summary: "removes lines that occur in at least min_docs records (two passes; records spilled to a temporary file)",
  options: stripRepeatedLinesOptions,
  create(o: StripRepeatedLinesOptions) {
    return async function* stripRepeatedLines(input, ctx) {
      await loadHasher();
      const counts = new LineCounts(o.max_lines, o.min_chars);
      const spill = join(ctx.workDir, `.strip-repeated-lines-${randomBytes(6).toString("hex")}.jsonl`);
      const out = createWriteStream(spill);
      try {
        // Pass 1: count and spill.
        const failed = new Promise<never>((_, reject) => out.once("error", reject));
        failed.catch(() => {});
        let records = 0;
        for await (const r of input) {
          counts.addRecord(r.text);
          records++;
          if (!out.write(serialize(r))) await Promise.race([once(out, "drain"), failed]);
        }
        out.end();
        await Promise.race([once(out, "close"), failed]);
        ctx.log.debug({ records, lines: counts.size, prunes: counts.prunes }, "strip_repeated_lines: lines counted");
        ctx.count("strip_repeated_lines:distinct_lines", counts.size);
        if (counts.prunes > 0) ctx.count("strip_repeated_lines:budget_prunes", counts.prunes);
        if (counts.closed) ctx.log.warn({ max_lines: o.max_lines }, "strip_repeated_lines: line budget full; lines first seen later were not counted");

        // Pass 2: read back in order, strip, pass on.
        let linesRemoved = 0;
        let changed = 0;
        const reader = createInterface({ input: createReadStream(spill, { encoding: "utf8" }), crlfDelay: Infinity });
        try {
          for await (const line of reader) {
            if (line === "") continue;
            const r = JSON.parse(line) as DocRecord;
            const { text, removed } = stripLines(r.text, counts, o.min_docs);
            if (removed > 0) {
              linesRemoved += removed;
              changed++;
              r.text = text;
            }
            if (removed > 0 && text.trim() === "") ctx.drop(r, "strip_repeated_lines:empty", { lines_removed: removed });
            else yield r;
          }
        } finally {
          reader.close();
        }
        ctx.count("strip_repeated_lines:lines_removed", linesRemoved);
        ctx.count("strip_repeated_lines:records_changed", changed);
      } finally {
        out.destroy();
        await rm(spill, { force: true });
      }
    };
  },
});
